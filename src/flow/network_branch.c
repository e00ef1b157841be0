/* kilter: device branches of the network (network.c): switches, regulators
 * and transformers as fixed generalized matrices in a device slot, and any
 * branch's matrices (a line's computed, a device's copied). */
#include <math.h>
#include <string.h>
#include "kl_flow.h"

kl_status kl_network_branch_abcd(const kl_network *n, int k, kl_complex a[9],
                                 kl_complex b[9], kl_complex c[9], kl_complex d[9],
                                 kl_complex A[9], kl_complex B[9])
{
    int s = n->dev[k];
    if (s < 0)
        return kl_network_line_abcd(n, k, a, b, c, d, A, B);
    kl_complex *out[] = {a, b, c, d, A, B};
    const kl_complex *src[] = {n->a, n->b, n->c, n->d, n->A, n->B};
    for (int q = 0; q < 6; q++)
        if (out[q])
            memcpy(out[q], src[q] + 9 * (size_t)s, 9 * sizeof(kl_complex));
    return KL_OK;
}

kl_status kl_network_branch_device(kl_network *n, int k, const kl_section *sc, kl_errors *err)
{
    const kl_feeder *f = n->feeder;
    int from = n->br_from[k], to = n->br_to[k];
    int s = n->dev[k] = n->ndev++;
    kl_complex *A = n->A + 9 * s;
    if (sc->kind == KL_SEC_TRANSFORMER) {
        if (sc->device < 0 || sc->device >= f->ntransformers) {
            kl_network_err(err, f, sc->loc, "section", sc->name, "names an unknown transformer");
            return KL_EINPUT;
        }
        const kl_transformer *t = &f->transformers[sc->device];
        char why[384];
        int up = kl_transformer_step_up(t, n->v_base_ln[from]);
        if (kl_transformer_matrices(t, n->br_phases[k], up, A, n->B + 9 * s, n->yg + 9 * s,
                                    &n->phases[to],
                                    &n->v_base_ln[to], why, sizeof why)) {
            kl_network_err(err, f, sc->loc, "section", sc->name, why);
            return KL_EINPUT;
        }
        n->br_kind[k] = KL_BR_TRANSFORMER;
        n->split_phase[to] = !up && t->low == KL_WINDING_CENTER_TAP;
        kl_cm3_transpose(A, n->d + 9 * s);
        /* a, b only where A is invertible (wye-wye, single-phase); else zero */
        if (kl_cm3_inverse_on(A, n->phases[to] == n->br_phases[k] ? n->br_phases[k] : 0,
                       n->a + 9 * s) == 0)
            kl_cm3_mul(n->a + 9 * s, n->B + 9 * s, n->b + 9 * s);
        return KL_OK;
    }
    n->phases[to] = n->br_phases[k];
    n->v_base_ln[to] = n->v_base_ln[from];
    n->split_phase[to] = n->split_phase[from];
    if (sc->kind == KL_SEC_REGULATOR) {
        if (sc->device < 0 || sc->device >= f->nregulators) {
            kl_network_err(err, f, sc->loc, "section", sc->name, "names an unknown regulator");
            return KL_EINPUT;
        }
        const char *why = kl_regulator_check(&f->regulators[sc->device]);
        if (why) {
            kl_network_err(err, f, f->regulators[sc->device].loc, "regulator",
                           f->regulators[sc->device].name, why);
            return KL_EINPUT;
        }
        n->br_kind[k] = KL_BR_REGULATOR;
        n->reg_branch[sc->device] = k;
        kl_regulator_update(n, sc->device);
        return KL_OK;
    }
    n->br_kind[k] = KL_BR_SWITCH;
    kl_cm3_identity(n->a + 9 * s, n->br_phases[k]);
    memcpy(n->d + 9 * s, n->a + 9 * s, 9 * sizeof(kl_complex));
    memcpy(A, n->a + 9 * s, 9 * sizeof(kl_complex));
    return KL_OK;
}
