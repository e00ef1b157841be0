/* kilter: the three-phase unbalanced load flow and its results.
 *
 * kl_flow_solve runs the backward/forward sweep (or the nodal solver) on a
 * network built by kl_network_build, steps automatic regulators in an outer
 * loop until no tap moves, and fills a result record indexed by the FEEDER's
 * bus / section / load / capacitor / regulator ids.  Nothing is allocated
 * while solving; the result record is allocated once and can be reused. */
#ifndef KILTER_FLOW_H
#define KILTER_FLOW_H

#include "kilter/error.h"
#include "kilter/feeder.h"
#include "kilter/network.h"

typedef enum { KL_SOLVER_SWEEP = 0, KL_SOLVER_NODAL = 1 } kl_solver;

typedef struct {
    double tol_pu;         /* largest voltage change between iterations, per unit; default 1e-6 */
    int max_iter;          /* sweep iterations per solve; default 100 */
    int max_reg_rounds;    /* regulator outer-loop rounds; default 20 */
    double load_scale;     /* multiplies every load's power; default 1 */
    kl_solver solver;      /* default KL_SOLVER_SWEEP */
    int fixed_taps;        /* 1: hold every regulator at its present tap (no control) */
} kl_flow_options;

typedef struct kl_flow_result {
    int nbuses, nsections, nloads, ncapacitors, nregulators; /* the feeder's counts */

    /* per bus */
    kl_complex *v;         /* [3*nbuses] phase-to-neutral volts; 0 for absent phases */
    double *v_base_ln;     /* [nbuses] line-to-neutral base, V */
    int *phases;           /* [nbuses] mask of phases present */

    /* per section (sending end = source side) */
    kl_complex *i;         /* [3*nsections] sending-end line currents, A */
    kl_complex *i_recv;    /* [3*nsections] receiving-end line currents, A */
    kl_complex *i_neutral; /* [nsections] current in the metallic neutral(s): the SUM of
                            * every Kron-eliminated conductor's row of tn applied to the
                            * sending-end currents; 0 for devices and for constructions
                            * without a neutral */
    kl_complex *i_earth;   /* [nsections] earth-return remainder -(Ia+Ib+Ic+In) */
    kl_complex *s_in;      /* [3*nsections] power entering at the sending end, W + j var */
    kl_complex *s_loss;    /* [3*nsections] sending-end minus receiving-end power per phase */
    int *sec_solved;       /* [nsections] 0 for an open switch (all zero then) */

    /* per element */
    kl_complex *s_load;    /* [3*nloads] actual power per entry (wye a,b,c; delta ab,bc,ca) */
    double *q_cap;         /* [3*ncapacitors] actual var per entry */
    int *tap;              /* [3*nregulators] final taps */
    double *reg_relay_v;   /* [3*nregulators] relay voltage of each unit an automatic control
                            * acts on, V on the 120 V base; NAN for the others */
    int *reg_limit;        /* [3*nregulators] +1: the unit is at its raise limit and the relay
                            * voltage is still below the band (the set point is not reached);
                            * -1: at its lower limit and still above the band; 0 otherwise */

    /* the source: the phase-to-neutral voltages behind its equivalent as solved,
     * V (the tap changer's output; the source bus's own voltages without an
     * equivalent).  Their negative sequence is the supply's background V2
     * (source.background times their positive sequence), the unbalance the
     * source bus shows with the feeder unloaded; the rest of the bus's V2 is
     * the feeder's own current through the equivalent. */
    kl_complex source_emf[3];

    /* totals per phase at the source bus */
    kl_complex s_head[3];  /* power delivered into the feeder, W + j var */
    kl_complex s_losses[3];/* sum of s_loss over all sections */
    kl_complex s_loads[3]; /* wye loads per phase; delta loads split half to each phase
                            * of the entry; capacitors included (negative var) */

    /* iteration record */
    int iterations;        /* sweep iterations of the last solve */
    int total_iterations;  /* over all regulator rounds */
    int reg_rounds;        /* regulator rounds used */
    int converged;
    double mismatch_pu;    /* largest voltage change of the last iteration */
    int mismatch_bus;      /* feeder bus id where it sits (-1 internal node / none) */
} kl_flow_result;

void kl_flow_options_default(kl_flow_options *opt);

/* Allocates a result record sized for the feeder behind `net`. */
kl_status kl_flow_result_alloc(const kl_network *net, kl_flow_result **out, kl_errors *err);
void kl_flow_result_free(kl_flow_result *res);

/* Solves.  Regulators start from the network's present taps (the feeder's
 * starting taps after kl_network_build) and the final taps stay in net->tap,
 * so a re-solve (another load level, a rephased load) starts from them.
 * Voltages start from the previous solution when there is one.  KL_ENOCONV (with iterations, mismatch, bus and a likely reason in
 * `err`) when the sweep or the regulator loop does not settle: `res` is then
 * not a result (converged = 0).  KL_EARG for a solver that is not built. */
kl_status kl_flow_solve(kl_network *net, const kl_flow_options *opt,
                        kl_flow_result *res, kl_errors *err);

/* One sweep solve at the present taps (no regulator control): fills
 * net->vs and net->js (network.h: by sweep position; kl_network_bus_v,
 * kl_network_i_to and kl_sweep_i_from read them per bus and branch).
 * Returns KL_ENOCONV with the record filled. */
kl_status kl_sweep_solve(kl_network *net, const kl_flow_options *opt,
                         kl_flow_result *res, kl_errors *err);

/* The nodal (KLU) solver, same contract as kl_sweep_solve (src/nodal.c). */
kl_status kl_nodal_solve(kl_network *net, const kl_flow_options *opt,
                         kl_flow_result *res, kl_errors *err);

/* ---- loading.c: how loaded each section is against its ratings.
 * Fractions (1.0 = 100 %).  Per phase: a line's larger end current over
 * its construction's ampacity; a regulator's over each unit's rated current;
 * a transformer's line current on each side over that winding's rated line
 * current (kVA at rated voltage over the rating), the larger side.  The bank:
 * the sum of the phases' kVA entering it (|S_a| + |S_b| + |S_c|, actual
 * voltage) over its kVA rating.  Switches and unrated elements: NAN.  The
 * emergency figures use the emergency ratings the file gives, NAN without. */
typedef struct {
    double phase[3];        /* per phase a, b, c; NAN for absent phases and no rating */
    double bank;            /* transformers: bank kVA over the rating; NAN otherwise */
    double worst;           /* the largest of phase[] and bank; NAN when none is known */
    double phase_emerg[3], bank_emerg, worst_emerg; /* against the emergency ratings */
    double rating;          /* the phases' rating: A (lines: ampacity; regulators: rated
                               current; transformers: the source side's rated line current);
                               NAN when unrated */
} kl_loading;

/* The currents a loading is computed from, by feeder section id: the flow
 * result's arrays, or a study's view of them (i_recv and s_in may be NULL:
 * the sending end's current then stands for both ends, and a transformer's
 * bank loading is not known). */
typedef struct {
    const kl_complex *i;       /* [3*nsections] sending-end line currents, A */
    const kl_complex *i_recv;  /* [3*nsections] receiving-end line currents, A */
    const kl_complex *s_in;    /* [3*nsections] power entering at the sending end, W + j var */
    const int *sec_solved;     /* [nsections] 0 for an open switch; NULL: all solved */
} kl_loading_currents;

/* The loading of section s.  The default warning level for the compliance
 * summary and the advisor's notes: 80 % of the continuous rating (common
 * practice: the planning margin kept for load growth and switching). */
#define KL_LOADING_WARNING 0.80
void kl_loading_section(const kl_feeder *f, const kl_loading_currents *c, int s, kl_loading *out);
/* The same from a solved load flow. */
void kl_loading_of(const kl_feeder *f, const kl_flow_result *r, int s, kl_loading *out);
/* The same from the network's own solved state (after kl_sweep_solve or
 * kl_flow_solve, also when no result record was filled), with the phases the
 * network gives the section now: what the rebalancing advisor checks a
 * candidate with. */
void kl_loading_network(const kl_network *n, int s, kl_loading *out);

#endif
