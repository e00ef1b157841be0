/* kilter: the buses' places on Earth (kilter/geo.h).
 *
 * Conversion with PROJ: one context per call (PROJ's default context is
 * process-wide state, and the library keeps none), its log turned off (the
 * library never prints: PROJ's messages come back as the error record's).  The
 * transformation is normalized for visualization, so that x is always east
 * (easting or longitude) and y north, whatever axis order a system declares
 * (EPSG:4326 declares latitude first).  Distances on the WGS 84 ellipsoid by
 * Karney's geodesic algorithm (C. F. F. Karney, "Algorithms for geodesics",
 * J. Geodesy 87, 2013), which PROJ ships as geodesic.h. */
#include <geodesic.h>
#include <math.h>
#include <proj.h>
#include <stdio.h>
#include <string.h>
#include "kilter/geo.h"
#include "kl_model.h"

/* WGS 84: a = 6378137 m, 1/f = 298.257223563 (NIMA TR8350.2, table 3.1). */
#define WGS84_A 6378137.0
#define WGS84_F (1.0 / 298.257223563)
#define WGS84_LONLAT "OGC:CRS84" /* WGS 84 longitude, latitude in degrees: RFC 7946's system */

static kl_status proj_failed(PJ_CONTEXT *ctx, const char *what, const char *name, kl_errors *err)
{
    int e = proj_context_errno(ctx);
    const char *why = e ? proj_context_errno_string(ctx, e) : NULL;
    kl_errors_add(err, NULL, 0, 0, NULL, "%s '%s': %s", what, name, why ? why : "not known to PROJ");
    return KL_EINPUT;
}

kl_status kl_geo_transform(const char *from, const char *to, double *x, double *y, int n,
                           kl_errors *err)
{
    PJ_CONTEXT *ctx = proj_context_create();
    if (!ctx)
        return kl_errors_add(err, NULL, 0, 0, NULL, "out of memory starting PROJ"), KL_ENOMEM;
    proj_log_level(ctx, PJ_LOG_NONE);
    kl_status st = KL_OK;
    PJ *raw = proj_create_crs_to_crs(ctx, from, to, NULL);
    PJ *P = raw ? proj_normalize_for_visualization(ctx, raw) : NULL;
    if (!P)
        st = proj_failed(ctx, "cannot convert between", raw ? to : from, err);
    if (!st && n > 0) {
        proj_trans_generic(P, PJ_FWD, x, sizeof *x, (size_t)n, y, sizeof *y, (size_t)n,
                           NULL, 0, 0, NULL, 0, 0);
        /* a point that fails comes back as HUGE_VAL (PROJ: proj_trans_generic) */
        for (int i = 0; i < n && !st; i++)
            if (!isfinite(x[i]) || !isfinite(y[i]) || fabs(x[i]) == HUGE_VAL) {
                kl_errors_add(err, NULL, 0, 0, NULL, "point %d does not convert from %s to %s", i,
                              from, to);
                st = KL_EINPUT;
            }
    }
    proj_destroy(P);
    proj_destroy(raw);
    proj_context_destroy(ctx);
    return st;
}

/* The PROJ name of the feeder's system, into buf. */
static int system_name(const kl_coordinates *c, char *buf, size_t n)
{
    switch (c->system) {
    case KL_COORD_LONLAT: return snprintf(buf, n, "%s", WGS84_LONLAT);
    case KL_COORD_EPSG: return snprintf(buf, n, "EPSG:%d", c->epsg);
    case KL_COORD_LOCAL:
        /* the azimuthal equidistant plane about the origin: distances and
         * directions from it are true, and over a feeder's few km the plane
         * differs from the ground by far less than the lengths are known */
        return snprintf(buf, n, "+proj=aeqd +lat_0=%.12g +lon_0=%.12g +x_0=0 +y_0=0 +datum=WGS84 "
                        "+units=m +type=crs", c->origin_lat_deg, c->origin_lon_deg);
    case KL_COORD_PLOT: break;
    }
    return -1;
}

kl_status kl_geo_lonlat(const kl_feeder *f, double *lon, double *lat, kl_errors *err)
{
    const kl_coordinates *c = &f->coordinates;
    char name[256];
    if (system_name(c, name, sizeof name) < 0)
        return kl_errors_add(err, f->path, 1, 1, NULL, "the buses' x and y are plot units, no place on "
                             "Earth: state what they are with a top-level 'coordinates' (lon/lat, "
                             "EPSG:<code> or local with an origin; feeders/README.md)"), KL_EINPUT;
    int n = 0;
    for (int b = 0; b < f->nbuses; b++) {
        const kl_bus *bu = &f->buses[b];
        double s = c->system == KL_COORD_LOCAL ? c->unit_m : 1.0;
        lon[b] = bu->has_xy ? bu->x * s : NAN;
        lat[b] = bu->has_xy ? bu->y * s : NAN;
        n += bu->has_xy;
    }
    if (c->system == KL_COORD_LONLAT)
        return KL_OK; /* already there */
    /* the points with coordinates, packed at the front, converted, put back */
    int *id = kl_malloc((size_t)(n > 0 ? n : 1) * sizeof *id);
    double *x = kl_malloc((size_t)(n > 0 ? n : 1) * sizeof *x);
    double *y = kl_malloc((size_t)(n > 0 ? n : 1) * sizeof *y);
    kl_status st = KL_OK;
    if (!id || !x || !y) {
        kl_errors_add(err, f->path, 0, 0, NULL, "out of memory converting the bus coordinates");
        st = KL_ENOMEM;
    }
    for (int b = 0, k = 0; !st && b < f->nbuses; b++)
        if (f->buses[b].has_xy) {
            id[k] = b;
            x[k] = lon[b];
            y[k++] = lat[b];
        }
    kl_errors sub;
    kl_errors_init(&sub);
    if (!st)
        st = kl_geo_transform(name, WGS84_LONLAT, x, y, n, &sub);
    if (st == KL_EINPUT) {
        int bad = -1;
        for (int k = 0; k < n && bad < 0; k++)
            if (!isfinite(x[k]) || !isfinite(y[k]) || fabs(x[k]) == HUGE_VAL)
                bad = id[k];
        char elem[160];
        snprintf(elem, sizeof elem, "bus \"%s\"", bad >= 0 ? f->buses[bad].name : "");
        if (bad >= 0)
            kl_errors_add(err, f->path, f->buses[bad].loc.line, f->buses[bad].loc.col, elem,
                          "x %g, y %g do not convert from %s to longitude and latitude: outside the "
                          "system's area, or not its eastings and northings", f->buses[bad].x,
                          f->buses[bad].y, name);
        else
            kl_errors_add(err, f->path, c->loc.line, c->loc.col, "coordinates", "%s (check the EPSG "
                          "code: a coordinate reference system PROJ's database holds)",
                          sub.count ? sub.items[0].message : "PROJ cannot use this system");
    } else if (st == KL_ENOMEM && sub.count) {
        kl_errors_add(err, f->path, 0, 0, NULL, "out of memory converting the bus coordinates");
    }
    kl_errors_free(&sub);
    for (int k = 0; !st && k < n; k++) {
        lon[id[k]] = x[k];
        lat[id[k]] = y[k];
    }
    kl_free(id);
    kl_free(x);
    kl_free(y);
    return st;
}

double kl_geo_distance_m(double lon1, double lat1, double lon2, double lat2)
{
    if (!isfinite(lon1) || !isfinite(lat1) || !isfinite(lon2) || !isfinite(lat2))
        return NAN;
    struct geod_geodesic g;
    double s12;
    geod_init(&g, WGS84_A, WGS84_F);
    geod_inverse(&g, lat1, lon1, lat2, lon2, &s12, NULL, NULL);
    return s12;
}

void kl_geo_section_distances(const kl_feeder *f, const double *lon, const double *lat, double *dist)
{
    const kl_coordinates *c = &f->coordinates;
    for (int k = 0; k < f->nsections; k++) {
        const kl_bus *a = &f->buses[f->sections[k].from], *b = &f->buses[f->sections[k].to];
        dist[k] = NAN;
        if (c->system == KL_COORD_PLOT || !a->has_xy || !b->has_xy)
            continue;
        if (c->system == KL_COORD_LOCAL)
            dist[k] = hypot(b->x - a->x, b->y - a->y) * c->unit_m;
        else if (lon && lat)
            dist[k] = kl_geo_distance_m(lon[f->sections[k].from], lat[f->sections[k].from],
                                        lon[f->sections[k].to], lat[f->sections[k].to]);
    }
}

int kl_geo_check_lengths(const kl_feeder *f, const double *dist, kl_errors *warn)
{
    int n = 0;
    for (int k = 0; k < f->nsections; k++) {
        const kl_section *s = &f->sections[k];
        if (!(s->length_m > 0) || !isfinite(dist[k]) || s->length_m >= KL_GEO_LENGTH_SHARE * dist[k])
            continue;
        char elem[160];
        snprintf(elem, sizeof elem, "section \"%s\"", s->name);
        n++;
        kl_errors_warn(warn, f->path, s->loc.line, s->loc.col, elem, "length %.0f m is %.0f %% of "
                      "the straight distance between %s and %s (%.0f m by their coordinates): a line "
                      "is at least as long; check the length or the buses' coordinates", s->length_m,
                      100.0 * s->length_m / dist[k], f->buses[s->from].name, f->buses[s->to].name,
                      dist[k]);
    }
    return n;
}
