/* kilter, load-flow layer (src/flow): the network built from a feeder, the
 * sweep and nodal solvers.  Visible to flow and the layers above. */
#ifndef KILTER_FLOW_INTERNAL_H
#define KILTER_FLOW_INTERNAL_H

#include "kl_model.h"
#include "kl_lines.h"
#include "kilter/network.h"
#include "kilter/flow.h"

/* ---- network.c, transformer.c, regulator.c, load_model.c, sweep.c,
 * nodal.c, flow.c: the load flow (include/kilter/network.h, flow.h). */
struct kl_network;
struct kl_flow_result;
/* transformer.c: the ideal ratio matrix A (V_load = A V_source - B I_load,
 * I_source = A^T I_load) and B of one bank.  step_up: the source side is the
 * bank's low winding.  Fills the load-side phase mask and line-to-neutral base;
 * returns KL_EINPUT with `why` filled for a connection it cannot model. */
kl_status kl_transformer_matrices(const kl_transformer *t, int src_phases, int step_up,
                                  kl_complex A[9], kl_complex B[9], int *load_phases,
                                  double *load_base_ln, char *why, size_t nwhy);

/* regulator.c */
void kl_regulator_matrices(const kl_regulator *r, const int tap[3], int phases,
                           kl_complex A[9], kl_complex d[9], kl_complex a[9]);
/* Moves the taps of automatic regulator r once, from the solved state in net;
 * returns the number of units whose tap moved. */
int kl_regulator_control(struct kl_network *net, int r);
/* Relay (compensated) voltage of each unit on the 120 V base. */
void kl_regulator_relay_voltage(const struct kl_network *net, int r, double vr[3]);

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
/* Builds net->parts from the network loads and capacitors (kl_network_build). */
kl_status kl_load_parts_build(struct kl_network *net);
/* Actual powers at the present voltages into res->s_load, q_cap, s_loads. */
void kl_load_powers(const struct kl_network *net, double scale, struct kl_flow_result *res);

#endif
