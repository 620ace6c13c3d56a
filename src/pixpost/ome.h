/* pixpost — OME-TIFF metadata: the OME-XML that the OME-TIFF open standard
 * keeps in the first page's ImageDescription tag.
 *
 * Only what pixpost needs is read: the first Pixels element's SizeX, SizeY,
 * SizeZ, SizeC, SizeT, DimensionOrder and PhysicalSizeX/Y/Z with their units
 * (OME data model, schema 2016-06: units default to micrometres). The parser
 * is small and strict: every tag must close, every attribute value must be
 * quoted, nesting must match; a text that does not start with an OME root
 * element (after an optional <?xml ...?> declaration) is not OME and is
 * reported as absent, not as an error (tifffile, ImageJ and others write
 * their own descriptions). Cost: one pass over the text, no allocation.
 */
#ifndef PIXPOST_OME_H
#define PIXPOST_OME_H

#include "pixpost/status.h"
#include <stddef.h>

typedef struct pp_ome_meta {
    int present;       /* 1 when the text was OME-XML (the fields below are set) */
    size_t nx, ny;     /* SizeX (columns), SizeY (rows) */
    size_t nz, nc, nt; /* SizeZ, SizeC, SizeT (each >= 1) */
    char order[6];     /* DimensionOrder, e.g. "XYZCT": X fastest, the last letter slowest */
    double voxel[3];   /* PhysicalSizeZ, Y, X in micrometres (slowest axis first); 0 when
                        * the metadata does not give it */
} pp_ome_meta;

/* Parses the description text xml (NUL-terminated; NULL means no
 * description) of file `path` (named in messages) into *out. Not OME:
 * PP_OK with out->present = 0. OME but malformed or unsupported (a tag left
 * open, a missing or non-numeric Size, an unknown DimensionOrder or unit,
 * more than one image): PP_ERR_FORMAT, one sentence naming path and the
 * element or attribute. */
pp_status pp_ome_parse(const char *xml, const char *path, pp_ome_meta *out);

/* The page (TIFF directory, from 0) that holds plane (z, c, t) under the
 * DimensionOrder of m (present, indices below the sizes). */
size_t pp_ome_page(const pp_ome_meta *m, size_t z, size_t c, size_t t);

/* Writes the OME-XML of one image of 32-bit float planes, nz x ny x nx
 * (SizeC = SizeT = 1, DimensionOrder XYZCT, one TiffData block for all
 * pages, physical sizes in micrometres where voxel[i] > 0) into buf.
 * name goes into the Image's Name attribute (XML-escaped; may be NULL).
 * PP_ERR_LIMIT when len is too small. */
pp_status pp_ome_format(size_t nz, size_t ny, size_t nx, const double voxel[3], const char *name,
                        char *buf, size_t len);

#endif
