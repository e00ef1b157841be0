/* kilter: the load flow's tables (kilter/table.h): bus voltages and section
 * currents and powers, a line per bus or section and phase.  The columns are
 * the contract of docs/flow.md: CSV fields and JSON keys as documented there.
 * Magnitudes are |z|, angles arg z in degrees (0 for a zero phasor), powers
 * in kW and kvar (S = V I*, computed by the flow). */
#include <complex.h>
#include <math.h>
#include <string.h>
#include "kl_report.h"
#include "kilter/table.h"
#include "kilter/units.h"

#define ROWS(ctx) ((const kl_flow_rows *)(ctx))

static double deg(kl_complex z)
{
    return cabs(z) > 0 ? carg(z) * KL_DEG_PER_RAD : 0.0;
}

static int next_phase(int mask, int p)
{
    for (p++; p < 3; p++)
        if (mask & (1 << p))
            return p;
    return -1;
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

/* ---- buses: a line per bus and phase present (the flow's phase mask) */

static int bus_rows(const void *ctx)
{
    return ROWS(ctx)->feeder->nbuses;
}

/* A de-energized bus (beyond an open switch) is listed on its own phases at
 * zero volts, so the table says so rather than leave it out. */
static int bus_phases(const kl_flow_rows *w, int b)
{
    int ph = w->flow->phases[b];
    return ph || !kl_deenergized_bus(w->feeder, b) ? ph : w->feeder->buses[b].phases;
}

static int bus_next(const void *ctx, int b, int p)
{
    return next_phase(bus_phases(ROWS(ctx), b), p);
}

static void bus_name(const void *ctx, int b, int p, kl_cell *c)
{
    (void)p;
    c->str = ROWS(ctx)->feeder->buses[b].name;
}

static void bus_base(const void *ctx, int b, int p, kl_cell *c)
{
    (void)p;
    c->num = ROWS(ctx)->flow->v_base_ln[b];
}

static void bus_volts(const void *ctx, int b, int p, kl_cell *c)
{
    c->num = cabs(ROWS(ctx)->flow->v[3 * b + p]);
}

static void bus_pu(const void *ctx, int b, int p, kl_cell *c)
{
    const kl_flow_result *r = ROWS(ctx)->flow;
    c->num = cabs(r->v[3 * b + p]) / r->v_base_ln[b];
}

static void bus_angle(const void *ctx, int b, int p, kl_cell *c)
{
    if (!ROWS(ctx)->flow->phases[b]) {
        c->num = NAN; /* de-energized: no angle */
        return;
    }
    c->num = deg(ROWS(ctx)->flow->v[3 * b + p]);
}

#define TCJ (KL_IN_TEXT | KL_IN_CSV | KL_IN_JSON)
#define TC (KL_IN_TEXT | KL_IN_CSV)
#define CJ (KL_IN_CSV | KL_IN_JSON)

static const kl_column bus_cols[] = {
    {.key = "bus", .help = "bus name", .type = KL_CELL_STR, .get = bus_name, .in = TCJ,
     .json_key = "name", .text_head = "bus", .text = "%-16s"},
    {.key = "base_ln_volts", .unit = "V", .help = "the bus's line-to-neutral base voltage",
     .type = KL_CELL_NUM, .get = bus_base, .in = KL_IN_JSON},
    {.key = "phase", .help = "phase letter", .type = KL_CELL_CHAR, .get = phase_letter, .in = TC,
     .sub = 1, .text_head = "phase", .text = " %-5c"},
    {.key = "v_volts", .unit = "V", .help = "phase-to-neutral voltage magnitude |V|",
     .type = KL_CELL_NUM, .get = bus_volts, .in = TCJ, .sub = 1, .json_key = "volts",
     .text_head = "volts", .text = " %12.1f"},
    {.key = "v_pu", .unit = "pu", .help = "|V| over the bus's line-to-neutral base",
     .type = KL_CELL_NUM, .get = bus_pu, .in = TCJ, .sub = 1, .json_key = "pu",
     .text_head = "pu", .text = " %9.4f", .csv = "%.8f"},
    {.key = "angle_deg", .unit = "deg", .help = "voltage angle, source phase a at 0",
     .type = KL_CELL_NUM, .get = bus_angle, .in = TCJ, .sub = 1, .text_head = "angle",
     .text = " %9.2f", .json = "%.6f"},
    {.key = "base_ln_volts", .unit = "V", .help = "the bus's line-to-neutral base voltage",
     .type = KL_CELL_NUM, .get = bus_base, .in = KL_IN_CSV}, /* last in CSV, first in JSON */
};

const kl_table kl_table_flow_buses = {
    .name = "buses", .help = "bus voltages, a line per bus and phase", .col = bus_cols,
    .ncol = (int)(sizeof bus_cols / sizeof bus_cols[0]), .rows = bus_rows, .next_sub = bus_next,
    .sub_key = "phases", .sub_name = phase_name,
};

/* ---- sections: a line per solved section and phase */

/* Phases of a section: its own mask, or the sending bus's. */
static int section_phases(const kl_flow_rows *w, int s)
{
    const kl_section *sc = &w->feeder->sections[s];
    int up = sc->reversed ? sc->to : sc->from;
    return sc->phases ? sc->phases : w->flow->phases[up];
}

static int sec_rows(const void *ctx)
{
    return ROWS(ctx)->feeder->nsections;
}

static int sec_next(const void *ctx, int s, int p)
{
    const kl_flow_rows *w = ROWS(ctx);
    return w->flow->sec_solved[s] ? next_phase(section_phases(w, s), p) : -1;
}

static void sec_name(const void *ctx, int s, int p, kl_cell *c)
{
    (void)p;
    c->str = ROWS(ctx)->feeder->sections[s].name;
}

static void sec_solved(const void *ctx, int s, int p, kl_cell *c)
{
    (void)p;
    c->i = ROWS(ctx)->flow->sec_solved[s] != 0;
}

static void sec_amps(const void *ctx, int s, int p, kl_cell *c)
{
    c->num = cabs(ROWS(ctx)->flow->i[3 * s + p]);
}

static void sec_angle(const void *ctx, int s, int p, kl_cell *c)
{
    c->num = deg(ROWS(ctx)->flow->i[3 * s + p]);
}

static void sec_recv_amps(const void *ctx, int s, int p, kl_cell *c)
{
    c->num = cabs(ROWS(ctx)->flow->i_recv[3 * s + p]);
}

static void sec_recv_angle(const void *ctx, int s, int p, kl_cell *c)
{
    c->num = deg(ROWS(ctx)->flow->i_recv[3 * s + p]);
}

static void sec_p_in(const void *ctx, int s, int p, kl_cell *c)
{
    c->num = creal(ROWS(ctx)->flow->s_in[3 * s + p]) / 1e3;
}

static void sec_q_in(const void *ctx, int s, int p, kl_cell *c)
{
    c->num = cimag(ROWS(ctx)->flow->s_in[3 * s + p]) / 1e3;
}

static void sec_p_loss(const void *ctx, int s, int p, kl_cell *c)
{
    c->num = creal(ROWS(ctx)->flow->s_loss[3 * s + p]) / 1e3;
}

static void sec_q_loss(const void *ctx, int s, int p, kl_cell *c)
{
    c->num = cimag(ROWS(ctx)->flow->s_loss[3 * s + p]) / 1e3;
}

static void sec_in_amps(const void *ctx, int s, int p, kl_cell *c)
{
    (void)p;
    c->num = cabs(ROWS(ctx)->flow->i_neutral[s]);
}

static void sec_in_angle(const void *ctx, int s, int p, kl_cell *c)
{
    (void)p;
    c->num = deg(ROWS(ctx)->flow->i_neutral[s]);
}

static void sec_ie_amps(const void *ctx, int s, int p, kl_cell *c)
{
    (void)p;
    c->num = cabs(ROWS(ctx)->flow->i_earth[s]);
}

static void sec_ie_angle(const void *ctx, int s, int p, kl_cell *c)
{
    (void)p;
    c->num = deg(ROWS(ctx)->flow->i_earth[s]);
}

/* Loading (kilter/flow.h, kl_loading_of), in percent. */
static void sec_loading(const void *ctx, int s, int p, kl_cell *c)
{
    kl_loading l;
    kl_loading_of(ROWS(ctx)->feeder, ROWS(ctx)->flow, s, &l);
    c->num = 100.0 * l.phase[p];
}

static void sec_loading_emerg(const void *ctx, int s, int p, kl_cell *c)
{
    kl_loading l;
    kl_loading_of(ROWS(ctx)->feeder, ROWS(ctx)->flow, s, &l);
    c->num = 100.0 * l.phase_emerg[p];
}

static void sec_bank_loading(const void *ctx, int s, int p, kl_cell *c)
{
    kl_loading l;
    (void)p;
    kl_loading_of(ROWS(ctx)->feeder, ROWS(ctx)->flow, s, &l);
    c->num = 100.0 * l.bank;
}

static void sec_rating(const void *ctx, int s, int p, kl_cell *c)
{
    kl_loading l;
    (void)p;
    kl_loading_of(ROWS(ctx)->feeder, ROWS(ctx)->flow, s, &l);
    c->num = l.rating;
}

/* Text: an open section is one line; a line section's neutral and earth
 * return follow its phases. */
static void sec_text_after(FILE *o, const void *ctx, int s)
{
    const kl_flow_rows *w = ROWS(ctx);
    const kl_section *sc = &w->feeder->sections[s];
    if (!w->flow->sec_solved[s])
        fprintf(o, "%-16s (open)\n", sc->name);
    else if (sc->kind == KL_SEC_LINE)
        fprintf(o, "%-16s %-5s %10.2f %9.2f   (earth return %.2f A)\n", sc->name, "n",
                cabs(w->flow->i_neutral[s]), deg(w->flow->i_neutral[s]),
                cabs(w->flow->i_earth[s]));
    else if (sc->kind == KL_SEC_TRANSFORMER && sc->device >= 0) {
        kl_loading l;
        kl_loading_of(w->feeder, w->flow, s, &l);
        if (isfinite(l.bank))
            fprintf(o, "%-16s %-5s %10s %9s   (bank %.1f %% of %.0f kVA)\n", sc->name, "bank", "", "",
                    100.0 * l.bank, w->feeder->transformers[sc->device].kva);
    }
}

#define SECTION_NUM(k, jk, u, h, g, in_, hd, tf, jf) \
    {.key = k, .unit = u, .help = h, .type = KL_CELL_NUM, .get = g, .in = in_, .sub = 1, \
     .json_key = jk, .text_head = hd, .text = tf, .json = jf}

static const kl_column sec_cols[] = {
    {.key = "section", .help = "section name", .type = KL_CELL_STR, .get = sec_name, .in = TCJ,
     .json_key = "name", .text_head = "section", .text = "%-16s"},
    {.key = "solved", .help = "false for an open section", .type = KL_CELL_BOOL,
     .get = sec_solved, .in = KL_IN_JSON},
    {.key = "phase", .help = "phase letter", .type = KL_CELL_CHAR, .get = phase_letter, .in = TC,
     .sub = 1, .text_head = "phase", .text = " %-5c"},
    SECTION_NUM("i_amps", "current.amps", "A", "phase current magnitude at the sending end",
                sec_amps, TCJ, "amps", " %10.2f", NULL),
    SECTION_NUM("i_angle_deg", "current.angle_deg", "deg", "phase current angle, sending end",
                sec_angle, TCJ, "angle", " %9.2f", "%.6f"),
    SECTION_NUM("i_recv_amps", "current_receiving.amps", "A",
                "phase current magnitude at the receiving end", sec_recv_amps, KL_IN_JSON, "",
                NULL, NULL),
    SECTION_NUM("i_recv_angle_deg", "current_receiving.angle_deg", "deg",
                "phase current angle, receiving end", sec_recv_angle, KL_IN_JSON, "", NULL,
                "%.6f"),
    SECTION_NUM("p_in_kw", NULL, "kW", "real power into the section", sec_p_in, TCJ, "in kW",
                " %11.2f", NULL),
    SECTION_NUM("q_in_kvar", NULL, "kvar", "reactive power into the section", sec_q_in, TCJ,
                "in kvar", " %11.2f", NULL),
    SECTION_NUM("p_loss_kw", NULL, "kW", "real power lost in the section", sec_p_loss, TCJ,
                "loss kW", " %10.3f", NULL),
    SECTION_NUM("q_loss_kvar", NULL, "kvar", "reactive power lost in the section", sec_q_loss,
                CJ, "", NULL, NULL),
    SECTION_NUM("loading_pct", NULL, "%", "phase current over its rating (lines: ampacity; "
                "regulators: rated current; transformers: each winding's rated line current, the "
                "larger side)", sec_loading, TCJ, "load %", " %7.1f", NULL),
    SECTION_NUM("loading_emergency_pct", NULL, "%", "the same over the emergency rating",
                sec_loading_emerg, CJ, "", NULL, NULL),
    {.key = "rating_amps", .unit = "A", .help = "the phase rating the loading is measured against "
     "(transformers: the source side's rated line current)", .type = KL_CELL_NUM, .get = sec_rating,
     .in = CJ},
    {.key = "bank_loading_pct", .unit = "%", .help = "transformers: the sum of the phases' kVA over "
     "the bank's rating", .type = KL_CELL_NUM, .get = sec_bank_loading, .in = CJ},
    {.key = "i_neutral_amps", .unit = "A", .help = "neutral conductor current magnitude",
     .type = KL_CELL_NUM, .get = sec_in_amps, .in = KL_IN_CSV},
    {.key = "i_neutral_angle_deg", .unit = "deg", .help = "neutral conductor current angle",
     .type = KL_CELL_NUM, .get = sec_in_angle, .in = KL_IN_CSV},
    {.key = "i_earth_amps", .unit = "A", .help = "earth-return current magnitude",
     .type = KL_CELL_NUM, .get = sec_ie_amps, .in = KL_IN_CSV},
    {.key = "i_earth_angle_deg", .unit = "deg", .help = "earth-return current angle",
     .type = KL_CELL_NUM, .get = sec_ie_angle, .in = KL_IN_CSV},
    /* JSON: the neutral and the earth return once per section, as phasors */
    {.key = "i_neutral_amps", .json_key = "neutral.amps", .type = KL_CELL_NUM,
     .get = sec_in_amps, .in = KL_IN_JSON},
    {.key = "i_neutral_angle_deg", .json_key = "neutral.angle_deg", .type = KL_CELL_NUM,
     .get = sec_in_angle, .in = KL_IN_JSON, .json = "%.6f"},
    {.key = "i_earth_amps", .json_key = "earth_return.amps", .type = KL_CELL_NUM,
     .get = sec_ie_amps, .in = KL_IN_JSON},
    {.key = "i_earth_angle_deg", .json_key = "earth_return.angle_deg", .type = KL_CELL_NUM,
     .get = sec_ie_angle, .in = KL_IN_JSON, .json = "%.6f"},
};

const kl_table kl_table_flow_sections = {
    .name = "sections", .help = "section currents and powers, a line per section and phase",
    .col = sec_cols, .ncol = (int)(sizeof sec_cols / sizeof sec_cols[0]), .rows = sec_rows,
    .next_sub = sec_next, .sub_key = "phases", .sub_name = phase_name,
    .text_after = sec_text_after,
};

/* ---- regulators: a line per regulator and unit (phase).  An automatic unit
 * held at its last tap with its relay voltage still outside the band has a
 * set point it cannot reach: the status says which limit, the note after the
 * row says what it means (the load flow has converged; the voltage below the
 * regulator is what the regulator can give, not what it is set for). */

static const kl_regulator *reg_of(const void *ctx, int g)
{
    return &ROWS(ctx)->feeder->regulators[g];
}

static int reg_rows(const void *ctx)
{
    return ROWS(ctx)->feeder->nregulators;
}

static int reg_next(const void *ctx, int g, int p)
{
    return next_phase(reg_of(ctx, g)->phases, p);
}

static void reg_name(const void *ctx, int g, int p, kl_cell *c)
{
    (void)p;
    c->str = reg_of(ctx, g)->name;
}

static void reg_tap_of(const void *ctx, int g, int p, kl_cell *c)
{
    c->i = ROWS(ctx)->flow->tap[3 * g + p];
}

static void reg_tap_a(const void *ctx, int g, int p, kl_cell *c)
{
    reg_tap_of(ctx, g, 0, c);
}

static void reg_tap_b(const void *ctx, int g, int p, kl_cell *c)
{
    reg_tap_of(ctx, g, 1, c);
}

static void reg_tap_c(const void *ctx, int g, int p, kl_cell *c)
{
    reg_tap_of(ctx, g, 2, c);
}

/* A unit's name: its phase letter, or an open-delta unit's phase pair ("ab"). */
static void reg_unit(const void *ctx, int g, int p, kl_cell *c)
{
    c->str = kl_regulator_unit_name(reg_of(ctx, g), p);
}

static const char *reg_unit_name(const void *ctx, int row, int sub, char buf[8])
{
    (void)buf;
    return kl_regulator_unit_name(reg_of(ctx, row), sub);
}

static void reg_steps(const void *ctx, int g, int p, kl_cell *c)
{
    c->i = reg_of(ctx, g)->steps;
}

static int reg_auto(const void *ctx, int g)
{
    return reg_of(ctx, g)->mode == KL_REG_AUTO;
}

static void reg_level(const void *ctx, int g, int p, kl_cell *c)
{
    c->num = reg_auto(ctx, g) ? reg_of(ctx, g)->voltage_level_v : NAN;
}

static void reg_band(const void *ctx, int g, int p, kl_cell *c)
{
    c->num = reg_auto(ctx, g) ? reg_of(ctx, g)->bandwidth_v : NAN;
}

static void reg_relay(const void *ctx, int g, int p, kl_cell *c)
{
    c->num = ROWS(ctx)->flow->reg_relay_v[3 * g + p];
}

/* fixed, not-monitored, in-band, out-of-band, raise-limit, lower-limit */
static const char *reg_status_of(const void *ctx, int g, int p)
{
    const kl_regulator *rg = reg_of(ctx, g);
    const kl_flow_result *r = ROWS(ctx)->flow;
    double v = r->reg_relay_v[3 * g + p];
    if (rg->mode != KL_REG_AUTO)
        return "fixed";
    if (r->reg_limit[3 * g + p])
        return r->reg_limit[3 * g + p] > 0 ? "raise-limit" : "lower-limit";
    if (isnan(v))
        return "not-monitored";
    return fabs(v - rg->voltage_level_v) <= rg->bandwidth_v / 2 ? "in-band" : "out-of-band";
}

static void reg_status(const void *ctx, int g, int p, kl_cell *c)
{
    c->str = reg_status_of(ctx, g, p);
    c->cls = strstr(c->str, "limit") ? "bad" : NULL;
}

static void reg_met(const void *ctx, int g, int p, kl_cell *c)
{
    c->i = ROWS(ctx)->flow->reg_limit[3 * g + p] == 0;
}

/* Text: what a held unit means, and what to do about it. */
static void reg_text_after(FILE *o, const void *ctx, int g)
{
    const kl_regulator *rg = reg_of(ctx, g);
    const kl_flow_result *r = ROWS(ctx)->flow;
    for (int p = 0; p < 3; p++) {
        int lim = r->reg_limit[3 * g + p];
        if (!lim)
            continue;
        fprintf(o, "  note: unit %s is held at its %s limit (tap %+d of %d) with a relay voltage of "
                "%.1f V, %s the band %.1f-%.1f V: the set point %.1f V is not reached; the "
                "voltages below it are what the regulator can give (check the regulator's "
                "range, the set point and the load)\n", kl_regulator_unit_name(rg, p), lim > 0 ? "raise" : "lower",
                r->tap[3 * g + p], rg->steps, r->reg_relay_v[3 * g + p], lim > 0 ? "below" : "above",
                rg->voltage_level_v - rg->bandwidth_v / 2, rg->voltage_level_v + rg->bandwidth_v / 2,
                rg->voltage_level_v);
    }
}

static const kl_column reg_cols[] = {
    {.key = "regulator", .help = "regulator name", .type = KL_CELL_STR, .get = reg_name,
     .in = TCJ, .json_key = "name", .text_head = "regulator", .text = "%-16s",
     .html_head = "regulator"},
    /* JSON: the taps of all three positions, as before the units were listed (an
     * open-delta bank's units by name under "units") */
    {.key = "tap_a", .json_key = "taps.a", .type = KL_CELL_INT, .get = reg_tap_a, .in = KL_IN_JSON},
    {.key = "tap_b", .json_key = "taps.b", .type = KL_CELL_INT, .get = reg_tap_b, .in = KL_IN_JSON},
    {.key = "tap_c", .json_key = "taps.c", .type = KL_CELL_INT, .get = reg_tap_c, .in = KL_IN_JSON},
    {.key = "unit", .help = "the unit: its phase (a closed-delta unit: from this phase to the "
     "next), or an open-delta unit's phase pair, regulated phase first",
     .type = KL_CELL_STR, .get = reg_unit, .in = TC, .sub = 1,
     .text_head = "unit", .text = " %-5s", .html_head = "unit"},
    {.key = "tap", .help = "the unit's final tap (positive raises)", .type = KL_CELL_INT,
     .get = reg_tap_of, .in = TCJ, .sub = 1, .text_head = "tap", .text = " %5d",
     .html_head = "tap"},
    {.key = "steps", .help = "steps each way: the tap limit", .type = KL_CELL_INT, .get = reg_steps,
     .in = TCJ, .sub = 1, .text_head = "limit", .text = " %5d", .html_head = "limit"},
    {.key = "voltage_level_v", .unit = "V", .help = "the set point (120 V base); blank for a fixed regulator",
     .type = KL_CELL_NUM, .get = reg_level, .in = TCJ, .sub = 1, .text_head = "set V",
     .text = " %7.1f", .html_head = "set point V", .html = "%.1f"},
    {.key = "bandwidth_v", .unit = "V", .help = "the bandwidth (120 V base); blank for a fixed regulator",
     .type = KL_CELL_NUM, .get = reg_band, .in = TCJ, .sub = 1, .text_head = "band V",
     .text = " %7.1f", .html_head = "band V", .html = "%.1f"},
    {.key = "relay_v", .unit = "V", .help = "the relay (compensated) voltage the control sees, "
     "120 V base; blank for a unit no automatic control acts on", .type = KL_CELL_NUM,
     .get = reg_relay, .in = TCJ, .sub = 1, .text_head = "relay V", .text = " %8.2f",
     .html_head = "relay V", .html = "%.2f"},
    {.key = "set_point_met", .help = "false when the unit is held at a tap limit with its relay "
     "voltage outside the band", .type = KL_CELL_BOOL, .get = reg_met, .in = CJ, .sub = 1},
    {.key = "status", .help = "fixed, not-monitored, in-band, out-of-band, raise-limit or "
     "lower-limit (held at that limit, the set point not reached)", .type = KL_CELL_STR,
     .get = reg_status, .in = TCJ, .sub = 1, .text_head = "status", .text = "  %s",
     .html_head = "status"},
};

const kl_table kl_table_flow_regulators = {
    .name = "regulators", .help = "regulator taps and control, a line per regulator and unit",
    .col = reg_cols, .ncol = (int)(sizeof reg_cols / sizeof reg_cols[0]), .rows = reg_rows,
    .next_sub = reg_next, .sub_key = "units", .sub_name = reg_unit_name,
    .text_after = reg_text_after,
};

/* HTML: a row per unit (row 3 g + p: regulator g, phase p), the writer of
 * the report having no sub-rows; the figures from the getters above. */
#define UNIT(get) \
    static void unit_##get(const void *ctx, int row, int sub, kl_cell *c) \
    { \
        (void)sub; \
        get(ctx, row / 3, row % 3, c); \
    }
UNIT(reg_name)
UNIT(reg_unit)
UNIT(reg_tap_of)
UNIT(reg_steps)
UNIT(reg_level)
UNIT(reg_band)
UNIT(reg_relay)
UNIT(reg_status)

static int unit_rows(const void *ctx)
{
    return 3 * ROWS(ctx)->feeder->nregulators;
}

static int unit_keep(const void *ctx, int row, kl_table_format fmt)
{
    (void)fmt;
    return reg_of(ctx, row / 3)->phases >> (row % 3) & 1;
}

#define H KL_IN_HTML
static const kl_column unit_cols[] = {
    {.key = "regulator", .type = KL_CELL_STR, .get = unit_reg_name, .in = H, .html_head = "regulator"},
    {.key = "unit", .type = KL_CELL_STR, .get = unit_reg_unit, .in = H, .html_head = "unit"},
    {.key = "tap", .type = KL_CELL_INT, .get = unit_reg_tap_of, .in = H, .html_head = "tap"},
    {.key = "steps", .type = KL_CELL_INT, .get = unit_reg_steps, .in = H, .html_head = "limit"},
    {.key = "voltage_level_v", .unit = "V", .type = KL_CELL_NUM, .get = unit_reg_level, .in = H,
     .html_head = "set point V", .html = "%.1f"},
    {.key = "bandwidth_v", .unit = "V", .type = KL_CELL_NUM, .get = unit_reg_band, .in = H,
     .html_head = "band V", .html = "%.1f"},
    {.key = "relay_v", .unit = "V", .type = KL_CELL_NUM, .get = unit_reg_relay, .in = H,
     .html_head = "relay V", .html = "%.2f"},
    {.key = "status", .type = KL_CELL_STR, .get = unit_reg_status, .in = H, .html_head = "status"},
};

const kl_table kl_table_flow_regulator_units = {
    .name = "regulators", .help = "regulator taps and control, a row per unit", .col = unit_cols,
    .ncol = (int)(sizeof unit_cols / sizeof unit_cols[0]), .rows = unit_rows, .keep = unit_keep,
};
