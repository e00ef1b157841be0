/* kilter: the complaint check: a measured set of phase or line voltage
 * magnitudes at one service point against the solved model there.
 *
 * Magnitudes are compared in per unit of the measurement's nominal; the VUF
 * of a line measurement comes from the closed form on the three magnitudes
 * (unbalance.c), since a field reading has no angles, and is compared with
 * the same closed form applied to the model's line magnitudes (which equals
 * the model's phasor VUF). */
#include <math.h>
#include "kilter/study.h"
#include "kilter/units.h"

/* A reading within 20 % of a nominal is taken to be on that nominal: far
 * wider than any service-voltage range, far narrower than the step between
 * a primary base and the 120 V base (common practice). */
#define KL_BASE_FIT 0.2

static const char *const meas_name[3][3] = {
    { "", "", "" }, { "Va", "Vb", "Vc" }, { "Vab", "Vbc", "Vca" }
};

/* Which nominal the readings are on: the bus's own or the 120 V base. */
static kl_status fit_base(const kl_feeder *f, const kl_study_phases *ph,
                          const kl_complaint_input *in, kl_complaint_result *out,
                          kl_errors *err)
{
    double scale = in->kind == KL_MEAS_LINE ? KL_SQRT3 : 1.0;
    double nominal = scale * ph->v_base_ln[in->bus];
    double service = scale * KL_SERVICE_BASE_V;
    double avg = (in->mag[0] + in->mag[1] + in->mag[2]) / 3.0;
    if (fabs(avg / nominal - 1.0) <= KL_BASE_FIT) {
        out->base_v = nominal;
        out->on_120 = 0;
    } else if (fabs(avg / service - 1.0) <= KL_BASE_FIT) {
        out->base_v = service;
        out->on_120 = 1;
    } else {
        kl_errors_add(err, NULL, 0, 0, f->buses[in->bus].name,
                      "measured %s voltages average %.1f V, which fits neither the "
                      "bus's nominal %.1f V nor the 120 V base (%.1f V): give the "
                      "readings in volts at the bus or on the 120 V base",
                      in->kind == KL_MEAS_LINE ? "line" : "phase", avg, nominal, service);
        return KL_EINPUT;
    }
    return KL_OK;
}

static kl_status check_input(const kl_feeder *f, const kl_study *s,
                             const kl_complaint_input *in, kl_errors *err)
{
    if (in->bus < 0 || in->bus >= s->nbuses) {
        kl_errors_add(err, NULL, 0, 0, "complaint",
                      "bus id %d is not a bus of the feeder", in->bus);
        return KL_EARG;
    }
    if (in->kind == KL_MEAS_NONE)
        return KL_OK;
    if (s->vbus[in->bus].phases != KL_PH_ABC) {
        kl_errors_add(err, NULL, 0, 0, f->buses[in->bus].name,
                      "a measurement of three %s voltages needs a three-phase bus; "
                      "this bus has phases %d (mask): choose the three-phase bus "
                      "feeding the service", in->kind == KL_MEAS_LINE ? "line" : "phase",
                      s->vbus[in->bus].phases);
        return KL_EINPUT;
    }
    for (int p = 0; p < 3; p++) {
        if (!(in->mag[p] > 0) || !isfinite(in->mag[p])) {
            kl_errors_add(err, NULL, 0, 0, f->buses[in->bus].name,
                          "measured %s = %g V: expected a positive reading in volts",
                          meas_name[in->kind][p], in->mag[p]);
            return KL_EINPUT;
        }
    }
    if (!(in->tol_pu > 0) || !(in->tol_vuf > 0)) {
        kl_errors_add(err, NULL, 0, 0, "complaint",
                      "tolerances %g (magnitude) and %g (VUF): expected positive fractions",
                      in->tol_pu, in->tol_vuf);
        return KL_EARG;
    }
    return KL_OK;
}

static void model_mags(const kl_study *s, const kl_study_phases *ph, int bus,
                       kl_meas_kind kind, double pu[3], double volts[3])
{
    const kl_seq_point *v = &s->vbus[bus];
    double base = ph->v_base_ln[bus] * (kind == KL_MEAS_LINE ? KL_SQRT3 : 1.0);
    for (int p = 0; p < 3; p++) {
        volts[p] = cabs(kind == KL_MEAS_LINE ? v->xll[p] : v->x[p]);
        pu[p] = volts[p] / base;
    }
}

kl_status kl_complaint_check(const kl_feeder *f, const kl_study *s,
                             const kl_study_phases *ph,
                             const kl_complaint_input *in,
                             kl_complaint_result *out, kl_errors *err)
{
    double model_v[3];
    kl_status st = check_input(f, s, in, err);
    out->bus = in->bus;
    out->meas_rate = out->model_rate = out->meas_vuf = out->model_vuf = NAN;
    out->worst_dev_pu = NAN;
    out->mags_agree = out->vuf_agree = -1;
    out->base_v = NAN;
    out->on_120 = 0;
    for (int p = 0; p < 3; p++)
        out->meas_pu[p] = out->model_pu[p] = NAN;
    if (st != KL_OK || in->kind == KL_MEAS_NONE)
        return st;
    st = fit_base(f, ph, in, out, err);
    if (st != KL_OK)
        return st;
    model_mags(s, ph, in->bus, in->kind, out->model_pu, model_v);
    out->worst_dev_pu = 0;
    for (int p = 0; p < 3; p++) {
        out->meas_pu[p] = in->mag[p] / out->base_v;
        out->worst_dev_pu = fmax(out->worst_dev_pu, fabs(out->meas_pu[p] - out->model_pu[p]));
    }
    out->mags_agree = out->worst_dev_pu <= in->tol_pu;
    out->meas_rate = kl_unb_rate(in->mag);
    out->model_rate = kl_unb_rate(model_v);
    if (in->kind != KL_MEAS_LINE)
        return KL_OK;
    st = kl_unb_vuf_from_line_mags(in->mag, &out->meas_vuf, err);
    if (st != KL_OK)
        return st;
    if (kl_unb_vuf_from_line_mags(model_v, &out->model_vuf, NULL) != KL_OK)
        out->model_vuf = s->unb[in->bus].vuf;
    out->vuf_agree = fabs(out->meas_vuf - out->model_vuf) <= in->tol_vuf;
    return KL_OK;
}
