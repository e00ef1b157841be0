/* kilter: the fault study's tables (kilter/table.h): a row per bus (its
 * Thevenin sequence impedances, X0/X1 and R0/X1 with the effectively-grounded
 * test, the earth-fault factor, the largest and the smallest fault current)
 * and a row per fault case (phase and sequence currents, the feeding
 * section's neutral and earth return, the bus voltages during the fault).
 * The columns are the contract of docs/faults.md. */
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include "kl_report.h"
#include "kilter/table.h"
#include "kilter/sequence.h"

#define ROWS(ctx) ((const kl_fault_rows *)(ctx))
#define TCJ (KL_IN_TEXT | KL_IN_CSV | KL_IN_JSON)
#define CJ (KL_IN_CSV | KL_IN_JSON)

static const char *const KIND[4] = {"three-phase", "line-line", "line-line-ground", "line-ground"};

static const kl_fault_case *case_of(const void *ctx, int row)
{
    return &ROWS(ctx)->faults->cases[row];
}

static const kl_fault_bus *bus_of(const void *ctx, int row)
{
    const kl_fault_result *r = ROWS(ctx)->faults;
    return &r->bus[r->order[row]];
}

static void phases_of(const kl_fault_spec *s, char buf[4])
{
    int n = 0;
    if (s->kind == KL_FAULT_3PH) {
        strcpy(buf, "abc");
        return;
    }
    buf[n++] = (char)('a' + s->p);
    if (s->kind != KL_FAULT_SLG)
        buf[n++] = (char)('a' + s->q);
    buf[n] = '\0';
}

/* "line-ground a, 40 ohm" */
static void label(const kl_fault_case *c, kl_cell *out)
{
    char ph[4];
    phases_of(&c->spec, ph);
    snprintf(out->buf, sizeof out->buf, "%s %s %g ohm", KIND[c->spec.kind], ph, creal(c->spec.zf));
    out->str = out->buf;
}

/* ---- a row per case */

static int case_rows(const void *ctx)
{
    return ROWS(ctx)->faults->ncases;
}

static void c_bus(const void *ctx, int row, int sub, kl_cell *c)
{
    c->str = ROWS(ctx)->feeder->buses[case_of(ctx, row)->bus].name;
}

static void c_kind(const void *ctx, int row, int sub, kl_cell *c)
{
    c->str = KIND[case_of(ctx, row)->spec.kind];
}

static void c_phases(const void *ctx, int row, int sub, kl_cell *c)
{
    phases_of(&case_of(ctx, row)->spec, c->buf);
    c->str = c->buf;
}

static void c_zf(const void *ctx, int row, int sub, kl_cell *c)
{
    c->num = creal(case_of(ctx, row)->spec.zf);
}

static void c_ifault(const void *ctx, int row, int sub, kl_cell *c)
{
    c->num = case_of(ctx, row)->i_fault;
}

static double phase_amps(const kl_fault_case *k, const kl_fault_rows *w, int p)
{
    int present = w->faults->bus[k->bus].ncases > 0 && (w->feeder->buses[k->bus].phases & (1 << p));
    return present && k->solved ? cabs(k->i[p]) : NAN;
}

static void c_ia(const void *ctx, int row, int sub, kl_cell *c) { c->num = phase_amps(case_of(ctx, row), ROWS(ctx), 0); }
static void c_ib(const void *ctx, int row, int sub, kl_cell *c) { c->num = phase_amps(case_of(ctx, row), ROWS(ctx), 1); }
static void c_ic(const void *ctx, int row, int sub, kl_cell *c) { c->num = phase_amps(case_of(ctx, row), ROWS(ctx), 2); }

static double seq_amps(const kl_fault_case *k, int s)
{
    kl_complex x[3];
    if (!k->solved)
        return NAN;
    kl_seq_from_phase(k->i, x);
    return cabs(x[s]);
}

static void c_i0(const void *ctx, int row, int sub, kl_cell *c) { c->num = seq_amps(case_of(ctx, row), 0); }
static void c_i1(const void *ctx, int row, int sub, kl_cell *c) { c->num = seq_amps(case_of(ctx, row), 1); }
static void c_i2(const void *ctx, int row, int sub, kl_cell *c) { c->num = seq_amps(case_of(ctx, row), 2); }

static void c_resid(const void *ctx, int row, int sub, kl_cell *c)
{
    const kl_fault_case *k = case_of(ctx, row);
    c->num = k->solved ? cabs(k->i[0] + k->i[1] + k->i[2]) : NAN;
}

static void c_neutral(const void *ctx, int row, int sub, kl_cell *c)
{
    c->num = cabs(case_of(ctx, row)->i_neutral); /* NAN stays NAN */
}

static void c_earth(const void *ctx, int row, int sub, kl_cell *c)
{
    c->num = cabs(case_of(ctx, row)->i_earth);
}

static double volts_pu(const kl_fault_case *k, const kl_fault_rows *w, int p)
{
    double base = w->faults->bus[k->bus].base_ln;
    if (!k->solved || !(w->feeder->buses[k->bus].phases & (1 << p)) || !(base > 0))
        return NAN;
    return cabs(k->v[p]) / base;
}

static void c_va(const void *ctx, int row, int sub, kl_cell *c) { c->num = volts_pu(case_of(ctx, row), ROWS(ctx), 0); }
static void c_vb(const void *ctx, int row, int sub, kl_cell *c) { c->num = volts_pu(case_of(ctx, row), ROWS(ctx), 1); }
static void c_vc(const void *ctx, int row, int sub, kl_cell *c) { c->num = volts_pu(case_of(ctx, row), ROWS(ctx), 2); }

#define AMPS(k, h, g, hd) \
    {.key = k, .unit = "A", .help = h, .type = KL_CELL_NUM, .get = g, .in = TCJ, \
     .text_head = hd, .text = " %9.1f", .csv = "%.3f", .json = "%.8g"}
#define PU(k, h, g, hd) \
    {.key = k, .unit = "pu", .help = h, .type = KL_CELL_NUM, .get = g, .in = TCJ, \
     .text_head = hd, .text = " %6.3f", .csv = "%.6f"}

static const kl_column case_cols[] = {
    {.key = "bus", .help = "bus name", .type = KL_CELL_STR, .get = c_bus, .in = TCJ,
     .text_head = "bus", .text = "%-14s"},
    {.key = "fault", .help = "three-phase, line-line, line-line-ground or line-ground",
     .type = KL_CELL_STR, .get = c_kind, .in = TCJ, .text_head = "fault", .text = " %-16s"},
    {.key = "phases", .help = "the faulted phases", .type = KL_CELL_STR, .get = c_phases,
     .in = TCJ, .text_head = "ph", .text = " %-3s"},
    {.key = "zf_ohm", .unit = "ohm", .help = "fault impedance (per phase; to ground for earth faults)",
     .type = KL_CELL_NUM, .get = c_zf, .in = TCJ, .text_head = "Zf ohm", .text = " %6.1f",
     .csv = "%.3f"},
    AMPS("fault_amps", "the largest faulted-phase current", c_ifault, "I fault"),
    AMPS("ia_amps", "phase a current into the fault", c_ia, "Ia"),
    AMPS("ib_amps", "phase b current into the fault", c_ib, "Ib"),
    AMPS("ic_amps", "phase c current into the fault", c_ic, "Ic"),
    AMPS("i0_amps", "zero-sequence current |I0|", c_i0, "I0"),
    AMPS("i1_amps", "positive-sequence current |I1|", c_i1, "I1"),
    AMPS("i2_amps", "negative-sequence current |I2|", c_i2, "I2"),
    AMPS("residual_amps", "residual current |Ia + Ib + Ic| = 3|I0|", c_resid, "3I0"),
    AMPS("neutral_amps", "the feeding section's metallic neutral current (t_n), no value for a "
         "device or a line without a neutral", c_neutral, "neutral"),
    AMPS("earth_amps", "the feeding section's earth return -(Ia + Ib + Ic + In)", c_earth, "earth"),
    PU("va_pu", "phase a voltage during the fault over the bus's base", c_va, "Va pu"),
    PU("vb_pu", "phase b voltage during the fault", c_vb, "Vb pu"),
    PU("vc_pu", "phase c voltage during the fault", c_vc, "Vc pu"),
};

const kl_table kl_table_fault_cases = {
    .name = "cases", .help = "a row per bus, fault and fault impedance", .col = case_cols,
    .ncol = (int)(sizeof case_cols / sizeof case_cols[0]), .rows = case_rows,
};

/* ---- a row per bus studied */

static int bus_rows(const void *ctx)
{
    return ROWS(ctx)->faults->nstudied;
}

static void b_name(const void *ctx, int row, int sub, kl_cell *c)
{
    c->str = ROWS(ctx)->feeder->buses[ROWS(ctx)->faults->order[row]].name;
}

static void b_phases(const void *ctx, int row, int sub, kl_cell *c)
{
    int m = ROWS(ctx)->feeder->buses[ROWS(ctx)->faults->order[row]].phases, n = 0;
    for (int p = 0; p < 3; p++)
        if (m & (1 << p))
            c->buf[n++] = (char)('a' + p);
    c->buf[n] = '\0';
    c->str = c->buf;
}

static void b_kv(const void *ctx, int row, int sub, kl_cell *c)
{
    c->num = bus_of(ctx, row)->base_ln / 1000.0;
}

static void b_r1(const void *ctx, int row, int sub, kl_cell *c) { c->num = creal(bus_of(ctx, row)->z1); }
static void b_x1(const void *ctx, int row, int sub, kl_cell *c) { c->num = cimag(bus_of(ctx, row)->z1); }

static double z0_part(const kl_fault_bus *b, int im)
{
    return b->earth_path ? (im ? cimag(b->z0) : creal(b->z0)) : NAN;
}

static void b_r0(const void *ctx, int row, int sub, kl_cell *c) { c->num = z0_part(bus_of(ctx, row), 0); }
static void b_x0(const void *ctx, int row, int sub, kl_cell *c) { c->num = z0_part(bus_of(ctx, row), 1); }
static void b_x0x1(const void *ctx, int row, int sub, kl_cell *c) { c->num = bus_of(ctx, row)->x0_x1; }
static void b_r0x1(const void *ctx, int row, int sub, kl_cell *c) { c->num = bus_of(ctx, row)->r0_x1; }

static void b_earth(const void *ctx, int row, int sub, kl_cell *c)
{
    c->str = bus_of(ctx, row)->earth_path ? "yes" : "none";
}

static void b_eg(const void *ctx, int row, int sub, kl_cell *c)
{
    int g = bus_of(ctx, row)->effectively_grounded;
    c->str = g < 0 ? NULL : g ? "yes" : "no";
    c->cls = g == 0 ? "bad" : NULL;
}

static void b_eff(const void *ctx, int row, int sub, kl_cell *c)
{
    c->num = bus_of(ctx, row)->earth_fault_factor;
}

static const kl_fault_case *extreme(const void *ctx, int row, int max)
{
    const kl_fault_bus *b = bus_of(ctx, row);
    int k = max ? b->case_max : b->case_min;
    return k < 0 ? NULL : &ROWS(ctx)->faults->cases[k];
}

static void b_imax(const void *ctx, int row, int sub, kl_cell *c)
{
    const kl_fault_case *k = extreme(ctx, row, 1);
    c->num = k ? k->i_fault : NAN;
}

static void b_imin(const void *ctx, int row, int sub, kl_cell *c)
{
    const kl_fault_case *k = extreme(ctx, row, 0);
    c->num = k ? k->i_fault : NAN;
}

static void b_max_at(const void *ctx, int row, int sub, kl_cell *c)
{
    const kl_fault_case *k = extreme(ctx, row, 1);
    if (k)
        label(k, c);
}

static void b_min_at(const void *ctx, int row, int sub, kl_cell *c)
{
    const kl_fault_case *k = extreme(ctx, row, 0);
    if (k)
        label(k, c);
}

#define OHM(k, h, g, hd) \
    {.key = k, .unit = "ohm", .help = h, .type = KL_CELL_NUM, .get = g, .in = TCJ, \
     .text_head = hd, .text = " %8.3f", .csv = "%.6f"}

static const kl_column bus_cols[] = {
    {.key = "bus", .help = "bus name", .type = KL_CELL_STR, .get = b_name, .in = TCJ,
     .text_head = "bus", .text = "%-14s"},
    {.key = "phases", .help = "phases present", .type = KL_CELL_STR, .get = b_phases, .in = TCJ,
     .text_head = "ph", .text = " %-3s"},
    {.key = "base_ln_kv", .unit = "kV", .help = "the bus's line-to-neutral base voltage",
     .type = KL_CELL_NUM, .get = b_kv, .in = CJ, .csv = "%.4f"},
    OHM("r1_ohm", "positive-sequence Thevenin resistance seen from the bus", b_r1, "R1"),
    OHM("x1_ohm", "positive-sequence Thevenin reactance", b_x1, "X1"),
    OHM("r0_ohm", "zero-sequence Thevenin resistance (no value without an earth path)", b_r0, "R0"),
    OHM("x0_ohm", "zero-sequence Thevenin reactance", b_x0, "X0"),
    {.key = "x0_x1", .help = "X0/X1", .type = KL_CELL_NUM, .get = b_x0x1, .in = TCJ,
     .text_head = "X0/X1", .text = " %6.2f", .csv = "%.4f"},
    {.key = "r0_x1", .help = "R0/X1", .type = KL_CELL_NUM, .get = b_r0x1, .in = TCJ,
     .text_head = "R0/X1", .text = " %6.2f", .csv = "%.4f"},
    {.key = "earth_path", .help = "yes: zero-sequence current has a path to earth from the bus; "
     "none: a delta or ungrounded winding isolates it (earth faults draw only charging current, "
     "not modelled)", .type = KL_CELL_STR, .get = b_earth, .in = TCJ, .text_head = "earth",
     .text = " %-5s"},
    {.key = "effectively_grounded", .help = "IEEE Std C62.92.1: yes when 0 < X0/X1 <= 3 and "
     "0 <= R0/X1 <= 1", .type = KL_CELL_STR, .get = b_eg, .in = TCJ, .text_head = "eff.gnd",
     .text = " %-7s"},
    {.key = "earth_fault_factor", .help = "largest sound-phase voltage in a bolted line-ground "
     "fault over its value before it (IEC 60071-1)", .type = KL_CELL_NUM, .get = b_eff, .in = TCJ,
     .text_head = "EFF", .text = " %5.2f", .csv = "%.4f"},
    AMPS("max_amps", "the largest fault current at the bus", b_imax, "I max"),
    {.key = "max_fault", .help = "the fault that draws it", .type = KL_CELL_STR, .get = b_max_at,
     .in = TCJ, .text_head = "max fault", .text = " %-24s"},
    AMPS("min_amps", "the smallest fault current at the bus (with fault impedance)", b_imin, "I min"),
    {.key = "min_fault", .help = "the fault that draws it", .type = KL_CELL_STR, .get = b_min_at,
     .in = TCJ, .text_head = "min fault", .text = " %-26s"},
};

const kl_table kl_table_fault_buses = {
    .name = "buses", .json_key = "buses", .help = "a row per bus studied", .col = bus_cols,
    .ncol = (int)(sizeof bus_cols / sizeof bus_cols[0]), .rows = bus_rows,
};

/* ---- the ground relay's window: one row */

#define RW(ctx) (ROWS(ctx)->relay)

static int relay_rows(const void *ctx)
{
    return RW(ctx) && RW(ctx)->pickup_a > 0 ? 1 : 0;
}

static void r_pickup(const void *ctx, int row, int sub, kl_cell *c) { c->num = RW(ctx)->pickup_a; }
static void r_load(const void *ctx, int row, int sub, kl_cell *c) { c->num = RW(ctx)->load_residual_a; }
static void r_scale(const void *ctx, int row, int sub, kl_cell *c) { c->num = RW(ctx)->load_scale; }
static void r_lmargin(const void *ctx, int row, int sub, kl_cell *c) { c->num = RW(ctx)->load_margin; }
static void r_lreq(const void *ctx, int row, int sub, kl_cell *c) { c->num = RW(ctx)->load_margin_req; }
static void r_fault(const void *ctx, int row, int sub, kl_cell *c) { c->num = RW(ctx)->fault_residual_a; }
static void r_fmargin(const void *ctx, int row, int sub, kl_cell *c) { c->num = RW(ctx)->fault_margin; }
static void r_freq(const void *ctx, int row, int sub, kl_cell *c) { c->num = RW(ctx)->fault_margin_req; }

static const char *verdict(int ok)
{
    return ok < 0 ? NULL : ok ? "holds" : "fails";
}

static void r_lok(const void *ctx, int row, int sub, kl_cell *c)
{
    c->str = verdict(RW(ctx)->load_ok);
    c->cls = RW(ctx)->load_ok == 0 ? "bad" : NULL;
}

static void r_fok(const void *ctx, int row, int sub, kl_cell *c)
{
    c->str = verdict(RW(ctx)->fault_ok);
    c->cls = RW(ctx)->fault_ok == 0 ? "bad" : NULL;
}

static void r_fbus(const void *ctx, int row, int sub, kl_cell *c)
{
    int k = RW(ctx)->fault_case;
    c->str = k < 0 ? NULL : ROWS(ctx)->feeder->buses[ROWS(ctx)->faults->cases[k].bus].name;
}

static void r_fwhich(const void *ctx, int row, int sub, kl_cell *c)
{
    int k = RW(ctx)->fault_case;
    if (k >= 0)
        label(&ROWS(ctx)->faults->cases[k], c);
}

static void r_window(const void *ctx, int row, int sub, kl_cell *c)
{
    int l = RW(ctx)->load_ok, f = RW(ctx)->fault_ok;
    c->str = l < 0 || f < 0 ? "not known" : l && f ? "open" : !l && !f ? "shut on both sides"
             : !l ? "shut on the load side" : "shut on the fault side";
    c->cls = (l == 0 || f == 0) ? "bad" : NULL;
}

#define RNUM(k, u, h, g, hd, tf) \
    {.key = k, .unit = u, .help = h, .type = KL_CELL_NUM, .get = g, .in = TCJ, .text_head = hd, \
     .text = tf, .csv = "%.4f"}

static const kl_column relay_cols[] = {
    RNUM("pickup_amps", "A", "the ground relay's pickup at the head (source.ground_relay_pickup)",
         r_pickup, "pickup A", " %8.1f"),
    RNUM("load_residual_amps", "A", "the largest residual current load unbalance makes at the head, "
         "over the load levels", r_load, "load 3I0", " %8.1f"),
    RNUM("load_scale", "", "the load level that sets it", r_scale, "level", " %5.2f"),
    RNUM("load_margin", "", "pickup over that residual", r_lmargin, "margin", " %6.2f"),
    RNUM("load_margin_required", "", "the margin asked for", r_lreq, "asked", " %5.2f"),
    {.key = "load_side", .help = "holds or fails", .type = KL_CELL_STR, .get = r_lok, .in = TCJ,
     .text_head = "load", .text = " %-5s"},
    RNUM("fault_residual_amps", "A", "the smallest earth-fault residual current at the head over "
         "the faults it can see", r_fault, "fault 3I0", " %9.1f"),
    {.key = "fault_bus", .help = "the bus of that fault", .type = KL_CELL_STR, .get = r_fbus,
     .in = TCJ, .text_head = "at", .text = " %-12s"},
    {.key = "fault", .help = "the fault", .type = KL_CELL_STR, .get = r_fwhich, .in = TCJ,
     .text_head = "fault", .text = " %-26s"},
    RNUM("fault_margin", "", "that residual over the pickup", r_fmargin, "margin", " %6.2f"),
    RNUM("fault_margin_required", "", "the margin asked for", r_freq, "asked", " %5.2f"),
    {.key = "fault_side", .help = "holds or fails", .type = KL_CELL_STR, .get = r_fok, .in = TCJ,
     .text_head = "fault", .text = " %-5s"},
    {.key = "window", .help = "open, or the side(s) that shut it", .type = KL_CELL_STR,
     .get = r_window, .in = TCJ, .text_head = "window", .text = " %s"},
};

const kl_table kl_table_fault_relay = {
    .name = "relay", .json_key = "relay_window", .help = "the ground relay's window at the head",
    .col = relay_cols, .ncol = (int)(sizeof relay_cols / sizeof relay_cols[0]), .rows = relay_rows,
};
