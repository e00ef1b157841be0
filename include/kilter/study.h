/* kilter: the unbalance study of a solved feeder.
 *
 * Turns the phase quantities of a solved load flow into symmetrical
 * components, unbalance indices, compliance classes, neutral sizing and the
 * loads that cause the negative-sequence voltage where a limit is broken.
 * Every array is flat and indexed by the FEEDER's bus / section / load ids
 * (the ids the load-flow result uses).  Ratios are fractions (0.02 = 2 %);
 * voltages in V, currents in A.  Definitions and sources: docs/study.md and
 * docs/unbalance.md.
 *
 * The study reads the flow through two views that hold only pointers, so it
 * can be run on the load-flow result, or on hand-made arrays in a test:
 *   kl_study_phases  the solved phase quantities (kl_flow_result's arrays);
 *   kl_study_paths   the solved network's branch matrices in sweep order
 *                    (kl_network's arrays), for the contributor sensitivities. */
#ifndef KILTER_STUDY_H
#define KILTER_STUDY_H

#include "kilter/error.h"
#include "kilter/feeder.h"
#include "kilter/limits.h"
#include "kilter/sequence.h"
#include "kilter/unbalance.h"

/* Solved phase quantities, indexed by the feeder's ids. */
typedef struct {
    const kl_complex *v;         /* [3*nbuses] phase-to-neutral volts; absent phases ignored */
    const double *v_base_ln;     /* [nbuses] line-to-neutral base, V */
    const int *bus_phases;       /* [nbuses] phase masks; NULL: the feeder's */
    const kl_complex *i;         /* [3*nsections] sending-end line currents, A */
    const kl_complex *i_neutral; /* [nsections] metallic-neutral current, A; NULL: none known */
    const kl_complex *i_earth;   /* [nsections] earth-return current, A; NULL: none known */
    const kl_complex *s_load;    /* [3*nloads] actual power per load entry, W + j var */
    const int *sec_solved;       /* [nsections] 0 for an open switch; NULL: all solved */
    const kl_complex *i_recv;    /* [3*nsections] receiving-end line currents, A; NULL: the
                                    sending end's stand for both (loading) */
    const kl_complex *s_in;      /* [3*nsections] power into each section, W + j var; NULL:
                                    transformer bank loading not known */
} kl_study_phases;

/* The solved network as branch matrices (V_to = A V_from - B I_to,
 * I_from = c V_to + d I_to; network.h), for sensitivities.  Bus ids below
 * nfeeder_buses are the feeder's; internal nodes follow. */
typedef struct {
    int nbuses, nfeeder_buses, nbranches;
    int source;                  /* network bus id of the source */
    const int *parent;           /* [nbuses] branch feeding the bus, -1 at the source */
    const int *br_from, *br_to;  /* [nbranches] */
    const kl_complex *A, *B, *d; /* [9*nbranches] row-major 3x3; NULL: from net */
    const kl_complex *zsource;   /* [9] source Thevenin impedance (ohm), NULL: ideal source */
    const kl_complex *v;         /* [3*nbuses] solved voltages incl. internal nodes; NULL:
                                    the feeder buses' from kl_study_phases */
    int nloads;                  /* network loads: spot loads and lumped parts */
    const int *ld_load;          /* [nloads] feeder load id */
    const int *ld_bus;           /* [nloads] network bus id */
    const double *ld_weight;     /* [nloads] share of the feeder load (1 for spot loads) */
    const int *ld_slot;          /* [3*feeder nloads] phase slot of each entry; NULL: identity */
    const int *v_pos;            /* [nbuses] where bus m's three sit in v (3 v_pos[m]);
                                    NULL: at 3 m */
    const struct kl_network *net; /* when A, B, d are NULL: each branch's matrices taken
                                    from the network when needed (kl_network_branch_abcd),
                                    so the study keeps no copy of them (432 bytes a branch) */
} kl_study_paths;

typedef struct {
    kl_limits limits;            /* compliance limits (limits.h), cited defaults */
    double sizing_margin;        /* neutral sizing: required = (1 + margin) x worst current;
                                    default 0.25 (common practice, see docs/study.md) */
    int max_contributors;        /* kept per bus, largest share first; default 10 */
    int at_bus;                  /* feeder bus id whose contributors are wanted even
                                    within the limits (the complaint check); -1 none */
} kl_study_options;

/* What a contributor is. */
typedef enum {
    KL_CONTRIB_LOAD = 1,         /* a load, any phasing (id: feeder load) */
    KL_CONTRIB_TAP = 2           /* a lateral: every load past a section with fewer
                                    phases than its upstream bus (id: feeder section) */
} kl_contrib_kind;

/* Per bus, per section and per neutral run results.  Entries that do not
 * apply (absent phase, fewer than three phases, no neutral) hold NAN, or -1
 * for classes and ids. */
typedef struct kl_study {
    int nbuses, nsections, nloads;

    /* ---- buses [nbuses] */
    kl_seq_point *vbus;          /* [nbuses] phase-to-neutral voltages, V (Fortescue when 3-phase) */
    kl_complex *vll012;          /* [3*nbuses] sequence of the line-to-line voltages, V; NAN unless 3-phase */
    kl_unb_voltage *unb;         /* [nbuses] indices; defined = 0 unless a live 3-phase bus */
    double *v_pu;                /* [3*nbuses] |V| / base per phase, NAN for absent phases */
    int *service;                /* [3*nbuses] kl_service_class per phase, -1 absent */
    int *vuf_flags;              /* [nbuses] kl_limits_vuf mask, -1 when undefined */
    int *motor;                  /* [nbuses] 1 when a motor load sits on the bus */
    int *derate_zone;            /* [nbuses] kl_derate_zone, -1 without a motor */
    double *derate_factor;       /* [nbuses] NEMA MG 1 factor, NAN without a motor / not recommended */

    /* ---- sections [nsections] */
    kl_seq_point *isec;          /* [nsections] sending-end currents, A; sum = residual 3I0 */
    kl_unb_current *iunb;        /* [nsections] I2/I1, I0/I1 (3-phase sections) */
    kl_complex *i_n1;            /* [nsections] fundamental neutral current, A (NAN: no neutral) */
    kl_complex *i_e;             /* [nsections] earth-return current, A (NAN: not known) */
    kl_complex *i3;              /* [3*nsections] sending-end triplen phase currents, A, as
                                    phasors of the third harmonic (neutral_size.c) */
    double *i_n3;                /* [nsections] triplen neutral current |sum of i3|, A */
    double *i_n_rms;             /* [nsections] sqrt(|I_n1|^2 + I_n3^2), A (NAN: no neutral) */
    double *neutral_ratio;       /* [nsections] i_n_rms / neutral ampacity, NAN when unknown */
    int *neutral_flag;           /* [nsections] kl_limits_share result: 1 over, 0 within, -1 unknown */
    int *run;                    /* [nsections] neutral run id, -1: no neutral */
    double *loading;             /* [nsections] the section's worst loading, a fraction of its
                                    continuous rating (kilter/flow.h, kl_loading.worst); NAN unrated */
    double *loading_emerg;       /* [nsections] the same of its emergency rating; NAN none given */
    int *loading_flag;           /* [nsections] kl_limits_loading: 2 over, 1 over the warning
                                    level, 0 within, -1 unrated */

    /* ---- neutral runs [nruns]: connected sections of one construction */
    int nruns;
    int *run_construction;       /* [nruns] */
    int *run_first;              /* [nruns] section nearest the source */
    int *run_sections;           /* [nruns] sections in the run */
    int *run_worst;              /* [nruns] section carrying the largest i_n_rms */
    double *run_current;         /* [nruns] largest i_n_rms, A */
    double *run_required;        /* [nruns] (1 + sizing_margin) x run_current, A */
    double *run_installed;       /* [nruns] the construction's neutral ampacity, NAN when unknown */
    int *run_conductor;          /* [nruns] smallest library conductor carrying run_required, -1 none */

    /* ---- feeder head */
    kl_complex head_i012[3];     /* sequence currents leaving the source bus, A (NAN unless 3-phase) */
    kl_complex head_3i0;         /* residual current at the head, A */
    double relay_ratio;          /* |3I0| / pickup, NAN when no pickup given */
    int relay_flag;              /* 1 over the share, 0 within, -1 unknown */

    /* ---- summary */
    int worst_vuf, worst_v0, worst_lvur, worst_pvur; /* bus ids, -1 when none */
    int lowest_v, highest_v;     /* bus ids of the lowest / highest phase voltage (pu) */
    int lowest_ph, highest_ph;   /* their phase (0..2) */
    int worst_neutral;           /* section id with the largest neutral_ratio (or i_n_rms), -1 none */
    int worst_i2;                /* three-phase section with the largest I2/I1, -1 none */
    int n_vuf_supply, n_vuf_compat; /* buses over each unbalance level */
    int n_outside_a, n_outside_b;   /* bus-phases outside Range A / Range B */
    int n_neutral_over;          /* sections over the neutral share */
    int worst_loading;           /* section id with the largest loading, -1 none rated */
    int n_loading_over, n_loading_note; /* sections over their rating / over the warning level */
    int n_motor_derate, n_motor_not_rec; /* motor buses needing derating / not recommended */

    /* ---- contributors, for every bus over an unbalance level (CSR layout) */
    int ncbus;
    int *cbus;                   /* [ncbus] bus ids, worst VUF first */
    int *cstart;                 /* [ncbus+1] items of cbus[k]: cstart[k] .. cstart[k+1]-1 */
    int *ckind;                  /* [items] kl_contrib_kind */
    int *cid;                    /* [items] feeder load id or section id */
    double *cshare;              /* [items] share of the negative-sequence voltage */
    double *c_unbal_total;       /* [ncbus] sum of the shares of every 1- and 2-phase load */
    double *c_three_phase;       /* [ncbus] sum of the shares of three-phase loads */
    double *c_remainder;         /* [ncbus] 1 - all load shares: shunts, taps of regulators,
                                    source unbalance, line asymmetry */
    int contrib_done;            /* 1 when paths were given and contributors computed */
} kl_study;

void kl_study_options_default(kl_study_options *opt);

/* ---- study_flow.c: the two views over a solved load flow (flow.h,
 * network.h).  The view copies the network's load list into flat arrays
 * (owned by the view); everything else points into net and res, which must
 * outlive it. */
struct kl_network;
struct kl_flow_result;
typedef struct {
    kl_study_phases ph;
    kl_study_paths paths;
    int *ld_load, *ld_bus;       /* [paths.nloads] owned */
    double *ld_weight;           /* [paths.nloads] owned */
    kl_complex *br_abd;          /* NULL since kilter 0.2 (kept for the layout): the
                                    paths read the branch matrices from the network */
} kl_study_view;

kl_status kl_study_view_init(kl_study_view *w, const struct kl_network *net,
                             const struct kl_flow_result *res, kl_errors *err);
void kl_study_view_free(kl_study_view *w);

/* Runs the whole study.  paths may be NULL (no contributors then).  KL_EARG
 * for missing arrays or non-finite solved values (the element named in
 * err), KL_EINPUT for limits that make no sense, KL_ENOMEM.  *out is NULL
 * on failure. */
kl_status kl_study_run(const kl_feeder *f, const kl_study_phases *ph,
                       const kl_study_paths *paths, const kl_study_options *opt,
                       kl_study **out, kl_errors *err);
void kl_study_free(kl_study *s);

/* ---- neutral_sizing.c: triplen neutral current, neutral runs and sizes.
 * Called by kl_study_run after i_n1 is filled; exposed for tests. */
kl_status kl_neutral_size(const kl_feeder *f, const kl_study_phases *ph,
                          const kl_study_options *opt, kl_study *s, kl_errors *err);

/* ---- contributors.c: shares of the negative-sequence voltage at bus k.
 * Load currents come from ph (solved voltages and powers); their effect on
 * bus k follows the branch matrices in paths.  out: share[nloads] per feeder
 * load (NAN for loads not connected), *total = sum of all shares. */
kl_status kl_contrib_shares(const kl_feeder *f, const kl_study_phases *ph,
                            const kl_study_paths *paths, int bus,
                            double *share, double *total, kl_errors *err);

/* Fills the contributor tables of s for every bus over an unbalance level. */
kl_status kl_contrib_rank(const kl_feeder *f, const kl_study_phases *ph,
                          const kl_study_paths *paths, const kl_study_options *opt,
                          kl_study *s, kl_errors *err);

/* ---- complaint.c: one service point against a measurement. */
typedef enum {
    KL_MEAS_NONE = 0,
    KL_MEAS_PHASE = 1,           /* |Va|, |Vb|, |Vc| */
    KL_MEAS_LINE = 2             /* |Vab|, |Vbc|, |Vca| */
} kl_meas_kind;

typedef struct {
    int bus;
    kl_meas_kind kind;
    double mag[3];               /* measured magnitudes, V */
    double tol_pu;               /* magnitude tolerance, fraction of nominal (0.02) */
    double tol_vuf;              /* VUF tolerance, absolute fraction (0.005 = 0.5 points) */
} kl_complaint_input;

typedef struct {
    int bus;
    double base_v;               /* the measurement's nominal: bus base or the 120 V base, V */
    int on_120;                  /* 1 when the measurement was read on the 120 V base */
    double meas_pu[3], model_pu[3]; /* the compared magnitudes in per unit */
    double meas_rate, model_rate;   /* unbalance rate (LVUR for line, PVUR for phase) */
    double meas_vuf, model_vuf;  /* closed-form VUF (line measurement), NAN otherwise */
    double worst_dev_pu;         /* largest |meas - model| of the magnitudes */
    int mags_agree, vuf_agree;   /* 1 agree, 0 not, -1 not compared */
} kl_complaint_result;

/* Compares the measurement with the solved study at in->bus.  KL_EINPUT with
 * a message naming what to fix when the measurement fits no base, does not
 * close a triangle, or the bus lacks the phases measured. */
kl_status kl_complaint_check(const kl_feeder *f, const kl_study *s,
                             const kl_study_phases *ph,
                             const kl_complaint_input *in,
                             kl_complaint_result *out, kl_errors *err);

#endif
