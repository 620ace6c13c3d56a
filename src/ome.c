/* pixpost — OME-XML of OME-TIFF files: a small strict reader of the first
 * Pixels element and the writer of pixpost's own OME-XML (include/pixpost/
 * ome.h). The reader is a single pass over the text with a stack of open
 * element names (at most OME_DEPTH deep; the OME files seen in practice nest
 * five or six deep, a rule of thumb); it allocates nothing.
 * Reference for names and defaults: the OME data model and its XML schema,
 * version 2016-06 (openmicroscopy.org), from memory: Pixels carries
 * DimensionOrder, SizeX..SizeT and PhysicalSizeX/Y/Z with units
 * PhysicalSizeXUnit etc. defaulting to micrometres. */
#include "pixpost/ome.h"
#include "internal.h"
#include <ctype.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define OME_DEPTH 32
#define OME_ATTRS 48
#define OME_VALUE 64

typedef struct xml_attr {
    const char *name, *val;
    size_t nlen, vlen;
} xml_attr;

typedef struct xml_tag {
    const char *name;
    size_t nlen;
    xml_attr a[OME_ATTRS];
    size_t na;
    int closing, empty, skip; /* </x>; <x/>; a comment, declaration or CDATA */
} xml_tag;

static int name_char(char c)
{
    return isalnum((unsigned char)c) || c == ':' || c == '_' || c == '-' || c == '.' ||
           (unsigned char)c >= 0x80;
}

static const char *skip_ws(const char *p)
{
    while (*p == ' ' || *p == '\t' || *p == '\r' || *p == '\n')
        p++;
    return p;
}

/* 1 when the element name (n bytes, maybe with a namespace prefix) has the
 * local name want. */
static int local_is(const char *name, size_t n, const char *want)
{
    size_t i = n;
    while (i > 0 && name[i - 1] != ':')
        i--;
    return n - i == strlen(want) && memcmp(name + i, want, n - i) == 0;
}

/* Skips "<!--...-->", "<?...?>" and "<![CDATA[...]]>" starting at p. NULL
 * when unterminated. */
static const char *skip_special(const char *p)
{
    static const char *const open[] = {"<!--", "<?", "<![CDATA["};
    static const char *const close[] = {"-->", "?>", "]]>"};
    for (size_t i = 0; i < 3; i++)
        if (strncmp(p, open[i], strlen(open[i])) == 0) {
            const char *e = strstr(p + strlen(open[i]), close[i]);
            return e ? e + strlen(close[i]) : NULL;
        }
    return p;
}

/* Reads the attributes of a start tag from p to its '>' (sets t->empty for
 * "/>"). Returns the position after '>' or NULL with *why set. */
static const char *read_attrs(const char *p, xml_tag *t, const char **why)
{
    for (;;) {
        p = skip_ws(p);
        if (*p == '>')
            return p + 1;
        if (p[0] == '/' && p[1] == '>') {
            t->empty = 1;
            return p + 2;
        }
        const char *n = p;
        while (name_char(*p))
            p++;
        if (p == n || t->na == OME_ATTRS) {
            *why = p == n ? "a tag holds something that is not an attribute"
                          : "too many attributes in one tag";
            return NULL;
        }
        xml_attr *a = &t->a[t->na++];
        a->name = n;
        a->nlen = (size_t)(p - n);
        p = skip_ws(p);
        if (*p != '=') {
            *why = "an attribute without '=value'";
            return NULL;
        }
        p = skip_ws(p + 1);
        char q = *p;
        const char *e = q == '"' || q == '\'' ? strchr(p + 1, q) : NULL;
        if (!e || memchr(p + 1, '<', (size_t)(e - p - 1))) {
            *why = "an attribute value without its closing quote";
            return NULL;
        }
        a->val = p + 1;
        a->vlen = (size_t)(e - p - 1);
        p = e + 1;
        for (size_t i = 0; i + 1 < t->na; i++)
            if (t->a[i].nlen == a->nlen && memcmp(t->a[i].name, a->name, a->nlen) == 0) {
                *why = "an attribute given twice in one tag";
                return NULL;
            }
    }
}

/* Reads the tag at p (*p == '<'). Returns the position after it, or NULL
 * with *why set. */
static const char *read_tag(const char *p, xml_tag *t, const char **why)
{
    memset(t, 0, sizeof *t);
    const char *e = skip_special(p);
    if (!e) {
        *why = "a comment, declaration or CDATA section is not closed";
        return NULL;
    }
    if (e != p) {
        t->skip = 1;
        return e;
    }
    if (p[1] == '!') {
        *why = "a DOCTYPE or other '<!' declaration (not accepted)";
        return NULL;
    }
    p++;
    if (*p == '/') {
        t->closing = 1;
        p++;
    }
    t->name = p;
    while (name_char(*p))
        p++;
    t->nlen = (size_t)(p - t->name);
    if (t->nlen == 0) {
        *why = "a '<' that does not start a tag";
        return NULL;
    }
    if (t->closing) {
        p = skip_ws(p);
        if (*p != '>') {
            *why = "a closing tag without its '>'";
            return NULL;
        }
        return p + 1;
    }
    return read_attrs(p, t, why);
}

/* Appends code point cp as UTF-8 to out (room checked by the caller). */
static size_t put_utf8(unsigned long cp, char *out)
{
    if (cp < 0x80) {
        out[0] = (char)cp;
        return 1;
    }
    if (cp < 0x800) {
        out[0] = (char)(0xC0 | (cp >> 6));
        out[1] = (char)(0x80 | (cp & 0x3F));
        return 2;
    }
    out[0] = (char)(0xE0 | ((cp >> 12) & 0x0F));
    out[1] = (char)(0x80 | ((cp >> 6) & 0x3F));
    out[2] = (char)(0x80 | (cp & 0x3F));
    return 3;
}

/* The value of attribute `name` of t, entities decoded, into out
 * (OME_VALUE bytes). 0 when absent, -1 when too long or badly escaped. */
static int attr_value(const xml_tag *t, const char *name, char out[OME_VALUE])
{
    const xml_attr *a = NULL;
    for (size_t i = 0; i < t->na && !a; i++)
        if (t->a[i].nlen == strlen(name) && memcmp(t->a[i].name, name, t->a[i].nlen) == 0)
            a = &t->a[i];
    if (!a)
        return 0;
    static const char *const ent[] = {"amp;", "lt;", "gt;", "quot;", "apos;"};
    static const char rep[] = "&<>\"'";
    size_t o = 0;
    for (size_t i = 0; i < a->vlen; i++) {
        if (o + 4 >= OME_VALUE)
            return -1;
        if (a->val[i] != '&') {
            out[o++] = a->val[i];
            continue;
        }
        const char *s = a->val + i + 1, *semi = memchr(s, ';', a->vlen - i - 1);
        if (!semi)
            return -1;
        size_t k = 0;
        while (k < 5 && strncmp(s, ent[k], strlen(ent[k])) != 0)
            k++;
        if (k < 5)
            out[o++] = rep[k];
        else if (*s == '#') {
            char *end;
            unsigned long cp = s[1] == 'x' ? strtoul(s + 2, &end, 16) : strtoul(s + 1, &end, 10);
            if (end != semi || cp == 0 || cp > 0xFFFF)
                return -1;
            o += put_utf8(cp, out + o);
        } else
            return -1;
        i = (size_t)(semi - a->val);
    }
    out[o] = '\0';
    return 1;
}

static pp_status bad(const char *path, const char *what)
{
    return pp_fail(PP_ERR_FORMAT,
                   "%s: malformed OME-XML in the first page's description: %s; repair the "
                   "metadata (or rewrite the file without it)",
                   path, what);
}

/* A Size attribute: a whole number 1 .. 2^31 - 1, required. */
static pp_status get_size(const xml_tag *t, const char *path, const char *name, size_t *out)
{
    char v[OME_VALUE], why[192];
    int r = attr_value(t, name, v);
    char *end = NULL;
    unsigned long long n = r > 0 && isdigit((unsigned char)v[0]) ? strtoull(v, &end, 10) : 0;
    if (r > 0 && end && *end == '\0' && n >= 1 && n <= 0x7FFFFFFFu) {
        *out = (size_t)n;
        return PP_OK;
    }
    if (r > 0)
        snprintf(why, sizeof why, "Pixels %s is '%s' (expected a whole number >= 1)", name, v);
    else
        snprintf(why, sizeof why, "Pixels %s is %s (expected a whole number >= 1)", name,
                 r == 0 ? "missing" : "unreadable");
    return bad(path, why);
}

/* Micrometres per unit of an OME length unit symbol; 0 when unknown. */
static double unit_um(const char *u)
{
    static const struct {
        const char *sym;
        double um;
    } units[] = {{"pm", 1e-6},
                 {"\xc3\x85", 1e-4} /* Å */,
                 {"nm", 1e-3},
                 {"\xc2\xb5m", 1.0} /* µm, micro sign */,
                 {"\xce\xbcm", 1.0} /* μm, Greek mu */,
                 {"um", 1.0},
                 {"mm", 1e3},
                 {"cm", 1e4},
                 {"m", 1e6}};
    for (size_t i = 0; i < sizeof units / sizeof units[0]; i++)
        if (strcmp(u, units[i].sym) == 0)
            return units[i].um;
    return 0.0;
}

/* PhysicalSize<axis> with PhysicalSize<axis>Unit, into micrometres (0 when
 * absent). */
static pp_status get_physical(const xml_tag *t, const char *path, char axis, double *um)
{
    char name[32], uname[40], v[OME_VALUE], u[OME_VALUE] = "\xc2\xb5m", why[160];
    snprintf(name, sizeof name, "PhysicalSize%c", axis);
    snprintf(uname, sizeof uname, "PhysicalSize%cUnit", axis);
    *um = 0.0;
    int r = attr_value(t, name, v), ru = attr_value(t, uname, u);
    if (r == 0)
        return PP_OK;
    char *end = NULL;
    double x = r > 0 ? strtod(v, &end) : NAN;
    if (r < 0 || !end || end == v || *end != '\0' || !isfinite(x) || x <= 0) {
        snprintf(why, sizeof why, "Pixels %s is not a number > 0", name);
        return bad(path, why);
    }
    double f = ru >= 0 ? unit_um(u) : 0.0;
    if (f == 0.0) {
        snprintf(why, sizeof why,
                 "Pixels %s '%s' is not a length unit pixpost knows (pm, nm, "
                 "um or \xc2\xb5m, mm, cm, m)",
                 uname, ru >= 0 ? u : "?");
        return bad(path, why);
    }
    *um = x * f;
    return PP_OK;
}

/* Reads the attributes pixpost needs from the Pixels tag t. */
static pp_status read_pixels(const xml_tag *t, const char *path, pp_ome_meta *m)
{
    static const char *const orders[] = {"XYZCT", "XYZTC", "XYCTZ", "XYCZT", "XYTCZ", "XYTZC"};
    pp_status st = get_size(t, path, "SizeX", &m->nx);
    st = st ? st : get_size(t, path, "SizeY", &m->ny);
    st = st ? st : get_size(t, path, "SizeZ", &m->nz);
    st = st ? st : get_size(t, path, "SizeC", &m->nc);
    st = st ? st : get_size(t, path, "SizeT", &m->nt);
    st = st ? st : get_physical(t, path, 'Z', &m->voxel[0]);
    st = st ? st : get_physical(t, path, 'Y', &m->voxel[1]);
    st = st ? st : get_physical(t, path, 'X', &m->voxel[2]);
    if (st != PP_OK)
        return st;
    char v[OME_VALUE];
    int r = attr_value(t, "DimensionOrder", v);
    for (size_t i = 0; r > 0 && i < 6; i++)
        if (strcmp(v, orders[i]) == 0) {
            memcpy(m->order, v, 6);
            return PP_OK;
        }
    return bad(path, r == 0 ? "Pixels DimensionOrder is missing"
                            : "Pixels DimensionOrder is not one of XYZCT, XYZTC, XYCTZ, XYCZT, "
                              "XYTCZ, XYTZC");
}

/* The root: after an optional declaration and comments, a start tag whose
 * local name is OME. Returns the position after it, or NULL (not OME). */
static const char *find_root(const char *p, xml_tag *t)
{
    const char *why;
    for (;;) {
        p = skip_ws(p);
        if (*p != '<')
            return NULL;
        const char *e = read_tag(p, t, &why);
        if (!e)
            return NULL;
        if (t->skip) {
            p = e;
            continue;
        }
        return !t->closing && local_is(t->name, t->nlen, "OME") ? e : NULL;
    }
}

pp_status pp_ome_parse(const char *xml, const char *path, pp_ome_meta *out)
{
    memset(out, 0, sizeof *out);
    xml_tag t;
    const char *p = xml ? find_root(xml, &t) : NULL, *why = NULL;
    if (!p)
        return PP_OK; /* not OME */
    const char *open[OME_DEPTH];
    size_t olen[OME_DEPTH], depth = 0, pixels = 0;
    char msg[160];
    if (!t.empty) {
        open[depth] = t.name;
        olen[depth++] = t.nlen;
    }
    pp_status st = PP_OK;
    while (depth > 0 && st == PP_OK) {
        p = strchr(p, '<');
        if (!p) {
            snprintf(msg, sizeof msg, "the <%.*s> element is never closed", (int)olen[depth - 1],
                     open[depth - 1]);
            return bad(path, msg);
        }
        if (!(p = read_tag(p, &t, &why)))
            return bad(path, why);
        if (t.skip)
            continue;
        if (t.closing) {
            if (t.nlen != olen[depth - 1] || memcmp(t.name, open[depth - 1], t.nlen) != 0) {
                snprintf(msg, sizeof msg, "</%.*s> closes <%.*s>", (int)t.nlen, t.name,
                         (int)olen[depth - 1], open[depth - 1]);
                return bad(path, msg);
            }
            depth--;
            continue;
        }
        if (local_is(t.name, t.nlen, "Pixels") && pixels++ == 0)
            st = read_pixels(&t, path, out);
        if (!t.empty) {
            if (depth == OME_DEPTH)
                return bad(path, "elements nested too deep");
            open[depth] = t.name;
            olen[depth++] = t.nlen;
        }
    }
    if (st != PP_OK)
        return st;
    for (p = skip_ws(p); *p == '<' && (why = skip_special(p)) != p && why; p = skip_ws(why))
        ;
    if (*p)
        return bad(path, "text after the closing </OME>");
    if (pixels == 0)
        return bad(path, "no Pixels element");
    if (pixels > 1)
        return pp_fail(PP_ERR_FORMAT,
                       "%s: the OME-XML describes %zu images; pixpost reads files of one image "
                       "(split the file into one file per image)",
                       path, pixels);
    out->present = 1;
    return PP_OK;
}

size_t pp_ome_page(const pp_ome_meta *m, size_t z, size_t c, size_t t)
{
    size_t page = 0, stride = 1;
    for (int i = 2; i < 5; i++) {
        size_t idx = m->order[i] == 'Z' ? z : m->order[i] == 'C' ? c : t;
        size_t n = m->order[i] == 'Z' ? m->nz : m->order[i] == 'C' ? m->nc : m->nt;
        page += idx * stride;
        stride *= n;
    }
    return page;
}

/* Appends to buf at *used; 0 when it did not fit. */
static int put(char *buf, size_t len, size_t *used, const char *fmt, ...) PP_PRINTF(4, 5);
static int put(char *buf, size_t len, size_t *used, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    int n = *used < len ? vsnprintf(buf + *used, len - *used, fmt, ap) : -1;
    va_end(ap);
    if (n < 0 || (size_t)n >= len - *used)
        return 0;
    *used += (size_t)n;
    return 1;
}

pp_status pp_ome_format(size_t nz, size_t ny, size_t nx, const double voxel[3], const char *name,
                        char *buf, size_t len)
{
    size_t used = 0;
    int ok = put(buf, len, &used,
                 "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n"
                 "<OME xmlns=\"http://www.openmicroscopy.org/Schemas/OME/2016-06\" "
                 "xmlns:xsi=\"http://www.w3.org/2001/XMLSchema-instance\" "
                 "xsi:schemaLocation=\"http://www.openmicroscopy.org/Schemas/OME/2016-06 "
                 "http://www.openmicroscopy.org/Schemas/OME/2016-06/ome.xsd\" "
                 "Creator=\"pixpost\"><Image ID=\"Image:0\" Name=\"");
    for (const char *s = name ? name : ""; ok && *s; s++) {
        const char *esc = *s == '&'   ? "&amp;"
                          : *s == '<' ? "&lt;"
                          : *s == '>' ? "&gt;"
                          : *s == '"' ? "&quot;"
                                      : NULL;
        ok = esc ? put(buf, len, &used, "%s", esc) : put(buf, len, &used, "%c", *s);
    }
    ok = ok && put(buf, len, &used,
                   "\"><Pixels ID=\"Pixels:0\" DimensionOrder=\"XYZCT\" Type=\"float\" "
                   "SizeX=\"%zu\" SizeY=\"%zu\" SizeZ=\"%zu\" SizeC=\"1\" SizeT=\"1\"",
                   nx, ny, nz);
    static const char axes[3] = {'Z', 'Y', 'X'};
    for (int i = 2; ok && i >= 0; i--)
        if (voxel && voxel[i] > 0)
            ok = put(buf, len, &used, " PhysicalSize%c=\"%.15g\" PhysicalSize%cUnit=\"\xc2\xb5m\"",
                     axes[i], voxel[i], axes[i]);
    ok = ok && put(buf, len, &used,
                   "><Channel ID=\"Channel:0:0\" SamplesPerPixel=\"1\"/>"
                   "<TiffData IFD=\"0\" PlaneCount=\"%zu\"/></Pixels></Image></OME>\n",
                   nz);
    return ok ? PP_OK : pp_fail(PP_ERR_LIMIT, "OME-XML does not fit in %zu bytes", len);
}
