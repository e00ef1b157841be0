/* kilter: the report's tables built from the load flow's phases (no study):
 * unbalance by bus and neutral current by section, as schema tables
 * (kilter/table.h) read from the kl_report_input, and written by the HTML
 * table writer (table_html.c: ranking, cut, cells). */
#include <complex.h>
#include <math.h>
#include "kl_report.h"
#include "kilter/table.h"

#define IN(ctx) ((const kl_report_input *)(ctx))

const char *kl_report_bus_name(const kl_feeder *f, int b)
{
    return b >= 0 && f->buses[b].name ? f->buses[b].name : "?";
}

/* ---- unbalance: a row per three-phase bus, largest VUF first */

static int bus_rows(const void *ctx)
{
    return IN(ctx)->feeder->nbuses;
}

static double bus_rank(const void *ctx, int b)
{
    return kl_report_vuf_pct(IN(ctx), b);
}

static void bus_name(const void *ctx, int b, int j, kl_cell *c)
{
    c->str = kl_report_bus_name(IN(ctx)->feeder, b);
}

#define BY_PHASE(name, expr)                                                          \
    static void name##_0(const void *ctx, int b, int j, kl_cell *c) { int q = 0; expr; } \
    static void name##_1(const void *ctx, int b, int j, kl_cell *c) { int q = 1; expr; } \
    static void name##_2(const void *ctx, int b, int j, kl_cell *c) { int q = 2; expr; }

BY_PHASE(v_pu, c->num = kl_report_v_pu(IN(ctx), b, q))

static void v_seq(const void *ctx, int b, int q, kl_cell *c)
{
    double v012[3];
    kl_unb_voltage u;
    kl_report_bus_unbalance(IN(ctx), b, v012, &u);
    c->num = v012[q];
}
BY_PHASE(v012, v_seq(ctx, b, q, c))

static void vuf_pct(const void *ctx, int b, int j, kl_cell *c)
{
    double v012[3];
    kl_unb_voltage u;
    kl_report_bus_unbalance(IN(ctx), b, v012, &u);
    c->num = 100 * u.vuf;
}

static void lvur_pct(const void *ctx, int b, int j, kl_cell *c)
{
    double v012[3];
    kl_unb_voltage u;
    kl_report_bus_unbalance(IN(ctx), b, v012, &u);
    c->num = 100 * u.lvur;
}

/* VUF against the supply limit and the compatibility level (limits.h). */
static void vuf_verdict(const void *ctx, int b, int j, kl_cell *c)
{
    const kl_limits *l = &IN(ctx)->opt.limits;
    double v012[3];
    kl_unb_voltage u;
    kl_report_bus_unbalance(IN(ctx), b, v012, &u);
    int over = kl_limits_vuf(l, u.vuf);
    c->str = c->buf;
    if (over < 0) {
        c->str = "&ndash;";
    } else if (over & KL_VUF_OVER_SUPPLY) {
        snprintf(c->buf, sizeof c->buf, "over %g %%", 100 * l->vuf_supply);
        c->cls = "bad";
    } else if (over & KL_VUF_OVER_COMPAT) {
        snprintf(c->buf, sizeof c->buf, "over %g %%", 100 * l->vuf_compat);
        c->cls = "bad";
    } else {
        snprintf(c->buf, sizeof c->buf, "within %g %%", 100 * l->vuf_compat);
        c->cls = "ok";
    }
}

#define HNUM(g, hd, fmt) {.key = hd, .type = KL_CELL_NUM, .get = g, .in = KL_IN_HTML, \
                          .html_head = hd, .html = fmt}

static const kl_column unbalance_cols[] = {
    {.key = "bus", .type = KL_CELL_STR, .get = bus_name, .in = KL_IN_HTML, .html_head = "bus"},
    HNUM(v_pu_0, "Va pu", KL_NUM_PU), HNUM(v_pu_1, "Vb pu", KL_NUM_PU),
    HNUM(v_pu_2, "Vc pu", KL_NUM_PU), HNUM(v012_0, "V0 pu", KL_NUM_PU),
    HNUM(v012_1, "V1 pu", KL_NUM_PU), HNUM(v012_2, "V2 pu", KL_NUM_PU),
    HNUM(vuf_pct, "VUF %", KL_NUM_PCT), HNUM(lvur_pct, "LVUR %", KL_NUM_PCT),
    {.key = "against", .type = KL_CELL_STR, .get = vuf_verdict, .in = KL_IN_HTML,
     .html_head = "against the limits", .html = "%s"},
};

static const kl_table unbalance = {
    .name = "unbalance", .help = "three-phase buses, largest VUF first", .col = unbalance_cols,
    .ncol = (int)(sizeof unbalance_cols / sizeof unbalance_cols[0]), .rows = bus_rows,
    .rank = bus_rank,
};

kl_status kl_report_table_unbalance(FILE *out, const kl_report_input *in, kl_errors *err)
{
    kl_table_shown s;
    kl_status st = kl_table_html_select(&unbalance, in, in->opt.max_table_rows, &s, err);
    if (st)
        return st;
    fputs("<section id=\"unbalance\">\n<h2>Unbalance</h2>\n", out);
    fprintf(out, "<p class=\"note\">Three-phase buses, largest voltage unbalance factor first "
            "(%d of %d shown; the CSV output lists all). VUF = |V2|/|V1| (IEC 61000-4-30); "
            "LVUR = largest deviation of a line voltage from their average, over the average "
            "(NEMA MG 1).</p>\n", s.shown, s.total);
    kl_table_html(out, &unbalance, in, "unbalance", &s); /* the caller closes the section */
    kl_table_shown_free(&s);
    return KL_OK;
}

/* ---- neutral current: a row per line section, largest neutral current
 * first; loading = the flow's neutral current over the neutral's ampacity */

static int sec_rows(const void *ctx)
{
    return IN(ctx)->feeder->nsections;
}

static double sec_rank(const void *ctx, int s)
{
    double a = kl_report_neutral_a(IN(ctx), s);
    return IN(ctx)->feeder->sections[s].kind == KL_SEC_LINE ? a : NAN;
}

static const kl_section *SEC(const void *ctx, int s)
{
    return &IN(ctx)->feeder->sections[s];
}

static void sec_name(const void *ctx, int s, int j, kl_cell *c)
{
    c->str = SEC(ctx, s)->name;
}

static void sec_from(const void *ctx, int s, int j, kl_cell *c)
{
    c->str = kl_report_bus_name(IN(ctx)->feeder, SEC(ctx, s)->from);
}

static void sec_to(const void *ctx, int s, int j, kl_cell *c)
{
    c->str = kl_report_bus_name(IN(ctx)->feeder, SEC(ctx, s)->to);
}

static void sec_phases(const void *ctx, int s, int j, kl_cell *c)
{
    c->str = kl_phases_str(SEC(ctx, s)->phases, c->buf);
}

BY_PHASE(i_amps, c->num = (SEC(ctx, b)->phases >> q) & 1 ? cabs(IN(ctx)->ph.i[3 * b + q]) : NAN)

static void neutral_a(const void *ctx, int s, int j, kl_cell *c)
{
    c->num = kl_report_neutral_a(IN(ctx), s);
}

static double ampacity(const void *ctx, int s)
{
    const kl_feeder *f = IN(ctx)->feeder;
    const kl_section *sec = SEC(ctx, s);
    if (sec->kind == KL_SEC_LINE && sec->construction >= 0 && sec->construction < f->nconstructions)
        return f->constructions[sec->construction].neutral_ampacity_a;
    return NAN;
}

static void rating(const void *ctx, int s, int j, kl_cell *c)
{
    double a = ampacity(ctx, s);
    c->num = a > 0 ? a : NAN;
}

/* kl_limits_share: 1 over, 0 within, -1 rating not known; ratio = a / amp. */
static int share(const void *ctx, int s, double *ratio)
{
    *ratio = NAN;
    return kl_limits_share(kl_report_neutral_a(IN(ctx), s), ampacity(ctx, s),
                           IN(ctx)->opt.limits.neutral_share, ratio);
}

static void loading(const void *ctx, int s, int j, kl_cell *c)
{
    double ratio;
    share(ctx, s, &ratio);
    c->num = 100 * ratio;
}

static void verdict(const void *ctx, int s, int j, kl_cell *c)
{
    double ratio;
    int over = share(ctx, s, &ratio);
    c->cls = over > 0 ? "bad" : "ok";
    c->str = over < 0 ? "rating not known" : over ? "over" : "within";
}

static const kl_column neutral_cols[] = {
    {.key = "section", .type = KL_CELL_STR, .get = sec_name, .in = KL_IN_HTML,
     .html_head = "section"},
    {.key = "from", .type = KL_CELL_STR, .get = sec_from, .in = KL_IN_HTML, .html_head = "from"},
    {.key = "to", .type = KL_CELL_STR, .get = sec_to, .in = KL_IN_HTML, .html_head = "to"},
    {.key = "phases", .type = KL_CELL_STR, .get = sec_phases, .in = KL_IN_HTML,
     .html_head = "phases"},
    HNUM(i_amps_0, "Ia A", KL_NUM_AMP), HNUM(i_amps_1, "Ib A", KL_NUM_AMP),
    HNUM(i_amps_2, "Ic A", KL_NUM_AMP), HNUM(neutral_a, "In A", KL_NUM_AMP),
    HNUM(rating, "neutral rating A", "%.0f"), HNUM(loading, "loading %", "%.0f"),
    {.key = "against", .type = KL_CELL_STR, .get = verdict, .in = KL_IN_HTML,
     .html_head = "against the rating"},
};

static const kl_table neutral = {
    .name = "neutral", .help = "line sections, largest neutral current first",
    .col = neutral_cols, .ncol = (int)(sizeof neutral_cols / sizeof neutral_cols[0]),
    .rows = sec_rows, .rank = sec_rank,
};

kl_status kl_report_table_neutral(FILE *out, const kl_report_input *in, kl_errors *err)
{
    kl_table_shown s;
    fputs("<section id=\"neutral\">\n<h2>Neutral current</h2>\n", out);
    if (!in->ph.i_neutral) {
        fputs("<p>The load flow gave no neutral currents for this run.</p>\n</section>\n", out);
        return KL_OK;
    }
    kl_status st = kl_table_html_select(&neutral, in, in->opt.max_table_rows, &s, err);
    if (st)
        return st;
    fprintf(out, "<p class=\"note\">Line sections, largest neutral current first (%d of %d "
            "shown). Loading is the neutral current over the neutral conductor's ampacity.</p>\n",
            s.shown, s.total);
    kl_table_html(out, &neutral, in, "neutral", &s);
    fputs("</section>\n", out);
    kl_table_shown_free(&s);
    return KL_OK;
}
