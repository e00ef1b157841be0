/* kilter: the ground relay's window at the feeder head (kilter/relay.h). */
#include <complex.h>
#include <math.h>
#include "kilter/relay.h"
#include "kl_study.h"

/* Head residuals below this share of the fault's own residual are outside
 * the zone: the path crosses a winding that blocks the zero sequence (the
 * open delta side's nil currents, to rounding). */
#define OUT_OF_ZONE 1e-6
/* A load residual below this share of the pickup is nil (a millionth). */
#define NIL_RESIDUAL 1e-6

static void load_side(const double *res, const double *scale, int n, kl_relay_window *w)
{
    w->load_residual_a = NAN;
    w->load_scale = NAN;
    for (int l = 0; l < n; l++)
        if (isfinite(res[l]) && (isnan(w->load_residual_a) || res[l] > w->load_residual_a)) {
            w->load_residual_a = res[l];
            w->load_scale = scale[l];
        }
    /* a balanced feeder's residual is rounding (1e-11 A): no margin to
     * speak of, rather than a figure of thirteen digits */
    w->load_margin = w->load_residual_a > NIL_RESIDUAL * w->pickup_a
                         ? w->pickup_a / w->load_residual_a : NAN;
    w->load_ok = isnan(w->load_residual_a) ? -1
                 : w->pickup_a >= w->load_margin_req * w->load_residual_a;
}

static void fault_side(const kl_network *n, const kl_fault_thevenin *t, const kl_fault_result *r,
                       kl_relay_window *w)
{
    w->fault_residual_a = NAN;
    w->fault_case = -1;
    for (int c = 0; c < r->ncases; c++) {
        const kl_fault_case *k = &r->cases[c];
        /* line-ground faults: a line-line-ground fault also draws phase
         * current, which the phase relays see (common practice) */
        if (!k->solved || k->spec.kind != KL_FAULT_SLG)
            continue;
        /* the zone: buses at the head's voltage; behind a transformer a fault
         * is its fuse's or its secondary protection's (common practice) */
        if (fabs(n->v_base_ln[k->bus] - n->v_base_ln[n->source]) > 0.01 * n->v_base_ln[n->source])
            continue;
        kl_complex head[3];
        kl_fault_head_current(t, n, k->bus, k->i, k->v, head);
        double own = cabs(k->i[0] + k->i[1] + k->i[2]), at_head = cabs(head[0] + head[1] + head[2]);
        if (!(at_head > OUT_OF_ZONE * own) || !isfinite(at_head))
            continue;
        if (w->fault_case < 0 || at_head < w->fault_residual_a) {
            w->fault_residual_a = at_head;
            w->fault_case = c;
        }
    }
    w->fault_margin = w->fault_case >= 0 ? w->fault_residual_a / w->pickup_a : NAN;
    w->fault_ok = w->fault_case < 0 ? -1
                  : w->fault_residual_a >= w->fault_margin_req * w->pickup_a;
}

kl_status kl_relay_window_eval(const kl_network *n, const kl_fault_thevenin *t,
                               const kl_fault_result *faults, const double *load_residual,
                               const double *load_scale, int nlevels, double pickup_a,
                               double load_margin, double fault_margin, kl_relay_window *out)
{
    out->pickup_a = pickup_a;
    out->load_margin_req = load_margin;
    out->fault_margin_req = fault_margin;
    out->load_residual_a = out->load_scale = out->load_margin = NAN;
    out->fault_residual_a = out->fault_margin = NAN;
    out->fault_case = -1;
    out->load_ok = out->fault_ok = -1;
    if (!(pickup_a > 0) || !(load_margin > 0) || !(fault_margin > 0))
        return pickup_a > 0 ? KL_EARG : KL_OK;
    load_side(load_residual, load_scale, nlevels, out);
    fault_side(n, t, faults, out);
    return KL_OK;
}
