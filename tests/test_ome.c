/* test_ome — the OME-XML reader and writer (src/ome.c).
 *
 * - pp_ome_format then pp_ome_parse gives back the sizes and voxel size
 *   (a round trip through our own text; tifffile's reading of it is
 *   tests/ref_stack.py);
 * - every prefix of a valid document (a truncated description) is refused
 *   as malformed or reported as not OME, never accepted and never a crash
 *   (run it under ASan to see memory errors);
 * - pp_ome_page for all six DimensionOrders against the definition
 *   (first letter after XY fastest), written out by hand here. */
#include "pixpost/ome.h"
#include "testutil.h"
#include <math.h>
#include <stdlib.h>
#include <string.h>

static void round_trip(void)
{
    char buf[4096];
    double v[3] = {0.5, 0.125, 0.1};
    pp_status st = pp_ome_format(7, 20, 30, v, "a <b> & \"c\"", buf, sizeof buf);
    CHECK(st == PP_OK, "format: %s", pp_error_message());
    pp_ome_meta m;
    st = pp_ome_parse(buf, "mem", &m);
    CHECK(st == PP_OK && m.present, "parse of our own text: %s", pp_error_message());
    CHECK(m.nx == 30 && m.ny == 20 && m.nz == 7 && m.nc == 1 && m.nt == 1,
          "sizes %zu %zu %zu %zu %zu", m.nx, m.ny, m.nz, m.nc, m.nt);
    CHECK(fabs(m.voxel[0] - 0.5) < 1e-15 && fabs(m.voxel[1] - 0.125) < 1e-15 &&
              fabs(m.voxel[2] - 0.1) < 1e-15,
          "voxel %g %g %g", m.voxel[0], m.voxel[1], m.voxel[2]);
    CHECK(strcmp(m.order, "XYZCT") == 0, "order %s", m.order);
    st = pp_ome_format(7, 20, 30, v, "x", buf, 100);
    CHECK(st == PP_ERR_LIMIT, "a short buffer is refused (%d)", (int)st);
}

static void truncations(void)
{
    char full[4096];
    pp_ome_format(3, 4, 5, NULL, "t", full, sizeof full);
    size_t n = strlen(full), accepted = 0;
    /* the last byte is a newline after </OME>: dropping it leaves a valid text */
    while (n > 0 && full[n - 1] == '\n')
        n--;
    for (size_t k = 0; k < n; k++) {
        char *p = malloc(k + 1); /* exactly k bytes + NUL, so ASan sees overreads */
        memcpy(p, full, k);
        p[k] = '\0';
        pp_ome_meta m;
        pp_status st = pp_ome_parse(p, "cut", &m);
        accepted += st == PP_OK && m.present;
        CHECK(st == PP_OK ? !m.present : st == PP_ERR_FORMAT, "prefix of %zu bytes: status %d", k,
              (int)st);
        free(p);
    }
    CHECK(accepted == 0, "%zu truncated texts accepted as OME", accepted);
}

static void pages(void)
{
    static const char *const orders[] = {"XYZCT", "XYZTC", "XYCTZ", "XYCZT", "XYTCZ", "XYTZC"};
    pp_ome_meta m;
    memset(&m, 0, sizeof m);
    m.present = 1;
    m.nz = 3, m.nc = 2, m.nt = 4;
    for (int o = 0; o < 6; o++) {
        memcpy(m.order, orders[o], 6);
        int bad = 0;
        for (size_t z = 0; z < 3; z++)
            for (size_t c = 0; c < 2; c++)
                for (size_t t = 0; t < 4; t++) {
                    size_t idx[3], n[3], want = 0, stride = 1;
                    for (int i = 0; i < 3; i++) {
                        char a = orders[o][2 + i];
                        idx[i] = a == 'Z' ? z : a == 'C' ? c : t;
                        n[i] = a == 'Z' ? 3 : a == 'C' ? 2 : 4;
                        want += idx[i] * stride;
                        stride *= n[i];
                    }
                    bad += pp_ome_page(&m, z, c, t) != want;
                }
        CHECK(bad == 0, "%s: %d planes on the wrong page", orders[o], bad);
    }
    /* XYZCT by hand: z fastest, then c, then t */
    memcpy(m.order, "XYZCT", 6);
    CHECK(pp_ome_page(&m, 1, 1, 2) == 1 + 3 * (1 + 2 * 2), "XYZCT (1,1,2)");
}

int main(void)
{
    round_trip();
    truncations();
    pages();
    return pp_test_done();
}
