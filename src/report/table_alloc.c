/* kilter: the allocation's tables (kilter/table.h): the factors and the head
 * match, a line per reading (time step) and head phase, and the allocated
 * power of every load entry.  The columns are the contract of
 * docs/allocate.md.  Powers in kW and kvar. */
#include <complex.h>
#include <math.h>
#include "kl_report.h"
#include "kilter/table.h"

#define ROWS(ctx) ((const kl_alloc_rows *)(ctx))
#define TCJ (KL_IN_TEXT | KL_IN_CSV | KL_IN_JSON)
#define TC (KL_IN_TEXT | KL_IN_CSV)

static const char *const WYE[3] = {"a", "b", "c"}, *const DELTA[3] = {"ab", "bc", "ca"};

static const char *phase_name(const void *ctx, int row, int sub, char buf[8])
{
    (void)ctx;
    (void)row;
    buf[0] = (char)('a' + sub);
    buf[1] = '\0';
    return buf;
}

/* ---- phases: a line per reading and head phase allocated or measured */

static int step_rows(const void *ctx)
{
    return ROWS(ctx)->nsteps;
}

static int step_next(const void *ctx, int row, int p)
{
    const kl_alloc_rows *w = ROWS(ctx);
    int m = w->alloc[row].phases | w->head[row].phases;
    for (p++; p < 3; p++)
        if (m & (1 << p))
            return p;
    return -1;
}

static void step_time(const void *ctx, int row, int sub, kl_cell *c)
{
    (void)sub;
    const char *t = ROWS(ctx)->head[row].time;
    c->str = t[0] ? t : NULL;
}

static void step_flows(const void *ctx, int row, int sub, kl_cell *c)
{
    (void)sub;
    c->i = ROWS(ctx)->alloc[row].iterations;
}

static void ph_letter(const void *ctx, int row, int p, kl_cell *c)
{
    (void)ctx;
    (void)row;
    c->i = 'a' + p;
}

static const kl_alloc_result *res_of(const void *ctx, int row)
{
    return &ROWS(ctx)->alloc[row];
}

static void ph_basis(const void *ctx, int row, int p, kl_cell *c)
{
    c->num = res_of(ctx, row)->basis[p] / 1e3;
}

/* NAN for a phase not allocated: no factor there */
static void ph_factor_p(const void *ctx, int row, int p, kl_cell *c)
{
    const kl_alloc_result *r = res_of(ctx, row);
    c->num = r->phases & (1 << p) ? creal(r->factor[p]) : NAN;
}

static void ph_factor_q(const void *ctx, int row, int p, kl_cell *c)
{
    const kl_alloc_result *r = res_of(ctx, row);
    c->num = r->phases & (1 << p) ? cimag(r->factor[p]) : NAN;
}

static void ph_meas_p(const void *ctx, int row, int p, kl_cell *c)
{
    c->num = creal(res_of(ctx, row)->target[p]) / 1e3;
}

static void ph_meas_q(const void *ctx, int row, int p, kl_cell *c)
{
    c->num = cimag(res_of(ctx, row)->target[p]) / 1e3;
}

static void ph_head_p(const void *ctx, int row, int p, kl_cell *c)
{
    c->num = creal(res_of(ctx, row)->head[p]) / 1e3;
}

static void ph_head_q(const void *ctx, int row, int p, kl_cell *c)
{
    c->num = cimag(res_of(ctx, row)->head[p]) / 1e3;
}

static void ph_mismatch(const void *ctx, int row, int p, kl_cell *c)
{
    c->num = 100 * res_of(ctx, row)->mismatch[p];
}

static void ph_held_p(const void *ctx, int row, int p, kl_cell *c)
{
    c->num = creal(res_of(ctx, row)->held[p]) / 1e3;
}

static void ph_held_q(const void *ctx, int row, int p, kl_cell *c)
{
    c->num = cimag(res_of(ctx, row)->held[p]) / 1e3;
}

static const kl_column phase_cols[] = {
    {.key = "time", .help = "time stamp of the reading as the measurement file writes it (series only)",
     .type = KL_CELL_STR, .get = step_time, .in = KL_IN_CSV | KL_IN_JSON},
    {.key = "load_flows", .help = "load flows the allocation ran for this reading", .type = KL_CELL_INT,
     .get = step_flows, .in = KL_IN_JSON},
    {.key = "phase", .help = "head phase", .type = KL_CELL_CHAR, .get = ph_letter, .in = TC, .sub = 1,
     .text_head = "phase", .text = "%-5c"},
    {.key = "basis", .unit = "kVA or kW", .help = "allocated basis on the phase: connected kVA, or the "
     "customers' estimated peak kW (a line-to-line entry half to each phase)", .type = KL_CELL_NUM,
     .get = ph_basis, .in = TCJ, .sub = 1, .text_head = "basis", .text = " %10.1f"},
    {.key = "factor_kw", .unit = "kW per basis", .help = "allocation factor, real part: kW allocated per "
     "unit of basis", .type = KL_CELL_NUM, .get = ph_factor_p, .in = TCJ, .sub = 1,
     .text_head = "factor kW", .text = " %10.4f", .csv = "%.8f"},
    {.key = "factor_kvar", .unit = "kvar per basis", .help = "allocation factor, imaginary part: kvar "
     "allocated per unit of basis", .type = KL_CELL_NUM, .get = ph_factor_q, .in = TCJ, .sub = 1,
     .text_head = "factor kvar", .text = " %11.4f", .csv = "%.8f"},
    {.key = "measured_kw", .unit = "kW", .help = "head real power the measurement asks for",
     .type = KL_CELL_NUM, .get = ph_meas_p, .in = TCJ, .sub = 1, .text_head = "measured kW",
     .text = " %11.1f"},
    {.key = "measured_kvar", .unit = "kvar", .help = "head reactive power the measurement asks for (from "
     "the power factor and, for amperes, the solved head voltage)", .type = KL_CELL_NUM, .get = ph_meas_q,
     .in = TCJ, .sub = 1, .text_head = "kvar", .text = " %9.1f"},
    {.key = "head_kw", .unit = "kW", .help = "head real power of the allocated load flow (losses included)",
     .type = KL_CELL_NUM, .get = ph_head_p, .in = TCJ, .sub = 1, .text_head = "solved kW",
     .text = " %10.1f"},
    {.key = "head_kvar", .unit = "kvar", .help = "head reactive power of the allocated load flow",
     .type = KL_CELL_NUM, .get = ph_head_q, .in = TCJ, .sub = 1, .text_head = "kvar", .text = " %9.1f"},
    {.key = "mismatch_pct", .unit = "%", .help = "|solved - measured| / |measured| head power",
     .type = KL_CELL_NUM, .get = ph_mismatch, .in = TCJ, .sub = 1, .text_head = "off %",
     .text = " %7.3f"},
    {.key = "held_kw", .unit = "kW", .help = "loads held at their own power (no basis), as solved",
     .type = KL_CELL_NUM, .get = ph_held_p, .in = TCJ, .sub = 1, .text_head = "held kW", .text = " %9.1f"},
    {.key = "held_kvar", .unit = "kvar", .help = "reactive power of the loads held", .type = KL_CELL_NUM,
     .get = ph_held_q, .in = TCJ, .sub = 1, .text_head = "kvar", .text = " %9.1f"},
};

const kl_table kl_table_alloc_phases = {
    .name = "phases", .json_key = "readings", .help = "allocation factors and head match, a line per reading "
    "and head phase", .col = phase_cols, .ncol = (int)(sizeof phase_cols / sizeof phase_cols[0]),
    .rows = step_rows, .next_sub = step_next, .sub_key = "phases", .sub_name = phase_name,
};

/* ---- loads: a line per load entry, its power as allocated (nominal voltage) */

static int load_rows(const void *ctx)
{
    return ROWS(ctx)->feeder->nloads;
}

static int load_next(const void *ctx, int l, int k)
{
    int m = ROWS(ctx)->feeder->loads[l].phases;
    for (k++; k < 3; k++)
        if (m & (1 << k))
            return k;
    return -1;
}

static const char *entry_name(const void *ctx, int l, int k, char buf[8])
{
    (void)buf;
    return ROWS(ctx)->feeder->loads[l].conn == KL_CONN_DELTA ? DELTA[k] : WYE[k];
}

static void ld_name(const void *ctx, int l, int k, kl_cell *c)
{
    (void)k;
    c->str = ROWS(ctx)->feeder->loads[l].name;
}

static void ld_at(const void *ctx, int l, int k, kl_cell *c)
{
    (void)k;
    const kl_feeder *f = ROWS(ctx)->feeder;
    const kl_load *ld = &f->loads[l];
    c->str = ld->bus >= 0 ? f->buses[ld->bus].name : f->sections[ld->section].name;
}

static void ld_entry(const void *ctx, int l, int k, kl_cell *c)
{
    c->str = entry_name(ctx, l, k, c->buf);
}

static void ld_basis(const void *ctx, int l, int k, kl_cell *c)
{
    double b = ROWS(ctx)->basis[3 * l + k];
    c->num = b > 0 ? b / 1e3 : NAN;
}

static void ld_kw(const void *ctx, int l, int k, kl_cell *c)
{
    c->num = creal(ROWS(ctx)->feeder->loads[l].s_va[k]) / 1e3;
}

static void ld_kvar(const void *ctx, int l, int k, kl_cell *c)
{
    c->num = cimag(ROWS(ctx)->feeder->loads[l].s_va[k]) / 1e3;
}

static void ld_allocated(const void *ctx, int l, int k, kl_cell *c)
{
    c->i = ROWS(ctx)->basis[3 * l + k] > 0;
}

static const kl_column load_cols[] = {
    {.key = "load", .help = "load name", .type = KL_CELL_STR, .get = ld_name, .in = TCJ, .json_key = "name",
     .text_head = "load", .text = "%-16s"},
    {.key = "at", .help = "its bus (or the section of a distributed load)", .type = KL_CELL_STR,
     .get = ld_at, .in = TCJ, .text_head = "at", .text = " %-14s"},
    {.key = "entry", .help = "phase (wye) or phase pair (delta)", .type = KL_CELL_STR, .get = ld_entry,
     .in = TC, .sub = 1, .text_head = "entry", .text = " %-5s"},
    {.key = "allocated", .help = "true: scaled by the allocation; false: held at its own power",
     .type = KL_CELL_BOOL, .get = ld_allocated, .in = KL_IN_CSV | KL_IN_JSON, .sub = 1},
    {.key = "basis", .unit = "kVA or kW", .help = "the entry's basis: connected kVA or estimated peak kW; "
     "none when held", .type = KL_CELL_NUM, .get = ld_basis, .in = TCJ, .sub = 1, .text_head = "basis",
     .text = " %9.1f"},
    {.key = "kw", .unit = "kW", .help = "allocated real power at nominal voltage (the feeder file's power)",
     .type = KL_CELL_NUM, .get = ld_kw, .in = TCJ, .sub = 1, .text_head = "kW", .text = " %9.2f"},
    {.key = "kvar", .unit = "kvar", .help = "allocated reactive power at nominal voltage",
     .type = KL_CELL_NUM, .get = ld_kvar, .in = TCJ, .sub = 1, .text_head = "kvar", .text = " %9.2f"},
};

const kl_table kl_table_alloc_loads = {
    .name = "loads", .help = "the power of every load entry after allocation, a line per entry",
    .col = load_cols, .ncol = (int)(sizeof load_cols / sizeof load_cols[0]), .rows = load_rows,
    .next_sub = load_next, .sub_key = "entries", .sub_name = entry_name,
};
