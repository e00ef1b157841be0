/* kilter: load and capacitor currents at the present voltages (Kersting,
 * "Distribution System Modeling and Analysis", ch. 9, from memory).  For an
 * element rated S at nominal voltage V_n and now at V:
 *   constant power      I = conj(S / V)
 *   constant impedance  I = conj(S) V / |V_n|^2
 *   constant current    I = conj(S) / |V_n| * V / |V|   (magnitude and power-factor angle held)
 *   ZIP                 the three weighted by the load's fractions.
 * Wye elements see phase-to-neutral voltage, delta elements line-to-line
 * (V_n = sqrt(3) times the bus's line-to-neutral base, or 2 times the leg
 * base across the two legs of a center-tapped secondary); a delta element's
 * current I_pq enters line p and leaves line q.  Capacitors are constant
 * susceptance B = Q / |V_n|^2. */
#include <math.h>
#include "kilter/flow.h"
#include "kilter/network.h"
#include "kl_internal.h"

/* conj(s / v) without the library's general complex division (v != 0). */
static inline kl_complex conj_ratio(kl_complex s, kl_complex v)
{
    double m2 = creal(v) * creal(v) + cimag(v) * cimag(v);
    return m2 > 0 ? conj(s) * v / m2 : 0; /* a dead element draws nothing */
}

/* v / |v|, and 0 for a dead element (no angle to hold). */
static inline kl_complex unit(kl_complex v)
{
    double m = cabs(v);
    return m > 0 ? v / m : 0;
}

static kl_complex element_current(const kl_load *ld, kl_complex s, kl_complex v, double vn)
{
    switch (ld->model) {
    case KL_LOAD_Z:
        return conj(s) * v / (vn * vn);
    case KL_LOAD_I:
        return conj(s) / vn * unit(v);
    case KL_LOAD_ZIP:
        return ld->zip[0] * (conj(s) * v / (vn * vn)) + ld->zip[1] * (conj(s) / vn * unit(v)) +
               ld->zip[2] * conj_ratio(s, v);
    default:
        return conj_ratio(s, v);
    }
}

/* One energised entry of a load or capacitor: phase slot p (and q for
 * delta), element voltage and the current it draws. */
typedef struct {
    int entry, p, q;       /* q = -1 for wye */
    kl_complex v, i;
} entry_state;

static int load_entry(const kl_network *n, const kl_complex *vv, const int *map, int m, int k,
                      double scale, entry_state *e)
{
    const kl_net_load *nl = &n->loads[m];
    const kl_load *ld = &n->feeder->loads[nl->load];
    if (!(ld->phases & (1 << k)))
        return 0;
    const kl_complex *v = vv + 3 * (map ? map[nl->bus] : nl->bus);
    double vn = n->v_base_ln[nl->bus];
    e->entry = k;
    e->p = n->ld_slot[3 * nl->load + k];
    e->q = -1;
    e->v = v[e->p];
    if (ld->conn == KL_CONN_DELTA) {
        e->q = (e->p + 1) % 3;
        e->v = v[e->p] - v[e->q];
        vn *= n->split_phase[nl->bus] ? 2.0 : sqrt(3.0);
    }
    e->i = element_current(ld, ld->s_va[k] * scale * nl->weight, e->v, vn);
    return 1;
}

static int cap_entry(const kl_network *n, const kl_complex *vv, const int *map, int c, int k,
                     entry_state *e)
{
    const kl_capacitor *cp = &n->feeder->capacitors[c];
    if (!(cp->phases & (1 << k)))
        return 0;
    const kl_complex *v = vv + 3 * (map ? map[cp->bus] : cp->bus);
    double vn = n->v_base_ln[cp->bus];
    e->entry = k;
    e->p = k;
    e->q = -1;
    e->v = v[k];
    if (cp->conn == KL_CONN_DELTA) {
        e->q = (k + 1) % 3;
        e->v = v[k] - v[e->q];
        vn *= n->split_phase[cp->bus] ? 2.0 : sqrt(3.0);
    }
    e->i = I * (cp->q_var[k] / (vn * vn)) * e->v;
    return 1;
}

void kl_load_inject_at(const kl_network *n, double scale, const kl_complex *v, kl_complex *jj,
                       const int *map)
{
    entry_state e;
    for (int m = 0; m < n->nloads; m++) {
        int b = n->loads[m].bus;
        kl_complex *j = jj + 3 * (map ? map[b] : b);
        for (int k = 0; k < 3; k++) {
            if (!load_entry(n, v, map, m, k, scale, &e))
                continue;
            j[e.p] += e.i;
            if (e.q >= 0)
                j[e.q] -= e.i;
        }
    }
    for (int c = 0; c < n->feeder->ncapacitors; c++) {
        int b = n->feeder->capacitors[c].bus;
        kl_complex *j = jj + 3 * (map ? map[b] : b);
        for (int k = 0; k < 3; k++) {
            if (!cap_entry(n, v, map, c, k, &e))
                continue;
            j[e.p] += e.i;
            if (e.q >= 0)
                j[e.q] -= e.i;
        }
    }
}

void kl_load_inject(kl_network *n, double scale)
{
    kl_load_inject_at(n, scale, n->v, n->j, NULL);
}

static void add_phase_power(kl_complex tot[3], const entry_state *e, kl_complex s)
{
    if (e->q < 0) {
        tot[e->p] += s;
    } else {
        tot[e->p] += 0.5 * s;
        tot[e->q] += 0.5 * s;
    }
}

void kl_load_powers(const kl_network *n, double scale, kl_flow_result *res)
{
    const kl_feeder *f = n->feeder;
    entry_state e;
    for (int k = 0; k < 3 * f->nloads; k++)
        res->s_load[k] = 0;
    for (int p = 0; p < 3; p++)
        res->s_loads[p] = 0;
    for (int m = 0; m < n->nloads; m++) {
        for (int k = 0; k < 3; k++) {
            if (!load_entry(n, n->v, NULL, m, k, scale, &e))
                continue;
            kl_complex s = e.v * conj(e.i);
            res->s_load[3 * n->loads[m].load + k] += s;
            add_phase_power(res->s_loads, &e, s);
        }
    }
    for (int c = 0; c < f->ncapacitors; c++) {
        for (int k = 0; k < 3; k++) {
            res->q_cap[3 * c + k] = 0;
            if (!cap_entry(n, n->v, NULL, c, k, &e))
                continue;
            kl_complex s = e.v * conj(e.i);
            res->q_cap[3 * c + k] = -cimag(s);
            add_phase_power(res->s_loads, &e, s);
        }
    }
}
