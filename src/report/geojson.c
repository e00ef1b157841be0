/* kilter: GeoJSON (RFC 7946) of a feeder and its results (kilter/geojson.h).
 *
 * A FeatureCollection: a Point per bus with coordinates, a LineString per
 * section whose two buses have them, in WGS 84 longitude then latitude
 * (RFC 7946 clauses 3.1.1 and 4: no "crs" member, longitude first).  The
 * properties of a feature are its element's name and kind and the JSON
 * members of its row in a result table, the figures the JSON output prints.
 * Streams as it goes; nothing allocated. */
#include <math.h>
#include <string.h>
#include "kl_report.h"
#include "kilter/geojson.h"

static const char *section_kind(const kl_section *s)
{
    switch (s->kind) {
    case KL_SEC_LINE: return "line";
    case KL_SEC_SWITCH: return "switch";
    case KL_SEC_TRANSFORMER: return "transformer";
    case KL_SEC_REGULATOR: return "regulator";
    }
    return "section";
}

static void position(FILE *o, double lon, double lat)
{
    fprintf(o, "[%.7f, %.7f]", lon, lat);
}

/* A line from (lon1, lat1) to (lon2, lat2): a LineString, or where it crosses
 * the antimeridian (longitudes more than 180 degrees apart) a MultiLineString
 * of the two parts, cut at +-180 with the latitude interpolated there. */
static void line_geometry(FILE *o, double lon1, double lat1, double lon2, double lat2)
{
    if (fabs(lon2 - lon1) <= 180.0) {
        fputs("{\"type\": \"LineString\", \"coordinates\": [", o);
        position(o, lon1, lat1);
        fputs(", ", o);
        position(o, lon2, lat2);
        fputs("]}", o);
        return;
    }
    double edge = lon1 > 0 ? 180.0 : -180.0;             /* the side lon1 is on */
    double lon2u = lon2 + (lon1 > 0 ? 360.0 : -360.0);   /* lon2 unwrapped onto lon1's side */
    double t = (edge - lon1) / (lon2u - lon1);
    double lat_cut = lat1 + t * (lat2 - lat1);
    fputs("{\"type\": \"MultiLineString\", \"coordinates\": [[", o);
    position(o, lon1, lat1);
    fputs(", ", o);
    position(o, edge, lat_cut);
    fputs("], [", o);
    position(o, -edge, lat_cut);
    fputs(", ", o);
    position(o, lon2, lat2);
    fputs("]]}", o);
}

static int located(const kl_geojson_input *in, int b)
{
    return isfinite(in->lon[b]) && isfinite(in->lat[b]);
}

static void table_members(FILE *o, const kl_geojson_props *p, int row)
{
    if (!p->t || (p->t->keep && !p->t->keep(p->ctx, row, KL_TABLE_JSON)))
        return;
    fputs(", ", o);
    kl_table_json_members(o, p->t, p->ctx, row);
}

/* Whether the table's JSON members already hold `key` (the flow's tables name
 * a bus "name"): the element's own member is then left out, so that no key
 * appears twice in the properties (RFC 8259 4: names should be unique). */
static int table_has(const kl_geojson_props *p, const char *key)
{
    if (!p->t)
        return 0;
    for (int k = 0; k < p->t->ncol; k++) {
        const kl_column *c = &p->t->col[k];
        if (((c->in >> KL_TABLE_JSON) & 1u) && !c->sub && strcmp(c->json_key ? c->json_key : c->key, key) == 0)
            return 1;
    }
    return 0;
}

/* `, "key": ` unless the table has it; 1 when written. */
static int own_key(FILE *o, const kl_geojson_props *p, const char *key)
{
    if (table_has(p, key))
        return 0;
    fprintf(o, ", \"%s\": ", key);
    return 1;
}

static int kept(const kl_geojson_props *p, int row)
{
    return p->t && (!p->t->keep || p->t->keep(p->ctx, row, KL_TABLE_JSON));
}

static void bus_feature(FILE *o, const kl_geojson_input *in, int b, int first)
{
    const kl_bus *bu = &in->feeder->buses[b];
    fprintf(o, "%s\n    {\"type\": \"Feature\", \"geometry\": {\"type\": \"Point\", \"coordinates\": ",
            first ? "" : ",");
    position(o, in->lon[b], in->lat[b]);
    fputs("},\n     \"properties\": {\"element\": \"bus\"", o);
    if (own_key(o, &in->buses, "name"))
        kl_table_json_str(o, bu->name);
    if (bu->description && own_key(o, &in->buses, "description"))
        kl_table_json_str(o, bu->description);
    if (in->buses.t)
        fprintf(o, ", \"solved\": %s", kept(&in->buses, b) ? "true" : "false");
    table_members(o, &in->buses, b);
    if (in->bus_extra)
        in->bus_extra(o, in->extra_ctx, b);
    fputs("}}", o);
}

static void section_feature(FILE *o, const kl_geojson_input *in, int k, int first)
{
    const kl_section *s = &in->feeder->sections[k];
    fprintf(o, "%s\n    {\"type\": \"Feature\", \"geometry\": ", first ? "" : ",");
    line_geometry(o, in->lon[s->from], in->lat[s->from], in->lon[s->to], in->lat[s->to]);
    const kl_geojson_props *p = &in->sections;
    fputs(",\n     \"properties\": {\"element\": \"section\"", o);
    if (own_key(o, p, "name"))
        kl_table_json_str(o, s->name);
    if (own_key(o, p, "kind"))
        fprintf(o, "\"%s\"", section_kind(s));
    if (own_key(o, p, "from"))
        kl_table_json_str(o, in->feeder->buses[s->from].name);
    if (own_key(o, p, "to"))
        kl_table_json_str(o, in->feeder->buses[s->to].name);
    if (s->kind == KL_SEC_LINE && own_key(o, p, "length_m"))
        kl_table_json_num(o, s->length_m);
    if (in->sections.t)
        fprintf(o, ", \"solved\": %s", kept(&in->sections, k) ? "true" : "false");
    table_members(o, &in->sections, k);
    if (in->section_extra)
        in->section_extra(o, in->extra_ctx, k);
    fputs("}}", o);
}

kl_status kl_geojson_write(FILE *o, const kl_geojson_input *in, kl_errors *err)
{
    if (!o || !in || !in->feeder || !in->lon || !in->lat)
        return kl_errors_add(err, NULL, 0, 0, NULL, "geojson: no feeder or coordinates given"), KL_EARG;
    const kl_feeder *f = in->feeder;
    int n = 0;
    for (int b = 0; b < f->nbuses; b++)
        n += located(in, b);
    if (n == 0)
        return kl_errors_add(err, f->path, 0, 0, NULL, "geojson: no bus has coordinates: give the "
                             "buses x and y (feeders/README.md, 'buses')"), KL_EINPUT;
    fputs("{\"type\": \"FeatureCollection\",\n  \"name\": ", o);
    kl_table_json_str(o, f->name);
    if (in->caution) {
        fputs(",\n  \"caution\": ", o);
        kl_table_json_str(o, in->caution);
    }
    fputs(",\n  \"features\": [", o);
    int first = 1;
    for (int k = 0; k < f->nsections; k++)
        if (located(in, f->sections[k].from) && located(in, f->sections[k].to)) {
            section_feature(o, in, k, first);
            first = 0;
        }
    for (int b = 0; b < f->nbuses; b++)
        if (located(in, b)) {
            bus_feature(o, in, b, first);
            first = 0;
        }
    fputs("\n  ]\n}\n", o);
    return KL_OK;
}
