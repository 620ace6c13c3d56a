/* pixpost — the pieces every frame reader uses (src/io_png.c, src/io_tiff.c
 * and the front door src/io.c): read options and their defaults, the size
 * and colour checks, clearing the read info. No file access. */
#include "pixpost/io.h"
#include "internal.h"
#include "io_internal.h"
#include "pixpost/setting.h"
#include "pixpost/setting_extra.h"
#include <string.h>

void pp_read_options_defaults(pp_read_options *opt)
{
    opt->channel = PP_CHANNEL_NONE;
    opt->max_pixels = PP_DEFAULT_MAX_PIXELS;
    opt->page = 0;
    opt->setting_names = NULL;
}

pp_read_options pp_io_options(const pp_read_options *opt)
{
    pp_read_options o;
    pp_read_options_defaults(&o);
    return opt ? *opt : o;
}

void pp_io_info_clear(pp_read_info *info)
{
    if (!info)
        return;
    memset(info, 0, sizeof *info);
    info->pages = 1;
}

pp_status pp_io_check_size(const char *path, size_t width, size_t height, size_t max_pixels)
{
    size_t n;
    if (width == 0 || height == 0)
        return pp_fail(PP_ERR_FORMAT, "%s: the header declares an empty frame (%zux%zu)", path,
                       width, height);
    if (!pp_mul_ok(width, height, &n) || n > max_pixels)
        return pp_fail(PP_ERR_LIMIT, "%s: frame of %zux%zu pixels is over the limit of %zu pixels",
                       path, width, height, max_pixels);
    return PP_OK;
}

pp_status pp_io_colour_weights(const char *path, const char *kind, const pp_read_options *opt,
                               double w[3])
{
    w[0] = w[1] = w[2] = 0.0;
    switch (opt->channel) {
    case PP_CHANNEL_R:
        w[0] = 1.0;
        break;
    case PP_CHANNEL_G:
        w[1] = 1.0;
        break;
    case PP_CHANNEL_B:
        w[2] = 1.0;
        break;
    case PP_CHANNEL_LUMA: /* Rec. 709 luma, as io.h says */
        w[0] = 0.2126;
        w[1] = 0.7152;
        w[2] = 0.0722;
        break;
    default:
        if (!opt->setting_names)
            return pp_fail(PP_ERR_UNSUPPORTED,
                           "%s: colour image (%s); choose a channel to read (r, g, b or luma)",
                           path, kind);
        return pp_fail(PP_ERR_UNSUPPORTED, "%s: colour image (%s); choose a channel with %s r|g|b|luma",
                       path, kind, pp_setting_name(opt->setting_names, PP_SET_CHANNEL));
    }
    return PP_OK;
}
