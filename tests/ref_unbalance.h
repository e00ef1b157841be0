/* Worked examples and curve points of the voltage-unbalance standards, kept
 * once for every test that checks against them.  Each value was checked
 * against /work/shared/reference/unbalance.md, which names where it comes
 * from; the sources are named again beside each table below. */
#ifndef KILTER_TEST_REF_UNBALANCE_H
#define KILTER_TEST_REF_UNBALANCE_H

/* Three voltages (V) and the unbalance they are printed with (%), to the
 * printed precision `tol_pct` (half a unit of the last printed digit, or
 * wider where the source truncates). */
typedef struct {
    double v[3];
    double pct, tol_pct;
} ref_unbalance_example;

/* IEEE Std 1159-1995, clause 4.4.4: 230, 232, 225 V -> 1.7 % (largest
 * deviation from the average over the average). */
extern const ref_unbalance_example ref_unbalance_ieee1159;

/* NEMA MG 1 line-voltage unbalance, worked figures as printed by secondary
 * sources citing MG 1: 462, 463, 455 V -> 1.1 %; 480, 476, 472 V -> 0.84 %;
 * 203, 210, 212 V -> 2.5 % (the exact ratio is 2.56 %: the source truncates,
 * so that one is compared within 0.1). */
#define REF_UNBALANCE_NMG1 3
extern const ref_unbalance_example ref_unbalance_mg1[REF_UNBALANCE_NMG1];

/* NEMA MG 1 motor derating for unbalance, read off the curve by a secondary
 * source (+/- 0.01): unbalance % and derating factor.  MG 1 itself: no
 * derating up to 1 %; above 5 % operation is not recommended. */
#define REF_UNBALANCE_NDERATE 10
extern const double ref_unbalance_derate_pct[REF_UNBALANCE_NDERATE];
extern const double ref_unbalance_derate_factor[REF_UNBALANCE_NDERATE];
#define REF_UNBALANCE_DERATE_TOL 0.01

#endif
