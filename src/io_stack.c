/* pixpost — reading every page of a multi-page TIFF into a stack, with the
 * OME-XML of its first page (src/pixpost/stack.h). The pages are decoded
 * one at a time by the single-page decoder (io_tiff.c), so every sample
 * type, layout and check it has applies to each page; the metadata comes
 * from the first page's ImageDescription (ome.c).
 * Cost: the stack of doubles plus one page at a time, in one pass over the
 * file's directory chain (pp_tiff_read_pages). */
#include "internal.h"
#include "io_tiff_internal.h"
#include "pixpost/stack.h"
#include "pixpost/io_extra.h"
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

/* The first page's size and ImageDescription (copied into *desc, caller
 * frees; NULL when there is none). */
static pp_status first_page(const char *path, uint32_t *w, uint32_t *h, char **desc)
{
    tiff_msg m;
    *desc = NULL;
    TIFF *t = pp_tiff_open_silent(path, "r", &m);
    if (!t)
        return pp_fail(PP_ERR_FORMAT, "%s: not a readable TIFF: %s", path,
                       m.text[0] ? m.text : "libtiff cannot open it");
    const char *d = NULL;
    *w = *h = 0;
    TIFFGetField(t, TIFFTAG_IMAGEWIDTH, w);
    TIFFGetField(t, TIFFTAG_IMAGELENGTH, h);
    pp_status st = PP_OK;
    if (TIFFGetField(t, TIFFTAG_IMAGEDESCRIPTION, &d) && d && !(*desc = strdup(d)))
        st = pp_fail(PP_ERR_NOMEM, "%s: out of memory for the image description", path);
    TIFFClose(t);
    return st;
}

pp_status pp_stack_probe(const char *path, unsigned *pages, pp_ome_meta *ome)
{
    memset(ome, 0, sizeof *ome);
    *pages = 1;
    unsigned n;
    if (pp_tiff_count_pages(path, &n) != PP_OK || n == 0)
        return PP_OK; /* not a TIFF (or unreadable): the frame reader says why */
    *pages = n;
    uint32_t w, h;
    char *desc;
    pp_status st = first_page(path, &w, &h, &desc);
    if (st == PP_OK)
        st = pp_ome_parse(desc, path, ome);
    free(desc);
    if (st != PP_OK || !ome->present)
        return st;
    if (ome->nx != w || ome->ny != h || ome->nz * ome->nc * ome->nt != n) {
        st =
            pp_fail(PP_ERR_FORMAT,
                    "%s: the OME-XML describes SizeZ x SizeC x SizeT = %zu x %zu x %zu planes of "
                    "%zux%zu, but the file holds %u page(s) of %ux%u; repair the metadata",
                    path, ome->nz, ome->nc, ome->nt, ome->nx, ome->ny, n, (unsigned)w, (unsigned)h);
        memset(ome, 0, sizeof *ome);
    }
    return st;
}

void pp_stack_free(pp_stack *s)
{
    if (!s)
        return;
    free(s->data);
    free(s);
}

/* Copies page k (already read into img) into s, checking its size. */
static pp_status put_page(pp_stack *s, const char *path, unsigned k, const pp_image *img)
{
    size_t h = s->shape.n[s->shape.rank - 2], w = s->shape.n[s->shape.rank - 1];
    if (img->width != w || img->height != h)
        return pp_fail(PP_ERR_FORMAT,
                       "%s: page %u is %zux%zu, page 0 is %zux%zu; a stack needs pages of one "
                       "size",
                       path, k, img->width, img->height, w, h);
    memcpy(s->data + (size_t)k * w * h, img->data, w * h * sizeof *s->data);
    return PP_OK;
}

/* Where pp_tiff_read_pages puts the pages of a multi-page file. */
typedef struct stack_fill {
    pp_stack *s;
    const char *path;
    size_t nonfinite;
} stack_fill;

static pp_status fill_page(void *ctx, unsigned k, const pp_image *img, const pp_read_info *info)
{
    stack_fill *f = ctx;
    f->nonfinite += info->nonfinite;
    return put_page(f->s, f->path, k, img);
}

pp_status pp_stack_read(const char *path, const pp_read_options *opt, pp_stack **out,
                        pp_read_info *info)
{
    *out = NULL;
    pp_read_options o;
    pp_read_options_defaults(&o);
    if (opt)
        o = *opt;
    o.page = 0;
    unsigned pages;
    pp_stack *s = calloc(1, sizeof *s);
    if (!s)
        return pp_fail(PP_ERR_NOMEM, "%s: out of memory", path);
    pp_status st = pp_stack_probe(path, &pages, &s->ome);
    pp_image *img = NULL;
    pp_read_info first;
    if (st == PP_OK)
        st = pp_image_read(path, &o, &img, &first);
    size_t count = 0;
    if (st == PP_OK) {
        s->shape = pages > 1 ? pp_shape_3d(pages, img->height, img->width)
                             : pp_shape_2d(img->height, img->width);
        st = pp_shape_count(&s->shape, sizeof(double), &count);
        if (st != PP_OK)
            st = pp_fail(PP_ERR_LIMIT, "%s: %u pages of %zux%zu are too many to hold", path, pages,
                         img->width, img->height);
    }
    if (st == PP_OK && !(s->data = malloc(count * sizeof *s->data)))
        st = pp_fail(PP_ERR_NOMEM, "%s: out of memory for %u pages", path, pages);
    if (st == PP_OK && pages == 1)
        st = put_page(s, path, 0, img);
    pp_image_free(img);
    if (st == PP_OK && pages > 1) {
        stack_fill f = {s, path, 0};
        st = pp_tiff_read_pages(path, &o, fill_page, &f);
        first.nonfinite = f.nonfinite;
    }
    if (st != PP_OK) {
        pp_stack_free(s);
        return st;
    }
    if (info)
        *info = first;
    *out = s;
    return PP_OK;
}

pp_status pp_stack_page(const pp_stack *s, size_t k, pp_image **out)
{
    *out = NULL;
    size_t pages = s->shape.rank == 3 ? s->shape.n[0] : 1;
    size_t h = s->shape.n[s->shape.rank - 2], w = s->shape.n[s->shape.rank - 1];
    if (k >= pages)
        return pp_fail(PP_ERR_ARG, "page %zu asked for, but the stack has %zu page(s)", k, pages);
    pp_status st = pp_image_create(h, w, out);
    if (st == PP_OK)
        memcpy((*out)->data, s->data + k * w * h, w * h * sizeof *s->data);
    return st;
}
