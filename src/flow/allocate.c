/* kilter: allocating the metered feeder-head demand to the loads.
 *
 * Each allocated load entry e has a basis w_e (connected kVA, or a demand
 * estimated from energy) and draws from a set M_e of head phases (its phase,
 * the two of a line-to-line entry, the primary phase(s) of the single-phase
 * transformer above it).  With one complex factor F_p per head phase, the
 * entry's power at nominal voltage is
 *     S_e = w_e * mean(F_q, q in M_e)                                   (1)
 * and phase p of M_e carries the share c_pe of it (share() below: 1, or
 * about half of a line-to-line entry).  To first order the head power is
 * then S_head = J F + S_held + S_loss with
 *     J_pq = sum_e c_pe w_e / |M_e|   over the entries with p, q in M_e (2)
 * (for wye entries on primary phases J is diagonal: the phase's kVA, and
 * F_p = (S_measured - S_held - S_loss) / kVA_p is the allocation factor of
 * the trade: Kersting, "Distribution System Modeling and Analysis", ch. 2,
 * from memory).  Losses and voltage-dependent loads are second order: the
 * factors are corrected by a full load flow at a time,
 *     F <- F + J^-1 (S_target - S_head)                                 (3)
 * which converges linearly at the rate of d(losses)/d(load), a few per cent
 * on a distribution feeder, so a handful of load flows reach 0.1 %. */
#include <math.h>
#include <string.h>
#include "kilter/allocate.h"
#include "kilter/units.h"
#include "kl_flow.h"

static const char PHC[3] = {'a', 'b', 'c'};

void kl_alloc_options_default(kl_alloc_options *o)
{
    memset(o, 0, sizeof *o);
    o->tol = 1e-3;
    o->max_iter = 30;
    kl_flow_options_default(&o->flow);
}

int kl_alloc_basis_kva(const kl_feeder *f, double *basis)
{
    int n = 0;
    for (int l = 0; l < f->nloads; l++) {
        const kl_load_nameplate *np = f->load_nameplate ? &f->load_nameplate[l] : NULL;
        int use = np && np->has_kva && !np->fixed_power && !kl_deenergized_load(f, l);
        for (int k = 0; k < 3; k++) {
            double w = use && (f->loads[l].phases & (1 << k)) ? np->kva[k] : 0;
            basis[3 * l + k] = w > 0 ? w : 0;
            n += w > 0;
        }
    }
    return n;
}

/* The head phases each bus slot draws from: [3 * nbuses] masks, down the
 * feeder tree.  A single-phase or center-tapped transformer feeds every slot
 * below it from its primary phase(s); a three-phase bank keeps the phase
 * letters (a delta-wye bank's 30-degree shift spreads a phase's load over two
 * primary phases, which the lettering convention of the trade ignores). */
static kl_status head_map(const kl_feeder *f, unsigned char *map, kl_errors *err)
{
    const kl_feeder_tree *t;
    kl_feeder_tree *own = NULL;
    kl_status st = kl_feeder_tree_of(f, &t, &own, err);
    if (st)
        return st;
    memset(map, 0, 3 * (size_t)f->nbuses);
    for (int p = 0; p < 3; p++)
        map[3 * f->source.bus + p] = (unsigned char)(1 << p);
    for (int i = 1; i < t->nlive; i++) {
        int b = t->order[i], ub = t->order[t->up[i]];
        const kl_section *s = &f->sections[t->sec[i]];
        const kl_transformer *x = s->kind == KL_SEC_TRANSFORMER ? &f->transformers[s->device] : NULL;
        int single = x && (x->low == KL_WINDING_CENTER_TAP || x->low == KL_WINDING_SINGLE ||
                           x->high == KL_WINDING_SINGLE);
        unsigned char u = 0;
        for (int p = 0; p < 3; p++)
            if (s->phases & (1 << p))
                u |= map[3 * ub + p];
        for (int p = 0; p < 3; p++)
            map[3 * b + p] = single ? u : map[3 * ub + p];
    }
    kl_feeder_tree_free(own);
    return KL_OK;
}

/* The head phases of every load entry, from the slots it sits on. */
static void entry_masks(const kl_feeder *f, const kl_network *net, const unsigned char *map,
                        unsigned char *em)
{
    for (int l = 0; l < f->nloads; l++) {
        const kl_load *ld = &f->loads[l];
        int b = ld->bus >= 0 ? ld->bus : f->sections[ld->section].to;
        for (int k = 0; k < 3; k++) {
            unsigned char m = 0;
            if (ld->phases & (1 << k)) {
                int p = net->ld_slot[3 * l + k];
                m = map[3 * b + p];
                if (ld->conn == KL_CONN_DELTA)
                    m |= map[3 * b + (p + 1) % 3];
            }
            em[3 * l + k] = m;
        }
    }
}

/* The share of an entry's power that head phase p carries, the entry drawing
 * from the head phases of mask m: all of it from one phase; between phases p
 * and q = p + 1 (a line-to-line entry, or a transformer connected so) the
 * line currents are +I and -I, so phase p carries V_p / (V_p - V_q) of the
 * power and q carries -V_q / (V_p - V_q): at balanced voltages
 * (1/sqrt 3) at -30 and +30 degrees (Kersting ch. 9, from memory). */
static kl_complex share(int m, int p)
{
    if (!(m & (1 << p)))
        return 0;
    int n = kl_phases_count(m);
    if (n == 1)
        return 1;
    if (n == 3)
        return 1.0 / 3.0;
    const kl_complex lead = 0.5 - I * (0.5 / KL_SQRT3); /* (1/sqrt 3) at -30 degrees */
    int first = m == (KL_PH_C | KL_PH_A) ? 2 : m == (KL_PH_A | KL_PH_B) ? 0 : 1; /* p of the pair p, p + 1 */
    return p == first ? lead : conj(lead);
}

/* Equation (2), with the shares of share(), and the basis each phase
 * carries (a line-to-line entry half to each of its phases). */
static void jacobian(const kl_feeder *f, const double *basis, const unsigned char *em, kl_complex J[3][3],
                     double per_phase[3])
{
    memset(J, 0, 9 * sizeof(kl_complex));
    memset(per_phase, 0, 3 * sizeof(double));
    for (int e = 0; e < 3 * f->nloads; e++) {
        int n = kl_phases_count(em[e]);
        if (basis[e] <= 0 || !n)
            continue;
        for (int p = 0; p < 3; p++) {
            if (!(em[e] & (1 << p)))
                continue;
            per_phase[p] += basis[e] / n;
            for (int q = 0; q < 3; q++)
                if (em[e] & (1 << q))
                    J[p][q] += share(em[e], p) * basis[e] / n;
        }
    }
}

/* Solves J x = r on the phases of `mask` (Gaussian elimination with partial
 * pivoting on a 3x3 at most); x is 0 elsewhere.  -1 when J is singular
 * there (loads only between two phases cannot be split between them). */
static int solve3(const kl_complex J[3][3], int mask, const kl_complex r[3], kl_complex x[3])
{
    int idx[3], n = 0;
    kl_complex a[3][3];
    double scale = 0;
    kl_complex b[3];
    for (int p = 0; p < 3; p++)
        if (mask & (1 << p))
            idx[n++] = p;
    for (int i = 0; i < n; i++) {
        for (int j = 0; j < n; j++)
            a[i][j] = J[idx[i]][idx[j]];
        b[i] = r[idx[i]];
        scale = fmax(scale, cabs(a[i][i]));
    }
    for (int c = 0; c < n; c++) {
        int piv = c;
        for (int i = c + 1; i < n; i++)
            if (cabs(a[i][c]) > cabs(a[piv][c]))
                piv = i;
        if (!(cabs(a[piv][c]) > 1e-9 * scale))
            return -1;
        for (int j = 0; j < n; j++) {
            kl_complex t = a[c][j];
            a[c][j] = a[piv][j];
            a[piv][j] = t;
        }
        kl_complex tb = b[c];
        b[c] = b[piv];
        b[piv] = tb;
        for (int i = c + 1; i < n; i++) {
            kl_complex m = a[i][c] / a[c][c];
            for (int j = c; j < n; j++)
                a[i][j] -= m * a[c][j];
            b[i] -= m * b[c];
        }
    }
    x[0] = x[1] = x[2] = 0;
    for (int i = n - 1; i >= 0; i--) {
        kl_complex s = b[i];
        for (int j = i + 1; j < n; j++)
            s -= a[i][j] * x[idx[j]];
        x[idx[i]] = s / a[i][i];
    }
    return 0;
}

/* Equation (1) into the feeder's loads, and the load model's records. */
static void set_loads(kl_feeder *f, kl_network *net, const double *basis, const unsigned char *em,
                      const kl_complex F[3], int *scratch)
{
    for (int e = 0; e < 3 * f->nloads; e++) {
        int n = kl_phases_count(em[e]);
        if (basis[e] <= 0 || !n)
            continue;
        kl_complex m = 0;
        for (int p = 0; p < 3; p++)
            if (em[e] & (1 << p))
                m += F[p];
        f->loads[e / 3].s_va[e % 3] = basis[e] * m / n;
    }
    kl_load_parts_repower(net, scratch); /* the same records, new coefficients: no allocation */
}

/* The phases to allocate: measured and with a basis.  A phase with one but
 * not the other is an input error. */
static kl_status phases_of(const kl_head_reading *h, const double per_phase[3], int *mask, kl_errors *err)
{
    kl_status st = KL_OK;
    *mask = 0;
    for (int p = 0; p < 3; p++) {
        int measured = (h->phases >> p) & 1, has = per_phase[p] > 0;
        if (measured && has)
            *mask |= 1 << p;
        else if (measured)
            kl_errors_add(err, h->file, h->loc[p].line, h->loc[p].col, NULL, "phase %c is measured but no "
                          "load on it has a basis to allocate (connected_kva, or customer energy): give its "
                          "loads one, or leave the phase out of the measurement", PHC[p]);
        else if (has)
            kl_errors_add(err, h->file, 0, 0, NULL, "loads on phase %c have a basis to allocate but the "
                          "measurement has no phase %c: give its row (or columns)", PHC[p], PHC[p]);
        if ((measured || has) && !(measured && has))
            st = KL_EINPUT;
    }
    if (!st && !*mask) {
        kl_errors_add(err, h->file, 0, 0, NULL, "no load has a basis to allocate: give loads "
                      "connected_kva (or customer energy)");
        st = KL_EINPUT;
    }
    return st;
}

/* Head figures of the present load flow: power per phase, and the target
 * (a current reading asks for |V| |I| at the solved head voltage). */
static void head_figures(const kl_feeder *f, const kl_flow_result *res, const kl_head_reading *h,
                         kl_alloc_result *out)
{
    double vabs[3];
    for (int p = 0; p < 3; p++) {
        vabs[p] = cabs(res->v[3 * f->source.bus + p]);
        out->head[p] = res->s_head[p];
    }
    kl_head_target(h, vabs, out->target);
    for (int p = 0; p < 3; p++) {
        double t = cabs(out->target[p]);
        out->mismatch[p] = (out->phases & (1 << p)) && t > 0 ? cabs(out->head[p] - out->target[p]) / t : 0;
    }
}

static void held_power(const kl_feeder *f, const kl_flow_result *res, const double *basis,
                       const unsigned char *em, kl_complex held[3])
{
    held[0] = held[1] = held[2] = 0;
    for (int e = 0; e < 3 * f->nloads; e++) {
        int n = kl_phases_count(em[e]);
        if (basis[e] > 0 || !n)
            continue;
        for (int p = 0; p < 3; p++)
            if (em[e] & (1 << p))
                held[p] += res->s_load[e] * share(em[e], p);
    }
}

static void note_factors(char *buf, size_t n, const kl_complex F[3], int mask)
{
    size_t at = 0;
    buf[0] = 0;
    for (int p = 0; p < 3 && at < n; p++)
        if (mask & (1 << p))
            at += (size_t)snprintf(buf + at, n - at, "%s%c %.4g kW + j%.4g kvar per kVA", at ? ", " : "",
                                   PHC[p], creal(F[p]), cimag(F[p]));
}

/* After convergence: a factor whose real part is negative means the held
 * loads and the losses alone take more than the measured phase. */
static kl_status check_signs(const kl_head_reading *h, const kl_alloc_result *out, kl_errors *err)
{
    kl_status st = KL_OK;
    for (int p = 0; p < 3; p++)
        if ((out->phases & (1 << p)) && !(creal(out->factor[p]) > 0)) {
            kl_errors_add(err, h->file, h->loc[p].line, h->loc[p].col, NULL, "phase %c: the loads held "
                          "(%.1f kW) and the losses already take the measured %.1f kW, leaving nothing to "
                          "allocate: check the measurement and the held (fixed_power) loads", PHC[p],
                          creal(out->held[p]) / 1e3, creal(out->target[p]) / 1e3);
            st = KL_EINPUT;
        }
    return st;
}

static kl_status iterate(kl_feeder *f, kl_network *net, const double *basis, const unsigned char *em,
                         int *scratch, const kl_complex J[3][3], const kl_head_reading *h,
                         const kl_alloc_options *opt, kl_flow_result *res, kl_alloc_result *out, kl_errors *err)
{
    kl_complex step[3], r[3];
    char fac[200];
    kl_status st;
    for (;;) {
        set_loads(f, net, basis, em, out->factor, scratch);
        if ((st = kl_flow_solve(net, &opt->flow, res, err))) {
            note_factors(fac, sizeof fac, out->factor, out->phases);
            if (st == KL_ENOCONV)
                kl_errors_add(err, h->file, 0, 0, NULL, "allocation stopped: the load flow did not converge "
                              "with the loads at %s (load flow %d): the measured demand may be more than "
                              "the feeder can carry, or the basis far from the real loads", fac,
                              out->iterations + 1);
            return st;
        }
        out->iterations++;
        head_figures(f, res, h, out);
        int worst = -1;
        for (int p = 0; p < 3; p++)
            if ((out->phases & (1 << p)) && out->mismatch[p] > opt->tol &&
                (worst < 0 || out->mismatch[p] > out->mismatch[worst]))
                worst = p;
        if (worst < 0) {
            out->converged = 1;
            return KL_OK;
        }
        if (out->iterations >= opt->max_iter) {
            kl_errors_add(err, h->file, h->loc[worst].line, h->loc[worst].col, NULL, "allocation did not "
                          "converge in %d load flows: phase %c's head demand is still %.3g %% from the "
                          "measured (tolerance %.3g %%); regulator taps that keep moving between load flows "
                          "are the usual cause: try fixed taps or a looser tolerance", out->iterations,
                          PHC[worst], 100 * out->mismatch[worst], 100 * opt->tol);
            return KL_ENOCONV;
        }
        for (int p = 0; p < 3; p++)
            r[p] = out->target[p] - out->head[p];
        solve3(J, out->phases, r, step); /* J was found regular before the first load flow */
        for (int p = 0; p < 3; p++)
            out->factor[p] += step[p];
    }
}

kl_status kl_alloc_solve(kl_feeder *f, kl_network *net, const double *basis, const kl_head_reading *h,
                         const kl_alloc_options *opt, kl_flow_result *res, kl_alloc_result *out,
                         kl_errors *err)
{
    kl_complex J[3][3];
    kl_status st;
    memset(out, 0, sizeof *out);
    if (!f || !net || net->feeder != f || !basis || !h || !opt || !res || !(opt->tol > 0) ||
        opt->max_iter < 1 || opt->flow.load_scale != 1.0)
        return KL_EARG;
    unsigned char *map = kl_malloc(3 * (size_t)f->nbuses + 3 * (size_t)f->nloads + 1);
    int *scratch = kl_malloc(((size_t)net->nbuses + 1) * sizeof *scratch);
    if (!map || !scratch) {
        kl_free(map);
        kl_free(scratch);
        return KL_ENOMEM;
    }
    unsigned char *em = map + 3 * (size_t)f->nbuses;
    if ((st = head_map(f, map, err)))
        goto done;
    entry_masks(f, net, map, em);
    /* every reading from the same start, the feeder's own taps and a flat
     * voltage start, so that a step of a series allocates as the same
     * reading alone does, whatever was solved before */
    for (int g = 0; g < f->nregulators; g++) {
        memcpy(net->tap + 3 * g, f->regulators[g].tap, sizeof f->regulators[g].tap);
        kl_regulator_update(net, g);
    }
    net->v_valid = 0;
    jacobian(f, basis, em, J, out->basis);
    if ((st = phases_of(h, out->basis, &out->phases, err)))
        goto done;
    /* the first factors: equation (3) from zero head power (no losses, no held loads) */
    double vabs[3];
    for (int p = 0; p < 3; p++)
        vabs[p] = creal(net->v_held[p]) != 0 || cimag(net->v_held[p]) != 0 ? cabs(net->v_held[p])
                                                                            : net->v_base_ln[f->source.bus];
    kl_head_target(h, vabs, out->target);
    if (solve3(J, out->phases, out->target, out->factor) < 0) {
        char ph[4];
        kl_errors_add(err, h->file, 0, 0, NULL, "phases %s are measured apart but their allocated loads are "
                      "all connected between them (line-to-line): the split between the phases is not "
                      "defined; give some loads on single phases a basis, or measure the phases together",
                      kl_phases_str(out->phases, ph));
        st = KL_EINPUT;
        goto done;
    }
    st = iterate(f, net, basis, em, scratch, J, h, opt, res, out, err);
    if (out->iterations)
        held_power(f, res, basis, em, out->held);
    if (!st)
        st = check_signs(h, out, err);
done:
    kl_free(map);
    kl_free(scratch);
    return st;
}
