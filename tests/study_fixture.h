/* Small radial feeders built in code for the study tests, solved exactly by
 * hand: every load draws a fixed phase current, so section currents are
 * sums of the load currents downstream (Kirchhoff's current law) and each
 * bus voltage is its parent's minus Z I (Ohm's law); load powers are then
 * S = V conj(I).  No part of kilter's load flow is used.  Lines only (no
 * shunt admittance), so the branch matrices are A = d = U, B = Z. */
#ifndef STUDY_FIXTURE_H
#define STUDY_FIXTURE_H

#include <complex.h>
#include <math.h>
#include <string.h>
#include "kilter/study.h"
#include "ref_ieee13.h"

#define FX_MAX 16
#define FX_PI 3.14159265358979323846

typedef struct {
    kl_feeder f;
    kl_bus buses[FX_MAX];
    kl_section secs[FX_MAX];
    kl_construction cons[4];
    kl_conductor cond[4];
    kl_transformer xf[2];
    kl_load loads[FX_MAX];
    kl_complex zsec[FX_MAX][9];   /* series impedance of each section, ohm */
    kl_complex iload[FX_MAX][3];  /* phase currents each load draws, A */
    /* solved arrays */
    kl_complex v[3 * FX_MAX], i[3 * FX_MAX], in[FX_MAX], ie[FX_MAX], s_load[3 * FX_MAX];
    double vbase[FX_MAX];
    kl_study_phases ph;
    /* branch view */
    int parent[FX_MAX], br_from[FX_MAX], br_to[FX_MAX], ld_load[FX_MAX], ld_bus[FX_MAX];
    double ld_weight[FX_MAX];
    kl_complex A[9 * FX_MAX], B[9 * FX_MAX], d[9 * FX_MAX];
    kl_study_paths paths;
} fx_feeder;

static inline kl_complex fx_polar(double m, double deg)
{
    return m * cexp(I * deg * FX_PI / 180.0);
}

static inline void fx_init(fx_feeder *x, double kv_ll)
{
    memset(x, 0, sizeof *x);
    x->f.name = "fixture";
    x->f.buses = x->buses;
    x->f.sections = x->secs;
    x->f.constructions = x->cons;
    x->f.conductors = x->cond;
    x->f.transformers = x->xf;
    x->f.loads = x->loads;
    x->f.source.bus = 0;
    x->f.source.kv_ll = kv_ll;
    x->buses[0].name = "head";
    x->buses[0].phases = KL_PH_ABC;
    x->buses[0].base_kv_ll = kv_ll;
    x->f.nbuses = 1;
}

static inline int fx_construction(fx_feeder *x, const char *name, double neutral_amp)
{
    kl_construction *c = &x->cons[x->f.nconstructions];
    c->name = name;
    c->kind = KL_CONS_MATRIX;
    c->phases = KL_PH_ABC;
    c->nneutrals = neutral_amp > 0;
    c->neutral_ampacity_a = neutral_amp;
    return x->f.nconstructions++;
}

/* Adds bus `name` fed from bus `from` by a line with series impedance z. */
static inline int fx_line(fx_feeder *x, int from, const char *name, int phases,
                          int cons, const kl_complex z[9])
{
    int b = x->f.nbuses++, k = x->f.nsections++;
    x->buses[b].name = name;
    x->buses[b].phases = (uint8_t)phases;
    x->buses[b].base_kv_ll = x->f.source.kv_ll;
    x->secs[k].name = name;
    x->secs[k].kind = KL_SEC_LINE;
    x->secs[k].from = from;
    x->secs[k].to = b;
    x->secs[k].phases = (uint8_t)phases;
    x->secs[k].construction = cons;
    x->secs[k].device = -1;
    x->secs[k].closed = 1;
    for (int e = 0; e < 9; e++)
        x->zsec[k][e] = ((phases >> (e / 3)) & 1) && ((phases >> (e % 3)) & 1) ? z[e] : 0;
    return b;
}

/* A wye load at bus b drawing phase current i_ph (A) on phase p (0..2) at
 * angle relative to that phase's nominal angle. */
static inline int fx_load(fx_feeder *x, const char *name, int b, int p,
                          double amps, double deg, double h3)
{
    int L = x->f.nloads++;
    x->loads[L].name = name;
    x->loads[L].bus = b;
    x->loads[L].section = -1;
    x->loads[L].conn = KL_CONN_WYE;
    x->loads[L].model = KL_LOAD_I;
    x->loads[L].phases = (uint8_t)(x->loads[L].phases | 1 << p); /* p 0-2 */
    x->loads[L].third_harmonic = h3;
    x->iload[L][p] = fx_polar(amps, deg - 120.0 * p);
    return L;
}

/* Adds one more phase to load L. */
static inline void fx_load_phase(fx_feeder *x, int L, int p, double amps, double deg)
{
    x->loads[L].phases = (uint8_t)(x->loads[L].phases | 1 << p); /* p 0-2 */
    x->iload[L][p] = fx_polar(amps, deg - 120.0 * p);
}

/* Solves: balanced 1 pu source at the head, optional source impedance zs. */
static inline void fx_solve(fx_feeder *x, const kl_complex *zs)
{
    kl_feeder *f = &x->f;
    kl_complex head[3] = { 0, 0, 0 };
    double vln = f->source.kv_ll * 1000.0 / sqrt(3.0);
    memset(x->i, 0, sizeof x->i);
    /* sections are added parents first: sum currents from the last one back */
    for (int k = f->nsections - 1; k >= 0; k--) {
        int to = x->secs[k].to;
        for (int L = 0; L < f->nloads; L++)
            if (x->loads[L].bus == to)
                for (int p = 0; p < 3; p++)
                    x->i[3 * k + p] += x->iload[L][p];
        for (int c = k + 1; c < f->nsections; c++)
            if (x->secs[c].from == to)
                for (int p = 0; p < 3; p++)
                    x->i[3 * k + p] += x->i[3 * c + p];
    }
    for (int k = 0; k < f->nsections; k++)
        if (x->secs[k].from == 0)
            for (int p = 0; p < 3; p++)
                head[p] += x->i[3 * k + p];
    for (int p = 0; p < 3; p++) {
        x->v[p] = fx_polar(vln, -120.0 * p);
        if (zs)
            for (int q = 0; q < 3; q++)
                x->v[p] -= zs[3 * p + q] * head[q];
    }
    for (int k = 0; k < f->nsections; k++) {
        int fr = x->secs[k].from, to = x->secs[k].to;
        for (int p = 0; p < 3; p++) {
            kl_complex drop = 0;
            for (int q = 0; q < 3; q++)
                drop += x->zsec[k][3 * p + q] * x->i[3 * k + q];
            x->v[3 * to + p] = (x->buses[to].phases >> p & 1) ? x->v[3 * fr + p] - drop : 0;
        }
    }
    for (int L = 0; L < f->nloads; L++)
        for (int p = 0; p < 3; p++)
            x->s_load[3 * L + p] = x->v[3 * x->loads[L].bus + p] * conj(x->iload[L][p]);
    for (int b = 0; b < f->nbuses; b++)
        x->vbase[b] = vln;
    /* fully grounded-neutral split is not modelled here: all residual in the neutral */
    for (int k = 0; k < f->nsections; k++) {
        x->in[k] = -(x->i[3 * k] + x->i[3 * k + 1] + x->i[3 * k + 2]);
        x->ie[k] = 0;
    }
    x->ph = (kl_study_phases){ x->v, x->vbase, NULL, x->i, x->in, x->ie, x->s_load, NULL, NULL, NULL };
    /* branch view: one branch per section, same ids */
    for (int b = 0; b < f->nbuses; b++)
        x->parent[b] = -1;
    for (int k = 0; k < f->nsections; k++) {
        x->parent[x->secs[k].to] = k;
        x->br_from[k] = x->secs[k].from;
        x->br_to[k] = x->secs[k].to;
        for (int e = 0; e < 9; e++) {
            x->A[9 * k + e] = x->d[9 * k + e] = (e / 3 == e % 3);
            x->B[9 * k + e] = x->zsec[k][e];
        }
    }
    for (int L = 0; L < f->nloads; L++) {
        x->ld_load[L] = L;
        x->ld_bus[L] = x->loads[L].bus;
        x->ld_weight[L] = 1.0;
    }
    x->paths = (kl_study_paths){ f->nbuses, f->nbuses, f->nsections, 0, x->parent,
                                 x->br_from, x->br_to, x->A, x->B, x->d, zs, NULL,
                                 f->nloads, x->ld_load, x->ld_bus, x->ld_weight, NULL, NULL, NULL };
}

/* Phase impedance of IEEE 13-node configuration 601 (ohm/mile, published
 * data sheet, tests/ref_ieee13.c), times miles. */
static inline void fx_z601(double miles, kl_complex z[9])
{
    const ref_ieee13_config *c = ref_ieee13_config_find("601");
    for (int e = 0; e < 9; e++)
        z[e] = miles * ref_ieee13_z(c, e / 3, e % 3);
}

/* A transposed line: self zs, mutual zm everywhere (sequence-decoupled). */
static inline void fx_zsym(kl_complex zs, kl_complex zm, kl_complex z[9])
{
    for (int e = 0; e < 9; e++)
        z[e] = (e / 3 == e % 3) ? zs : zm;
}

#endif
