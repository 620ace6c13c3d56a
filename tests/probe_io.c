/* probe_io — frame I/O on the command line, for tests/ref_io.py.
 *
 *   probe_io read FILE [--channel c] [--page k]
 *       prints "width height pages", then "bits is_float was_colour
 *       nonfinite", then every value (row-major) as %.17g, one per line.
 *   probe_io write IN OUT
 *       reads IN (page 0, no channel) and writes OUT with pp_image_write
 *       (by extension); prints the PNG "offset scale" used (auto scale).
 * Errors: "probe_io: <status name>: <message>" on stderr, exit 1. */
#include "pixpost/io.h"
#include "pixpost/io_extra.h"
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static int fail(pp_status st)
{
    fprintf(stderr, "probe_io: %s: %s\n", pp_status_name(st), pp_error_message());
    return 1;
}

static int cmd_read(int argc, char **argv)
{
    pp_read_options opt;
    pp_read_options_defaults(&opt);
    for (int i = 3; i + 1 < argc; i += 2) {
        if (strcmp(argv[i], "--channel") == 0) {
            pp_status st = pp_channel_parse(argv[i + 1], NULL, &opt.channel);
            if (st != PP_OK)
                return fail(st);
        } else if (strcmp(argv[i], "--page") == 0) {
            opt.page = (unsigned)strtoul(argv[i + 1], NULL, 10);
        }
    }
    pp_image *img;
    pp_read_info info;
    pp_status st = pp_image_read(argv[2], &opt, &img, &info);
    if (st != PP_OK)
        return fail(st);
    printf("%zu %zu %u\n%u %d %d %zu\n", img->width, img->height, info.pages, info.bits,
           info.is_float, info.was_colour, info.nonfinite);
    for (size_t i = 0; i < img->width * img->height; i++)
        printf("%.17g\n", img->data[i]);
    pp_image_free(img);
    return 0;
}

static int cmd_write(char **argv)
{
    pp_image *img;
    pp_status st = pp_image_read(argv[2], NULL, &img, NULL);
    if (st != PP_OK)
        return fail(st);
    double offset, scale;
    pp_png_auto_scale(img, &offset, &scale);
    st = pp_image_write(argv[3], img);
    pp_image_free(img);
    if (st != PP_OK)
        return fail(st);
    printf("%.17g %.17g\n", offset, scale);
    return 0;
}

int main(int argc, char **argv)
{
    if (argc >= 3 && strcmp(argv[1], "read") == 0)
        return cmd_read(argc, argv);
    if (argc == 4 && strcmp(argv[1], "write") == 0)
        return cmd_write(argv);
    fputs("usage: probe_io read FILE [--channel c] [--page k] | probe_io write IN OUT\n", stderr);
    return 2;
}
