/* pixpost fuzz target — the PNG reader (pp_png_read) and the signature
 * dispatch (pp_image_read) on arbitrary bytes; the checks on each read are
 * in fuzz_image.h. Cost: two decodes per input. */
#include "fuzz_image.h"
#include "pixpost/io_extra.h"

int LLVMFuzzerTestOneInput(const unsigned char *data, size_t size)
{
    if (fuzz_write(data, size) != 0)
        return 0;
    pp_read_options plain = fuzz_read_options(0), luma = fuzz_read_options(1);
    fuzz_read_check(pp_png_read, &plain);
    fuzz_read_check((size & 1) ? pp_image_read : pp_png_read, &luma);
    return 0;
}
