/* kilter, load-flow layer (src/flow): the network built from a feeder, the
 * sweep and nodal solvers.  Visible to flow and the layers above. */
#ifndef KILTER_FLOW_INTERNAL_H
#define KILTER_FLOW_INTERNAL_H

#include <stdio.h>
#include "kl_model.h"
#include "kl_lines.h"
#include "kilter/network.h"
#include "kilter/flow.h"

/* ---- network.c, transformer.c, regulator.c, load_model.c, sweep.c,
 * nodal.c, flow.c: the load flow (include/kilter/network.h, flow.h). */
struct kl_network;
struct kl_flow_result;
/* transformer.c: one bank in the generalized form,
 *   V_load = A V_source - B I_load,   I_source = A^T I_load + Yg V_source,
 * A the ideal ratio matrix (real), B the leakage impedance seen from the load
 * side, Yg the grounding path of a grounded-wye source winding facing a delta
 * (its zero-sequence impedance to ground; zero for every other connection).
 * step_up: the source side is the bank's low winding.  Fills the load-side
 * phase mask and line-to-neutral base; returns KL_EINPUT with `why` filled
 * for a connection it cannot model. */
kl_status kl_transformer_matrices(const kl_transformer *t, int src_phases, int step_up,
                                  kl_complex A[9], kl_complex B[9], kl_complex Yg[9],
                                  int *load_phases, double *load_base_ln, char *why, size_t nwhy);
/* 1 when the bank's low winding faces the source: the winding whose rating is
 * nearer the source-side bus's line-to-neutral base (V). */
int kl_transformer_step_up(const kl_transformer *t, double source_base_ln);

/* regulator.c */
/* NULL when r describes a bank the model can solve, else what is wrong with
 * it (an open delta whose units do not share one phase: a feeder built in code). */
const char *kl_regulator_check(const kl_regulator *r);
void kl_regulator_matrices(const kl_regulator *r, const int tap[3], int phases,
                           kl_complex A[9], kl_complex d[9], kl_complex a[9]);
/* Moves the taps of automatic regulator r once, from the solved state in net;
 * returns the number of units whose tap moved. */
int kl_regulator_control(struct kl_network *net, int r);
/* Relay (compensated) voltage of each unit on the 120 V base. */
void kl_regulator_relay_voltage(const struct kl_network *net, int r, double vr[3]);
/* After a solve: the relay voltage of each unit the control acts on (NAN for
 * the others) and whether it is held at a limit with its set point not met
 * (+1 at the raise limit, relay voltage below the band; -1 at the lower
 * limit, above the band; 0 otherwise). */
void kl_regulator_state(const struct kl_network *net, int r, double vr[3], int limit[3]);

/* source.c: the voltages behind the source equivalent that hold the source
 * bus's positive sequence at its set value while the feeder draws j[3] from
 * it (NULL: no load); with no equivalent, the bus's own voltages. */
void kl_source_emf(const struct kl_network *net, const kl_complex j[3], kl_complex e[3]);
/* load_model.c: adds every load's and capacitor's current at the present
 * voltages (net->vs) into net->js, both by sweep position (scale multiplies
 * load powers).  Reads the load parts (network.h), refreshing their phase
 * slots first when ld_slot has changed. */
void kl_load_inject(struct kl_network *net, double scale);
/* sweep.c: the tree part of a backward sweep at the present voltages, from
 * the bus currents already in net->js (loads, loop-closing branches): fills
 * the branches' sending-end currents into js toward the source (nodal.c
 * uses it too). */
void kl_sweep_tree_currents(struct kl_network *net);
/* Capacitor c's load-model parts (I = j (Q / V_n^2) v per entry); their count. */
int kl_load_cap_parts(const struct kl_network *net, int c, kl_load_part out[3]);
/* diverge.c: the likely reason a solve did not converge, for its message
 * (low_pu: the lowest voltage, worst: the last change, per unit); returns 1
 * when a capacitor near resonance with its line is the cause. */
int kl_diverge_hint(const struct kl_network *net, double low_pu, double worst, char *buf,
                    size_t len);
/* Builds net->parts from the network loads and capacitors (kl_network_build). */
kl_status kl_load_parts_build(struct kl_network *net);
/* The load model's records again from the feeder's present load powers
 * (kl_load.s_va) and capacitor ratings (q_var), in place, without
 * allocating: start is workspace of nbuses + 1 ints.  What a series of load
 * flows calls between steps. */
void kl_load_parts_repower(struct kl_network *net, int *start);
/* Actual powers at the present voltages into res->s_load, q_cap, s_loads. */
void kl_load_powers(const struct kl_network *net, double scale, struct kl_flow_result *res);

/* ---- network.c and its phases (network_*.c): the build's internals. */
/* Every network-build error: element "kind name", the message as given. */
static inline void kl_network_err(kl_errors *e, const kl_feeder *f, kl_loc loc, const char *kind,
                                  const char *name, const char *msg)
{
    char elem[128];
    if (name && *name)
        snprintf(elem, sizeof elem, "%s %s", kind, name);
    else
        snprintf(elem, sizeof elem, "%s", kind);
    kl_errors_add(e, f->path, loc.line, loc.col, elem, "%s", msg);
}
/* Distributed load (network_emit.c, network_loads.c): the exact lumped-load
 * model (Kersting ch. 3, from memory): 2/3 of the load at an internal node a
 * quarter of the length from the source end, 1/3 at the far end. */
#define KL_DIST_AT 0.25          /* internal node position, share of the length */
#define KL_DIST_NEAR (2.0 / 3.0) /* share of the load at the internal node */
/* network_check.c */
kl_status kl_network_check_ids(const kl_feeder *f, kl_errors *err);
/* network_size.c: has_dist[nsections] (out) marks sections with a
 * distributed load, *ndist counts those loads; kl_network_size_sections
 * returns the zy entries and counts split sections and device slots. */
kl_status kl_network_size_distributed(const kl_feeder *f, unsigned char *has_dist, int *ndist,
                                      kl_errors *err);
size_t kl_network_size_sections(const kl_feeder *f, const unsigned char *has_dist, int *nsplit,
                                int *ndev);
/* network_alloc.c: every array of the network (kl_network_free frees them). */
kl_status kl_network_alloc(struct kl_network *n, const kl_feeder *f, int nbus, int nbr, int nld,
                           int ndev_max);
/* network_emit.c: the tree's energized sections as branches (mid_of[s]: the
 * internal node of split section s), then the links after them. */
kl_status kl_network_emit_tree(struct kl_network *n, const kl_feeder_tree *t,
                               const unsigned char *has_dist, int *mid_of, kl_errors *err);
kl_status kl_network_emit_links(struct kl_network *n, const kl_feeder_tree *t,
                                const unsigned char *has_dist, kl_errors *err);
/* network_line.c: checks a line section's construction, phases (*mask out)
 * and length; appends line branch k's packed Z and Y for `len` metres. */
kl_status kl_network_line_check(const struct kl_network *n, const kl_section *sc, int construction,
                                int phases, double length_m, int *mask, kl_errors *err);
kl_status kl_network_line_fill(struct kl_network *n, int k, const kl_section *sc, int construction,
                               double len, kl_errors *err);
/* network_branch.c: device branch k of section sc (its to-bus's phases and
 * base filled). */
kl_status kl_network_branch_device(struct kl_network *n, int k, const kl_section *sc, kl_errors *err);
/* network_loads.c */
kl_status kl_network_loads_place(struct kl_network *n, const int *mid_of, const kl_feeder_tree *t,
                                 kl_errors *err);
kl_status kl_network_loads_check_capacitors(const struct kl_network *n, const kl_feeder_tree *t,
                                            kl_errors *err);

#endif
