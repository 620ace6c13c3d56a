/* pixpost — frame I/O front door: channel names, reading by file signature
 * (not by name) and writing by extension. The format work is in io_png.c and
 * io_tiff.c, what they share in io_common.c (dependencies point one way:
 * io.c -> io_png.c, io_tiff.c -> io_common.c); this file costs one 8-byte
 * read per call. */
#include "pixpost/io.h"
#include "pixpost/setting.h"
#include "internal.h"
#include "io_internal.h"
#include "pixpost/io_extra.h"
#include "pixpost/setting_extra.h"
#include <errno.h>
#include <stdio.h>
#include <string.h>
#include <strings.h>

pp_status pp_channel_parse(const char *s, const char *const *setting_names, pp_channel *out)
{
    static const struct {
        const char *name;
        pp_channel ch;
    } names[] = {
        {"r", PP_CHANNEL_R}, {"g", PP_CHANNEL_G}, {"b", PP_CHANNEL_B}, {"luma", PP_CHANNEL_LUMA}};
    for (size_t i = 0; s && i < sizeof names / sizeof names[0]; i++) {
        if (strcmp(s, names[i].name) == 0) {
            *out = names[i].ch;
            return PP_OK;
        }
    }
    return pp_fail(PP_ERR_ARG, "%s '%s': expected r, g, b or luma",
                   pp_setting_name(setting_names, PP_SET_CHANNEL), s ? s : "");
}

/* Reads up to 8 leading bytes of path into sig; *n gets the count. */
static pp_status read_signature(const char *path, unsigned char sig[8], size_t *n)
{
    FILE *fp = fopen(path, "rb");
    if (!fp)
        return pp_fail(PP_ERR_IO, "%s: cannot open: %s", path, strerror(errno));
    *n = fread(sig, 1, 8, fp);
    int bad = ferror(fp);
    int e = errno;
    fclose(fp);
    if (bad)
        return pp_fail(PP_ERR_IO, "%s: cannot read: %s", path, strerror(e));
    return PP_OK;
}

pp_status pp_image_read(const char *path, const pp_read_options *opt, pp_image **out,
                        pp_read_info *info)
{
    static const unsigned char png_sig[8] = {0x89, 'P', 'N', 'G', '\r', '\n', 0x1a, '\n'};
    unsigned char sig[8];
    size_t n = 0;
    *out = NULL;
    pp_io_info_clear(info);
    pp_status st = read_signature(path, sig, &n);
    if (st != PP_OK)
        return st;
    if (n == 0)
        return pp_fail(PP_ERR_FORMAT, "%s: empty file (0 bytes), not an image", path);
    if (n >= 4 && memcmp(sig, png_sig, n < 8 ? n : 8) == 0)
        return pp_png_read(path, opt, out, info);
    if (n >= 4 && (memcmp(sig, "II*\0", 4) == 0 || memcmp(sig, "MM\0*", 4) == 0 ||
                   memcmp(sig, "II+\0", 4) == 0 || memcmp(sig, "MM\0+", 4) == 0))
        return pp_tiff_read(path, opt, out, info);
    return pp_fail(PP_ERR_FORMAT, "%s: not a PNG or TIFF image (unrecognised file signature)",
                   path);
}

/* The extension of path's last component ("" if none), without the dot. */
static const char *extension(const char *path)
{
    const char *slash = strrchr(path, '/');
    const char *dot = strrchr(slash ? slash + 1 : path, '.');
    return dot ? dot + 1 : "";
}

pp_status pp_image_write(const char *path, const pp_image *img)
{
    const char *ext = extension(path);
    if (strcasecmp(ext, "tif") == 0 || strcasecmp(ext, "tiff") == 0)
        return pp_tiff_write_f32(path, img);
    if (strcasecmp(ext, "png") == 0) {
        double offset, scale;
        pp_png_auto_scale(img, &offset, &scale);
        return pp_png_write16(path, img, offset, scale);
    }
    return pp_fail(PP_ERR_ARG, "%s: unknown output type '.%s'; use .tif (float) or .png", path,
                   ext);
}
