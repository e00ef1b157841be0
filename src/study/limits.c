/* kilter: compliance limits with cited defaults, and the classification of a
 * value against them (service voltage on the 120 V base, voltage unbalance,
 * motor unbalance, shares of a rating). */
#include <math.h>
#include "kilter/limits.h"


void kl_limits_default(kl_limits *l)
{
    /* ANSI C84.1, service voltage, 120 V base (from memory):
     * Range A 114-126 V, Range B 110-127 V. */
    l->range_a_low_v = 114.0;
    l->range_a_high_v = 126.0;
    l->range_b_low_v = 110.0;
    l->range_b_high_v = 127.0;
    /* ANSI C84.1 Annex D: design and operate supply systems to limit the
     * voltage unbalance to 3 % (secondary sources). */
    l->vuf_supply = 0.03;
    /* EN 50160 (negative- over positive-sequence within 2 % for 95 % of a
     * week) and the IEC 61000-2-2 compatibility level (from memory): 2 %. */
    l->vuf_compat = 0.02;
    /* NEMA MG 1: at most 1 % at the motor terminals without derating, and
     * operation above 5 % not recommended. */
    l->motor_unbalance = 0.01;
    l->motor_unbalance_max = 0.05;
    /* Ground relay: flag a standing 3I0 above half the pickup (common
     * practice), leaving margin for load growth and switching. */
    l->relay_share = 0.5;
    /* Neutral: up to its full ampacity by default (configurable margin). */
    l->neutral_share = 1.0;
    /* Loading: a note above 80 % of the continuous rating, the planning
     * margin commonly kept for load growth and switching (common practice). */
    l->loading_warning = 0.80;
}

static int positive(double x)
{
    return x > 0 && isfinite(x);
}

static kl_status bad(kl_errors *err, const char *what)
{
    if (err)
        kl_errors_add(err, NULL, 0, 0, "limits", "%s", what);
    return KL_EINPUT;
}

kl_status kl_limits_check(const kl_limits *l, kl_errors *err)
{
    kl_status st = KL_OK;
    if (!(positive(l->range_a_low_v) && l->range_a_low_v < l->range_a_high_v
          && isfinite(l->range_a_high_v)))
        st = bad(err, "Range A: expected 0 < low < high (volts on the 120 V base, e.g. 114 and 126)");
    if (!(positive(l->range_b_low_v) && l->range_b_low_v < l->range_b_high_v
          && isfinite(l->range_b_high_v)))
        st = bad(err, "Range B: expected 0 < low < high (volts on the 120 V base, e.g. 110 and 127)");
    if (!(l->range_b_low_v <= l->range_a_low_v && l->range_a_high_v <= l->range_b_high_v))
        st = bad(err, "Range A must lie inside Range B: widen Range B or narrow Range A");
    if (!positive(l->vuf_supply) || !positive(l->vuf_compat))
        st = bad(err, "voltage unbalance limits: expected positive fractions (e.g. 0.03 and 0.02)");
    if (!(positive(l->motor_unbalance) && l->motor_unbalance < l->motor_unbalance_max
          && isfinite(l->motor_unbalance_max)))
        st = bad(err, "motor unbalance: expected 0 < no-derating limit < not-recommended limit (e.g. 0.01 and 0.05)");
    if (!positive(l->relay_share))
        st = bad(err, "ground relay share: expected a positive fraction of pickup (e.g. 0.5)");
    if (!positive(l->neutral_share))
        st = bad(err, "neutral share: expected a positive fraction of ampacity (e.g. 1.0)");
    if (!(positive(l->loading_warning) && l->loading_warning <= 1.0))
        st = bad(err, "loading warning level: expected a share of the rating above 0 and at most "
                 "100 % (e.g. 80 %); over 100 % is a violation already");
    return st;
}

kl_service_class kl_limits_service(const kl_limits *l, double v_pu)
{
    double v = v_pu * KL_SERVICE_BASE_V;
    if (!isfinite(v))
        return KL_SERVICE_UNDEFINED;
    if (v < l->range_b_low_v)
        return KL_SERVICE_BELOW_B;
    if (v > l->range_b_high_v)
        return KL_SERVICE_ABOVE_B;
    if (v < l->range_a_low_v)
        return KL_SERVICE_B_LOW;
    if (v > l->range_a_high_v)
        return KL_SERVICE_B_HIGH;
    return KL_SERVICE_A;
}

const char *kl_service_class_str(kl_service_class c)
{
    switch (c) {
    case KL_SERVICE_A: return "inside Range A";
    case KL_SERVICE_B_LOW: return "below Range A (inside Range B)";
    case KL_SERVICE_B_HIGH: return "above Range A (inside Range B)";
    case KL_SERVICE_BELOW_B: return "below Range B";
    case KL_SERVICE_ABOVE_B: return "above Range B";
    case KL_SERVICE_UNDEFINED: break;
    }
    return "undefined";
}

int kl_limits_vuf(const kl_limits *l, double vuf)
{
    if (isnan(vuf))
        return -1;
    return (vuf > l->vuf_compat ? KL_VUF_OVER_COMPAT : 0)
         | (vuf > l->vuf_supply ? KL_VUF_OVER_SUPPLY : 0);
}

int kl_limits_motor(const kl_limits *l, double lvur)
{
    if (isnan(lvur))
        return -1;
    if (lvur > l->motor_unbalance_max)
        return 2;
    return lvur > l->motor_unbalance ? 1 : 0;
}

int kl_limits_loading(const kl_limits *l, double loading)
{
    if (!isfinite(loading))
        return -1;
    return loading > 1.0 ? KL_LOADING_OVER : loading > l->loading_warning ? KL_LOADING_NOTE : 0;
}

int kl_limits_share(double value, double rating, double share, double *ratio)
{
    *ratio = NAN;
    if (!positive(rating) || !isfinite(value))
        return -1;
    *ratio = fabs(value) / rating;
    return *ratio > share;
}
