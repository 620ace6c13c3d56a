/* pixpost — the JSON writers every JSON output uses (summary.json in
 * src/output.c, the noise fit in src/calib_json.c, the batch manifest):
 * declared in pixpost/output.h. Kept apart from output.c so that calls
 * point one way: output.c -> calib_json.c -> this file. No allocation. */
#include <math.h>
#include <stdio.h>
#include "pixpost/output.h"
#include "pixpost/output_extra.h"

void pp_json_write_string(FILE *f, const char *s)
{
    fputc('"', f);
    for (const unsigned char *p = (const unsigned char *)(s ? s : ""); *p; p++) {
        if (*p == '"' || *p == '\\')
            fprintf(f, "\\%c", *p);
        else if (*p < 0x20)
            fprintf(f, "\\u%04x", *p);
        else
            fputc(*p, f);
    }
    fputc('"', f);
}

void pp_json_write_number(FILE *f, double v)
{
    if (isfinite(v))
        fprintf(f, "%.10g", v);
    else
        fputs("null", f);
}

void pp_json_write_zyx(FILE *f, const double v[3])
{
    fputs("{\"z\": ", f);
    pp_json_write_number(f, v[0]);
    fputs(", \"y\": ", f);
    pp_json_write_number(f, v[1]);
    fputs(", \"x\": ", f);
    pp_json_write_number(f, v[2]);
    fputs("}", f);
}
