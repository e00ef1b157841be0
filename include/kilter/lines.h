/* kilter: line impedances from conductor geometry.
 *
 * Series impedance by Carson's equations (J. R. Carson, "Wave propagation in
 * overhead wires with ground return", Bell System Technical Journal 5, 1926)
 * with Kron reduction of the neutrals; concentric-neutral and tape-shielded
 * cables as equivalent conductors; shunt admittance by potential
 * coefficients (overhead) or the closed forms for shielded cables; sequence
 * impedances by the Fortescue transformation.
 *
 * Everything is SI: metres, ohm/m, S/m, Hz, ohm-m.  The kernels take plain
 * arrays of at most KL_LINES_MAX_WIRES conductors and never allocate. */
#ifndef KILTER_LINES_H
#define KILTER_LINES_H

#include "kilter/error.h"
#include "kilter/feeder.h"

/* Which form of Carson's earth-return correction to use. */
typedef enum {
    KL_CARSON_FULL = 0,  /* Carson's full series for P and Q (any frequency, any earth) */
    KL_CARSON_APPROX = 1 /* first terms only: P = pi/8, Q = -0.0386 + ln(2/k)/2 (the
                          * "modified" form behind most published 60 Hz tables) */
} kl_carson_form;

/* 3 phases + 3 cable neutrals or tape shields + 2 separate neutrals. */
#define KL_LINES_MAX_WIRES 8

/* One conductor of a line's primitive system.  A cable's concentric neutral
 * or tape shield is an equivalent "ring" conductor centred on its phase
 * conductor (ring_m > 0). */
typedef struct {
    double x_m;          /* horizontal position of the centre */
    double y_m;          /* height above ground; negative = depth of a buried cable */
    double r_ohm_per_m;  /* resistance (a ring: of the equivalent conductor) */
    double gmr_m;        /* geometric mean radius (a ring: of the equivalent conductor) */
    double radius_m;     /* outside radius, for the potential coefficients (solid only) */
    double ring_m;       /* 0: solid conductor; > 0: ring of this radius around (x, y) */
    int strands;         /* ring: k neutral strands; 0 for a continuous tape */
} kl_wire;

/* ---- carson.c ---------------------------------------------------------- */

/* Carson's earth-return terms P and Q for the image distance parameter
 * a = S sqrt(omega mu0 / rho) and the angle phi (rad) between the vertical
 * and the line joining a conductor to the image of the other. */
void kl_carson_pq(double a, double phi, kl_carson_form form, double *P, double *Q);

/* Primitive impedance matrix zp[n*n] (row-major, ohm/m) of n conductors with
 * earth return.  A buried conductor's depth stands for its height in the
 * image distances.  KL_EARG (message in err) on a conductor at ground level,
 * two conductors in one place, a non-positive GMR, frequency or resistivity. */
kl_status kl_carson_primitive(const kl_wire *w, int n, double freq_hz,
                              double rho_ohm_m, kl_carson_form form,
                              kl_complex *zp, kl_errors *err);

/* ---- cable.c ----------------------------------------------------------- */

/* Geometric mean distance between two conductors of the primitive system:
 * centre distance between solids and between rings; from a ring of k strands
 * of radius R to a solid at centre distance d, (d^k - R^k)^(1/k), or R for its
 * own phase conductor (d = 0); from a tape to a solid, d (or R when d = 0).
 * Returns 0 when the geometry is impossible (overlap). */
double kl_wire_gmd(const kl_wire *a, const kl_wire *b);

/* Concentric neutral of k strands as one equivalent ring conductor:
 * R = (d_od - d_s)/2, GMR_cn = (GMR_s k R^(k-1))^(1/k), r_cn = r_s / k. */
kl_status kl_cable_concentric_ring(double r_strand_ohm_per_m, double gmr_strand_m,
                                   double d_strand_m, int k, double d_over_neutral_m,
                                   kl_wire *ring);
/* Tape shield as one equivalent ring conductor: r = rho / (pi d_s T)
 * (d_s outside diameter of the tape), GMR = radius to the middle of the tape. */
kl_status kl_cable_tape_ring(double rho_ohm_m, double d_tape_m, double t_m,
                             kl_wire *ring);

/* ---- kron.c ------------------------------------------------------------ */

/* Kron reduction of the n x n primitive zp whose first np conductors are the
 * phases and whose last n - np are grounded at both ends (V = 0):
 *   zr = Z_pp - Z_pn Z_nn^-1 Z_np   (np x np)
 *   tn = -Z_nn^-1 Z_np              ((n - np) x np; I_n = tn I_p)
 * KL_EARG when Z_nn is singular. */
kl_status kl_kron_reduce(const kl_complex *zp, int n, int np, kl_complex *zr,
                         kl_complex *tn);
/* The same when the last n - np conductors form one neutral bonded to the
 * phases' common point at both ends but not to earth along the line: the
 * neutral carries all the return current (sum I_n = -sum I_p), the drops of
 * its conductors are equal, and zr relates phase-to-neutral drops to phase
 * currents. */
kl_status kl_kron_reduce_isolated(const kl_complex *zp, int n, int np,
                                  kl_complex *zr, kl_complex *tn);

/* ---- shunt.c ----------------------------------------------------------- */

#define KL_EPSILON0 8.8541878128e-12 /* F/m, CODATA 2018 */

/* Overhead shunt susceptance b[np*np] (S/m) of n bare conductors, phases
 * first: potential coefficients with images, P_ij = ln(S_ij / D_ij) /
 * (2 pi eps0), neutrals (the last n - np) Kron-reduced when grounded (or
 * dropped when isolated: zero charge), inverted, times omega. */
kl_status kl_shunt_overhead(const kl_wire *w, int n, int np, int neutral_grounded,
                            double freq_hz, double *b, kl_errors *err);
/* Concentric-neutral cable, per phase (S/m):
 * 2 pi eps0 eps_r omega / (ln(R/RD_c) - ln(k RD_s / R) / k). */
double kl_shunt_concentric(double freq_hz, double eps_r, double R_m,
                           double rd_c_m, double rd_s_m, int k);
/* Tape-shielded cable, per phase (S/m): 2 pi eps0 eps_r omega / ln(R_b/RD_c). */
double kl_shunt_tape(double freq_hz, double eps_r, double rb_m, double rd_c_m);

/* ---- seqz.c ------------------------------------------------------------ */

/* Z012 = A^-1 Zabc A, A = [1 1 1; 1 a^2 a; 1 a a^2], a = exp(j 2 pi / 3). */
void kl_seqz_from_phase(const kl_complex zabc[3][3], kl_complex z012[3][3]);
/* The positive- and zero-sequence impedances an engineer quotes for a line:
 * the diagonal of Z012 (equal to those of the transposed line). */
void kl_seqz_quoted(const kl_complex zabc[3][3], kl_complex *z1, kl_complex *z0);

/* ---- lines_derive.c ---------------------------------------------------- */

/* Fills zabc, yabc, tn, ntn and derived = 1 of every construction of f at the
 * source frequency: overhead by Carson + Kron + potential coefficients, cables
 * by their equivalent conductors and closed-form shunts, matrix constructions
 * by copying z_given / b_given.  Rows of tn: first the concentric neutral or
 * tape shield of each present phase (a, b, c order), then the separate
 * neutrals in the construction's order.  KL_EINPUT with located messages in
 * err when a construction cannot be derived (the others are still done). */
kl_status kl_lines_derive(kl_feeder *f, kl_carson_form form, kl_errors *err);

#endif
