/* The IEEE PES 4-node test feeder: published results and line data, kept
 * once for every test that checks against them.
 *
 * Source: IEEE PES Distribution System Analysis Subcommittee, "IEEE 4 Node
 * Test Feeder", revision of 2006-09-19, section "Solutions" (step-down cases
 * used here), as transcribed and cross-checked against a second public
 * quotation in /work/shared/reference/ieee-4-node.md; every value below was
 * checked against that file.  The line matrices are not printed in the
 * document: they are quoted from the second source (IEEE4.mo there), and
 * the transcription's own Carson/Kron solution of the published geometry
 * reproduces them to 0.0001 ohm/mile. */
#ifndef KILTER_TEST_REF_IEEE4_H
#define KILTER_TEST_REF_IEEE4_H

#include <complex.h>

/* Node voltages of one published column: volts and degrees at nodes 2, 3 and
 * 4, phases a, b, c; line-to-ground on wye sides (the only columns kept). */
typedef struct {
    const char *node;
    double volts[3], deg[3];
} ref_ieee4_row;

typedef struct {
    const char *file;          /* the bundled feeder file of this case, feeders/reference/ */
    int nrows;
    ref_ieee4_row rows[3];
} ref_ieee4_case;

/* Step-down (12.47/4.16 kV): grounded wye-grounded wye with the balanced and
 * the unbalanced load, and delta-grounded wye with the unbalanced load
 * (node 4, the row the tests check). */
extern const ref_ieee4_case ref_ieee4_gry_gry_balanced, ref_ieee4_gry_gry_unbalanced,
    ref_ieee4_delta_gry_unbalanced;

/* Grounded-wye/delta step-down columns ("Gr.Y-Delta"): node 2 line to ground,
 * node 4 line to line (Vab, Vbc, Vca), and the line 1-2 currents; with the
 * ungrounded-wye column's line 1-2 currents ("Y-Delta") of the same case. */
typedef struct {
    const char *file;
    ref_ieee4_row node2, node4_ll;
    double i12_amps[3], i12_deg[3];
    double i12_ungrounded_amps[3], i12_ungrounded_deg[3];
} ref_ieee4_gry_delta;

extern const ref_ieee4_gry_delta ref_ieee4_gry_delta_balanced, ref_ieee4_gry_delta_unbalanced;

/* Phase impedance of the 4-wire line (neutral Kron-reduced), ohm/mile, upper
 * triangle aa ab ac bb bc cc: 336,400 26/7 ACSR phases, 4/0 6/1 ACSR neutral,
 * phases at (0, 28) (2.5, 28) (7, 28) ft, neutral at (4, 24) ft, 60 Hz,
 * 100 ohm-m. */
extern const double complex ref_ieee4_z_4wire[6];

#endif
