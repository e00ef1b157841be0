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
#include <limits.h>
#include <math.h>
#include <string.h>
#include "kilter/flow.h"
#include "kilter/network.h"
#include "kl_flow.h"

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

/* ---- the working form: parts in sweep-position order (network.h) -------- */

/* 32 bytes a part: the load pass streams them (docs/performance.md). */
_Static_assert(sizeof(void *) != 8 || sizeof(kl_load_part) == 32, "kl_load_part: 32 bytes");

/* The parts of network load m (at most 3 entries x 3 ZIP parts): for an
 * element rated S at V_n, k = conj(S) / V_n^2 (Z), conj(S) / V_n (I),
 * conj(S) (P), times the distributed-load share and the ZIP fraction, so
 * that the kernel's I = k v, k v/|v|, k v/|v|^2 is element_current's. */
static int load_parts_of(const kl_network *n, int m, kl_load_part out[9])
{
    const kl_net_load *nl = &n->loads[m];
    const kl_load *ld = &n->feeder->loads[nl->load];
    int delta = ld->conn == KL_CONN_DELTA, c = 0;
    double vn = n->v_base_ln[nl->bus];
    if (delta)
        vn *= n->split_phase[nl->bus] ? 2.0 : sqrt(3.0);
    for (int k = 0; k < 3; k++) {
        if (!(ld->phases & (1 << k)))
            continue;
        int p = n->ld_slot[3 * nl->load + k];
        kl_complex s = conj(ld->s_va[k] * nl->weight);
        double frac[3] = {0, 0, 0}; /* Z, I, P */
        if (ld->model == KL_LOAD_Z)
            frac[0] = 1;
        else if (ld->model == KL_LOAD_I)
            frac[1] = 1;
        else if (ld->model == KL_LOAD_ZIP)
            memcpy(frac, ld->zip, sizeof frac);
        else
            frac[2] = 1;
        static const unsigned char MODEL[3] = {KL_LOAD_Z, KL_LOAD_I, KL_LOAD_PQ};
        double div[3] = {vn * vn, vn, 1.0};
        for (int t = 0; t < 3; t++) {
            if (frac[t] == 0)
                continue; /* adds nothing */
            out[c++] = (kl_load_part){n->pos[nl->bus], nl->load, (unsigned char)k,
                                      (unsigned char)p, (unsigned char)(delta ? (p + 1) % 3 : 3),
                                      MODEL[t], frac[t] * s / div[t]};
        }
    }
    return c;
}

/* Capacitor c's parts: constant susceptance, I = j (Q / V_n^2) v. */
int kl_load_cap_parts(const kl_network *n, int c, kl_load_part out[3])
{
    const kl_capacitor *cp = &n->feeder->capacitors[c];
    int delta = cp->conn == KL_CONN_DELTA, cnt = 0;
    double vn = n->v_base_ln[cp->bus];
    if (delta)
        vn *= n->split_phase[cp->bus] ? 2.0 : sqrt(3.0);
    for (int k = 0; k < 3; k++)
        if (cp->phases & (1 << k))
            out[cnt++] = (kl_load_part){n->pos[cp->bus], -1, (unsigned char)k, (unsigned char)k,
                                        (unsigned char)(delta ? (k + 1) % 3 : 3), KL_LOAD_Z,
                                        I * (cp->q_var[k] / (vn * vn))};
    return cnt;
}

/* How many parts load_parts_of gives network load m (no coefficients). */
static int load_nparts(const kl_network *n, int m)
{
    const kl_load *ld = &n->feeder->loads[n->loads[m].load];
    int entries = (ld->phases & 1) + ((ld->phases >> 1) & 1) + ((ld->phases >> 2) & 1);
    if (ld->model != KL_LOAD_ZIP)
        return entries;
    return entries * ((ld->zip[0] != 0) + (ld->zip[1] != 0) + (ld->zip[2] != 0));
}

static int cap_nparts(const kl_network *n, int c)
{
    int ph = n->feeder->capacitors[c].phases;
    return (ph & 1) + ((ph >> 1) & 1) + ((ph >> 2) & 1);
}

/* Counting sort by position, straight into the parts array (every part of
 * one load or capacitor sits at its bus): parts_count counts and forms the
 * prefix sums in start[] (the only scratch) and returns the number of parts,
 * parts_fill places them.  The loads are counted once: their start[] is
 * used as it is, the capacitors' (few) counted after it. */
static size_t parts_count(const kl_network *n, int *start, int caps)
{
    int nitems = caps ? n->feeder->ncapacitors : n->nloads;
    memset(start, 0, sizeof(int) * ((size_t)n->nbuses + 1));
    for (int m = 0; m < nitems; m++) {
        int b = caps ? n->feeder->capacitors[m].bus : n->loads[m].bus;
        start[n->pos[b] + 1] += caps ? cap_nparts(n, m) : load_nparts(n, m);
    }
    for (int i = 0; i < n->nbuses; i++)
        start[i + 1] += start[i];
    return (size_t)start[n->nbuses];
}

static void parts_fill(const kl_network *n, kl_load_part *dst, int *start, int caps)
{
    int nitems = caps ? n->feeder->ncapacitors : n->nloads;
    for (int m = 0; m < nitems; m++) {
        int b = caps ? n->feeder->capacitors[m].bus : n->loads[m].bus;
        int *at = &start[n->pos[b]];
        int got = caps ? kl_load_cap_parts(n, m, dst + *at) : load_parts_of(n, m, dst + *at);
        /* the counting pass reserved exactly this many (parts_count) */
        KL_ASSERT(got == (caps ? cap_nparts(n, m) : load_nparts(n, m)));
        *at += got;
    }
}

/* The load pass reads the parts and the bus arrays front to back: parts
 * in nondecreasing position, loads first, capacitors after them (their
 * load is -1, and parts_refresh reads ld_slot for the first nparts only). */
static void parts_check(const kl_network *n)
{
#ifdef KILTER_CHECKS
    for (int i = 0; i < n->nparts + n->ncap_parts; i++) {
        const kl_load_part *pt = &n->parts[i];
        KL_ASSERT((pt->load >= 0) == (i < n->nparts) && pt->p < 3 && pt->q <= 3);
        KL_ASSERT(i == 0 || i == n->nparts || n->parts[i - 1].pos <= pt->pos);
    }
#else
    (void)n;
#endif
}

kl_status kl_load_parts_build(kl_network *n)
{
    /* positions in start[] are ints: at most 9 parts per network load, 3
     * per capacitor */
    if (9 * (size_t)n->nloads + 3 * (size_t)n->feeder->ncapacitors > INT_MAX)
        return KL_ENOMEM;
    int *start = kl_malloc(sizeof(int) * ((size_t)n->nbuses + 1));
    if (!start)
        return KL_ENOMEM;
    size_t np = parts_count(n, start, 0), nc = 0;
    for (int c = 0; c < n->feeder->ncapacitors; c++)
        nc += (size_t)cap_nparts(n, c);
    n->parts = kl_malloc((np + nc + 1) * sizeof *n->parts);
    if (!n->parts) {
        kl_free(start);
        return KL_ENOMEM;
    }
    kl_prefault(n->parts, (np + nc) * sizeof *n->parts); /* one call, not a fault a page */
    n->nparts = (int)np;
    n->ncap_parts = (int)nc;
    parts_fill(n, n->parts, start, 0);
    parts_count(n, start, 1);
    parts_fill(n, n->parts + np, start, 1);
    kl_free(start);
    parts_check(n);
    n->parts_stale = 0;
    return KL_OK;
}

void kl_load_parts_repower(kl_network *n, int *start)
{
    /* the parts' number and order follow from the phases, connections and
     * ZIP fractions alone (load_nparts, cap_nparts), not from the powers: the
     * same counting sort refills them in place with the new coefficients */
    parts_count(n, start, 0);
    parts_fill(n, n->parts, start, 0);
    parts_count(n, start, 1);
    parts_fill(n, n->parts + n->nparts, start, 1);
    parts_check(n);
    n->parts_stale = 0;
}

void kl_load_parts_moved(kl_network *n)
{
    n->parts_stale = 1;
}

/* The slots of every load part from ld_slot (after rephasing). */
static void parts_refresh(kl_network *n)
{
    for (int i = 0; i < n->nparts; i++) {
        kl_load_part *pt = &n->parts[i];
        int p = n->ld_slot[3 * pt->load + pt->entry];
        pt->q = (unsigned char)(pt->q < 3 ? (p + 1) % 3 : 3); /* slot 0-2; 3 the neutral (wye) */
        pt->p = (unsigned char)p;
    }
    n->parts_stale = 0;
}

/* The load kernel: every part's current at the present voltages (vs) into
 * the bus currents (js), both by position; parts are in position order. */
static void parts_inject(const kl_load_part *pt, int np, double scale, const kl_complex *vs,
                         kl_complex *js)
{
    for (int i = 0; i < np; i++) {
        const kl_complex *v = vs + 3 * (size_t)pt[i].pos;
        int p = pt[i].p, q = pt[i].q;
        kl_complex e = q < 3 ? v[p] - v[q] : v[p], c;
        double m2 = creal(e) * creal(e) + cimag(e) * cimag(e);
        switch (pt[i].model) {
        case KL_LOAD_Z:
            c = pt[i].k * e;
            break;
        case KL_LOAD_I: /* a dead element draws nothing: no angle to hold */
            c = m2 > 0 ? pt[i].k * e / sqrt(m2) : 0;
            break;
        default:
            c = m2 > 0 ? pt[i].k * e / m2 : 0;
            break;
        }
        c *= scale;
        kl_complex *j = js + 3 * (size_t)pt[i].pos;
        j[p] += c;
        if (q < 3)
            j[q] -= c;
    }
}

void kl_load_inject(kl_network *n, double scale)
{
    if (n->parts_stale)
        parts_refresh(n);
    parts_inject(n->parts, n->nparts, scale, n->vs, n->js);
    parts_inject(n->parts + n->nparts, n->ncap_parts, 1.0, n->vs, n->js);
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
            if (!load_entry(n, n->vs, n->pos, m, k, scale, &e))
                continue;
            kl_complex s = e.v * conj(e.i);
            res->s_load[3 * n->loads[m].load + k] += s;
            add_phase_power(res->s_loads, &e, s);
        }
    }
    for (int c = 0; c < f->ncapacitors; c++) {
        for (int k = 0; k < 3; k++) {
            res->q_cap[3 * c + k] = 0;
            if (!cap_entry(n, n->vs, n->pos, c, k, &e))
                continue;
            kl_complex s = e.v * conj(e.i);
            res->q_cap[3 * c + k] = -cimag(s);
            add_phase_power(res->s_loads, &e, s);
        }
    }
}
