/* pixpost — one sentence in plain words under each map of report.html
 * (frames and volumes alike): what the picture shows, before the caption's
 * technical details (mapping, units, percentiles). Issue #19 item 4.
 * Cost: a line of text. */
#include "report_internal.h"
#include <string.h>

void pp_report_plain(FILE *f, const char *key, double level, int volume)
{
    const char *px = volume ? "voxel" : "pixel";
    fprintf(f, "<span class=\"plain\" id=\"%s-plain\">", key);
    if (strcmp(key, "frame") == 0)
        fputs("What the microscope recorded: the blurred, noisy data the reconstruction "
              "starts from.",
              f);
    else if (strcmp(key, "mean") == 0)
        fputs("The reconstruction: the average of the sampled sharp images, pixpost's best "
              "single guess of the object under the model.",
              f);
    else if (strcmp(key, "sd") == 0)
        fprintf(f,
                "How far the sharp image may plausibly be from the mean at each %s, under "
                "the model: bright means uncertain, dark means well determined.",
                px);
    else if (strcmp(key, "width") == 0)
        fprintf(f,
                "The range in which the sharp image's value lies with %.4g%% probability at "
                "each %s, under the model: a wide range means an uncertain value.",
                100.0 * level, px);
    else if (strcmp(key, "regions") == 0)
        fputs("How bright each outlined region is in the reconstruction, with the range its "
              "brightness plausibly lies in under the model; a comparison says how sure the "
              "model is that one region is brighter than another. ",
              f);
    else if (strcmp(key, "spots") == 0)
        fputs("For each bright spot found in the data, the probability that it is really "
              "brighter than the ring of pixels around it, under the model: near 1 a real "
              "peak, near 0.5 the data cannot tell. ",
              f);
    else if (strcmp(key, "profile") == 0)
        fprintf(f,
                "The brightness along the line %s: the line is the best guess, the shaded "
                "band the range it plausibly lies in under the model. ",
                volume ? "given with --profile through the volume" : "drawn on the mean image");
    else if (strcmp(key, "residual") == 0)
        fputs("What the reconstruction leaves unexplained in the data, in units of the "
              "expected noise: plain speckle when the model fits; shapes of objects here "
              "mean the model misses something.",
              f);
    fputs("</span> ", f);
}
