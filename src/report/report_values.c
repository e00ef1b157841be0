/* kilter: the figures the report shows, computed in one place so that the
 * plots, the map colours and the tables agree.
 *
 * Per unit is on each bus's own line-to-neutral base (v_base_ln), so buses
 * below a transformer read on their own nominal.  A quantity that is not
 * defined (an absent phase, a sequence value at a one- or two-phase bus, a
 * neutral current the flow did not give) is NAN, never 0: the plots leave
 * it out and the tables print a dash. */
#include <complex.h>
#include <math.h>
#include <string.h>
#include "kl_report.h"
#include "kilter/sequence.h"
#include "kilter/unbalance.h"
#include "kilter/flow.h"
#include "kilter/study.h"
#include "kilter/rebalance.h"

/* Phases of bus b that hold a voltage: the bus's mask, and the flow's 0 for
 * absent phases (in case the mask was never filled). */
int kl_report_bus_phases(const kl_report_input *in, int b)
{
    int m = 0;
    for (int p = 0; p < 3; p++)
        if (cabs(in->ph.v[3 * b + p]) > 0 && isfinite(cabs(in->ph.v[3 * b + p])))
            m |= 1 << p;
    int mask = in->feeder->buses[b].phases;
    return mask ? (m & mask) : m;
}

/* With a study, its figures are used as they are (bit for bit what its CSV
 * prints); without one, the same definitions are applied to the phases. */
double kl_report_v_pu(const kl_report_input *in, int b, int p)
{
    if (in->study)
        return in->study->v_pu[3 * b + p];
    double base = in->ph.v_base_ln[b];
    if (!(base > 0) || !(kl_report_bus_phases(in, b) & (1 << p)))
        return NAN;
    return cabs(in->ph.v[3 * b + p]) / base;
}

/* Lowest phase voltage at b, per unit; NAN when the bus has no voltage. */
double kl_report_vmin_pu(const kl_report_input *in, int b)
{
    double m = NAN;
    for (int p = 0; p < 3; p++) {
        double v = kl_report_v_pu(in, b, p);
        if (isfinite(v) && !(v >= m))
            m = v;
    }
    return m;
}

/* Sequence voltages (per unit magnitudes) and the indices of a three-phase
 * bus.  Returns 0 (and NANs) when b is not a live three-phase bus. */
int kl_report_bus_unbalance(const kl_report_input *in, int b, double v012_pu[3],
                            kl_unb_voltage *u)
{
    for (int k = 0; k < 3; k++)
        v012_pu[k] = NAN;
    u->defined = 0;
    u->vuf = u->v0_v1 = u->vuf_ll = u->lvur = u->pvur = NAN;
    double base = in->ph.v_base_ln[b];
    if (in->study) {
        const kl_seq_point *x = &in->study->vbus[b];
        *u = in->study->unb[b];
        if (!(x->defined & KL_SEQ_DEF_SEQUENCE) || !(base > 0) || !u->defined)
            return 0;
        for (int k = 0; k < 3; k++)
            v012_pu[k] = cabs(x->x012[k]) / base;
        return 1;
    }
    if (kl_report_bus_phases(in, b) != KL_PH_ABC || !(base > 0))
        return 0;
    kl_complex s012[3];
    kl_seq_from_phase(&in->ph.v[3 * b], s012);
    if (kl_unb_voltage_eval(&in->ph.v[3 * b], u, NULL) != KL_OK || !u->defined)
        return 0;
    for (int k = 0; k < 3; k++)
        v012_pu[k] = cabs(s012[k]) / base;
    return 1;
}

double kl_report_vuf_pct(const kl_report_input *in, int b)
{
    double v012[3];
    kl_unb_voltage u;
    return kl_report_bus_unbalance(in, b, v012, &u) ? 100 * u.vuf : NAN;
}

double kl_report_neutral_a(const kl_report_input *in, int s)
{
    if (in->study) /* with the triplen part, as the study's neutral table */
        return in->study->i_n_rms[s];
    if (!in->ph.i_neutral)
        return NAN;
    double a = cabs(in->ph.i_neutral[s]);
    return isfinite(a) ? a : NAN;
}

/* Section s's worst loading, % of its continuous rating: the study's, else
 * from the sending-end currents alone (kilter/flow.h). */
double kl_report_loading_pct(const kl_report_input *in, int s)
{
    if (in->study)
        return 100.0 * in->study->loading[s];
    kl_loading_currents c = {in->ph.i, NULL, NULL, NULL};
    kl_loading l;
    kl_loading_section(in->feeder, &c, s, &l);
    return 100.0 * l.worst;
}

/* The value that colours section s on the map (far-end bus for the bus
 * indices); the far end is the bus the tree reached through s. */
double kl_report_map_value(const kl_report_input *in, kl_map_index ix, int s, int far_bus)
{
    switch (ix) {
    case KL_MAP_BY_VUF: return kl_report_vuf_pct(in, far_bus);
    case KL_MAP_BY_NEUTRAL: return kl_report_neutral_a(in, s);
    case KL_MAP_BY_LOADING: return kl_report_loading_pct(in, s);
    case KL_MAP_BY_VOLTAGE:
    default: return kl_report_vmin_pu(in, far_bus);
    }
}

const char *kl_report_map_index_name(kl_map_index ix)
{
    switch (ix) {
    case KL_MAP_BY_VUF: return "voltage unbalance factor (%)";
    case KL_MAP_BY_NEUTRAL: return "neutral current (A)";
    case KL_MAP_BY_LOADING: return "loading (% of rating)";
    case KL_MAP_BY_VOLTAGE:
    default: return "lowest phase voltage (per unit)";
    }
}

/* The arguments every report entry point needs. */
kl_status kl_report_input_check(FILE *out, const kl_report_input *in, kl_errors *err)
{
    if (!out || !in || !in->feeder || !in->ph.v || !in->ph.v_base_ln || !in->ph.i) {
        kl_errors_add(err, NULL, 0, 0, NULL, "report: the output, the feeder and the load-flow "
                      "arrays (v, v_base_ln, i) are all required");
        return KL_EARG;
    }
    const kl_feeder *f = in->feeder;
    if (in->opt.phasor_bus >= f->nbuses || in->opt.phasor_bus < -1) {
        kl_errors_add(err, f->path, 0, 0, NULL, "report: phasor bus id %d is not a bus of this "
                      "feeder (0..%d, or -1 for the most unbalanced bus)", in->opt.phasor_bus,
                      f->nbuses - 1);
        return KL_EARG;
    }
    if (in->study && (in->study->nbuses != f->nbuses || in->study->nsections != f->nsections)) {
        kl_errors_add(err, f->path, 0, 0, NULL, "report: the study record is of another feeder "
                      "(%d buses, %d sections; this one has %d and %d)", in->study->nbuses,
                      in->study->nsections, f->nbuses, f->nsections);
        return KL_EARG;
    }
    if (in->plan && (!in->rephaser || in->plan->nitems != in->rephaser->nitems)) {
        kl_errors_add(err, f->path, 0, 0, NULL, "report: the rebalancing plan needs the "
                      "rephaser it was computed with (its items name the moves)");
        return KL_EARG;
    }
    if ((unsigned)in->opt.map_index > KL_MAP_BY_LOADING) {
        kl_errors_add(err, NULL, 0, 0, NULL, "report: unknown map index %d (expected voltage, "
                      "vuf, neutral or loading)", (int)in->opt.map_index);
        return KL_EARG;
    }
    return KL_OK;
}

kl_report_phases kl_report_phases_of(const kl_flow_result *res)
{
    return (kl_report_phases){res->v, res->v_base_ln, res->i, res->i_neutral};
}

int kl_map_index_parse(const char *s)
{
    static const char *const name[4] = {"voltage", "vuf", "neutral", "loading"}; /* kl_map_index order */
    for (int k = 0; s && k < 4; k++)
        if (!strcmp(s, name[k]))
            return k;
    return -1;
}
