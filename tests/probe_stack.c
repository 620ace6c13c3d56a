/* probe_stack — stacks and OME-TIFF on the command line, for
 * tests/ref_stack.py.
 *
 *   probe_stack read FILE
 *       prints "rank n0 n1 n2" (slowest first), then "present nx ny nz nc nt
 *       order vz vy vx" of the OME metadata, then pp_ome_page of every
 *       (z, c, t) with t slowest and z fastest, one per line as "z c t page",
 *       then every value (row-major, page after page) as %.17g.
 *   probe_stack copy IN OUT [VZ VY VX]
 *       reads IN as a stack and writes it with pp_ome_tiff_write_f32, voxel
 *       size from IN's metadata or the three numbers (micrometres).
 *   probe_stack volume FILE C T
 *       pp_volume_read of channel C at time point T: prints "depth height
 *       width", "vz vy vx", "nonfinite", then every value as %.17g.
 *   probe_stack parse
 *       parses OME-XML from stdin (file name "stdin"); prints as `read`
 *       does the metadata line.
 * Errors: "probe_stack: <status name>: <message>" on stderr, exit 1. */
#include "pixpost/stack.h"
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static int fail(pp_status st)
{
    fprintf(stderr, "probe_stack: %s: %s\n", pp_status_name(st), pp_error_message());
    return 1;
}

static void print_meta(const pp_ome_meta *m)
{
    printf("%d %zu %zu %zu %zu %zu %s %.17g %.17g %.17g\n", m->present, m->nx, m->ny, m->nz, m->nc,
           m->nt, m->present ? m->order : "-", m->voxel[0], m->voxel[1], m->voxel[2]);
}

static int cmd_read(const char *path)
{
    pp_stack *s;
    pp_status st = pp_stack_read(path, NULL, &s, NULL);
    if (st != PP_OK)
        return fail(st);
    size_t n;
    pp_shape_count(&s->shape, 0, &n);
    printf("%d %zu %zu %zu\n", s->shape.rank, s->shape.n[0], s->shape.n[1], s->shape.n[2]);
    print_meta(&s->ome);
    if (s->ome.present)
        for (size_t t = 0; t < s->ome.nt; t++)
            for (size_t c = 0; c < s->ome.nc; c++)
                for (size_t z = 0; z < s->ome.nz; z++)
                    printf("%zu %zu %zu %zu\n", z, c, t, pp_ome_page(&s->ome, z, c, t));
    for (size_t i = 0; i < n; i++)
        printf("%.17g\n", s->data[i]);
    pp_stack_free(s);
    return 0;
}

static int cmd_copy(int argc, char **argv)
{
    pp_stack *s;
    pp_status st = pp_stack_read(argv[2], NULL, &s, NULL);
    if (st != PP_OK)
        return fail(st);
    double v[3] = {s->ome.voxel[0], s->ome.voxel[1], s->ome.voxel[2]};
    for (int i = 0; argc == 7 && i < 3; i++)
        v[i] = strtod(argv[4 + i], NULL);
    st = pp_ome_tiff_write_f32(argv[3], &s->shape, s->data, v, "probe <copy> & \"name\"");
    pp_stack_free(s);
    return st == PP_OK ? 0 : fail(st);
}

static int cmd_volume(char **argv)
{
    pp_image *v;
    double voxel[3];
    pp_read_info info;
    pp_status st = pp_volume_read(argv[2], NULL, strtoul(argv[3], NULL, 10),
                                  strtoul(argv[4], NULL, 10), &v, voxel, &info);
    if (st != PP_OK)
        return fail(st);
    printf("%zu %zu %zu\n%.17g %.17g %.17g\n%zu\n", v->depth, v->height, v->width, voxel[0],
           voxel[1], voxel[2], info.nonfinite);
    for (size_t i = 0; i < v->depth * v->height * v->width; i++)
        printf("%.17g\n", v->data[i]);
    pp_image_free(v);
    return 0;
}

static int cmd_parse(void)
{
    static char buf[1 << 16];
    size_t n = fread(buf, 1, sizeof buf - 1, stdin);
    buf[n] = '\0';
    pp_ome_meta m;
    pp_status st = pp_ome_parse(buf, "stdin", &m);
    if (st != PP_OK)
        return fail(st);
    print_meta(&m);
    return 0;
}

int main(int argc, char **argv)
{
    if (argc == 3 && strcmp(argv[1], "read") == 0)
        return cmd_read(argv[2]);
    if ((argc == 4 || argc == 7) && strcmp(argv[1], "copy") == 0)
        return cmd_copy(argc, argv);
    if (argc == 5 && strcmp(argv[1], "volume") == 0)
        return cmd_volume(argv);
    if (argc == 2 && strcmp(argv[1], "parse") == 0)
        return cmd_parse();
    fputs("usage: probe_stack read FILE | copy IN OUT [VZ VY VX] | volume FILE C T | "
          "parse < XML\n", stderr);
    return 2;
}
