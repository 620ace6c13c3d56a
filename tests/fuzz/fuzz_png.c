/* pixpost fuzz target — the PNG reader (pp_png_read) and the signature
 * dispatch (pp_image_read) on arbitrary bytes. Checks beyond "no crash, no
 * leak, no UB": success gives an image of the declared size within the
 * pixel limit; failure leaves *out NULL and sets a message. Frames are
 * capped at 2^20 pixels so a declared huge size must be refused before any
 * large allocation (libFuzzer's -rss_limit_mb catches it otherwise).
 * Cost: one decode per input. */
#include "fuzz_file.h"
#include "pixpost/pixpost.h"
#include <string.h>

static void read_one(int with_channel, int via_dispatch)
{
    pp_read_options opt;
    pp_read_options_defaults(&opt);
    opt.max_pixels = (size_t)1 << 20;
    opt.channel = with_channel ? PP_CHANNEL_LUMA : PP_CHANNEL_NONE;
    pp_image *img = (pp_image *)1;
    pp_read_info info;
    pp_status st = via_dispatch ? pp_image_read(fuzz_path(), &opt, &img, &info)
                                : pp_png_read(fuzz_path(), &opt, &img, &info);
    if (st == PP_OK) {
        if (!img || img->width == 0 || img->height == 0 ||
            img->width * img->height > opt.max_pixels)
            abort();
        volatile double sum = 0; /* touches every pixel (ASan checks the buffer) */
        for (size_t i = 0; i < img->width * img->height; i++)
            sum += img->data[i];
        (void)sum;
        pp_image_free(img);
    } else if (img != NULL || !pp_error_message()[0]) {
        abort();
    }
}

int LLVMFuzzerTestOneInput(const unsigned char *data, size_t size)
{
    if (fuzz_write(data, size) != 0)
        return 0;
    read_one(0, 0);
    read_one(1, size & 1);
    return 0;
}
