/* pixpost fuzz target — the OME-XML reader (pp_ome_parse, src/ome.c) on
 * arbitrary text (cut at the first NUL). Checks beyond "no crash": a
 * failure sets a message; an accepted text has sizes >= 1, a known
 * DimensionOrder and non-negative voxel sizes, and its last plane maps to
 * the last page. Cost: one pass over the text per input. */
#include "pixpost/pixpost.h"
#include "pixpost/ome.h"
#include <stdlib.h>
#include <string.h>

int LLVMFuzzerTestOneInput(const unsigned char *data, size_t size)
{
    char *text = malloc(size + 1);
    if (!text)
        return 0;
    memcpy(text, data, size);
    text[size] = '\0';
    pp_ome_meta m;
    pp_status st = pp_ome_parse(text, "fuzz", &m);
    free(text);
    if (st != PP_OK && !pp_error_message()[0])
        abort();
    if (st != PP_OK || !m.present)
        return 0;
    if (m.nx < 1 || m.ny < 1 || m.nz < 1 || m.nc < 1 || m.nt < 1 || m.order[0] != 'X' ||
        m.order[1] != 'Y' || !(m.voxel[0] >= 0 && m.voxel[1] >= 0 && m.voxel[2] >= 0))
        abort();
    if (pp_ome_page(&m, m.nz - 1, m.nc - 1, m.nt - 1) != m.nz * m.nc * m.nt - 1)
        abort();
    return 0;
}
