/* kilter: the unbalance study's summary and compliance as tables
 * (kilter/table.h), for the formats that want them as rows (CSV, the
 * workbook): a row per figure of the summary (the worst of each index and
 * where), a row per limit with what breaks it.  The text output prints the
 * same figures as prose (src/cli/study_print.c); the definitions are those of
 * docs/study.md. */
#include <complex.h>
#include <math.h>
#include "kl_report.h"
#include "kilter/table.h"

#define ROWS(ctx) ((const kl_study_rows *)(ctx))

static double pct(double x)
{
    return 100.0 * x;
}

/* ---- summary: a row per figure */

typedef struct {
    double value;
    const char *at;  /* bus or section name, NULL none */
    int phase;       /* 'a'..'c', 0 none */
} figure;

typedef struct {
    const char *item;
    const char *what;
    const char *unit;
    void (*get)(const kl_study_rows *w, figure *f);
} summary_item;

static const char *bus_name(const kl_study_rows *w, int b)
{
    return b >= 0 ? w->feeder->buses[b].name : NULL;
}

static const char *sec_name(const kl_study_rows *w, int k)
{
    return k >= 0 ? w->feeder->sections[k].name : NULL;
}

static void worst_index(const kl_study_rows *w, int b, int which, figure *f)
{
    if (b < 0)
        return;
    const kl_unb_voltage *u = &w->study->unb[b];
    double x[4] = { u->vuf, u->v0_v1, u->lvur, u->pvur };
    f->value = pct(x[which]);
    f->at = bus_name(w, b);
}

static void s_vuf(const kl_study_rows *w, figure *f) { worst_index(w, w->study->worst_vuf, 0, f); }
static void s_v0(const kl_study_rows *w, figure *f) { worst_index(w, w->study->worst_v0, 1, f); }
static void s_lvur(const kl_study_rows *w, figure *f) { worst_index(w, w->study->worst_lvur, 2, f); }
static void s_pvur(const kl_study_rows *w, figure *f) { worst_index(w, w->study->worst_pvur, 3, f); }

static void extreme_voltage(const kl_study_rows *w, int b, int ph, figure *f)
{
    if (b < 0 || ph < 0 || ph > 2)
        return;
    f->value = w->study->v_pu[3 * b + ph];
    f->at = bus_name(w, b);
    f->phase = 'a' + ph;
}

static void s_vlow(const kl_study_rows *w, figure *f)
{
    extreme_voltage(w, w->study->lowest_v, w->study->lowest_ph, f);
}

static void s_vhigh(const kl_study_rows *w, figure *f)
{
    extreme_voltage(w, w->study->highest_v, w->study->highest_ph, f);
}

static void s_i2(const kl_study_rows *w, figure *f)
{
    int k = w->study->worst_i2;
    if (k < 0)
        return;
    f->value = pct(w->study->iunb[k].i2_i1);
    f->at = sec_name(w, k);
}

/* Feeder-head figures: at the source bus. */
static void head(const kl_study_rows *w, double x, figure *f)
{
    f->value = x;
    f->at = bus_name(w, w->feeder->source.bus);
}

static void s_head_i0(const kl_study_rows *w, figure *f) { head(w, cabs(w->study->head_i012[0]), f); }
static void s_head_i1(const kl_study_rows *w, figure *f) { head(w, cabs(w->study->head_i012[1]), f); }
static void s_head_i2(const kl_study_rows *w, figure *f) { head(w, cabs(w->study->head_i012[2]), f); }
static void s_head_3i0(const kl_study_rows *w, figure *f) { head(w, cabs(w->study->head_3i0), f); }
static void s_relay(const kl_study_rows *w, figure *f) { head(w, pct(w->study->relay_ratio), f); }

static void s_neutral_a(const kl_study_rows *w, figure *f)
{
    int k = w->study->worst_neutral;
    if (k < 0)
        return;
    f->value = w->study->i_n_rms[k];
    f->at = sec_name(w, k);
}

static void s_neutral_pct(const kl_study_rows *w, figure *f)
{
    int k = w->study->worst_neutral;
    if (k < 0)
        return;
    f->value = pct(w->study->neutral_ratio[k]);
    f->at = sec_name(w, k);
}

static void s_loading(const kl_study_rows *w, figure *f)
{
    int k = w->study->worst_loading;
    if (k < 0)
        return;
    f->value = pct(w->study->loading[k]);
    f->at = sec_name(w, k);
}

static void s_loading_emerg(const kl_study_rows *w, figure *f)
{
    int k = w->study->worst_loading;
    if (k < 0)
        return;
    f->value = pct(w->study->loading_emerg[k]);
    f->at = sec_name(w, k);
}

static const summary_item summary_items[] = {
    { "worst_vuf", "worst voltage unbalance factor V2/V1", "%", s_vuf },
    { "worst_v0_v1", "worst zero-sequence factor V0/V1", "%", s_v0 },
    { "worst_lvur", "worst line-voltage unbalance rate", "%", s_lvur },
    { "worst_pvur", "worst phase-voltage unbalance rate", "%", s_pvur },
    { "lowest_voltage", "lowest phase voltage", "pu", s_vlow },
    { "highest_voltage", "highest phase voltage", "pu", s_vhigh },
    { "worst_i2_i1", "worst current unbalance I2/I1 of a three-phase section", "%", s_i2 },
    { "head_i0", "feeder-head zero-sequence current", "A", s_head_i0 },
    { "head_i1", "feeder-head positive-sequence current", "A", s_head_i1 },
    { "head_i2", "feeder-head negative-sequence current", "A", s_head_i2 },
    { "head_residual_3i0", "feeder-head residual current 3I0", "A", s_head_3i0 },
    { "head_relay_share", "feeder-head 3I0 as a share of the ground-relay pickup", "%", s_relay },
    { "most_loaded_neutral", "largest neutral RMS current (fundamental and triplen)", "A",
      s_neutral_a },
    { "most_loaded_neutral_share", "that neutral's current as a share of its ampacity", "%",
      s_neutral_pct },
    { "most_loaded_section", "largest section loading, share of its continuous rating", "%",
      s_loading },
    { "most_loaded_section_emergency", "that section's loading, share of its emergency rating",
      "%", s_loading_emerg },
};
#define NSUMMARY ((int)(sizeof summary_items / sizeof summary_items[0]))

static int summary_rows(const void *ctx)
{
    return NSUMMARY;
}

static figure summary_figure(const void *ctx, int r)
{
    figure f = { NAN, NULL, 0 };
    summary_items[r].get(ROWS(ctx), &f);
    return f;
}

static void sm_item(const void *ctx, int r, int j, kl_cell *c) { c->str = summary_items[r].item; }
static void sm_what(const void *ctx, int r, int j, kl_cell *c) { c->str = summary_items[r].what; }
static void sm_unit(const void *ctx, int r, int j, kl_cell *c) { c->str = summary_items[r].unit; }
static void sm_value(const void *ctx, int r, int j, kl_cell *c) { c->num = summary_figure(ctx, r).value; }
static void sm_at(const void *ctx, int r, int j, kl_cell *c) { c->str = summary_figure(ctx, r).at; }

static void sm_phase(const void *ctx, int r, int j, kl_cell *c)
{
    int p = summary_figure(ctx, r).phase;
    c->str = p == 'a' ? "a" : p == 'b' ? "b" : p == 'c' ? "c" : NULL;
}

static const kl_column summary_cols[] = {
    {.key = "item", .help = "the figure's name", .type = KL_CELL_STR, .get = sm_item,
     .in = KL_IN_CSV},
    {.key = "value", .help = "the figure (empty: not defined on this feeder)", .type = KL_CELL_NUM,
     .get = sm_value, .in = KL_IN_CSV},
    {.key = "unit", .help = "the figure's unit", .type = KL_CELL_STR, .get = sm_unit,
     .in = KL_IN_CSV},
    {.key = "at", .help = "the bus or section where it occurs", .type = KL_CELL_STR, .get = sm_at,
     .in = KL_IN_CSV},
    {.key = "phase", .help = "the phase, for a phase voltage", .type = KL_CELL_STR,
     .get = sm_phase, .in = KL_IN_CSV},
    {.key = "description", .help = "what the figure is", .type = KL_CELL_STR, .get = sm_what,
     .in = KL_IN_CSV},
};

const kl_table kl_table_study_summary = {
    .name = "summary", .help = "the study's worst figures and where they occur",
    .col = summary_cols, .ncol = (int)(sizeof summary_cols / sizeof summary_cols[0]),
    .rows = summary_rows,
};

/* ---- compliance: a row per limit */

typedef struct {
    double low, high;  /* the limit or range; NAN where one side has none */
    int count;         /* elements beyond it; -1 not known */
} verdict;

typedef struct {
    const char *check;
    const char *what;   /* what is counted */
    const char *unit;
    const char *basis;  /* where the limit comes from */
    int broken;         /* 1: a limit broken (the text's Limits broken); 0: a note */
    void (*get)(const kl_study_rows *w, verdict *v);
} compliance_item;

/* Bus-phases whose service class is one of the mask's (1 << kl_service_class). */
static int count_service(const kl_study *s, unsigned mask)
{
    int n = 0;
    for (int e = 0; e < 3 * s->nbuses; e++)
        n += s->service[e] >= 0 && ((mask >> s->service[e]) & 1u);
    return n;
}

static void c_vuf_supply(const kl_study_rows *w, verdict *v)
{
    v->high = pct(w->opt->limits.vuf_supply);
    v->count = w->study->n_vuf_supply;
}

static void c_vuf_compat(const kl_study_rows *w, verdict *v)
{
    v->high = pct(w->opt->limits.vuf_compat);
    v->count = w->study->n_vuf_compat;
}

static void c_range_a(const kl_study_rows *w, verdict *v)
{
    v->low = w->opt->limits.range_a_low_v;
    v->high = w->opt->limits.range_a_high_v;
    v->count = count_service(w->study, (1u << KL_SERVICE_B_LOW) | (1u << KL_SERVICE_B_HIGH)
                             | (1u << KL_SERVICE_BELOW_B) | (1u << KL_SERVICE_ABOVE_B));
}

static void c_range_b(const kl_study_rows *w, verdict *v)
{
    v->low = w->opt->limits.range_b_low_v;
    v->high = w->opt->limits.range_b_high_v;
    v->count = count_service(w->study, (1u << KL_SERVICE_BELOW_B) | (1u << KL_SERVICE_ABOVE_B));
}

static void c_neutral(const kl_study_rows *w, verdict *v)
{
    v->high = pct(w->opt->limits.neutral_share);
    v->count = w->study->n_neutral_over;
}

static void c_rating(const kl_study_rows *w, verdict *v)
{
    v->high = 100.0;
    v->count = w->study->n_loading_over;
}

static void c_warning(const kl_study_rows *w, verdict *v)
{
    v->high = pct(w->opt->limits.loading_warning);
    v->count = w->study->n_loading_note;
}

static void c_motor(const kl_study_rows *w, verdict *v)
{
    v->high = pct(w->opt->limits.motor_unbalance);
    v->count = w->study->n_motor_derate;
}

static void c_motor_max(const kl_study_rows *w, verdict *v)
{
    v->high = pct(w->opt->limits.motor_unbalance_max);
    v->count = w->study->n_motor_not_rec;
}

static void c_relay(const kl_study_rows *w, verdict *v)
{
    v->high = pct(w->opt->limits.relay_share);
    v->count = w->study->relay_flag < 0 ? -1 : w->study->relay_flag == 1;
}

/* Range A and Range B: `broken` is read from range_b (--range) in cp_broken. */
static const compliance_item compliance_items[] = {
    { "vuf_supply", "buses whose VUF is over the supply-system limit", "%",
      "ANSI C84.1 recommendation", 1, c_vuf_supply },
    { "vuf_compat", "buses whose VUF is over the compatibility level", "%",
      "EN 50160 / IEC 61000-2-2 level", 1, c_vuf_compat },
    { "service_range_a", "bus-phases outside Range A", "V on 120 V", "ANSI C84.1 Range A", 1,
      c_range_a },
    { "service_range_b", "bus-phases outside Range B", "V on 120 V", "ANSI C84.1 Range B", 1,
      c_range_b },
    { "neutral_share", "sections whose neutral current is over this share of its ampacity",
      "% of ampacity", "kilter's flag level (--neutral-share)", 1, c_neutral },
    { "loading_rating", "sections loaded over their continuous rating", "% of rating",
      "the ratings in the feeder file", 1, c_rating },
    { "loading_warning", "sections loaded over the planning margin (a note)", "% of rating",
      "the feeder file's or --loading-warning level", 0, c_warning },
    { "motor_derating", "motor buses whose LVUR calls for derating", "% LVUR",
      "NEMA MG 1 derating curve", 1, c_motor },
    { "motor_not_recommended", "motor buses where operation is not recommended", "% LVUR",
      "NEMA MG 1", 1, c_motor_max },
    { "head_relay_share", "feeder head: 3I0 over this share of the ground-relay pickup (1 or 0)",
      "% of pickup", "kilter's flag level (--relay-share)", 1, c_relay },
};
#define NCOMPLIANCE ((int)(sizeof compliance_items / sizeof compliance_items[0]))

static int compliance_rows(const void *ctx)
{
    return NCOMPLIANCE;
}

static verdict compliance_verdict(const void *ctx, int r)
{
    verdict v = { NAN, NAN, -1 };
    compliance_items[r].get(ROWS(ctx), &v);
    return v;
}

static void cp_check(const void *ctx, int r, int j, kl_cell *c) { c->str = compliance_items[r].check; }
static void cp_what(const void *ctx, int r, int j, kl_cell *c) { c->str = compliance_items[r].what; }
static void cp_unit(const void *ctx, int r, int j, kl_cell *c) { c->str = compliance_items[r].unit; }
static void cp_basis(const void *ctx, int r, int j, kl_cell *c) { c->str = compliance_items[r].basis; }
static void cp_low(const void *ctx, int r, int j, kl_cell *c) { c->num = compliance_verdict(ctx, r).low; }
static void cp_high(const void *ctx, int r, int j, kl_cell *c) { c->num = compliance_verdict(ctx, r).high; }

static void cp_count(const void *ctx, int r, int j, kl_cell *c)
{
    int n = compliance_verdict(ctx, r).count;
    c->num = n < 0 ? NAN : (double)n;
}

/* Whether the row counts among the limits broken: the service range chosen by
 * --range counts, the other is shown for reference. */
static void cp_broken(const void *ctx, int r, int j, kl_cell *c)
{
    int rb = ROWS(ctx)->range_b;
    if (compliance_items[r].get == c_range_a)
        c->i = !rb;
    else if (compliance_items[r].get == c_range_b)
        c->i = rb;
    else
        c->i = compliance_items[r].broken;
}

static const kl_column compliance_cols[] = {
    {.key = "check", .help = "the limit's name", .type = KL_CELL_STR, .get = cp_check,
     .in = KL_IN_CSV},
    {.key = "low", .help = "lower end of the range (empty: none)", .type = KL_CELL_NUM,
     .get = cp_low, .in = KL_IN_CSV, .csv = "%.2f"},
    {.key = "high", .help = "the limit, or the upper end of the range", .type = KL_CELL_NUM,
     .get = cp_high, .in = KL_IN_CSV, .csv = "%.2f"},
    {.key = "unit", .help = "the limit's unit", .type = KL_CELL_STR, .get = cp_unit,
     .in = KL_IN_CSV},
    {.key = "count", .help = "elements beyond the limit (empty: not known)", .type = KL_CELL_NUM,
     .get = cp_count, .in = KL_IN_CSV, .csv = "%.0f"},
    {.key = "counts_as_broken", .help = "1: a limit broken; 0: a note or a range not chosen",
     .type = KL_CELL_BOOL, .get = cp_broken, .in = KL_IN_CSV},
    {.key = "description", .help = "what is counted", .type = KL_CELL_STR, .get = cp_what,
     .in = KL_IN_CSV},
    {.key = "basis", .help = "where the limit comes from", .type = KL_CELL_STR, .get = cp_basis,
     .in = KL_IN_CSV},
};

const kl_table kl_table_study_compliance = {
    .name = "compliance", .help = "each limit of the study and the elements beyond it",
    .col = compliance_cols, .ncol = (int)(sizeof compliance_cols / sizeof compliance_cols[0]),
    .rows = compliance_rows,
};
