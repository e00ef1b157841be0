/* Feeders built by hand in C for the load-flow tests (no loader, no line
 * constants): constructions are given as phase matrices, as published. */
#ifndef KILTER_TEST_FLOW_FIXTURE_H
#define KILTER_TEST_FLOW_FIXTURE_H

#include <complex.h>
#include <math.h>
#include <string.h>
#include "kilter/feeder.h"

#define FT 0.3048        /* m per foot (exact) */
#define MILE 1609.344    /* m per mile (exact) */
#define DEG (3.14159265358979323846 / 180.0)

typedef struct {
    kl_feeder f;
    kl_bus bus[64];
    kl_section sec[64];
    kl_construction cons[12];
    kl_load load[64];
    kl_capacitor cap[32];
    kl_transformer xf[4];
    kl_regulator reg[2];
} hand_feeder;

static inline void hf_init(hand_feeder *h, const char *name, const char *source, double kv_ll)
{
    memset(h, 0, sizeof *h);
    h->f.path = name;
    h->f.name = name;
    h->f.buses = h->bus;
    h->f.sections = h->sec;
    h->f.constructions = h->cons;
    h->f.loads = h->load;
    h->f.capacitors = h->cap;
    h->f.transformers = h->xf;
    h->f.regulators = h->reg;
    h->f.radial = 1;
    h->f.earth_resistivity_ohm_m = 100;
    h->bus[0].name = source;
    h->f.nbuses = 1;
    h->f.source.bus = 0;
    h->f.source.kv_ll = kv_ll;
    h->f.source.freq_hz = 60;
    h->f.source.v_pu = 1.0;
}

static inline int hf_bus(hand_feeder *h, const char *name)
{
    for (int b = 0; b < h->f.nbuses; b++)
        if (strcmp(h->bus[b].name, name) == 0)
            return b;
    h->bus[h->f.nbuses].name = name;
    return h->f.nbuses++;
}

static inline int hf_phases(const char *s)
{
    int m = 0;
    for (; *s; s++)
        m |= *s == 'a' ? 1 : *s == 'b' ? 2 : *s == 'c' ? 4 : 0;
    return m;
}

/* z: upper triangle aa ab ac bb bc cc in ohm/mile; b: same in uS/mile. */
static inline int hf_matrix(hand_feeder *h, const char *name, const char *ph,
                            const double complex z[6], const double b[6])
{
    kl_construction *c = &h->cons[h->f.nconstructions];
    static const int ij[6][2] = {{0, 0}, {0, 1}, {0, 2}, {1, 1}, {1, 2}, {2, 2}};
    c->name = name;
    c->kind = KL_CONS_MATRIX;
    c->phases = hf_phases(ph);
    for (int k = 0; k < 6; k++) {
        int i = ij[k][0], j = ij[k][1];
        c->z_given[i][j] = c->z_given[j][i] = z[k] / MILE;
        c->b_given[i][j] = c->b_given[j][i] = b[k] * 1e-6 / MILE;
    }
    return h->f.nconstructions++;
}

static inline int hf_section(hand_feeder *h, const char *name, const char *from, const char *to,
                             kl_section_kind kind)
{
    kl_section *s = &h->sec[h->f.nsections];
    s->name = name;
    s->kind = kind;
    s->from = hf_bus(h, from);
    s->to = hf_bus(h, to);
    s->closed = 1;
    s->device = -1;
    s->construction = -1;
    return h->f.nsections++;
}

static inline int hf_line(hand_feeder *h, const char *name, const char *from, const char *to,
                          double feet, int cons)
{
    int s = hf_section(h, name, from, to, KL_SEC_LINE);
    h->sec[s].length_m = feet * FT;
    h->sec[s].construction = cons;
    h->sec[s].phases = (uint8_t)h->cons[cons].phases;
    return s;
}

/* kw/kvar per entry (wye a,b,c or delta ab,bc,ca); NAN-free: 0 means absent
 * only when both are 0. */
static inline int hf_load(hand_feeder *h, const char *name, const char *bus, kl_connection conn,
                          kl_load_model model, const double kw[3], const double kvar[3])
{
    kl_load *l = &h->load[h->f.nloads];
    l->name = name;
    l->bus = bus ? hf_bus(h, bus) : -1;
    l->section = -1;
    l->conn = conn;
    l->model = model;
    for (int k = 0; k < 3; k++) {
        if (kw[k] == 0 && kvar[k] == 0)
            continue;
        l->phases = (uint8_t)(l->phases | 1 << k); /* k 0-2 */
        l->s_va[k] = 1000.0 * (kw[k] + I * kvar[k]);
    }
    return h->f.nloads++;
}

static inline int hf_cap(hand_feeder *h, const char *name, const char *bus, const double kvar[3])
{
    kl_capacitor *c = &h->cap[h->f.ncapacitors];
    c->name = name;
    c->bus = hf_bus(h, bus);
    c->conn = KL_CONN_WYE;
    for (int k = 0; k < 3; k++)
        if (kvar[k] != 0) {
            c->phases |= 1 << k;
            c->q_var[k] = kvar[k] * 1000.0;
        }
    return h->f.ncapacitors++;
}

static inline int hf_transformer(hand_feeder *h, const char *name, const char *from, const char *to,
                                 double kva, double kv_high, kl_winding high, double kv_low,
                                 kl_winding low, double r_pct, double x_pct)
{
    kl_transformer *t = &h->xf[h->f.ntransformers];
    t->name = name;
    t->kva = kva;
    t->kv_high = kv_high;
    t->kv_low = kv_low;
    t->high = high;
    t->low = low;
    t->r_pu = r_pct / 100.0;
    t->x_pu = x_pct / 100.0;
    int s = hf_section(h, name, from, to, KL_SEC_TRANSFORMER);
    h->sec[s].device = h->f.ntransformers;
    h->sec[s].phases = KL_PH_ABC;
    return h->f.ntransformers++;
}

#endif
