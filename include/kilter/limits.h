/* kilter: compliance limits and the classification of values against them.
 *
 * Every default comes from a standard or from common practice, cited beside
 * it in src/limits.c and in docs/unbalance.md.  Ratios are fractions
 * (0.03 = 3 %); service-voltage limits are volts on the 120 V base. */
#ifndef KILTER_LIMITS_H
#define KILTER_LIMITS_H

#include "kilter/error.h"

#define KL_SERVICE_BASE_V 120.0 /* ANSI C84.1 states the service-voltage ranges on a 120 V base */

typedef struct {
    double range_a_low_v, range_a_high_v; /* service voltage Range A, 120 V base */
    double range_b_low_v, range_b_high_v; /* service voltage Range B, 120 V base */
    double vuf_supply;       /* voltage unbalance, supply-system recommendation */
    double vuf_compat;       /* voltage unbalance, compatibility level */
    double motor_unbalance;  /* line-voltage unbalance rate at motors without derating */
    double motor_unbalance_max; /* above this, motor operation not recommended */
    double relay_share;      /* flag feeder-head 3I0 above this share of ground pickup */
    double neutral_share;    /* flag neutral current above this share of its ampacity */
    double loading_warning;  /* note a section loaded above this share of its continuous
                                rating (0.80); over the rating itself is a violation */
} kl_limits;

/* Fills *l with the cited defaults. */
void kl_limits_default(kl_limits *l);

/* Checks that the limits make sense (ranges ordered, Range A inside Range B,
 * shares positive).  KL_EINPUT with one message per problem in err. */
kl_status kl_limits_check(const kl_limits *l, kl_errors *err);

/* Service voltage against ANSI C84.1 ranges. */
typedef enum {
    KL_SERVICE_A = 0,          /* inside Range A */
    KL_SERVICE_B_LOW = 1,      /* below Range A, inside Range B */
    KL_SERVICE_B_HIGH = 2,     /* above Range A, inside Range B */
    KL_SERVICE_BELOW_B = 3,    /* below Range B */
    KL_SERVICE_ABOVE_B = 4,    /* above Range B */
    KL_SERVICE_UNDEFINED = 5   /* not a finite number */
} kl_service_class;

/* in: v_pu, a phase voltage in per unit of its nominal (scaled to the 120 V
 * base for the comparison). */
kl_service_class kl_limits_service(const kl_limits *l, double v_pu);
/* "inside Range A", "below Range A (Range B)", ... */
const char *kl_service_class_str(kl_service_class c);

/* Voltage unbalance against the two levels: a mask of the levels vuf
 * exceeds (0 when within both); -1 when vuf is NAN. */
enum { KL_VUF_OVER_COMPAT = 1, KL_VUF_OVER_SUPPLY = 2 };
int kl_limits_vuf(const kl_limits *l, double vuf);

/* Motor terminals: 0 no derating needed, 1 derating needed, 2 operation not
 * recommended; -1 when undefined. */
int kl_limits_motor(const kl_limits *l, double lvur);

/* Share of a rating: value / rating, and whether it exceeds `share`
 * (the relay: 3I0 against pickup with relay_share; the neutral: current
 * against ampacity with neutral_share).  Returns -1 and *ratio = NAN when
 * the rating is not known (0 or negative), 1 when over, 0 when not. */
int kl_limits_share(double value, double rating, double share, double *ratio);

/* A section's loading (kilter/flow.h: a fraction of its continuous rating):
 * KL_LOADING_OVER above 1, KL_LOADING_NOTE above loading_warning, 0 within,
 * -1 when not known (NAN). */
enum { KL_LOADING_NOTE = 1, KL_LOADING_OVER = 2 };
int kl_limits_loading(const kl_limits *l, double loading);

#endif
