/* pixpost — pieces of the output writers the command line shares.
 * Internal (src/pixpost/, not installed, not exported from libpixpost.so):
 * the library, the command line and the tests use these; the public part
 * is include/pixpost/output.h. docs/developers.md "Public API" says why. */
#ifndef PIXPOST_OUTPUT_EXTRA_H
#define PIXPOST_OUTPUT_EXTRA_H

#include <stdio.h>
#include "pixpost/output.h"

/* Writes s (NULL: "") to f as a JSON string literal: quotes, with '"' and
 * '\\' escaped and control characters as \u00XX; other bytes (UTF-8) as
 * they are. Shared by summary.json and the batch manifest. */
void pp_json_write_string(FILE *f, const char *s);
/* Writes v to f as a JSON number with 10 significant digits ("%.10g"), or
 * null when v is not finite. */
void pp_json_write_number(FILE *f, double v);
/* A voxel size v = {z, y, x} (micrometres) as {"z": .., "y": .., "x": ..}. */
void pp_json_write_zyx(FILE *f, const double v[3]);

/* Writes dir/PP_OUTPUT_MARKER atomically (replacing an earlier one); writer
 * says what wrote the folder, e.g. a command line (NULL: not recorded).
 * pp_output_write() calls it before writing any output, so a folder holding
 * any file of a run, even an interrupted write, holds the marker. */
pp_status pp_output_mark(const char *dir, const char *writer);

/* 1 if dir/PP_OUTPUT_MARKER is a regular file whose first line is
 * PP_OUTPUT_MARKER_LINE; 0 otherwise (missing, unreadable, or a file of
 * that name with other content). Only reads. */
int pp_output_is_marked(const char *dir);

#endif
