/* kilter: where the buses are on Earth.
 *
 * A feeder file states what its buses' x and y are (kl_coordinates,
 * kilter/feeder.h): plot units, WGS 84 longitude and latitude, a coordinate
 * reference system by its EPSG code, or a local plane about an origin.  These
 * functions convert them to WGS 84 longitude and latitude with PROJ (the map
 * outputs need them: GeoJSON is WGS 84 longitude/latitude, RFC 7946 clause 4),
 * measure straight distances, and compare them with the sections' lengths. */
#ifndef KILTER_GEO_H
#define KILTER_GEO_H

#include "kilter/error.h"
#include "kilter/feeder.h"

/* A line is at least as long as the straight distance between its ends; one
 * shorter than this share of it is reported (the rest is allowance for the
 * rounding of lengths and coordinates: common practice). */
#define KL_GEO_LENGTH_SHARE 0.9

/* The buses' WGS 84 longitude and latitude in degrees, lon[nbuses] and
 * lat[nbuses] (caller's arrays); NAN for a bus without x and y.  KL_EINPUT,
 * located at the feeder's `coordinates` (or its top for plot units), when the
 * coordinates are plot units, PROJ does not know the EPSG code, or a bus does
 * not convert (named); KL_ENOMEM. */
kl_status kl_geo_lonlat(const kl_feeder *f, double *lon, double *lat, kl_errors *err);

/* Converts n points in place between two coordinate reference systems named
 * as PROJ names them ("EPSG:27700", "OGC:CRS84", a "+proj=... +type=crs"
 * string), x east (easting or longitude) and y north (northing or latitude)
 * whatever axis order the systems declare.  KL_EINPUT when a system is unknown
 * or a point does not convert (its index in err), KL_ENOMEM. */
kl_status kl_geo_transform(const char *from, const char *to, double *x, double *y, int n,
                           kl_errors *err);

/* The geodesic distance between two points on the WGS 84 ellipsoid (Karney's
 * algorithm, PROJ's geodesic.h), metres; NAN when a coordinate is not finite. */
double kl_geo_distance_m(double lon1, double lat1, double lon2, double lat2);

/* The straight distance between the two buses of each section, dist[nsections],
 * metres: on a local plane the plane's distance, otherwise the geodesic one
 * between the converted points (lon, lat from kl_geo_lonlat; NULL for a local
 * plane or plot units).  NAN where a bus has no x and y, and everywhere for
 * plot units. */
void kl_geo_section_distances(const kl_feeder *f, const double *lon, const double *lat, double *dist);

/* One warning (kl_errors_warn) in warn, located at the section, for each line section shorter
 * than KL_GEO_LENGTH_SHARE x dist (from kl_geo_section_distances): its length
 * or its buses' coordinates are wrong.  Returns the number of such sections. */
int kl_geo_check_lengths(const kl_feeder *f, const double *dist, kl_errors *warn);

#endif
