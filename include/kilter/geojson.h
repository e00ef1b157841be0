/* kilter: results on the map: a GeoJSON FeatureCollection (RFC 7946) of the
 * buses as points and the sections as lines, in WGS 84 longitude and latitude
 * (kl_geo_lonlat, kilter/geo.h), each feature's properties the JSON members of
 * its row in a result table (kilter/table.h): the figures are the tables'. */
#ifndef KILTER_GEOJSON_H
#define KILTER_GEOJSON_H

#include <stdio.h>
#include "kilter/error.h"
#include "kilter/feeder.h"
#include "kilter/table.h"

/* Properties for features from a table whose row r is the feeder's bus (or
 * section) r; the rows the table's JSON keeps get its members, the others
 * only the element's own (name, kind, energized). */
typedef struct {
    const kl_table *t; /* NULL: the element's own properties only */
    const void *ctx;
} kl_geojson_props;

/* Further properties of a section's or a bus's feature (a plan's moves),
 * written as JSON members, each preceded by ", ", or nothing. */
typedef void (*kl_geojson_extra)(FILE *o, const void *ctx, int id);

typedef struct {
    const kl_feeder *feeder;
    const double *lon, *lat;    /* [nbuses] degrees, NAN: no coordinates (left out) */
    kl_geojson_props buses;     /* rows: bus ids */
    kl_geojson_props sections;  /* rows: section ids */
    kl_geojson_extra section_extra; /* (ctx, section id); NULL: none */
    kl_geojson_extra bus_extra;     /* (ctx, bus id); NULL: none */
    const void *extra_ctx;
    const char *caution;        /* the collection's "caution" member (NULL: none) */
} kl_geojson_input;

/* Writes the collection to o.  Coordinates [longitude, latitude] with 7
 * decimals (about 1 cm); a section crossing the antimeridian is cut there into
 * a MultiLineString (RFC 7946 clause 3.1.9); a bus or section without
 * coordinates is left out.  KL_EARG for a feeder or arrays missing; KL_EINPUT
 * when no bus has coordinates. */
kl_status kl_geojson_write(FILE *o, const kl_geojson_input *in, kl_errors *err);

#endif
