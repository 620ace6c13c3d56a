/* pixpost fuzz target — the TIFF reader (pp_tiff_read, first and last page)
 * and the signature dispatch (pp_image_read) on arbitrary bytes; the checks
 * on each read are in fuzz_image.h; then the OME-XML of the first page's
 * description (pp_stack_probe). Cost: one page count and two or three
 * decodes per input. */
#include "fuzz_image.h"
#include "pixpost/io_extra.h"
#include "pixpost/ome.h"
#include "pixpost/stack.h"

int LLVMFuzzerTestOneInput(const unsigned char *data, size_t size)
{
    if (fuzz_write(data, size) != 0)
        return 0;
    unsigned pages = 0;
    if (pp_tiff_count_pages(fuzz_path(), &pages) != PP_OK)
        pages = 0;
    pp_read_options plain = fuzz_read_options(0), luma = fuzz_read_options(1);
    fuzz_read_check(pp_tiff_read, &plain);
    fuzz_read_check((size & 1) ? pp_image_read : pp_tiff_read, &luma);
    if (pages > 1) {
        luma.page = pages - 1;
        fuzz_read_check(pp_tiff_read, &luma);
    }
    /* the first page's description through the OME-XML reader (stack.h) */
    pp_ome_meta ome;
    unsigned probed;
    if (pp_stack_probe(fuzz_path(), &probed, &ome) != PP_OK && !pp_error_message()[0])
        abort();
    return 0;
}
