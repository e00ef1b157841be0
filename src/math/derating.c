/* kilter: NEMA MG 1 derating factor of a polyphase induction motor for voltage
 * unbalance, by linear interpolation between points of the MG 1 curve.
 *
 * Curve points: NEMA MG 1 derating-factor curve (clause 14.36, figure 14-1;
 * clause and figure numbers from memory), as read off the curve by a secondary
 * source to +/- 0.01.  MG 1 states that up to 1 % no derating is needed and
 * that operation above 5 % is not recommended; the 1.00 at 1 % below is that
 * statement, which joins the no-derating zone to the curve without a step.
 *
 * Why linear: the points are readings of a smooth curve good to +/- 0.01;
 * linear interpolation is monotone, passes through every point, needs no
 * workspace, and stays within 0.005 of a smooth monotone (Steffen) interpolant
 * through the same points (checked in tests/test_unbalance.c), so a smoother
 * interpolant would add precision the readings do not have. */
#include <math.h>
#include "kilter/unbalance.h"

static const double curve_pct[] = { 1.0, 1.5, 2.0, 2.5, 3.0, 3.5, 4.0, 4.5, 5.0 };
static const double curve_factor[] = { 1.00, 0.97, 0.95, 0.93, 0.89, 0.85, 0.82, 0.78, 0.76 };
#define NCURVE ((int)(sizeof curve_pct / sizeof curve_pct[0]))

#define KL_MG1_NO_DERATING_PCT 1.0 /* MG 1: no derating up to 1 % */
#define KL_MG1_MAX_PCT 5.0         /* MG 1: above 5 % not recommended */

static double curve_eval(double pct)
{
    int k = 1;
    while (k < NCURVE - 1 && pct > curve_pct[k])
        k++;
    double t = (pct - curve_pct[k - 1]) / (curve_pct[k] - curve_pct[k - 1]);
    return curve_factor[k - 1] + t * (curve_factor[k] - curve_factor[k - 1]);
}

kl_status kl_derating_factor(double unbalance, kl_derate_zone *zone,
                             double *factor, kl_errors *err)
{
    double pct = 100.0 * unbalance;
    *factor = NAN;
    *zone = KL_DERATE_NOT_RECOMMENDED;
    if (!(unbalance >= 0) || !isfinite(unbalance)) {
        if (err)
            kl_errors_add(err, NULL, 0, 0, "motor derating",
                          "unbalance %g is not a finite non-negative fraction "
                          "(expected e.g. 0.02 for 2 %%)", unbalance);
        return KL_EARG;
    }
    if (pct <= KL_MG1_NO_DERATING_PCT) {
        *zone = KL_DERATE_NONE;
        *factor = 1.0;
    } else if (pct <= KL_MG1_MAX_PCT) {
        *zone = KL_DERATE_CURVE;
        *factor = curve_eval(pct);
    }
    return KL_OK;
}
