/* kilter: unbalance indices and the motor derating factor.
 *
 * Every index is a fraction (0.02 means 2 %); percent is for printing only.
 * The definitions, with their sources, are in docs/unbalance.md and beside
 * each function in src/unbalance.c and src/derating.c. */
#ifndef KILTER_UNBALANCE_H
#define KILTER_UNBALANCE_H

#include "kilter/error.h"
#include "kilter/types.h"

/* |X2| / |X1| from sequence components x012[3] (zero, positive, negative):
 * the voltage unbalance factor of IEC 61000-4-30 / IEC 61000-2-12 when X is
 * a voltage, the current unbalance I2/I1 when X is a current.  NAN when X1
 * is zero. */
double kl_unb_negative_factor(const kl_complex x012[3]);

/* |X0| / |X1|: the zero-sequence factor.  NAN when X1 is zero. */
double kl_unb_zero_factor(const kl_complex x012[3]);

/* max_k |m_k - avg| / avg over three magnitudes mag[3]: the NEMA MG 1 line-
 * voltage unbalance rate when given line-to-line magnitudes, the phase-voltage
 * unbalance rate (IEEE Std 112 / 936 usage) when given phase-to-neutral ones.
 * NAN when the average is not positive or a magnitude is negative. */
double kl_unb_rate(const double mag[3]);

/* VUF = |V2|/|V1| from the three line-to-line magnitudes alone (closed form):
 *   beta = (Vab^4 + Vbc^4 + Vca^4) / (Vab^2 + Vbc^2 + Vca^2)^2
 *   VUF  = sqrt((1 - sqrt(3 - 6 beta)) / (1 + sqrt(3 - 6 beta)))
 * For measured line voltages, where no angles are known.  Returns KL_EINPUT
 * (message in err, may be NULL) when the magnitudes are not positive or do
 * not close a triangle (line voltages sum to zero, so each side must be at
 * most the sum of the other two). */
kl_status kl_unb_vuf_from_line_mags(const double vll_mag[3], double *vuf,
                                    kl_errors *err);

/* The complex ratio V2/V1 of the phase-to-neutral voltages behind three measured
 * line-to-line magnitudes (Vab, Vbc, Vca): line voltages sum to zero, so the three
 * magnitudes fix their triangle up to a rotation, which V2/V1 does not see; with
 * the a-b-c sequence, Vbc lags Vab.  V2/V1 of the line voltages times 1 /60 deg
 * gives that of the phase voltages (Vab1 = sqrt3 /30 Va1, Vab2 = sqrt3 /-30 Va2);
 * its magnitude is the closed form above.  Zero sequence cannot be seen from line
 * voltages.  KL_EINPUT (message in err, may be NULL) as kl_unb_vuf_from_line_mags. */
kl_status kl_unb_ratio_from_line_mags(const double vll_mag[3], kl_complex *v2_v1,
                                      kl_errors *err);

/* Voltage indices of one three-phase bus. */
typedef struct {
    int defined;   /* 1 when V1 is not zero; 0: bus dead, every index NAN */
    double vuf;    /* |V2|/|V1| from the phase-to-neutral voltages */
    double v0_v1;  /* |V0|/|V1| */
    double vuf_ll; /* |V2|/|V1| from the line-to-line voltages (IEC 61000-4-30
                      measures these); equals vuf, zero sequence cancels */
    double lvur;   /* NEMA MG 1 line-voltage unbalance rate */
    double pvur;   /* phase-voltage unbalance rate (IEEE Std 112 / 936 usage) */
} kl_unb_voltage;

/* in: vln[3] phase-to-neutral voltage phasors (V) of a three-phase bus. */
kl_status kl_unb_voltage_eval(const kl_complex vln[3], kl_unb_voltage *out,
                              kl_errors *err);

/* Current indices of one three-phase section. */
typedef struct {
    int defined;  /* 1 when I1 is not zero; 0: section unloaded, indices NAN */
    double i2_i1; /* |I2|/|I1| */
    double i0_i1; /* |I0|/|I1| */
} kl_unb_current;

/* in: iabc[3] phase current phasors (A) of a three-phase section. */
kl_status kl_unb_current_eval(const kl_complex iabc[3], kl_unb_current *out,
                              kl_errors *err);

/* ---- derating.c: NEMA MG 1 derating of a polyphase induction motor for
 * voltage unbalance (the MG 1 derating-factor curve). */
typedef enum {
    KL_DERATE_NONE = 0,           /* unbalance <= 1 %: no derating */
    KL_DERATE_CURVE = 1,          /* 1 % < unbalance <= 5 %: factor off the curve */
    KL_DERATE_NOT_RECOMMENDED = 2 /* > 5 %: operation not recommended; no factor */
} kl_derate_zone;

/* in: unbalance, the line-voltage unbalance rate at the motor terminals
 * (fraction).  out: *zone, and *factor (1 for NONE, the curve value for
 * CURVE, NAN for NOT_RECOMMENDED).  KL_EARG for a negative or non-finite
 * unbalance. */
kl_status kl_derating_factor(double unbalance, kl_derate_zone *zone,
                             double *factor, kl_errors *err);

#endif
