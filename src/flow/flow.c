/* kilter: the load-flow driver.  Solves at the present regulator taps, lets
 * every automatic regulator move its taps toward its band (Kersting ch. 7,
 * from memory), and repeats until no tap moves; then turns the network's
 * state into a result record indexed by the feeder's own ids. */
#include <math.h>
#include <string.h>
#include "kilter/flow.h"
#include "kl_flow.h"

void kl_flow_options_default(kl_flow_options *opt)
{
    opt->tol_pu = 1e-6;
    opt->max_iter = 100;
    opt->max_reg_rounds = 20;
    opt->load_scale = 1.0;
    opt->solver = KL_SOLVER_SWEEP;
    opt->fixed_taps = 0;
}

void kl_flow_result_free(kl_flow_result *r)
{
    if (!r)
        return;
    void *p[] = {r->v, r->v_base_ln, r->phases, r->i, r->i_recv, r->i_neutral, r->i_earth,
                 r->s_in, r->s_loss, r->sec_solved, r->s_load, r->q_cap, r->tap,
                 r->reg_relay_v, r->reg_limit};
    for (size_t k = 0; k < sizeof p / sizeof p[0]; k++)
        kl_free(p[k]);
    kl_free(r);
}

kl_status kl_flow_result_alloc(const kl_network *net, kl_flow_result **out, kl_errors *err)
{
    if (!net || !out)
        return KL_EARG;
    const kl_feeder *f = net->feeder;
    kl_flow_result *r = kl_calloc(1, sizeof *r);
    *out = NULL;
    if (!r)
        return KL_ENOMEM;
    size_t nb = (size_t)f->nbuses, ns = (size_t)f->nsections;
    r->nbuses = f->nbuses;
    r->nsections = f->nsections;
    r->nloads = f->nloads;
    r->ncapacitors = f->ncapacitors;
    r->nregulators = f->nregulators;
    r->v = kl_calloc(3 * nb, sizeof(kl_complex));
    r->v_base_ln = kl_calloc(nb, sizeof(double));
    r->phases = kl_calloc(nb, sizeof(int));
    r->i = kl_calloc(3 * ns, sizeof(kl_complex));
    r->i_recv = kl_calloc(3 * ns, sizeof(kl_complex));
    r->i_neutral = kl_calloc(ns, sizeof(kl_complex));
    r->i_earth = kl_calloc(ns, sizeof(kl_complex));
    r->s_in = kl_calloc(3 * ns, sizeof(kl_complex));
    r->s_loss = kl_calloc(3 * ns, sizeof(kl_complex));
    r->sec_solved = kl_calloc(ns, sizeof(int));
    r->s_load = kl_calloc(3 * (size_t)f->nloads, sizeof(kl_complex));
    r->q_cap = kl_calloc(3 * (size_t)f->ncapacitors, sizeof(double));
    r->tap = kl_calloc(3 * (size_t)f->nregulators, sizeof(int));
    r->reg_relay_v = kl_calloc(3 * (size_t)f->nregulators, sizeof(double));
    r->reg_limit = kl_calloc(3 * (size_t)f->nregulators, sizeof(int));
    if (!r->v || !r->v_base_ln || !r->phases || !r->i || !r->i_recv || !r->i_neutral ||
        !r->i_earth || !r->s_in || !r->s_loss || !r->sec_solved || !r->s_load || !r->q_cap ||
        !r->tap || !r->reg_relay_v || !r->reg_limit) {
        kl_flow_result_free(r);
        if (err)
            kl_errors_add(err, NULL, 0, 0, "load flow", "out of memory for the results");
        return KL_ENOMEM;
    }
    *out = r;
    return KL_OK;
}

/* Neutral current of a line section: the sum of the tn rows (every
 * Kron-eliminated conductor) applied to the sending-end currents. */
static kl_complex neutral_current(const kl_network *n, int s, const kl_complex i[3])
{
    const kl_section *sc = &n->feeder->sections[s];
    if (sc->kind != KL_SEC_LINE)
        return 0;
    const kl_construction *cn = &n->feeder->constructions[sc->construction];
    kl_complex in = 0;
    for (int r = 0; cn->derived && r < cn->ntn; r++)
        for (int p = 0; p < 3; p++)
            in += cn->tn[r][p] * i[p];
    return in;
}

static void section_results(const kl_network *n, kl_flow_result *r)
{
    const kl_feeder *f = n->feeder;
    memset(r->s_losses, 0, sizeof r->s_losses);
    for (int s = 0; s < f->nsections; s++) {
        int k1 = n->sec_first[s], k2 = n->sec_last[s];
        kl_complex *i = r->i + 3 * s, *ir = r->i_recv + 3 * s;
        kl_complex *sin = r->s_in + 3 * s, *sl = r->s_loss + 3 * s;
        r->sec_solved[s] = k1 >= 0;
        for (int p = 0; p < 3; p++)
            i[p] = ir[p] = sin[p] = sl[p] = 0;
        r->i_neutral[s] = r->i_earth[s] = 0;
        if (k1 < 0)
            continue;
        const kl_complex *vf1 = kl_network_bus_v(n, n->br_from[k1]);
        const kl_complex *it2 = kl_network_i_to(n, k2);
        kl_sweep_i_from(n, k1, i);
        for (int p = 0; p < 3; p++) {
            ir[p] = it2[p];
            sin[p] = vf1[p] * conj(i[p]);
        }
        /* loss summed over the section's branches, so an internal node's
         * lumped load is not counted as loss */
        for (int k = k1;; k = k2) {
            const kl_complex *vf = kl_network_bus_v(n, n->br_from[k]);
            const kl_complex *vt = kl_network_bus_v(n, n->br_to[k]), *it = kl_network_i_to(n, k);
            kl_complex ifr[3];
            kl_sweep_i_from(n, k, ifr);
            for (int p = 0; p < 3; p++) {
                kl_complex in = vf[p] * conj(ifr[p]);
                kl_complex outp = vt[p] * conj(it[p]);
                sl[p] += in - outp;
            }
            if (k == k2)
                break;
        }
        for (int p = 0; p < 3; p++)
            r->s_losses[p] += sl[p];
        r->i_neutral[s] = neutral_current(n, s, i);
        if (f->sections[s].kind == KL_SEC_LINE)
            r->i_earth[s] = -(i[0] + i[1] + i[2] + r->i_neutral[s]);
    }
}

static void fill_results(const kl_network *n, const kl_flow_options *opt, kl_flow_result *r)
{
    const kl_feeder *f = n->feeder;
    for (int b = 0; b < f->nbuses; b++) /* by bus id from the network's positions */
        memcpy(r->v + 3 * (size_t)b, kl_network_bus_v(n, b), 3 * sizeof r->v[0]);
    memcpy(r->v_base_ln, n->v_base_ln, (size_t)f->nbuses * sizeof r->v_base_ln[0]);
    memcpy(r->phases, n->phases, (size_t)f->nbuses * sizeof r->phases[0]);
    section_results(n, r);
    kl_load_powers(n, opt->load_scale, r);
    memcpy(r->tap, n->tap, 3 * (size_t)f->nregulators * sizeof r->tap[0]);
    memcpy(r->source_emf, n->v_emf, sizeof r->source_emf);
    for (int g = 0; g < f->nregulators; g++)
        kl_regulator_state(n, g, r->reg_relay_v + 3 * g, r->reg_limit + 3 * g);
    const kl_complex *vh = kl_network_bus_v(n, n->source), *jh = kl_network_bus_j(n, n->source);
    for (int p = 0; p < 3; p++)
        r->s_head[p] = vh[p] * conj(jh[p]);
}

static kl_status solve_once(kl_network *n, const kl_flow_options *opt, kl_flow_result *r,
                            kl_errors *err)
{
    if (opt->solver == KL_SOLVER_NODAL)
        return kl_nodal_solve(n, opt, r, err);
    return kl_sweep_solve(n, opt, r, err);
}

static kl_status check_options(const kl_flow_options *opt, kl_errors *err)
{
    if (opt->tol_pu > 0 && opt->max_iter > 0 && opt->max_reg_rounds >= 0 &&
        opt->load_scale >= 0 && isfinite(opt->load_scale))
        return KL_OK;
    kl_errors_add(err, NULL, 0, 0, "load flow", "invalid options: the tolerance and iteration "
                  "limit must be positive and the load scale finite and not negative");
    return KL_EARG;
}

kl_status kl_flow_solve(kl_network *n, const kl_flow_options *opt, kl_flow_result *r,
                        kl_errors *err)
{
    if (!n || !opt || !r || !err)
        return KL_EARG;
    kl_status st = check_options(opt, err);
    if (st)
        return st;
    const kl_feeder *f = n->feeder;
    r->total_iterations = 0;
    r->converged = 0;
    int round = 0, moved = 0;
    for (;;) {
        if ((st = solve_once(n, opt, r, err)))
            return st;
        moved = 0;
        for (int g = 0; g < f->nregulators && !opt->fixed_taps; g++)
            moved += kl_regulator_control(n, g);
        if (!moved || round >= opt->max_reg_rounds)
            break;
        round++;
    }
    r->reg_rounds = round;
    if (moved) {
        r->converged = 0;
        kl_errors_add(err, f->path, 0, 0, "load flow", "regulator taps did not settle after %d "
                      "rounds (they keep moving): widen the regulator bandwidth or check the "
                      "compensator settings and voltage level", round);
        return KL_ENOCONV;
    }
    fill_results(n, opt, r);
    return KL_OK;
}
