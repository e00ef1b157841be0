/* kilter: the series' tables (kilter/table.h): unbalance per three-phase
 * bus with the EN 50160 weekly statistic, service voltage per bus and phase,
 * neutral and earth current and losses per section, regulator operations,
 * and the steps that did not converge.  docs/series.md is the contract:
 * CSV fields and JSON keys as documented there.  Times are ISO 8601 in the
 * shapes file's own UTC offset. */
#include <math.h>
#include "kl_report.h"
#include "kilter/table.h"

#define ROWS(ctx) ((const kl_series_rows *)(ctx))
#define ST(ctx) (ROWS(ctx)->stats)

#define TCJ (KL_IN_TEXT | KL_IN_CSV | KL_IN_JSON | KL_IN_HTML)
#define CJ (KL_IN_CSV | KL_IN_JSON)

static void put_time(const void *ctx, kl_time t, kl_cell *c)
{
    kl_time_format(t, ST(ctx)->offset_s, c->buf);
    c->str = c->buf;
}

static int bus_rows(const void *ctx)
{
    return ROWS(ctx)->feeder->nbuses;
}

static void bus_name(const void *ctx, int b, int p, kl_cell *c)
{
    (void)p;
    c->str = ROWS(ctx)->feeder->buses[b].name;
}

/* ---- unbalance: the live three-phase buses */

static int unb_keep(const void *ctx, int b, kl_table_format fmt)
{
    (void)fmt;
    return ST(ctx)->vuf_max[b] == ST(ctx)->vuf_max[b]; /* defined: live three-phase */
}

static double unb_rank(const void *ctx, int b)
{
    return ST(ctx)->vuf10_p95[b];
}

static void vuf_max(const void *ctx, int b, int p, kl_cell *c)
{
    (void)p;
    c->num = 100 * ST(ctx)->vuf_max[b];
}

static void vuf_max_t(const void *ctx, int b, int p, kl_cell *c)
{
    (void)p;
    put_time(ctx, ST(ctx)->vuf_max_t[b], c);
}

static void vuf_mean(const void *ctx, int b, int p, kl_cell *c)
{
    (void)p;
    c->num = 100 * ST(ctx)->vuf_mean[b];
}

static void vuf10_max(const void *ctx, int b, int p, kl_cell *c)
{
    (void)p;
    c->num = 100 * ST(ctx)->vuf10_max[b];
}

static void vuf10_max_t(const void *ctx, int b, int p, kl_cell *c)
{
    (void)p;
    if (ST(ctx)->n10[b] > 0)
        put_time(ctx, ST(ctx)->vuf10_max_t[b], c);
}

static void vuf10_p95(const void *ctx, int b, int p, kl_cell *c)
{
    (void)p;
    double v = ST(ctx)->vuf10_p95[b];
    c->num = 100 * v;
    c->cls = v > ST(ctx)->vuf_limit ? "bad" : "ok";
}

static void p95_week(const void *ctx, int b, int p, kl_cell *c)
{
    (void)p;
    c->i = ST(ctx)->vuf10_p95_week[b] + 1; /* weeks counted from 1 for people */
}

static void share10_over(const void *ctx, int b, int p, kl_cell *c)
{
    (void)p;
    const kl_series_stats *s = ST(ctx);
    c->num = s->n10[b] > 0 ? 100.0 * s->n10_over[b] / s->n10[b] : NAN;
}

static void weeks_over(const void *ctx, int b, int p, kl_cell *c)
{
    (void)p;
    c->i = ST(ctx)->weeks_over[b];
}

static void verdict(const void *ctx, int b, int p, kl_cell *c)
{
    (void)p;
    int over = ST(ctx)->weeks_over[b] > 0;
    c->str = over ? "over" : "within";
    c->cls = over ? "bad" : "ok";
}

static void hours_over(const void *ctx, int b, int which, kl_cell *c)
{
    c->num = ST(ctx)->vuf_over_s[2 * b + which] / 3600;
}

static void hours_over_compat(const void *ctx, int b, int p, kl_cell *c)
{
    (void)p;
    hours_over(ctx, b, 0, c);
}

static void hours_over_supply(const void *ctx, int b, int p, kl_cell *c)
{
    (void)p;
    hours_over(ctx, b, 1, c);
}

static const kl_column unb_cols[] = {
    {.key = "bus", .help = "bus name", .type = KL_CELL_STR, .get = bus_name, .in = TCJ,
     .text_head = "bus", .text = "%-16s", .html_head = "bus"},
    {.key = "vuf_p95_week_pct", .unit = "%", .help = "the worst week's 95th percentile of the "
     "10-minute VUF values (EN 50160 4.2.5; nearest rank)", .type = KL_CELL_NUM, .get = vuf10_p95,
     .in = TCJ, .text_head = "p95 week%", .text = " %10.3f", .html_head = "VUF 95 % of week, %",
     .html = "%.3f"},
    {.key = "worst_week", .help = "the week of that percentile, counted from 1 at the series' start",
     .type = KL_CELL_INT, .get = p95_week, .in = TCJ, .text_head = "week", .text = " %5d",
     .html_head = "week"},
    {.key = "weeks_over", .help = "weeks whose 95th percentile is over the limit",
     .type = KL_CELL_INT, .get = weeks_over, .in = TCJ, .text_head = "wk over", .text = " %7d",
     .html_head = "weeks over"},
    {.key = "en50160", .help = "within: every week's 95 % of 10-minute values within the limit",
     .type = KL_CELL_STR, .get = verdict, .in = TCJ, .text_head = "EN 50160", .text = "  %-8s",
     .html_head = "EN 50160"},
    {.key = "share_10min_over_pct", .unit = "%", .help = "share of all 10-minute values over the "
     "limit", .type = KL_CELL_NUM, .get = share10_over, .in = TCJ, .text_head = "10m over%",
     .text = " %9.2f", .html_head = "10-min values over, %", .html = "%.2f"},
    {.key = "vuf_10min_max_pct", .unit = "%", .help = "largest 10-minute VUF value (IEC 61000-4-30 "
     "aggregation)", .type = KL_CELL_NUM, .get = vuf10_max, .in = TCJ, .text_head = "10m max%",
     .text = " %8.3f", .html_head = "10-min max, %", .html = "%.3f"},
    {.key = "vuf_10min_max_time", .help = "start of that 10-minute interval", .type = KL_CELL_STR,
     .get = vuf10_max_t, .in = TCJ, .text_head = "at", .text = "  %-22s", .html_head = "at"},
    {.key = "vuf_max_pct", .unit = "%", .help = "largest VUF of a single step", .type = KL_CELL_NUM,
     .get = vuf_max, .in = TCJ, .text_head = "step max%", .text = " %9.3f",
     .html_head = "step max, %", .html = "%.3f"},
    {.key = "vuf_max_time", .help = "that step's start", .type = KL_CELL_STR, .get = vuf_max_t,
     .in = CJ},
    {.key = "vuf_mean_pct", .unit = "%", .help = "time-weighted mean VUF over the solved steps",
     .type = KL_CELL_NUM, .get = vuf_mean, .in = TCJ, .text_head = "mean%", .text = " %7.3f",
     .html_head = "mean, %", .html = "%.3f"},
    {.key = "hours_over_compat", .unit = "h", .help = "time with VUF over the compatibility "
     "level (2 %)", .type = KL_CELL_NUM, .get = hours_over_compat, .in = TCJ, .text_head = "h>2%",
     .text = " %7.1f", .html_head = "hours over 2 %", .html = "%.1f"},
    {.key = "hours_over_supply", .unit = "h", .help = "time with VUF over the supply "
     "recommendation (ANSI C84.1 Annex D, 3 %)", .type = KL_CELL_NUM, .get = hours_over_supply,
     .in = TCJ, .text_head = "h>3%", .text = " %7.1f", .html_head = "hours over 3 %",
     .html = "%.1f"},
};

const kl_table kl_table_series_unbalance = {
    .name = "unbalance", .help = "VUF over time, a line per three-phase bus", .col = unb_cols,
    .ncol = (int)(sizeof unb_cols / sizeof unb_cols[0]), .rows = bus_rows, .keep = unb_keep,
    .rank = unb_rank,
};

/* ---- service voltage: a line per bus and phase */

static int next_phase(const kl_series_stats *s, int b, int p)
{
    for (p++; p < 3; p++)
        if (s->v_min_pu[3 * b + p] == s->v_min_pu[3 * b + p])
            return p;
    return -1;
}

static int volt_next(const void *ctx, int b, int p)
{
    return next_phase(ST(ctx), b, p);
}

static int volt_keep(const void *ctx, int b, kl_table_format fmt)
{
    (void)fmt;
    return next_phase(ST(ctx), b, -1) >= 0;
}

static double volt_rank(const void *ctx, int b)
{
    double h = 0;
    for (int p = 0; p < 3; p++)
        h += ST(ctx)->outside_a_s[3 * b + p];
    return next_phase(ST(ctx), b, -1) >= 0 && h > 0 ? h : NAN;
}

static const char *phase_name(const void *ctx, int row, int sub, char buf[8])
{
    (void)ctx;
    (void)row;
    buf[0] = (char)('a' + sub);
    buf[1] = '\0';
    return buf;
}

static void phase_letter(const void *ctx, int row, int sub, kl_cell *c)
{
    (void)ctx;
    (void)row;
    c->i = 'a' + sub;
}

static void v_min(const void *ctx, int b, int p, kl_cell *c)
{
    c->num = ST(ctx)->v_min_pu[3 * b + p];
}

static void v_min_t(const void *ctx, int b, int p, kl_cell *c)
{
    put_time(ctx, ST(ctx)->v_min_t[3 * b + p], c);
}

static void v_max(const void *ctx, int b, int p, kl_cell *c)
{
    c->num = ST(ctx)->v_max_pu[3 * b + p];
}

static void v_max_t(const void *ctx, int b, int p, kl_cell *c)
{
    put_time(ctx, ST(ctx)->v_max_t[3 * b + p], c);
}

static void out_a(const void *ctx, int b, int p, kl_cell *c)
{
    c->num = ST(ctx)->outside_a_s[3 * b + p] / 3600;
}

static void out_b(const void *ctx, int b, int p, kl_cell *c)
{
    c->num = ST(ctx)->outside_b_s[3 * b + p] / 3600;
}

/* HTML: the phases' worst figures in one row. */
static void h_min(const void *ctx, int b, int p, kl_cell *c)
{
    (void)p;
    c->num = NAN;
    for (int q = next_phase(ST(ctx), b, -1); q >= 0; q = next_phase(ST(ctx), b, q))
        if (!(c->num <= ST(ctx)->v_min_pu[3 * b + q]))
            c->num = ST(ctx)->v_min_pu[3 * b + q];
}

static void h_out_a(const void *ctx, int b, int p, kl_cell *c)
{
    (void)p;
    c->num = volt_rank(ctx, b) / 3600;
}

static const kl_column volt_cols[] = {
    {.key = "bus", .help = "bus name", .type = KL_CELL_STR, .get = bus_name, .in = TCJ,
     .text_head = "bus", .text = "%-16s", .html_head = "bus"},
    {.key = "phase", .help = "phase letter", .type = KL_CELL_CHAR, .get = phase_letter,
     .in = KL_IN_TEXT | KL_IN_CSV, .sub = 1, .text_head = "phase", .text = " %-5c"},
    {.key = "v_min_pu", .unit = "pu", .help = "lowest phase-to-neutral voltage of a step",
     .type = KL_CELL_NUM, .get = v_min, .in = KL_IN_TEXT | CJ, .sub = 1, .text_head = "min pu",
     .text = " %8.4f"},
    {.key = "v_min_time", .help = "that step's start", .type = KL_CELL_STR, .get = v_min_t,
     .in = KL_IN_TEXT | CJ, .sub = 1, .text_head = "at", .text = "  %-22s"},
    {.key = "v_max_pu", .unit = "pu", .help = "highest phase-to-neutral voltage of a step",
     .type = KL_CELL_NUM, .get = v_max, .in = KL_IN_TEXT | CJ, .sub = 1, .text_head = "max pu",
     .text = " %8.4f"},
    {.key = "v_max_time", .help = "that step's start", .type = KL_CELL_STR, .get = v_max_t,
     .in = CJ, .sub = 1},
    {.key = "hours_outside_range_a", .unit = "h", .help = "time outside ANSI C84.1 Range A",
     .type = KL_CELL_NUM, .get = out_a, .in = KL_IN_TEXT | CJ, .sub = 1, .text_head = "h out A",
     .text = " %8.1f"},
    {.key = "hours_outside_range_b", .unit = "h", .help = "time outside ANSI C84.1 Range B",
     .type = KL_CELL_NUM, .get = out_b, .in = KL_IN_TEXT | CJ, .sub = 1, .text_head = "h out B",
     .text = " %8.1f"},
    {.key = "html_min", .help = "lowest phase voltage", .type = KL_CELL_NUM, .get = h_min,
     .in = KL_IN_HTML, .html_head = "lowest, pu", .html = "%.4f"},
    {.key = "html_out_a", .help = "phase-hours outside Range A", .type = KL_CELL_NUM,
     .get = h_out_a, .in = KL_IN_HTML, .html_head = "phase-hours outside Range A",
     .html = "%.1f"},
};

const kl_table kl_table_series_voltage = {
    .name = "voltage", .help = "service voltage over time, a line per bus and phase",
    .col = volt_cols, .ncol = (int)(sizeof volt_cols / sizeof volt_cols[0]), .rows = bus_rows,
    .keep = volt_keep, .next_sub = volt_next, .sub_in = KL_IN_TEXT | CJ, .sub_key = "phases",
    .sub_name = phase_name, .rank = volt_rank,
};

/* ---- sections: neutral and earth current, losses */

static int sec_rows(const void *ctx)
{
    return ROWS(ctx)->feeder->nsections;
}

static void sec_name(const void *ctx, int k, int p, kl_cell *c)
{
    (void)p;
    c->str = ROWS(ctx)->feeder->sections[k].name;
}

static double sec_rank(const void *ctx, int k)
{
    return ST(ctx)->in_win_max[k];
}

#define SEC_NUM(fn, field, scale)                                     \
    static void fn(const void *ctx, int k, int p, kl_cell *c)         \
    {                                                                 \
        (void)p;                                                      \
        c->num = ST(ctx)->field[k] * (scale);                         \
    }
SEC_NUM(in_max, in_max, 1)
SEC_NUM(in_rms, in_rms, 1)
SEC_NUM(in_win, in_win_max, 1)
SEC_NUM(ie_max, ie_max, 1)
SEC_NUM(ie_rms, ie_rms, 1)

static void in_max_t(const void *ctx, int k, int p, kl_cell *c)
{
    (void)p;
    if (ST(ctx)->in_max[k] == ST(ctx)->in_max[k])
        put_time(ctx, ST(ctx)->in_max_t[k], c);
}

static void in_win_t(const void *ctx, int k, int p, kl_cell *c)
{
    (void)p;
    if (ST(ctx)->in_win_max[k] == ST(ctx)->in_win_max[k])
        put_time(ctx, ST(ctx)->in_win_t[k], c);
}

static void loss(const void *ctx, int k, int p, kl_cell *c)
{
    c->num = ST(ctx)->loss_wh[3 * k + p] / 1e3;
}

static void loss_a(const void *ctx, int k, int p, kl_cell *c) { (void)p; loss(ctx, k, 0, c); }
static void loss_b(const void *ctx, int k, int p, kl_cell *c) { (void)p; loss(ctx, k, 1, c); }
static void loss_c(const void *ctx, int k, int p, kl_cell *c) { (void)p; loss(ctx, k, 2, c); }

static const kl_column sec_cols[] = {
    {.key = "section", .help = "section name", .type = KL_CELL_STR, .get = sec_name, .in = TCJ,
     .text_head = "section", .text = "%-16s", .html_head = "section"},
    {.key = "neutral_window_max_amps", .unit = "A", .help = "largest RMS neutral current over one "
     "heating window", .type = KL_CELL_NUM, .get = in_win, .in = TCJ, .text_head = "In win A",
     .text = " %9.2f", .html_head = "neutral, worst window RMS, A", .html = "%.1f"},
    {.key = "neutral_window_time", .help = "start of that window", .type = KL_CELL_STR,
     .get = in_win_t, .in = TCJ, .text_head = "window at", .text = "  %-22s",
     .html_head = "window from"},
    {.key = "neutral_max_amps", .unit = "A", .help = "largest neutral current of a step",
     .type = KL_CELL_NUM, .get = in_max, .in = TCJ, .text_head = "In max A", .text = " %9.2f",
     .html_head = "neutral, step max, A", .html = "%.1f"},
    {.key = "neutral_max_time", .help = "that step's start", .type = KL_CELL_STR, .get = in_max_t,
     .in = CJ},
    {.key = "neutral_rms_amps", .unit = "A", .help = "RMS neutral current over the series",
     .type = KL_CELL_NUM, .get = in_rms, .in = TCJ, .text_head = "In rms A", .text = " %9.2f",
     .html_head = "neutral, RMS, A", .html = "%.1f"},
    {.key = "earth_max_amps", .unit = "A", .help = "largest earth-return current of a step",
     .type = KL_CELL_NUM, .get = ie_max, .in = TCJ, .text_head = "Ie max A", .text = " %9.2f",
     .html_head = "earth, max, A", .html = "%.1f"},
    {.key = "earth_rms_amps", .unit = "A", .help = "RMS earth-return current over the series",
     .type = KL_CELL_NUM, .get = ie_rms, .in = TCJ, .text_head = "Ie rms A", .text = " %9.2f",
     .html_head = "earth, RMS, A", .html = "%.1f"},
    {.key = "loss_kwh_a", .unit = "kWh", .help = "energy lost, phase a", .type = KL_CELL_NUM,
     .get = loss_a, .in = TCJ, .text_head = "loss kWh a", .text = " %10.2f",
     .html_head = "losses a, kWh", .html = "%.1f"},
    {.key = "loss_kwh_b", .unit = "kWh", .help = "energy lost, phase b", .type = KL_CELL_NUM,
     .get = loss_b, .in = TCJ, .text_head = "b", .text = " %10.2f", .html_head = "b, kWh",
     .html = "%.1f"},
    {.key = "loss_kwh_c", .unit = "kWh", .help = "energy lost, phase c", .type = KL_CELL_NUM,
     .get = loss_c, .in = TCJ, .text_head = "c", .text = " %10.2f", .html_head = "c, kWh",
     .html = "%.1f"},
};

const kl_table kl_table_series_sections = {
    .name = "sections", .help = "neutral and earth current and losses over time, a line per section",
    .col = sec_cols, .ncol = (int)(sizeof sec_cols / sizeof sec_cols[0]), .rows = sec_rows,
    .rank = sec_rank,
};

/* ---- regulators: tap operations per unit */

static int reg_rows(const void *ctx)
{
    return 3 * ROWS(ctx)->feeder->nregulators;
}

static int reg_keep(const void *ctx, int row, kl_table_format fmt)
{
    (void)fmt;
    const kl_regulator *r = &ROWS(ctx)->feeder->regulators[row / 3];
    return (r->phases & (1 << (row % 3))) != 0;
}

static void reg_name(const void *ctx, int row, int p, kl_cell *c)
{
    (void)p;
    c->str = ROWS(ctx)->feeder->regulators[row / 3].name;
}

static void reg_unit(const void *ctx, int row, int p, kl_cell *c)
{
    (void)p;
    c->str = kl_regulator_unit_name(&ROWS(ctx)->feeder->regulators[row / 3], row % 3);
}

static void reg_ops(const void *ctx, int row, int p, kl_cell *c)
{
    (void)p;
    c->i = ST(ctx)->reg_ops[row];
}

static const kl_column reg_cols[] = {
    {.key = "regulator", .help = "regulator name", .type = KL_CELL_STR, .get = reg_name, .in = TCJ,
     .text_head = "regulator", .text = "%-16s", .html_head = "regulator"},
    {.key = "unit", .help = "the unit's phase (open delta: its pair of phases)", .type = KL_CELL_STR,
     .get = reg_unit, .in = TCJ, .text_head = "unit", .text = " %-4s", .html_head = "unit"},
    {.key = "tap_steps_moved", .help = "tap steps moved over the series, each step one operation",
     .type = KL_CELL_INT, .get = reg_ops, .in = TCJ, .text_head = "tap steps moved",
     .text = " %15d", .html_head = "tap steps moved"},
};

const kl_table kl_table_series_regulators = {
    .name = "regulators", .help = "regulator operations, a line per unit", .col = reg_cols,
    .ncol = (int)(sizeof reg_cols / sizeof reg_cols[0]), .rows = reg_rows, .keep = reg_keep,
};

/* ---- capacitor banks: switchings and time in service */

static int cap_rows(const void *ctx)
{
    return ROWS(ctx)->feeder->ncapacitors;
}

static void cap_name(const void *ctx, int c, int p, kl_cell *x)
{
    (void)p;
    x->str = ROWS(ctx)->feeder->capacitors[c].name;
}

static void cap_control(const void *ctx, int c, int p, kl_cell *x)
{
    (void)p;
    static const char *const K[4] = {"fixed", "voltage", "var", "time"};
    x->str = K[ST(ctx)->cap_kind[c] & 3];
}

static void cap_switches(const void *ctx, int c, int p, kl_cell *x)
{
    (void)p;
    x->i = ST(ctx)->cap_switches[c];
}

static void cap_hours(const void *ctx, int c, int p, kl_cell *x)
{
    (void)p;
    x->num = ST(ctx)->cap_on_s[c] / 3600;
}

static const kl_column cap_cols[] = {
    {.key = "capacitor", .help = "capacitor bank name", .type = KL_CELL_STR, .get = cap_name,
     .in = TCJ, .text_head = "capacitor", .text = "%-16s", .html_head = "capacitor"},
    {.key = "control", .help = "fixed, voltage, var or time", .type = KL_CELL_STR,
     .get = cap_control, .in = TCJ, .text_head = "control", .text = " %-8s", .html_head = "control"},
    {.key = "switchings", .help = "switching operations, on or off", .type = KL_CELL_INT,
     .get = cap_switches, .in = TCJ, .text_head = "switchings", .text = " %10d",
     .html_head = "switchings"},
    {.key = "hours_in_service", .unit = "h", .help = "solved time the bank was on",
     .type = KL_CELL_NUM, .get = cap_hours, .in = TCJ, .text_head = "hours on", .text = " %9.1f",
     .html_head = "hours on", .html = "%.1f"},
};

const kl_table kl_table_series_capacitors = {
    .name = "capacitors", .help = "capacitor switching, a line per bank", .col = cap_cols,
    .ncol = (int)(sizeof cap_cols / sizeof cap_cols[0]), .rows = cap_rows,
};

/* ---- the steps that did not converge (the first KL_SERIES_FAIL_KEEP) */

static int fail_rows(const void *ctx)
{
    return ST(ctx)->nfail_kept;
}

static void fail_time(const void *ctx, int i, int p, kl_cell *c)
{
    (void)p;
    put_time(ctx, ST(ctx)->fail_t[i], c);
}

static void fail_why(const void *ctx, int i, int p, kl_cell *c)
{
    (void)p;
    c->str = ST(ctx)->fail_why[i];
}

static const kl_column fail_cols[] = {
    {.key = "time", .help = "the step's start", .type = KL_CELL_STR, .get = fail_time, .in = TCJ,
     .text_head = "time", .text = "%-22s", .html_head = "time"},
    {.key = "cause", .help = "what the load flow said", .type = KL_CELL_STR, .get = fail_why,
     .in = TCJ, .text_head = "cause", .text = "  %s", .html_head = "cause"},
};

const kl_table kl_table_series_failures = {
    .name = "failures", .help = "steps that did not converge, a line each", .col = fail_cols,
    .ncol = (int)(sizeof fail_cols / sizeof fail_cols[0]), .rows = fail_rows,
    .flags = KL_TABLE_JSON_EMPTY_INLINE,
};
