/* pixpost — HTML escaping of caller strings for the report files
 * (src/report*.c): every writer of report.html escapes through here, so the
 * escaping rule (and its UTF-8 check) is defined once. One pass, no
 * allocation. Also the numeric table cell every report table writes. */
#include "report_internal.h"
#include <math.h>
#include <stdio.h>

/* Length of the valid UTF-8 sequence at p (1..4), or 0 if it is not one. */
static int utf8_len(const unsigned char *p)
{
    int n = p[0] >= 0xF0 ? 4 : p[0] >= 0xE0 ? 3 : 2;
    if (p[0] < 0xC2 || p[0] > 0xF4)
        return 0;
    for (int i = 1; i < n; i++)
        if ((p[i] & 0xC0) != 0x80)
            return 0; /* also stops at the terminating NUL */
    if ((p[0] == 0xE0 && p[1] < 0xA0) || (p[0] == 0xED && p[1] >= 0xA0) ||
        (p[0] == 0xF0 && p[1] < 0x90) || (p[0] == 0xF4 && p[1] >= 0x90))
        return 0; /* overlong, surrogate or beyond U+10FFFF */
    return n;
}

void pp_report_escape(FILE *f, const char *s)
{
    for (const unsigned char *p = (const unsigned char *)(s ? s : ""); *p;) {
        switch (*p) {
        case '&':
            fputs("&amp;", f);
            break;
        case '<':
            fputs("&lt;", f);
            break;
        case '>':
            fputs("&gt;", f);
            break;
        case '"':
            fputs("&quot;", f);
            break;
        case '\'':
            fputs("&#39;", f);
            break;
        default:
            if (*p < 0x80) {
                if (*p < 0x20 && *p != '\t' && *p != '\n')
                    fputs("\xef\xbf\xbd", f);
                else
                    fputc(*p, f);
            } else {
                int n = utf8_len(p);
                if (n == 0) {
                    fputs("\xef\xbf\xbd", f);
                    p++;
                    continue;
                }
                fwrite(p, 1, (size_t)n, f);
                p += n;
                continue;
            }
        }
        p++;
    }
}

void pp_report_escape_str(char *buf, size_t len, const char *s)
{
    if (len == 0)
        return;
    buf[0] = '\0';
    FILE *m = len > 1 ? fmemopen(buf, len, "w") : NULL;
    if (!m)
        return;
    setvbuf(m, NULL, _IONBF, 0); /* a write past the end fails at once */
    pp_report_escape(m, s);
    long n = ftell(m);
    fclose(m);
    buf[n > 0 && (size_t)n < len ? (size_t)n : (n > 0 ? len - 1 : 0)] = '\0';
}

void pp_report_num_cell(FILE *f, double v, int warn, const char *flag)
{
    fprintf(f, "<td class=\"num%s\">", warn ? " warn" : "");
    if (isfinite(v))
        fprintf(f, "%.4g", v);
    else
        fputs("&ndash;", f);
    if (warn)
        fprintf(f, " <span class=\"flag\">%s</span>", flag);
    fputs("</td>", f);
}
