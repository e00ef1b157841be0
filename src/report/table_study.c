/* kilter: the unbalance study's tables (kilter/table.h): buses, sections,
 * neutrals, neutral runs and contributors, read from the kl_study record as
 * the study computed them.  The CSV fields and JSON keys are the contract of
 * docs/study.md.  Ratios print in percent (100 x the study's fraction);
 * per unit is on each bus's own line-to-neutral base. */
#include <complex.h>
#include <math.h>
#include "kl_report.h"
#include "kilter/table.h"

#define ROWS(ctx) ((const kl_study_rows *)(ctx))
#define TCJ (KL_IN_TEXT | KL_IN_CSV | KL_IN_JSON)
#define TC (KL_IN_TEXT | KL_IN_CSV)
#define CJ (KL_IN_CSV | KL_IN_JSON)
#define TCH (TC | KL_IN_HTML)
#define HTML(hd, fmt) .html_head = hd, .html = fmt

static double pct(double x)
{
    return 100.0 * x;
}

/* Getters of a per-phase (or per-sequence) figure q: one function per q,
 * the figure itself written once in NAME##_q. */
#define BY_INDEX(name)                                                                       \
    static void name##_0(const void *ctx, int r, int j, kl_cell *c) { name##_q(ROWS(ctx), r, 0, c); } \
    static void name##_1(const void *ctx, int r, int j, kl_cell *c) { name##_q(ROWS(ctx), r, 1, c); } \
    static void name##_2(const void *ctx, int r, int j, kl_cell *c) { name##_q(ROWS(ctx), r, 2, c); }

/* ---- buses */

static int bus_rows(const void *ctx)
{
    return ROWS(ctx)->feeder->nbuses;
}

/* The text table is of three-phase buses (with indices); the machine
 * outputs hold every live bus, or the --at bus alone. */
static int bus_keep(const void *ctx, int b, kl_table_format fmt)
{
    const kl_study_rows *w = ROWS(ctx);
    if (fmt == KL_TABLE_TEXT)
        return w->study->unb[b].defined;
    return w->study->vbus[b].phases != 0 && (w->only_bus < 0 || w->only_bus == b);
}

/* The other text table: single- and two-phase buses. */
static int small_keep(const void *ctx, int b, kl_table_format fmt)
{
    int m = ROWS(ctx)->study->vbus[b].phases;
    return m != 0 && m != KL_PH_ABC;
}

static void bus_name(const void *ctx, int b, int j, kl_cell *c)
{
    c->str = ROWS(ctx)->feeder->buses[b].name;
}

static void bus_phases(const void *ctx, int b, int j, kl_cell *c)
{
    c->str = kl_phases_str(ROWS(ctx)->study->vbus[b].phases, c->buf);
}

static void v_pu_q(const kl_study_rows *w, int b, int q, kl_cell *c)
{
    c->num = w->study->v_pu[3 * b + q];
}
BY_INDEX(v_pu)

/* |V0|, |V1|, |V2| over the line-to-neutral base (Fortescue, sequence.h). */
static void v_seq_q(const kl_study_rows *w, int b, int q, kl_cell *c)
{
    const kl_seq_point *v = &w->study->vbus[b];
    if ((v->defined & KL_SEQ_DEF_SEQUENCE) && w->ph->v_base_ln[b] > 0)
        c->num = cabs(v->x012[q]) / w->ph->v_base_ln[b];
}
BY_INDEX(v_seq)

static void vuf(const void *ctx, int b, int j, kl_cell *c)
{
    c->num = pct(ROWS(ctx)->study->unb[b].vuf);
}

static void v0_v1(const void *ctx, int b, int j, kl_cell *c)
{
    c->num = pct(ROWS(ctx)->study->unb[b].v0_v1);
}

static void lvur(const void *ctx, int b, int j, kl_cell *c)
{
    c->num = pct(ROWS(ctx)->study->unb[b].lvur);
}

static void pvur(const void *ctx, int b, int j, kl_cell *c)
{
    c->num = pct(ROWS(ctx)->study->unb[b].pvur);
}

static void service_q(const kl_study_rows *w, int b, int q, kl_cell *c)
{
    int k = w->study->service[3 * b + q];
    c->str = k >= 0 ? kl_service_class_str((kl_service_class)k) : NULL;
}
BY_INDEX(service)

static void unbalance_level(const void *ctx, int b, int j, kl_cell *c)
{
    int flags = ROWS(ctx)->study->vuf_flags[b];
    c->str = flags < 0 ? "" : (flags & KL_VUF_OVER_SUPPLY) ? "over supply limit"
           : (flags & KL_VUF_OVER_COMPAT) ? "over compatibility level" : "within";
}

/* NEMA MG 1 derating: the factor, or the verdict where it stops applying. */
static void derating_str(const void *ctx, int b, int j, kl_cell *c)
{
    const kl_study *s = ROWS(ctx)->study;
    if (s->derate_zone[b] < 0)
        c->str = "";
    else if (s->derate_zone[b] == KL_DERATE_NOT_RECOMMENDED)
        c->str = "not recommended";
    else {
        snprintf(c->buf, sizeof c->buf, "%.2f", s->derate_factor[b]);
        c->str = c->buf;
    }
}

static void derating(const void *ctx, int b, int j, kl_cell *c)
{
    c->num = ROWS(ctx)->study->derate_factor[b];
}

#define NUMF(k, u, h, g, in_, hd, tf) \
    .key = k, .unit = u, .help = h, .type = KL_CELL_NUM, .get = g, .in = in_, \
    .text_head = hd, .text = tf
#define NUM(k, u, h, g, in_, hd, tf) {NUMF(k, u, h, g, in_, hd, tf)}

static const kl_column bus_cols[] = {
    {.key = "bus", .help = "bus name", .type = KL_CELL_STR, .get = bus_name, .in = TCJ,
     .text_head = "bus", .text = "  %-14s"},
    {.key = "phases", .help = "live phases", .type = KL_CELL_STR, .get = bus_phases, .in = CJ},
    NUM("va_pu", "pu", "phase a voltage magnitude", v_pu_0, TCJ, "Va", " %7.4f"),
    NUM("vb_pu", "pu", "phase b voltage magnitude", v_pu_1, TCJ, "Vb", " %7.4f"),
    NUM("vc_pu", "pu", "phase c voltage magnitude", v_pu_2, TCJ, "Vc", " %7.4f"),
    NUM("v0_pu", "pu", "zero-sequence voltage magnitude", v_seq_0, TCJ, "V0", "  %7.4f"),
    NUM("v1_pu", "pu", "positive-sequence voltage magnitude", v_seq_1, TCJ, "V1", " %7.4f"),
    NUM("v2_pu", "pu", "negative-sequence voltage magnitude", v_seq_2, TCJ, "V2", " %7.4f"),
    NUM("vuf_pct", "%", "voltage unbalance factor |V2|/|V1| (IEC 61000-4-30)", vuf, TCJ, "VUF",
        "  %6.2f"),
    NUM("v0_v1_pct", "%", "zero-sequence factor |V0|/|V1|", v0_v1, TCJ, "V0/V1", " %6.2f"),
    NUM("lvur_pct", "%", "line-voltage unbalance rate: largest deviation from the average "
        "line voltage over the average (NEMA MG 1)", lvur, TCJ, "LVUR", " %6.2f"),
    NUM("pvur_pct", "%", "phase-voltage unbalance rate: largest deviation from the average "
        "phase voltage over the average (IEEE 141)", pvur, TCJ, "PVUR", " %6.2f"),
    {.key = "service_a", .json_key = "service[]", .help = "ANSI C84.1 class of phase a",
     .type = KL_CELL_STR, .get = service_0, .in = CJ},
    {.key = "service_b", .json_key = "service[]", .help = "ANSI C84.1 class of phase b",
     .type = KL_CELL_STR, .get = service_1, .in = CJ},
    {.key = "service_c", .json_key = "service[]", .help = "ANSI C84.1 class of phase c",
     .type = KL_CELL_STR, .get = service_2, .in = CJ},
    {.key = "unbalance", .help = "VUF against the supply limit and the compatibility level",
     .type = KL_CELL_STR, .get = unbalance_level, .in = TCJ, .text_head = "unbalance",
     .text = "  %-24s"},
    {.key = "motor_derating", .help = "NEMA MG 1 derating factor for the bus's LVUR",
     .type = KL_CELL_STR, .get = derating_str, .in = TC, .text_head = "motor derating",
     .text = " %s"},
    {.key = "motor_derating", .help = "NEMA MG 1 derating factor (null: no derating applies)",
     .type = KL_CELL_NUM, .get = derating, .in = KL_IN_JSON},
};

const kl_table kl_table_study_buses = {
    .name = "buses", .help = "bus voltages, sequence components and unbalance indices",
    .col = bus_cols, .ncol = (int)(sizeof bus_cols / sizeof bus_cols[0]), .rows = bus_rows,
    .keep = bus_keep,
};

static const kl_column small_cols[] = {
    {.key = "bus", .help = "bus name", .type = KL_CELL_STR, .get = bus_name, .in = KL_IN_TEXT,
     .text_head = "bus", .text = "  %-14s"},
    {.key = "phases", .help = "live phases", .type = KL_CELL_STR, .get = bus_phases,
     .in = KL_IN_TEXT, .text_head = "ph", .text = " %-3s"},
    NUM("va_pu", "pu", "phase a voltage magnitude", v_pu_0, KL_IN_TEXT, "Va", " %7.4f"),
    NUM("vb_pu", "pu", "phase b voltage magnitude", v_pu_1, KL_IN_TEXT, "Vb", " %7.4f"),
    NUM("vc_pu", "pu", "phase c voltage magnitude", v_pu_2, KL_IN_TEXT, "Vc", " %7.4f"),
};

const kl_table kl_table_study_small_buses = {
    .name = "small-buses", .help = "voltages of single- and two-phase buses (text only)",
    .col = small_cols, .ncol = (int)(sizeof small_cols / sizeof small_cols[0]),
    .rows = bus_rows, .keep = small_keep,
};

/* ---- motors (HTML): buses where the NEMA MG 1 derating applies */

static int motor_keep(const void *ctx, int b, kl_table_format fmt)
{
    return ROWS(ctx)->study->derate_zone[b] >= 0;
}

static void motor_verdict(const void *ctx, int b, int j, kl_cell *c)
{
    int z = ROWS(ctx)->study->derate_zone[b];
    c->cls = z == KL_DERATE_NONE ? "ok" : "bad";
    c->str = z == KL_DERATE_NONE ? "no derating needed" : z == KL_DERATE_CURVE
           ? "derate the motor" : "operation not recommended";
}

static const kl_column motor_cols[] = {
    {.key = "bus", .type = KL_CELL_STR, .get = bus_name, .in = KL_IN_HTML, .html_head = "bus"},
    {.key = "lvur_pct", .type = KL_CELL_NUM, .get = lvur, .in = KL_IN_HTML,
     .html_head = "LVUR %", .html = KL_NUM_PCT},
    {.key = "motor_derating", .type = KL_CELL_NUM, .get = derating, .in = KL_IN_HTML,
     .html_head = "derating factor", .html = "%.2f"},
    {.key = "verdict", .type = KL_CELL_STR, .get = motor_verdict, .in = KL_IN_HTML,
     .html_head = "verdict"},
};

const kl_table kl_table_study_motors = {
    .name = "motors", .help = "buses with motors on an unbalanced supply (NEMA MG 1)",
    .col = motor_cols, .ncol = (int)(sizeof motor_cols / sizeof motor_cols[0]),
    .rows = bus_rows, .keep = motor_keep,
};

/* ---- sections and neutrals */

static int sec_rows(const void *ctx)
{
    return ROWS(ctx)->feeder->nsections;
}

static int sec_keep(const void *ctx, int k, kl_table_format fmt)
{
    return ROWS(ctx)->study->isec[k].phases != 0;
}

/* Text: every section with a neutral; CSV: those of them that carry current. */
static int neutral_keep(const void *ctx, int k, kl_table_format fmt)
{
    const kl_study *s = ROWS(ctx)->study;
    if (isnan(s->i_n_rms[k]))
        return 0;
    return fmt == KL_TABLE_TEXT || fmt == KL_TABLE_HTML || s->isec[k].phases != 0;
}

static void sec_name(const void *ctx, int k, int j, kl_cell *c)
{
    c->str = ROWS(ctx)->feeder->sections[k].name;
}

static void sec_phases(const void *ctx, int k, int j, kl_cell *c)
{
    c->str = kl_phases_str(ROWS(ctx)->study->isec[k].phases, c->buf);
}

static void i_q(const kl_study_rows *w, int k, int q, kl_cell *c)
{
    const kl_seq_point *x = &w->study->isec[k];
    if (x->phases >> q & 1)
        c->num = cabs(x->x[q]);
}
BY_INDEX(i)

static void i_seq_q(const kl_study_rows *w, int k, int q, kl_cell *c)
{
    const kl_seq_point *x = &w->study->isec[k];
    if (x->defined & KL_SEQ_DEF_SEQUENCE)
        c->num = cabs(x->x012[q]);
}
BY_INDEX(i_seq)

static void i2_i1(const void *ctx, int k, int j, kl_cell *c)
{
    c->num = pct(ROWS(ctx)->study->iunb[k].i2_i1);
}

static void i0_i1(const void *ctx, int k, int j, kl_cell *c)
{
    c->num = pct(ROWS(ctx)->study->iunb[k].i0_i1);
}

static void residual(const void *ctx, int k, int j, kl_cell *c)
{
    c->num = cabs(ROWS(ctx)->study->isec[k].sum);
}

static void neutral_a(const void *ctx, int k, int j, kl_cell *c)
{
    c->num = cabs(ROWS(ctx)->study->i_n1[k]);
}

/* Defined where the section has a neutral (i_n_rms defined). */
static void triplen_a(const void *ctx, int k, int j, kl_cell *c)
{
    const kl_study *s = ROWS(ctx)->study;
    c->num = isnan(s->i_n_rms[k]) ? NAN : s->i_n3[k];
}

static void neutral_rms_a(const void *ctx, int k, int j, kl_cell *c)
{
    c->num = ROWS(ctx)->study->i_n_rms[k];
}

static void earth_a(const void *ctx, int k, int j, kl_cell *c)
{
    c->num = cabs(ROWS(ctx)->study->i_e[k]);
}

/* The study's loading: i_n_rms over the neutral's ampacity. */
static void loading(const void *ctx, int k, int j, kl_cell *c)
{
    c->num = pct(ROWS(ctx)->study->neutral_ratio[k]);
}

/* The neutral conductor's ampacity as the construction gives it; NAN when
 * the section is not a line or no ampacity is given. */
static void ampacity(const void *ctx, int k, int j, kl_cell *c)
{
    const kl_feeder *f = ROWS(ctx)->feeder;
    const kl_section *sec = &f->sections[k];
    double a = sec->kind == KL_SEC_LINE && sec->construction >= 0
               && sec->construction < f->nconstructions
        ? f->constructions[sec->construction].neutral_ampacity_a : 0;
    c->num = a > 0 ? a : NAN;
}

static void run_of(const void *ctx, int k, int j, kl_cell *c)
{
    c->i = ROWS(ctx)->study->run[k] + 1;
}

static void sec_from(const void *ctx, int k, int j, kl_cell *c)
{
    c->str = kl_report_bus_name(ROWS(ctx)->feeder, ROWS(ctx)->feeder->sections[k].from);
}

static void sec_to(const void *ctx, int k, int j, kl_cell *c)
{
    c->str = kl_report_bus_name(ROWS(ctx)->feeder, ROWS(ctx)->feeder->sections[k].to);
}

/* The report shows the section's own phases (the tables above, the phases
 * that carry current). */
static void sec_own_phases(const void *ctx, int k, int j, kl_cell *c)
{
    c->str = kl_phases_str(ROWS(ctx)->feeder->sections[k].phases, c->buf);
}

static double neutral_rank(const void *ctx, int k)
{
    return ROWS(ctx)->study->i_n_rms[k];
}

static void neutral_verdict(const void *ctx, int k, int j, kl_cell *c)
{
    int fl = ROWS(ctx)->study->neutral_flag[k];
    c->cls = fl > 0 ? "bad" : "ok";
    c->str = fl < 0 ? "rating not known" : fl ? "over" : "within";
}

/* The section's worst loading, of its continuous and emergency ratings (the
 * study's, kl_loading_section); per phase from the flow's phases the study
 * read. */
static void sec_loading(const void *ctx, int k, int j, kl_cell *c)
{
    c->num = pct(ROWS(ctx)->study->loading[k]);
}

static void sec_loading_emerg(const void *ctx, int k, int j, kl_cell *c)
{
    c->num = pct(ROWS(ctx)->study->loading_emerg[k]);
}

static void sec_loading_phase(const kl_study_rows *w, int k, int p, kl_cell *c)
{
    const kl_study_phases *ph = w->ph;
    kl_loading l;
    c->num = NAN;
    if (!ph)
        return;
    kl_loading_currents cur = {ph->i, ph->i_recv, ph->s_in, ph->sec_solved};
    kl_loading_section(w->feeder, &cur, k, &l);
    c->num = pct(l.phase[p]);
}

static void sec_loading_a(const void *ctx, int k, int j, kl_cell *c)
{
    sec_loading_phase(ROWS(ctx), k, 0, c);
}

static void sec_loading_b(const void *ctx, int k, int j, kl_cell *c)
{
    sec_loading_phase(ROWS(ctx), k, 1, c);
}

static void sec_loading_c(const void *ctx, int k, int j, kl_cell *c)
{
    sec_loading_phase(ROWS(ctx), k, 2, c);
}

static void over_mark(const void *ctx, int k, int j, kl_cell *c)
{
    c->str = ROWS(ctx)->study->neutral_flag[k] == 1 ? "  OVER" : "";
}

static const kl_column sec_cols[] = {
    {.key = "section", .help = "section name", .type = KL_CELL_STR, .get = sec_name, .in = TCJ,
     .text_head = "section", .text = "  %-16s"},
    {.key = "phases", .help = "phases carrying current", .type = KL_CELL_STR, .get = sec_phases,
     .in = TCJ, .text_head = "ph", .text = " %-3s"},
    NUM("ia_a", "A", "phase a current, sending end", i_0, TCJ, "Ia", " %8.1f"),
    NUM("ib_a", "A", "phase b current, sending end", i_1, TCJ, "Ib", " %8.1f"),
    NUM("ic_a", "A", "phase c current, sending end", i_2, TCJ, "Ic", " %8.1f"),
    NUM("i0_a", "A", "zero-sequence current", i_seq_0, TCJ, "I0", "  %8.1f"),
    NUM("i1_a", "A", "positive-sequence current", i_seq_1, TCJ, "I1", " %8.1f"),
    NUM("i2_a", "A", "negative-sequence current", i_seq_2, TCJ, "I2", " %8.1f"),
    /* the text header has always stood one column right of these figures */
    {.key = "i2_i1_pct", .unit = "%", .help = "current unbalance |I2|/|I1|", .type = KL_CELL_NUM,
     .get = i2_i1, .in = TCJ, .text_head = "I2/I1", .text = " %6.2f", .text_hfmt = "  %6s"},
    NUM("i0_i1_pct", "%", "zero-sequence current ratio |I0|/|I1|", i0_i1, TCJ, "I0/I1", " %6.2f"),
    NUM("residual_a", "A", "residual current |Ia + Ib + Ic| = |3I0|", residual, TCJ, "3I0",
        " %8.1f"),
    NUM("neutral_a", "A", "fundamental neutral current", neutral_a, KL_IN_JSON, "", NULL),
    NUM("triplen_a", "A", "triplen neutral current (the loads' third harmonics downstream, "
        "through each transformer's windings)", triplen_a, KL_IN_JSON, "", NULL),
    NUM("neutral_rms_a", "A", "neutral RMS sqrt(In1^2 + In3^2)", neutral_rms_a, KL_IN_JSON, "",
        NULL),
    NUM("earth_a", "A", "earth-return current", earth_a, KL_IN_JSON, "", NULL),
    NUM("neutral_loading_pct", "%", "neutral RMS over the neutral's ampacity", loading,
        KL_IN_JSON, "", NULL),
    NUM("loading_pct", "%", "the section's loading: its most loaded phase's current over its "
        "continuous rating, or a transformer bank's kVA over its rating, whichever is larger",
        sec_loading, TCJ, "load%", " %6.1f"),
    NUM("loading_a_pct", "%", "phase a current over its rating", sec_loading_a, CJ, "", NULL),
    NUM("loading_b_pct", "%", "phase b current over its rating", sec_loading_b, CJ, "", NULL),
    NUM("loading_c_pct", "%", "phase c current over its rating", sec_loading_c, CJ, "", NULL),
    NUM("loading_emergency_pct", "%", "the section's loading over its emergency ratings",
        sec_loading_emerg, CJ, "", NULL),
};

const kl_table kl_table_study_sections = {
    .name = "sections", .help = "section currents, sequence components and current unbalance",
    .col = sec_cols, .ncol = (int)(sizeof sec_cols / sizeof sec_cols[0]), .rows = sec_rows,
    .keep = sec_keep,
};


static const kl_column neutral_cols[] = {
    {.key = "section", .help = "section name", .type = KL_CELL_STR, .get = sec_name, .in = TCH,
     .text_head = "section", .text = "  %-16s", .html_head = "section"},
    {.key = "from", .type = KL_CELL_STR, .get = sec_from, .in = KL_IN_HTML, HTML("from", NULL)},
    {.key = "to", .type = KL_CELL_STR, .get = sec_to, .in = KL_IN_HTML, HTML("to", NULL)},
    {.key = "phases", .type = KL_CELL_STR, .get = sec_own_phases, .in = KL_IN_HTML,
     HTML("phases", NULL)},
    {NUMF("neutral_a", "A", "fundamental neutral current", neutral_a, TCH, "In1", " %8.1f"),
     HTML("In fundamental A", KL_NUM_AMP)},
    {NUMF("triplen_a", "A", "triplen neutral current (the loads' third harmonics downstream, "
         "through each transformer's windings)", triplen_a, TCH, "In3", " %8.1f"), HTML("In triplen A", KL_NUM_AMP)},
    {NUMF("neutral_rms_a", "A", "neutral RMS sqrt(In1^2 + In3^2)", neutral_rms_a, TCH, "In rms",
         " %8.1f"), HTML("In RMS A", KL_NUM_AMP)},
    NUM("earth_a", "A", "earth-return current", earth_a, TC, "Iearth", " %8.1f"),
    {NUMF("neutral_ampacity_a", "A", "the neutral conductor's ampacity", ampacity, TCH,
         "ampacity", " %9.0f"), HTML("neutral rating A", "%.0f")},
    {NUMF("neutral_loading_pct", "%", "neutral RMS over the neutral's ampacity", loading, TCH,
         "loading", " %7.0f%%"), HTML("loading %", "%.0f")},
    {.key = "against", .help = "loading against the neutral-share limit", .type = KL_CELL_STR,
     .get = neutral_verdict, .in = KL_IN_HTML, HTML("against the rating", NULL)},
    {.key = "run", .help = "neutral run (1-based; 0: none)", .type = KL_CELL_INT, .get = run_of,
     .in = KL_IN_CSV},
    {.key = "over", .help = "loading over the neutral-share limit", .type = KL_CELL_STR,
     .get = over_mark, .in = KL_IN_TEXT, .text_head = "", .text = "%s"},
};

const kl_table kl_table_study_neutrals = {
    .name = "neutrals", .help = "neutral and earth-return current of sections with a neutral",
    .col = neutral_cols, .ncol = (int)(sizeof neutral_cols / sizeof neutral_cols[0]),
    .rows = sec_rows, .keep = neutral_keep, .rank = neutral_rank,
};

/* ---- loading (HTML): the rated sections, most loaded first */

static double loading_rank(const void *ctx, int k)
{
    return ROWS(ctx)->study->loading[k];
}

static void sec_kind(const void *ctx, int k, int j, kl_cell *c)
{
    static const char *const kind[5] = {"?", "line", "switch", "transformer", "regulator"};
    unsigned t = (unsigned)ROWS(ctx)->feeder->sections[k].kind;
    c->str = kind[t < 5 ? t : 0];
}

static void loading_verdict(const void *ctx, int k, int j, kl_cell *c)
{
    int fl = ROWS(ctx)->study->loading_flag[k];
    c->cls = fl == KL_LOADING_OVER ? "bad" : fl == 0 ? "ok" : NULL;
    c->str = fl == KL_LOADING_OVER ? "over its rating" : fl == KL_LOADING_NOTE ? "over the warning level"
           : "within";
}

static const kl_column loading_cols[] = {
    {.key = "section", .help = "section name", .type = KL_CELL_STR, .get = sec_name, .in = KL_IN_HTML,
     .html_head = "section"},
    {.key = "kind", .help = "line, transformer or regulator", .type = KL_CELL_STR, .get = sec_kind,
     .in = KL_IN_HTML, HTML("kind", NULL)},
    {.key = "phases", .type = KL_CELL_STR, .get = sec_own_phases, .in = KL_IN_HTML,
     HTML("phases", NULL)},
    {NUMF("loading_pct", "%", "the section's loading (flow.md, Loading)", sec_loading, KL_IN_HTML,
          "", NULL), HTML("loading %", "%.1f")},
    {NUMF("loading_emergency_pct", "%", "the same over the emergency rating", sec_loading_emerg,
          KL_IN_HTML, "", NULL), HTML("of emergency rating %", "%.1f")},
    {.key = "against", .help = "against the rating and the warning level", .type = KL_CELL_STR,
     .get = loading_verdict, .in = KL_IN_HTML, HTML("against the rating", NULL)},
};

const kl_table kl_table_study_loading = {
    .name = "loading", .help = "sections with a rating, most loaded first", .col = loading_cols,
    .ncol = (int)(sizeof loading_cols / sizeof loading_cols[0]), .rows = sec_rows,
    .rank = loading_rank,
};

/* ---- neutral runs */

static int run_rows(const void *ctx)
{
    return ROWS(ctx)->study->nruns;
}

static void run_number(const void *ctx, int r, int j, kl_cell *c)
{
    c->i = r + 1;
}

static void run_construction(const void *ctx, int r, int j, kl_cell *c)
{
    c->str = ROWS(ctx)->feeder->constructions[ROWS(ctx)->study->run_construction[r]].name;
}

static void run_first(const void *ctx, int r, int j, kl_cell *c)
{
    c->str = ROWS(ctx)->feeder->sections[ROWS(ctx)->study->run_first[r]].name;
}

static void run_sections(const void *ctx, int r, int j, kl_cell *c)
{
    c->i = ROWS(ctx)->study->run_sections[r];
}

static void run_worst(const void *ctx, int r, int j, kl_cell *c)
{
    c->str = ROWS(ctx)->feeder->sections[ROWS(ctx)->study->run_worst[r]].name;
}

static void run_current(const void *ctx, int r, int j, kl_cell *c)
{
    c->num = ROWS(ctx)->study->run_current[r];
}

static void run_required(const void *ctx, int r, int j, kl_cell *c)
{
    c->num = ROWS(ctx)->study->run_required[r];
}

static void run_installed(const void *ctx, int r, int j, kl_cell *c)
{
    c->num = ROWS(ctx)->study->run_installed[r];
}

static void run_conductor(const void *ctx, int r, int j, kl_cell *c)
{
    int k = ROWS(ctx)->study->run_conductor[r];
    c->str = k >= 0 ? ROWS(ctx)->feeder->conductors[k].name : NULL;
}

static void run_conductor_text(const void *ctx, int r, int j, kl_cell *c)
{
    run_conductor(ctx, r, j, c);
    if (!c->str)
        c->str = "none in the library";
}

static void run_small_mark(const void *ctx, int r, int j, kl_cell *c)
{
    const kl_study *s = ROWS(ctx)->study;
    c->str = !isnan(s->run_installed[r]) && s->run_installed[r] < s->run_required[r]
        ? "  (fitted neutral too small)" : "";
}

static void run_conductor_html(const void *ctx, int r, int j, kl_cell *c)
{
    run_conductor(ctx, r, j, c);
    if (!c->str)
        c->str = "none in the file";
}

static const kl_column run_cols[] = {
    {.key = "run", .help = "run number", .type = KL_CELL_INT, .get = run_number, .in = TC,
     .text_head = "run", .text = "  %-4d"},
    {.key = "first_section", .type = KL_CELL_STR, .get = run_first, .in = KL_IN_HTML,
     HTML("first section", NULL)}, /* first in the report */
    {.key = "construction", .help = "the run's construction", .type = KL_CELL_STR,
     .get = run_construction, .in = TCJ | KL_IN_HTML, .text_head = "construction",
     .text = " %-16s", HTML("construction", NULL)},
    {.key = "first_section", .help = "the run's first section from the source",
     .type = KL_CELL_STR, .get = run_first, .in = TCJ, .text_head = "first section",
     .text = " %-16s"},
    {.key = "sections", .help = "sections in the run", .type = KL_CELL_INT, .get = run_sections,
     .in = TCJ | KL_IN_HTML, .text_head = "secs", .text = " %4d", HTML("sections", NULL)},
    {.key = "worst_section", .help = "the section carrying the run's largest neutral current",
     .type = KL_CELL_STR, .get = run_worst, .in = KL_IN_CSV | KL_IN_HTML,
     HTML("worst section", NULL)},
    {NUMF("current_a", "A", "the run's largest neutral RMS current", run_current,
          TCJ | KL_IN_HTML, "worst A", " %8.1f"), HTML("largest In A", KL_NUM_AMP)},
    {NUMF("required_a", "A", "current x (1 + sizing margin)", run_required, TCJ | KL_IN_HTML,
          "needed A", " %9.1f"), HTML("required A", KL_NUM_AMP)},
    {NUMF("installed_a", "A", "the fitted neutral's ampacity", run_installed, TCJ | KL_IN_HTML,
          "fitted A", " %9.0f"), HTML("installed A", "%.0f")},
    {.key = "suggested_conductor", .help = "smallest conductor of the feeder file's library "
     "that carries the required current (null: none)", .type = KL_CELL_STR,
     .get = run_conductor, .in = CJ},
    {.key = "suggested_conductor", .type = KL_CELL_STR, .get = run_conductor_text,
     .in = KL_IN_TEXT, .text_head = "smallest library conductor that carries it",
     .text = "  %s"},
    {.key = "suggested_conductor", .type = KL_CELL_STR, .get = run_conductor_html,
     .in = KL_IN_HTML, HTML("smallest that carries it", NULL)},
    {.key = "too_small", .type = KL_CELL_STR, .get = run_small_mark, .in = KL_IN_TEXT,
     .text_head = "", .text = "%s"},
};

const kl_table kl_table_study_runs = {
    .name = "runs", .json_key = "neutral_runs", .help = "neutral sizing by run of one "
    "construction", .col = run_cols, .ncol = (int)(sizeof run_cols / sizeof run_cols[0]),
    .rows = run_rows, .flags = KL_TABLE_JSON_EMPTY_INLINE,
};

/* ---- contributors: a row per bus over an unbalance level, a sub-row per
 * ranked load or tap (the study's cstart slices) */

static int contrib_rows(const void *ctx)
{
    return ROWS(ctx)->study->ncbus;
}

static int contrib_next(const void *ctx, int c, int j)
{
    const kl_study *s = ROWS(ctx)->study;
    j = j < 0 ? s->cstart[c] : j + 1;
    return j < s->cstart[c + 1] ? j : -1;
}

static void contrib_bus(const void *ctx, int c, int j, kl_cell *v)
{
    v->str = ROWS(ctx)->feeder->buses[ROWS(ctx)->study->cbus[c]].name;
}

static void contrib_vuf(const void *ctx, int c, int j, kl_cell *v)
{
    const kl_study *s = ROWS(ctx)->study;
    v->num = pct(s->unb[s->cbus[c]].vuf);
}

static void contrib_unbal(const void *ctx, int c, int j, kl_cell *v)
{
    v->num = pct(ROWS(ctx)->study->c_unbal_total[c]);
}

static void contrib_three(const void *ctx, int c, int j, kl_cell *v)
{
    v->num = pct(ROWS(ctx)->study->c_three_phase[c]);
}

static void contrib_rest(const void *ctx, int c, int j, kl_cell *v)
{
    v->num = pct(ROWS(ctx)->study->c_remainder[c]);
}

static void contrib_rank(const void *ctx, int c, int j, kl_cell *v)
{
    v->i = j - ROWS(ctx)->study->cstart[c] + 1;
}

static void contrib_kind(const void *ctx, int c, int j, kl_cell *v)
{
    v->str = ROWS(ctx)->study->ckind[j] == KL_CONTRIB_TAP ? "tap" : "load";
}

static void contrib_name(const void *ctx, int c, int j, kl_cell *v)
{
    const kl_feeder *f = ROWS(ctx)->feeder;
    const kl_study *s = ROWS(ctx)->study;
    v->str = s->ckind[j] == KL_CONTRIB_TAP ? f->sections[s->cid[j]].name : f->loads[s->cid[j]].name;
}

static void contrib_phases(const void *ctx, int c, int j, kl_cell *v)
{
    const kl_feeder *f = ROWS(ctx)->feeder;
    const kl_study *s = ROWS(ctx)->study;
    int m = s->ckind[j] == KL_CONTRIB_TAP ? f->sections[s->cid[j]].phases
                                          : f->loads[s->cid[j]].phases;
    v->str = kl_phases_str(m, v->buf);
}

static void contrib_share(const void *ctx, int c, int j, kl_cell *v)
{
    v->num = pct(ROWS(ctx)->study->cshare[j]);
}

static const kl_column contrib_cols[] = {
    {.key = "bus", .help = "bus over an unbalance level", .type = KL_CELL_STR,
     .get = contrib_bus, .in = CJ},
    NUM("vuf_pct", "%", "the bus's voltage unbalance factor", contrib_vuf, CJ, "", NULL),
    NUM("single_two_phase_pct", "%", "share of V2 from all single- and two-phase loads",
        contrib_unbal, KL_IN_JSON, "", NULL),
    NUM("three_phase_pct", "%", "share of V2 from three-phase loads", contrib_three, KL_IN_JSON,
        "", NULL),
    NUM("remainder_pct", "%", "the rest: regulator taps, capacitors, line charging, "
        "nonlinearity", contrib_rest, KL_IN_JSON, "", NULL),
    {.key = "rank", .help = "rank at the bus, largest share first", .type = KL_CELL_INT,
     .get = contrib_rank, .in = TC, .sub = 1, .text_head = "", .text = "    %2d"},
    {.key = "kind", .help = "load, or tap (a single- or two-phase lateral)", .type = KL_CELL_STR,
     .get = contrib_kind, .in = TCJ, .sub = 1, .text_head = "", .text = "  %-4s"},
    {.key = "name", .help = "the load's or the tap section's name", .type = KL_CELL_STR,
     .get = contrib_name, .in = TCJ, .sub = 1, .text_head = "", .text = "  %-24s"},
    {.key = "phases", .help = "its phases", .type = KL_CELL_STR, .get = contrib_phases,
     .in = TCJ, .sub = 1, .text_head = "", .text = " %-3s"},
    {.key = "share_pct", .unit = "%", .help = "its share of the bus's negative-sequence voltage "
     "(docs/study.md)", .type = KL_CELL_NUM, .get = contrib_share, .in = TCJ, .sub = 1,
     .text_head = "", .text = " %7.1f %%"},
};

const kl_table kl_table_study_contributors = {
    .name = "contributors", .help = "what causes the negative-sequence voltage at each bus over "
    "an unbalance level", .col = contrib_cols,
    .ncol = (int)(sizeof contrib_cols / sizeof contrib_cols[0]), .rows = contrib_rows,
    .next_sub = contrib_next, .sub_key = "ranked", .flags = KL_TABLE_JSON_EMPTY_INLINE,
};
