/* kilter: the ground relay's window at the feeder head.
 *
 * A residual (ground) relay at the head must stay above the residual current
 * that load unbalance makes there, yet see the weakest earth fault in its
 * zone.  The window holds when
 *     pickup >= load_margin x (largest load residual over the load levels)
 *     smallest earth-fault residual at the head >= fault_margin x pickup.
 * Margins (common practice; the protection engineer sets them): 2 on the
 * load side (the residual under half the pickup, the study's relay share),
 * 1.5 on the fault side.  Planning estimates: settings are the protection
 * engineer's to set and verify. */
#ifndef KILTER_RELAY_H
#define KILTER_RELAY_H

#include "kilter/error.h"
#include "kilter/fault.h"

#define KL_RELAY_LOAD_MARGIN 2.0
#define KL_RELAY_FAULT_MARGIN 1.5

typedef struct {
    double pickup_a;          /* the relay's pickup, A (0: not given: nothing below is set) */
    double load_margin_req, fault_margin_req;
    double load_residual_a;   /* largest |3I0| at the head over the load levels, A */
    double load_scale;        /* the level that sets it (a load scale) */
    double load_margin;       /* pickup / load_residual_a; NAN when the residual is nil
                                 (below a millionth of the pickup: a balanced feeder) */
    double fault_residual_a;  /* smallest |3I0| at the head over the earth faults in the zone, A */
    int fault_case;           /* the case that sets it (kl_fault_result.cases), -1 none */
    double fault_margin;      /* fault_residual_a / pickup */
    int load_ok, fault_ok;    /* 1 holds, 0 fails, -1 not known */
} kl_relay_window;

/* The window from the head's load residuals (one per load level, with its
 * scale) and the fault study: the line-ground faults (at every fault
 * impedance; a line-line-ground fault draws phase current the phase relays
 * see, common practice) at the buses studied that sit
 * at the head's voltage make the relay's zone (a fault behind a
 * transformer is its fuse's; common practice), less those the head does not
 * see at all.
 * pickup_a <= 0: the window is not known (load_ok = fault_ok = -1). */
kl_status kl_relay_window_eval(const kl_network *net, const kl_fault_thevenin *t,
                               const kl_fault_result *faults, const double *load_residual,
                               const double *load_scale, int nlevels, double pickup_a,
                               double load_margin, double fault_margin, kl_relay_window *out);

#endif
