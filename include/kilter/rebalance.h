/* kilter: the phase-rebalancing advisor.
 *
 * What can move (src/rebalance/rephase.c): a single-phase lateral off a two- or
 * three-phase section (everything downstream of its tap changes phase
 * together), a two-phase lateral off a three-phase section (rotated to another
 * pair), and a single-phase spot load on a multi-phase bus.  Three-phase loads
 * never move.  Every move is a cyclic relabelling of phases, a -> b -> c -> a,
 * by r = 0, 1 or 2 steps: it keeps the phase sequence, so a line-to-line
 * element stays line-to-line and moves of nested items commute.
 *
 * How a move is judged (src/rebalance/search_engine.c): by a full load flow
 * of the changed network, at each load level; the network is analysed once
 * and a move only permutes the rows and columns of the branch matrices of the
 * item's subtree and the phase slots of its loads (no allocation per
 * candidate).
 *
 * The plan (src/rebalance/rebalance_plan.c, ordered by plan_order.c): an
 * ordered list of moves with the objectives after moves 1..i, and
 * before/after summaries. */
#ifndef KILTER_REBALANCE_H
#define KILTER_REBALANCE_H

#include "kilter/error.h"
#include "kilter/feeder.h"
#include "kilter/flow.h"
#include "kilter/network.h"

/* ------------------------------------------------------------------ items */

typedef enum { KL_ITEM_LATERAL = 1, KL_ITEM_LOAD = 2 } kl_item_kind;

typedef struct {
    kl_item_kind kind;
    const char *name;      /* tap section name (lateral) or load name */
    int section;           /* lateral: feeder section id of the tap; -1 for a load */
    int load;              /* load item: feeder load id; -1 for a lateral */
    int phases;            /* phases at the tap in the feeder as read (load: bus phases
                            * it uses; delta entry k as phases k and k+1) */
    int allowed;           /* bit r set: rotation by r keeps the item on phases present at
                            * its tap; bit 0 always set */
    int outer;             /* innermost enclosing item (its rotation moves this one too), -1 */
    int pinned;            /* 1: a load in it is pinned (or the options pin it) */
    int forbidden;         /* phases it may not be moved onto */
    double cost;           /* cost of moving it (largest move_cost of its loads) */
    double kva;            /* connected load it carries, kVA (for reports) */
    int first_br, nbr;     /* its branches: kl_rephaser.br[first_br .. +nbr) */
    int first_bus, nbus;   /* buses it shifts: kl_rephaser.bus[first_bus .. +nbus) */
    int first_ld, nld;     /* feeder loads it rotates: kl_rephaser.ld[first_ld .. +nld) */
} kl_rephase_item;

/* Items found in a network, and the present rotation of each. */
typedef struct kl_rephaser {
    kl_network *net;       /* not owned */
    int nitems;
    kl_rephase_item *items;   /* [nitems] laterals in sweep order, then loads */
    int *rot;                 /* [nitems] present rotation 0..2 relative to the file */
    int *br;                  /* branch ids of every item, concatenated */
    unsigned char *br_side;   /* [same] bit 0: rotate the source side, bit 1: load side */
    int *bus;                 /* bus ids of every item, concatenated */
    unsigned char *bus_rot;   /* [same] 1: relabel this bus's phases; 0: below a
                               * center-tap secondary (legs are not phases): angle only */
    int *ld;                  /* feeder load ids of every item, concatenated */
    int nskipped;             /* taps that look movable but are not (reasons in `skipped`) */
    char (*skipped)[160];     /* [nskipped] "section X: holds capacitor Y" */
} kl_rephaser;

/* Finds the movable items (analysis; allocates).  Items carry pins, forbidden
 * phases and costs from the feeder's loads.  The network must be fresh from
 * kl_network_build (no rotation applied). */
kl_status kl_rephaser_alloc(kl_network *net, kl_rephaser **out, kl_errors *err);
void kl_rephaser_free(kl_rephaser *rp);
/* Item by name (section name for laterals, load name for loads); -1 when none. */
int kl_rephaser_find(const kl_rephaser *rp, const char *name);

/* Sets item i's rotation to r (0..2) in the network: branch matrices of its
 * subtree, bus phase masks, load phase slots, and the present voltages (so
 * the next solve starts near the answer).  No allocation. */
void kl_rephase_set(kl_rephaser *rp, int i, int r);
/* Relabels a bus vector v[3*nbuses], in the network's layout (by sweep
 * position, like net->vs), the way kl_rephase_set(rp, i, r) would (for
 * voltage snapshots kept outside the network). */
void kl_rephase_shift_vector(const kl_rephaser *rp, int i, int dr, kl_complex *v);
/* Rotation of item i counting every enclosing item (the physical one). */
int kl_rephase_total(const kl_rephaser *rp, const int *rot, int i);
/* Phases of item i under rotations rot[] (physical phases at its tap). */
int kl_rephase_phases(const kl_rephaser *rp, const int *rot, int i);
/* 1 when rot[] respects every item's pins and forbidden phases. */
int kl_rephase_state_ok(const kl_rephaser *rp, const int *rot);
/* For writing the rephased feeder: the rotation of every feeder section
 * (sec_rot[nsections]) and load (load_rot[nloads]) under rot[]. */
void kl_rephase_feeder_rotations(const kl_rephaser *rp, const int *rot, int *sec_rot,
                                 int *load_rot);

/* ------------------------------------------------------------- objectives */

typedef enum {
    KL_OBJ_NEUTRAL = 0, /* residual |Ia+Ib+Ic| = 3|I0| at the head (or a named section), A */
    KL_OBJ_VUF = 1,     /* worst |V2|/|V1| over three-phase buses (fraction) */
    KL_OBJ_LOSSES = 2,  /* total real losses, W */
    KL_OBJ_CURRENT = 3, /* largest phase current at the head, A */
    KL_OBJ_DROP = 4,    /* worst voltage drop, 1 - lowest |V| per unit */
    KL_OBJ_COUNT = 5
} kl_objective;

/* Name used on the command line and in reports ("neutral", "vuf", ...). */
const char *kl_objective_name(kl_objective o);
/* Parses a name; -1 when unknown. */
int kl_objective_parse(const char *s);

#define KL_REBAL_MAX_LEVELS 8

typedef struct {
    double scale;          /* load multiplier (kl_flow_options.load_scale) */
    double weight;         /* weight of this level in the score */
} kl_load_level;

/* State of the feeder at one load level under one set of moves. */
typedef struct {
    int converged;
    double i_head[3];      /* head phase current magnitudes, A */
    double i_residual;     /* |Ia+Ib+Ic| at the head, A */
    double i_residual_at;  /* the same at the named section (= head when none), A */
    double vuf_max;        /* worst VUF over three-phase buses (fraction); 0 when none */
    int vuf_bus;           /* feeder bus id, -1 */
    double losses_w;       /* total real losses, W */
    double v_min_pu, v_max_pu; /* over every energized phase of every feeder bus */
    int v_min_bus, v_max_bus;
    double obj[KL_OBJ_COUNT]; /* the objectives above, in kl_objective order */
    double loading_max;    /* the most loaded section's loading (kilter/flow.h kl_loading.worst,
                              a fraction of its continuous rating); 0 when no section is rated */
    int loading_section;   /* its feeder section id, -1 */
    int n_overloaded;      /* sections over their continuous rating */
    int n_new_overloads;   /* of which not over in the feeder as given, or more loaded than
                              there: the advisor refuses a state with any */
} kl_rebalance_summary;

typedef void (*kl_rebalance_progress_fn)(void *ctx, const char *stage, long done, long total);

typedef enum {
    KL_SEARCH_AUTO = 0,       /* exhaustive when the space is small, else greedy + annealing */
    KL_SEARCH_HEURISTIC = 1,  /* greedy + annealing always */
    KL_SEARCH_EXHAUSTIVE = 2  /* exhaustive (refused when above exhaustive_limit) */
} kl_search_mode;

typedef struct {
    double weight[KL_OBJ_COUNT]; /* default: neutral 1, the rest 0 */
    int neutral_section;   /* feeder section id for KL_OBJ_NEUTRAL; -1: the head */
    int max_moves;         /* K; default 10 */
    double max_cost;       /* budget for the sum of move costs; <= 0: none */
    double vmin_pu, vmax_pu; /* service range; default 0.95 .. 1.05 (ANSI C84.1 range A) */
    int nlevels;           /* default 1: {1.0, 1.0} */
    kl_load_level level[KL_REBAL_MAX_LEVELS];
    kl_search_mode mode;
    long exhaustive_limit; /* states; default 20000 */
    double time_limit_s;   /* wall-clock bound on the search; default 30 */
    long anneal_steps;     /* default 40 per movable item, at least 200; 0: no annealing */
    unsigned long seed;    /* GSL generator seed; default 1 */
    kl_flow_options flow;  /* load_scale is set per level */
    kl_rebalance_progress_fn progress; /* NULL: none */
    void *progress_ctx;
} kl_rebalance_options;

void kl_rebalance_options_default(kl_rebalance_options *opt);

/* ------------------------------------------------------------------- plan */

typedef struct {
    int item;              /* index into the rephaser's items */
    int from_phases, to_phases; /* physical phases at the tap before and after */
    int rot;               /* item rotation after the step (relative to the file) */
    double cost;
    double score;          /* weighted score after moves 1..i (before = 1 per weighted objective) */
    int voltage_ok;        /* 1: service voltages inside the range after moves 1..i */
    int loading_ok;        /* 1: no section overloaded by moves 1..i (n_new_overloads 0) */
    kl_rebalance_summary after[KL_REBAL_MAX_LEVELS]; /* per level, after moves 1..i */
} kl_plan_step;

typedef struct kl_rebalance_plan {
    int nlevels;
    kl_load_level level[KL_REBAL_MAX_LEVELS];
    double weight[KL_OBJ_COUNT];
    int neutral_section;
    kl_rebalance_summary before[KL_REBAL_MAX_LEVELS];
    kl_rebalance_summary after[KL_REBAL_MAX_LEVELS];
    double score_before, score_after;
    int nsteps;
    kl_plan_step *steps;   /* [cap_steps] */
    int cap_steps;
    int nitems;
    int *rot;              /* [nitems] final rotation of every item */
    long evaluations;      /* load flows run (one per level per candidate) */
    double seconds;
    double seconds_greedy; /* when the greedy construction had its plan (heuristic search) */
    int method;            /* KL_SEARCH_EXHAUSTIVE or KL_SEARCH_HEURISTIC: what ran */
    int timed_out;         /* 1: the time bound cut the search short */
    int nmovable;          /* items with at least one allowed move and not pinned */
} kl_rebalance_plan;

kl_status kl_rebalance_plan_alloc(int nitems, int max_steps, kl_rebalance_plan **out);
void kl_rebalance_plan_free(kl_rebalance_plan *p);

/* Finds a plan: greedy best-move construction, then simulated annealing with
 * swaps and undos (seeded, reproducible), or exhaustive search when the space
 * is small.  Leaves the network and rephaser at the original phasing.
 * KL_ENOCONV when the feeder as given does not solve. */
kl_status kl_rebalance_run(kl_rephaser *rp, const kl_rebalance_options *opt,
                           kl_rebalance_plan *plan, kl_errors *err);

/* Evaluates the rotation state rot[] at every level (sets it in the network,
 * solves, restores the original phasing).  out[nlevels].  Used by the plan
 * ordering and by tests. */
kl_status kl_rebalance_evaluate(kl_rephaser *rp, const kl_rebalance_options *opt,
                                const int *rot, kl_rebalance_summary *out, kl_errors *err);

/* Summary of the network's solved state (after kl_flow_solve or
 * kl_sweep_solve): read from its voltages and branch currents. */
void kl_rebalance_summarize(const kl_network *net, int converged, int neutral_section,
                            kl_rebalance_summary *s);

#endif
