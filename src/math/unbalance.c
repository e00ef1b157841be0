/* kilter: unbalance indices.  VUF = |V2|/|V1| (IEC 61000-4-30, IEC 61000-2-12);
 * unbalance rate = max |m - avg| / avg (NEMA MG 1 on line voltages, IEEE
 * Std 112 / 936 on phase voltages); VUF from line magnitudes by the closed form. */
#include <math.h>
#include "kilter/sequence.h"
#include "kilter/unbalance.h"
#include "kilter/units.h"

/* Below this share of the largest phase magnitude the positive sequence is
 * taken as zero: a ratio over rounding noise would be a meaningless number. */
#define KL_UNB_X1_FLOOR 1e-9

static double max3(double a, double b, double c)
{
    return fmax(a, fmax(b, c));
}

/* |num| / |X1|, or NAN when X1 is too small to divide by. */
static double ratio_to_positive(kl_complex num, const kl_complex x012[3])
{
    double x1 = cabs(x012[1]);
    double scale = max3(cabs(x012[0]), x1, cabs(x012[2]));
    if (!(x1 > 0) || x1 <= KL_UNB_X1_FLOOR * scale)
        return NAN;
    return cabs(num) / x1;
}

/* IEC 61000-4-30 clause 5.7 (clause number from memory) (voltage unbalance, from the negative- and positive-sequence
 * fundamental components); IEC 61000-2-12 uses the same ratio. */
double kl_unb_negative_factor(const kl_complex x012[3])
{
    return ratio_to_positive(x012[2], x012);
}

/* Zero-sequence factor, IEC 61000-4-30's companion u0 = |V0|/|V1|. */
double kl_unb_zero_factor(const kl_complex x012[3])
{
    return ratio_to_positive(x012[0], x012);
}

/* NEMA MG 1 clause 14.36 (clause number from memory): percent unbalance = 100 x maximum deviation from
 * the average voltage / average voltage; applied to line voltages.  IEEE Std
 * 112 and 936 use the same ratio on phase voltages (from memory). */
double kl_unb_rate(const double mag[3])
{
    if (!(mag[0] >= 0 && mag[1] >= 0 && mag[2] >= 0))
        return NAN;
    double avg = (mag[0] + mag[1] + mag[2]) / 3.0;
    if (!(avg > 0) || !isfinite(avg))
        return NAN;
    double dev = max3(fabs(mag[0] - avg), fabs(mag[1] - avg), fabs(mag[2] - avg));
    return dev / avg;
}

/* Closed form from the line magnitudes (common practice in the power-quality
 * literature): beta = sum V^4 / (sum V^2)^2 lies in [1/3, 1/2] for any closing
 * triangle, 1/3 when balanced (VUF 0), 1/2 when degenerate (VUF 1). */
kl_status kl_unb_vuf_from_line_mags(const double vll_mag[3], double *vuf,
                                    kl_errors *err)
{
    double a = vll_mag[0], b = vll_mag[1], c = vll_mag[2];
    *vuf = NAN;
    if (!(a > 0 && b > 0 && c > 0) || !isfinite(a + b + c)) {
        if (err)
            kl_errors_add(err, NULL, 0, 0, "line voltages",
                          "line-to-line magnitudes %g, %g, %g V: expected three "
                          "positive finite values (Vab, Vbc, Vca)", a, b, c);
        return KL_EINPUT;
    }
    /* Scale to the largest so the fourth powers cannot overflow. */
    double m = max3(a, b, c);
    a /= m; b /= m; c /= m;
    double s2 = a * a + b * b + c * c;
    double beta = (a * a * a * a + b * b * b * b + c * c * c * c) / (s2 * s2);
    double d = 3.0 - 6.0 * beta;
    /* A degenerate triangle gives d = 0 up to rounding. */
    if (d < 0 && d > -1e-12)
        d = 0;
    if (d < 0) {
        if (err)
            kl_errors_add(err, NULL, 0, 0, "line voltages",
                          "line-to-line magnitudes %g, %g, %g V do not close a "
                          "triangle (Vab + Vbc + Vca = 0 needs each at most the "
                          "sum of the other two): check the readings",
                          vll_mag[0], vll_mag[1], vll_mag[2]);
        return KL_EINPUT;
    }
    double r = sqrt(d);
    *vuf = sqrt((1.0 - r) / (1.0 + r));
    return KL_OK;
}

/* Law of cosines on the closed triangle Vab + Vbc + Vca = 0: |Vab + Vbc| = |Vca|,
 * so cos(theta) = (Vca^2 - Vab^2 - Vbc^2) / (2 Vab Vbc), theta the angle of Vbc from
 * Vab, taken lagging (-120 deg when balanced). */
kl_status kl_unb_ratio_from_line_mags(const double vll_mag[3], kl_complex *v2_v1,
                                      kl_errors *err)
{
    double vuf;
    *v2_v1 = NAN;
    kl_status st = kl_unb_vuf_from_line_mags(vll_mag, &vuf, err); /* validates the triangle */
    if (st)
        return st;
    double a = vll_mag[0], b = vll_mag[1], c = vll_mag[2];
    double cth = (c * c - a * a - b * b) / (2.0 * a * b);
    cth = cth > 1 ? 1 : (cth < -1 ? -1 : cth); /* rounding at a degenerate triangle */
    kl_complex vll[3], s012[3];
    vll[0] = a;
    vll[1] = b * (cth - I * sqrt(1.0 - cth * cth));
    vll[2] = -(vll[0] + vll[1]);
    kl_seq_from_phase(vll, s012);
    *v2_v1 = s012[2] / s012[1] * cexp(I * KL_PI / 3.0);
    return KL_OK;
}

static void voltage_undefined(kl_unb_voltage *out)
{
    out->defined = 0;
    out->vuf = out->v0_v1 = out->vuf_ll = out->lvur = out->pvur = NAN;
}

kl_status kl_unb_voltage_eval(const kl_complex vln[3], kl_unb_voltage *out,
                              kl_errors *err)
{
    kl_seq_point ph;
    kl_complex vll[3], v012_ll[3];
    kl_status st = kl_seq_point_from_phase(KL_PH_ABC, vln, &ph, err);
    voltage_undefined(out);
    if (st != KL_OK)
        return st;
    kl_seq_line_from_phase(vln, vll);
    kl_seq_from_phase(vll, v012_ll);
    out->vuf = kl_unb_negative_factor(ph.x012);
    out->v0_v1 = kl_unb_zero_factor(ph.x012);
    out->vuf_ll = kl_unb_negative_factor(v012_ll);
    if (isnan(out->vuf)) {
        voltage_undefined(out);
        return KL_OK;
    }
    double mll[3] = { cabs(vll[0]), cabs(vll[1]), cabs(vll[2]) };
    double mln[3] = { cabs(vln[0]), cabs(vln[1]), cabs(vln[2]) };
    out->lvur = kl_unb_rate(mll);
    out->pvur = kl_unb_rate(mln);
    out->defined = 1;
    return KL_OK;
}

kl_status kl_unb_current_eval(const kl_complex iabc[3], kl_unb_current *out,
                              kl_errors *err)
{
    kl_seq_point ph;
    kl_status st = kl_seq_point_from_phase(KL_PH_ABC, iabc, &ph, err);
    out->defined = 0;
    out->i2_i1 = out->i0_i1 = NAN;
    if (st != KL_OK)
        return st;
    out->i2_i1 = kl_unb_negative_factor(ph.x012);
    out->i0_i1 = kl_unb_zero_factor(ph.x012);
    out->defined = !isnan(out->i2_i1);
    return KL_OK;
}
