/* The IEEE PES 13-node test feeder: published data and power-flow results,
 * kept once for every test that checks against them.
 *
 * Source of every value: IEEE PES Distribution System Analysis Subcommittee,
 * "IEEE 13 Node Test Feeder" data sheet and power-flow results (results
 * dated 2004-06-24); companion paper W. H. Kersting, "Radial distribution
 * test feeders", IEEE PES Winter Meeting 2001, pp. 908-912.  Every table
 * here was checked digit for digit against the transcription in
 * /work/shared/reference/ieee-13-node.md.  The conductor data and spacings
 * the feeder file and tests/lines_fixtures.h use are from memory of the same
 * data set and are not kept here. */
#ifndef KILTER_TEST_REF_IEEE13_H
#define KILTER_TEST_REF_IEEE13_H

#include <complex.h>

/* Order of the upper-triangle entries below: aa ab ac bb bc cc. */
extern const int ref_ieee13_tri[6][2];

/* "Line Configurations": phase impedance (ohm/mile) and shunt susceptance
 * (microsiemens/mile), upper triangle; 0 where a phase is absent. */
typedef struct {
    const char *name;
    int phases;            /* mask a = 1, b = 2, c = 4 */
    double complex z[6];   /* ohm/mile */
    double b[6];           /* uS/mile */
} ref_ieee13_config;
#define REF_IEEE13_NCONFIGS 7
extern const ref_ieee13_config ref_ieee13_configs[REF_IEEE13_NCONFIGS]; /* 601 ... 607 */
const ref_ieee13_config *ref_ieee13_config_find(const char *name);
/* Entry (i, j) of a configuration's Z, ohm/mile, both triangles. */
double complex ref_ieee13_z(const ref_ieee13_config *c, int i, int j);
double ref_ieee13_b(const ref_ieee13_config *c, int i, int j);

/* "Line Segment Data": the lines (lengths in ft and configurations). */
typedef struct {
    const char *from, *to;
    double ft;
    const char *config;
} ref_ieee13_segment;
#define REF_IEEE13_NSEGMENTS 10
extern const ref_ieee13_segment ref_ieee13_segments[REF_IEEE13_NSEGMENTS];

/* "Spot Load Data": kW and kvar per phase 1, 2, 3 (delta: 1 = ab, 2 = bc, 3 = ca). */
typedef enum { REF_IEEE13_PQ, REF_IEEE13_Z, REF_IEEE13_I } ref_ieee13_model;
typedef struct {
    const char *bus;
    int delta;
    ref_ieee13_model model;
    double kw[3], kvar[3];
} ref_ieee13_load;
#define REF_IEEE13_NLOADS 8
extern const ref_ieee13_load ref_ieee13_loads[REF_IEEE13_NLOADS];
/* "Distributed Load Data": on 632-671, wye, constant PQ. */
extern const ref_ieee13_load ref_ieee13_distributed;

/* "Shunt Capacitors": kvar per phase. */
extern const double ref_ieee13_cap675_kvar[3], ref_ieee13_cap611_kvar[3];

/* "Transformer Data": XFM-1. */
extern const struct ref_ieee13_xfm {
    double kva, kv_high, kv_low, r_pct, x_pct;
} ref_ieee13_xfm1;

/* "Regulator Data": three single-phase units in wye, A-B-C monitored. */
extern const struct ref_ieee13_reg {
    double bandwidth_v, pt_ratio, ct_primary_a, voltage_level_v, ldc_r_v, ldc_x_v;
} ref_ieee13_reg;

/* ---- Power-flow results ---- */

/* Final regulator taps A, B, C. */
extern const int ref_ieee13_taps[3];

/* Node voltages: pu of the line-to-neutral base (634 on 0.48 kV) and
 * degrees; mag 0 where the phase is absent.  Printed to 4 decimals and
 * 0.01 degree. */
typedef struct {
    const char *bus;
    double mag[3], ang[3];
} ref_ieee13_voltage;
#define REF_IEEE13_NVOLTAGES 14
extern const ref_ieee13_voltage ref_ieee13_voltages[REF_IEEE13_NVOLTAGES];
const ref_ieee13_voltage *ref_ieee13_voltage_find(const char *bus);
/* 1 when every phase of the row is present. */
int ref_ieee13_voltage_three_phase(const ref_ieee13_voltage *v);

/* Line currents, A and degrees (amps 0 where absent); named by the section
 * names of feeders/reference/ieee-13-node.yaml ("reg" is the regulator, its
 * source side; "xfm-1" is XFM-1, its low side: recv = 1). */
typedef struct {
    const char *section;
    int recv;
    double amps[3], ang[3];
} ref_ieee13_current;
#define REF_IEEE13_NCURRENTS 12
extern const ref_ieee13_current ref_ieee13_currents[REF_IEEE13_NCURRENTS];

/* Totals: input kW and kvar, in all and per phase; losses kW per phase. */
extern const double ref_ieee13_input_kw, ref_ieee13_input_kvar;
extern const double ref_ieee13_input_kw_phase[3], ref_ieee13_input_kvar_phase[3];
extern const double ref_ieee13_loss_kw_phase[3];

/* Loads at the solved voltage: kW + j kvar of one entry (0..2) of the load
 * at the named node (the loads of feeders/reference/ieee-13-node.yaml are
 * named for their node); capacitor output kvar at 675 (per phase) and 611
 * (phase c). */
typedef struct {
    const char *load;
    int entry;
    double kw, kvar;
} ref_ieee13_solved_load;
#define REF_IEEE13_NSOLVED_LOADS 4
extern const ref_ieee13_solved_load ref_ieee13_solved_loads[REF_IEEE13_NSOLVED_LOADS];
extern const double ref_ieee13_q675_kvar[3], ref_ieee13_q611_kvar;

#endif
