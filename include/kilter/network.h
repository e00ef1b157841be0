/* kilter: the feeder analysed once for solving: buses and branches in sweep
 * order as flat arrays, each branch in the generalized matrix form
 *
 *     V_from = a V_to + b I_to        I_from = c V_to + d I_to
 *     V_to   = A V_from - B I_to
 *
 * (W. H. Kersting, "Distribution System Modeling and Analysis", ch. 6-8,
 * from memory).  Voltages are phase-to-neutral (ground) volts of the phases
 * a, b, c; currents are line currents in amperes; absent phases hold zero.
 *
 * Built once by kl_network_build; the solvers (sweep.c, nodal.c) only read
 * topology and write values, so repeated solves (regulator taps, load
 * levels, rebalancing candidates) allocate nothing.
 *
 * Layout, chosen for the sweep's memory traffic: branch arrays are indexed
 * by branch id, which is sweep order; bus quantities the solvers write
 * (voltages vs, currents js) and the copies they read every iteration are
 * indexed by sweep position, pos[bus]; topology and bases stay by bus id.
 * Line Z and Y are packed by phase count; loads have a compact working form
 * (kl_load_part) in position order.
 *
 * Rephasing: which phase slot each entry of a load connects to is a value
 * (ld_slot), copied into the load parts and read by the load model at every
 * iteration, not topology (kl_load_parts_moved after changing it); moving
 * a whole lateral permutes its branch matrices and the bus phase masks
 * (rephase.c: a line's packed Z, Y are unpacked, relabelled, packed). */
#ifndef KILTER_NETWORK_H
#define KILTER_NETWORK_H

#include "kilter/error.h"
#include "kilter/feeder.h"

typedef enum {
    KL_BR_LINE = 1,        /* (part of) a line section */
    KL_BR_SWITCH = 2,      /* closed switch: identity */
    KL_BR_TRANSFORMER = 3,
    KL_BR_REGULATOR = 4
} kl_branch_kind;

/* One network load: a spot load, or one lumped part of a distributed load. */
typedef struct {
    int load;              /* feeder load id */
    int bus;               /* network bus id */
    double weight;         /* share of the feeder load's power (1 for spot loads) */
} kl_net_load;

/* One part of a load (or capacitor) entry in the load model's working form:
 * I = k v (constant impedance), k v / |v| (constant current) or
 * k v / |v|^2 (constant power), v the element's voltage: phase slot p to
 * neutral (wye, q = 3) or slot p to slot q (delta).  k holds conj(S), the
 * share of a distributed load, the nominal-voltage factor and the ZIP
 * fraction, in SI (load_model.c). */
typedef struct {
    int pos;               /* sweep position of the bus */
    int load;              /* feeder load id, -1 for a capacitor */
    unsigned char entry;   /* entry of the load: 0..2 (phase a, b, c or ab, bc, ca) */
    unsigned char p, q;    /* phase slots */
    unsigned char model;   /* KL_LOAD_Z, KL_LOAD_I or KL_LOAD_PQ */
    kl_complex k;
} kl_load_part;

typedef struct kl_network {
    const kl_feeder *feeder;  /* not owned; must outlive the network */

    /* buses: ids 0..nfeeder_buses-1 are the feeder's bus ids; internal nodes
     * (distributed-load lumping points) follow. */
    int nbuses;
    int nfeeder_buses;
    int source;            /* bus id of the source */
    int *order;            /* [nbuses] bus ids breadth-first from the source */
    int *phases;           /* [nbuses] phase mask (center-tap secondary: a = leg 1, b = leg 2) */
    double *v_base_ln;     /* [nbuses] line-to-neutral base, V */
    unsigned char *split_phase; /* [nbuses] 1 at and below a center-tapped secondary: slots a
                            * and b are its two legs, 180 degrees apart, so a line-to-line
                            * element there is rated at 2x the leg base (240 V), not sqrt(3)x */
    int *parent;           /* [nbuses] branch feeding the bus, -1 for the source */

    /* branches in sweep order: parents before children */
    int nbranches;
    /* loop-closing branches of a feeder declared `radial: false` (lines and
     * closed switches only): ids nbranches .. nbranches+nlinks-1, after the
     * tree, in every branch array below.  The sweep refuses a network that
     * has any; the nodal solver (nodal.c) includes them. */
    int nlinks;
    int *br_from, *br_to;  /* [nbranches] bus ids */
    int *br_kind;          /* [nbranches] kl_branch_kind */
    int *br_phases;        /* [nbranches] phase mask on the source side */
    int *br_section;       /* [nbranches] feeder section id */
    /* Branch matrices, stored compactly (a branch of a single-phase lateral
     * would otherwise carry eight complex 3x3 matrices, 1152 bytes, for one
     * or two nonzero entries):
     *   - a line keeps its series impedance Z (ohm) and total shunt
     *     admittance Y (S, half at each end) packed by phase count: n x n
     *     each (n = phases of br_phases[k], in the order a, b, c; 1, 4 or 9
     *     complex numbers), Z at zy + zy_at[k] and Y right after it;
     *   - only device branches (switches, transformers, regulators) keep the
     *     generalized a, b, c, d, A, B, in slot dev[k] of the device arrays;
     *     dev[k] is -1 for a line (and zy_at[k] is -1 for a device).
     * kl_network_line_zy expands a line's Z and Y to 3x3.  A line's a..B
     * follow from its Z and Y (the pi section: a = U + ZY/2, b = Z,
     * c = Y + YZY/4, d = U + YZ/2, the transpose of a, A = a^-1, B = A Z on
     * the present phases): kl_network_line_abcd computes them,
     * kl_network_branch_abcd gives any branch's. */
    int ndev;              /* device branches (tree and loop-closing) */
    int *dev;              /* [nbranches+nlinks] slot in the device matrices, -1 for lines */
    kl_complex *a, *b, *c, *d, *A, *B; /* [9*ndev] row-major 3x3 each, by device slot;
                            * transformers: c = 0, d = A^T, and a, b only where A is
                            * invertible (wye-wye, single-phase), zero otherwise: the
                            * sweep uses A, B, c, d only */
    kl_complex *yg;        /* [9*ndev] shunt at the sending end, by device slot:
                            * I_from = c V_to + d I_to + yg V_from.  Nonzero only for a
                            * bank with a grounded-wye source winding and a delta load
                            * winding: its zero-sequence path to ground, J / (3 Z_t)
                            * (transformer.c); the same under any cyclic relabelling of
                            * the phases, so rephasing leaves it alone */
    int *zy_at;            /* [nbranches+nlinks] offset of a line's packed Z in zy, -1 for devices */
    kl_complex *zy;        /* [nzy] packed Z, Y of every line, by branch */
    size_t nzy;            /* entries of zy in use: 2 n^2 per line branch */
    size_t zy_cap;         /* entries allocated (= nzy once built) */
    /* The sweep reads only the packed Z and Y for KL_BR_LINE branches
     * (ladder form, sweep.c) and the device slot's c, d, A, B for the others. */

    /* per feeder section [nsections]: branch carrying its sending end and its
     * receiving end (differ when a distributed load splits it); -1 when the
     * section is an open switch */
    int *sec_first, *sec_last;

    /* loads as solved: one entry per spot load, two per distributed load
     * (its lumped parts), in the feeder's load order */
    int nloads;
    kl_net_load *loads;    /* [nloads] */
    int *ld_slot;          /* [3*feeder nloads] phase slot (0..2) of each load entry:
                            * wye entry k sits on phase slot s; delta entry k joins
                            * phases s and (s+1)%3.  Identity (s = k) when built.
                            * After changing it, call kl_load_parts_moved. */
    /* The load model's working form (load_model.c): one record per energized
     * entry of every network load (a ZIP entry gives one per nonzero share
     * of its Z, I and P parts), then one per capacitor entry, each in sweep-position order, so
     * the load pass reads the records and the bus arrays front to back.  The
     * slots p, q are copies of ld_slot, refreshed by kl_load_parts_moved. */
    int nparts, ncap_parts;/* load parts, then capacitor parts after them */
    kl_load_part *parts;   /* [nparts + ncap_parts] */
    int parts_stale;       /* 1 when ld_slot changed since the parts were refreshed */

    /* regulators */
    int *reg_branch;       /* [nregulators] branch id */
    int *tap;              /* [3*nregulators] present taps */

    /* source (src/flow/source.c): the balanced positive-sequence phase voltages
     * the substation tap changer holds at the source bus, the negative-sequence
     * set of the same size, the stated background V2/V1 of the supply, the
     * present voltages behind the equivalent (the tap's output, updated by
     * each solver iteration), and the Thevenin impedance when there is one */
    kl_complex v_held[3], v_neg[3];
    kl_complex background;
    kl_complex v_emf[3];
    int has_zsource;
    kl_complex zsource[9];

    /* sweep layout: order[] lists the source, then the to-bus of each tree
     * branch in branch order, so the to-bus of tree branch k sits at
     * position k + 1.  Bus quantities below are stored by position (the
     * sweep walks them front to back); kl_network_bus_v / _bus_j give a bus
     * id's, kl_network_i_to a branch's receiving-end current. */
    int *pos;              /* [nbuses] position of each bus in order[] */
    int *br_from_pos;      /* [nbranches+nlinks] pos[br_from[k]] */
    unsigned char *pos_phases; /* [nbuses] phases[order[i]] (kept in step by rephasing) */
    double *pos_inv_base;  /* [nbuses] 1 / v_base_ln[order[i]] */

    /* workspace written by the solvers */
    int v_valid;           /* 1 once a solve has left voltages to start from */
    kl_complex *vs;        /* [3*nbuses] present voltages, by position */
    kl_complex *js;        /* [3*nbuses] current drawn at each bus (loads + children), by
                            * position; at position k + 1 it is tree branch k's I_to */
    kl_complex *i_from_link; /* [3*nlinks] sending-end currents of the loop-closing branches */
    kl_complex *i_to_link; /* [3*nlinks] receiving-end currents of the loop-closing branches */
    /* A tree branch's sending-end currents are not stored: the backward sweep
     * adds them into js and kl_sweep_i_from recomputes them from the
     * branch model at the present vs, js (the same arithmetic, the same
     * numbers), which saves 48 bytes per branch and their traffic. */

    /* nodal solver (nodal.c): its matrix, ordering and LU factors, built on
     * the first nodal solve and kept, so later solves only refactor when
     * regulator taps have moved.  Code that changes branch matrices in any
     * other way must drop it: kl_nodal_reset.  The nodal solver attaches its
     * own release function, so that kl_network_free (a layer below it) frees
     * it without calling up into nodal.c. */
    struct kl_nodal *nodal;
    void (*nodal_free)(struct kl_nodal *w);
} kl_network;

/* Analyses the feeder: breadth-first order from the source, per-bus phases
 * and bases, branch matrices.  Line constructions must be derived
 * (kl_lines_derive) or given as matrices.  Errors: islands, loops, phases
 * absent upstream, missing data: KL_ETOPO / KL_EINPUT with the element named. */
kl_status kl_network_build(const kl_feeder *f, kl_network **out, kl_errors *err);
void kl_network_free(kl_network *net);

/* Frees the nodal solver's matrix and factors (rebuilt on the next nodal solve). */
void kl_nodal_reset(kl_network *net);

/* Line branch k's generalized matrices from its packed Z and Y (see the
 * layout above); any output may be NULL.  A and B need a^-1 on the present
 * phases: KL_EINPUT when a is singular (the other outputs are still filled).
 * No allocation. */
kl_status kl_network_line_abcd(const kl_network *net, int k, kl_complex a[9], kl_complex b[9],
                               kl_complex c[9], kl_complex d[9], kl_complex A[9],
                               kl_complex B[9]);

/* Any branch's generalized matrices: a device's copied from its slot, a
 * line's from kl_network_line_abcd.  Outputs may be NULL. */
kl_status kl_network_branch_abcd(const kl_network *net, int k, kl_complex a[9],
                                 kl_complex b[9], kl_complex c[9], kl_complex d[9],
                                 kl_complex A[9], kl_complex B[9]);

/* Line branch k's Z and Y as 3x3 matrices (zero outside its phases; zero
 * for a device branch).  Either output may be NULL. */
void kl_network_line_zy(const kl_network *net, int k, kl_complex Z[9], kl_complex Y[9]);

/* Writes a line's Z and Y back into the packed storage (entries on its
 * present phases, br_phases[k], are kept; the phase count must not change). */
void kl_network_line_set_zy(kl_network *net, int k, const kl_complex Z[9],
                            const kl_complex Y[9]);

/* Bus b's present voltages and current drawn (3 phases each). */
static inline kl_complex *kl_network_bus_v(const kl_network *net, int b)
{
    return net->vs + 3 * (size_t)net->pos[b];
}
static inline kl_complex *kl_network_bus_j(const kl_network *net, int b)
{
    return net->js + 3 * (size_t)net->pos[b];
}
/* Branch k's receiving-end currents: a tree branch's are its to-bus's
 * current drawn (position k + 1), a loop-closing branch's its own. */
static inline kl_complex *kl_network_i_to(const kl_network *net, int k)
{
    return k < net->nbranches ? net->js + 3 * (size_t)(k + 1)
                              : net->i_to_link + 3 * (size_t)(k - net->nbranches);
}

/* Branch k's sending-end currents: a tree branch's from its model at the
 * present voltages and currents (I_from = c V_to + d I_to; a line in the
 * ladder form the sweep uses, sweep.c), a loop-closing branch's stored. */
void kl_sweep_i_from(const kl_network *net, int k, kl_complex out[3]);

/* Call after changing ld_slot: the load model's records follow before the
 * next solve. */
void kl_load_parts_moved(kl_network *net);

/* Recomputes regulator r's branch matrices from net->tap (no allocation). */
void kl_regulator_update(kl_network *net, int r);

#endif
