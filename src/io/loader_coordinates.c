/* kilter: the top-level `coordinates` of a feeder file: what the buses' x and
 * y are (kl_coordinates, feeders/README.md).
 *
 *   coordinates: {system: lon/lat}              x longitude, y latitude (WGS 84, degrees)
 *   coordinates: {system: EPSG:NNNN}            x easting, y northing of that system
 *   coordinates: {system: local, longitude: L, latitude: P, unit: ft}
 *                                               x east, y north, in feet, from (L, P)
 *
 * The loader checks what it can without the coordinate library: the form of
 * the system, the origin's ranges, and (lon/lat) each bus's.  Whether PROJ
 * knows an EPSG code is told where the coordinates are converted
 * (kl_geo_lonlat), at this mapping's position. */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include "kilter/units.h"
#include "kl_io.h"

enum { CO_SYSTEM, CO_LON, CO_LAT, CO_UNIT };
static const char *const coord_keys[] = {"system", "longitude", "latitude", "unit", NULL};
static const char *const unit_names[] = {"m", "ft", "km", "mi", NULL};
static const double unit_metres[] = {1.0, 0.3048, 1000.0, 1609.344}; /* international foot and mile */

/* "lon/lat", "EPSG:N" (N 1 .. 99999999) or "local"; 0, or -1 after a message. */
static int read_system(kl_loader *L, const kl_fields *fl, kl_coordinates *c)
{
    const char *s = kl_ld_str(L, fl, CO_SYSTEM, KL_F_REQ);
    if (!s)
        return -1;
    if (strcmp(s, "lon/lat") == 0) {
        c->system = KL_COORD_LONLAT;
        return 0;
    }
    if (strcmp(s, "local") == 0) {
        c->system = KL_COORD_LOCAL;
        return 0;
    }
    if (strncmp(s, "EPSG:", 5) == 0 || strncmp(s, "epsg:", 5) == 0) {
        char *end;
        long code = strtol(s + 5, &end, 10);
        if (end != s + 5 && !*end && code >= 1 && code <= 99999999 && s[5] != '+' && s[5] != '-') {
            c->system = KL_COORD_EPSG;
            c->epsg = (int)code;
            return 0;
        }
    }
    kl_ld_error(L, fl->val[CO_SYSTEM], "'system' is '%s': expected lon/lat (WGS 84 longitude and "
                "latitude in degrees), EPSG:<code> (a coordinate system by its EPSG code, e.g. "
                "EPSG:32611 for WGS 84 / UTM zone 11N) or local (x east and y north from an origin "
                "given by 'longitude' and 'latitude', in 'unit')", s);
    return -1;
}

static void read_origin(kl_loader *L, const kl_fields *fl, kl_coordinates *c)
{
    int have = (fl->val[CO_LON] >= 0) + (fl->val[CO_LAT] >= 0);
    if (c->system != KL_COORD_LOCAL) {
        if (have || fl->val[CO_UNIT] >= 0)
            kl_ld_error(L, fl->val[fl->val[CO_LON] >= 0 ? CO_LON : fl->val[CO_LAT] >= 0 ? CO_LAT : CO_UNIT],
                        "'longitude', 'latitude' and 'unit' belong to 'system: local' (the origin of "
                        "the local plane and its unit); this system states its own");
        return;
    }
    if (have < 2) {
        kl_ld_error(L, fl->map, "'system: local' needs the origin, where x = y = 0, as 'longitude' "
                    "and 'latitude' in degrees (WGS 84), e.g. {system: local, longitude: -130.2 deg, "
                    "latitude: 44.05 deg, unit: ft}");
        return;
    }
    if (kl_ld_real(L, fl, CO_LON, KL_Q_ANGLE, &c->origin_lon_deg, 0, KL_F_REQ) == 0
        && !(c->origin_lon_deg >= -180 && c->origin_lon_deg <= 180))
        kl_ld_error(L, fl->val[CO_LON], "'longitude' is %g deg: expected -180 to 180 (east positive)",
                    c->origin_lon_deg);
    /* a plane about the origin is a fair model of the ground of a feeder,
     * but not at a pole, where east and north are not defined */
    if (kl_ld_real(L, fl, CO_LAT, KL_Q_ANGLE, &c->origin_lat_deg, 0, KL_F_REQ) == 0
        && !(c->origin_lat_deg > -85 && c->origin_lat_deg < 85))
        kl_ld_error(L, fl->val[CO_LAT], "'latitude' is %g deg: expected between -85 and 85 (north "
                    "positive; a local plane is not defined at the poles)", c->origin_lat_deg);
    int u = kl_ld_enum(L, fl, CO_UNIT, unit_names, 0);
    c->unit_m = unit_metres[u >= 0 ? u : 0];
}

void kl_ld_coordinates(kl_loader *L, int map)
{
    kl_coordinates *c = &L->f->coordinates;
    kl_fields fl;
    kl_ld_label(L, "coordinates", NULL, -1);
    if (kl_ld_fields(L, map, coord_keys, &fl, "coordinates") < 0)
        return;
    c->loc.line = kl_ynode_at(L->r, map)->line;
    c->loc.col = kl_ynode_at(L->r, map)->col;
    c->unit_m = 1.0;
    if (read_system(L, &fl, c) < 0) {
        c->system = KL_COORD_PLOT;
        return;
    }
    read_origin(L, &fl, c);
}

/* With lon/lat, each bus's x and y are a longitude and a latitude. */
void kl_ld_coordinates_check(kl_loader *L)
{
    const kl_feeder *f = L->f;
    if (f->coordinates.system != KL_COORD_LONLAT)
        return;
    for (int b = 0; b < f->nbuses; b++) {
        const kl_bus *bu = &f->buses[b];
        if (!bu->has_xy || (bu->x >= -180 && bu->x <= 180 && bu->y >= -90 && bu->y <= 90))
            continue;
        kl_ld_label(L, "bus", bu->name, b);
        kl_ld_error_at(L, bu->loc.line, bu->loc.col, "x %g, y %g: with 'coordinates: {system: "
                       "lon/lat}' x is the longitude (-180 to 180) and y the latitude (-90 to 90), in "
                       "degrees%s", bu->x, bu->y,
                       fabs(bu->x) <= 90 && fabs(bu->y) <= 180 ? " (are x and y swapped?)" : "");
    }
}
