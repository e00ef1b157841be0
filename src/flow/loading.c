/* Loading of a section against its ratings (kilter/flow.h): a line's
 * current over its ampacity, a regulator's over each unit's rated current,
 * a transformer's over each winding's rated line current and its bank kVA
 * over the rating.  The one place these figures are computed: the flow and
 * study tables, the compliance summary, the report's map and the rebalancing
 * advisor's constraint all read them from here. */
#include <complex.h>
#include <math.h>
#include "kl_flow.h"

#define SQRT3 1.7320508075688772

/* Rated line current of a winding, A (kVA / kV = A): a single-phase or
 * center-tapped winding kVA / kV (its own winding voltage, line-to-neutral
 * or line-to-line as it is connected); a three-phase bank kVA / (sqrt 3 kV_LL);
 * an open bank's two units kVA / 2 each, across the line (open delta) or line
 * to neutral (open wye).  The usual nameplate relations (common practice). */
static double rated_line_a(double kva, double kv, kl_winding w)
{
    if (!(kva > 0) || !(kv > 0))
        return NAN;
    switch (w) {
    case KL_WINDING_SINGLE:
    case KL_WINDING_CENTER_TAP: return kva / kv;
    case KL_WINDING_OPEN_DELTA: return kva / 2.0 / kv;
    case KL_WINDING_OPEN_WYE: return kva / 2.0 / (kv / SQRT3);
    default: return kva / (SQRT3 * kv);
    }
}

/* One section's currents at both ends and the power entering it, as a
 * flow result or a solved network holds them. */
typedef struct {
    kl_complex i[3], ir[3], s[3];
    int has_ir, has_s;
    int phases;        /* the phases it carries (the network's, after a rephasing) */
} ends;

static double ratio(double x, double rating)
{
    return rating > 0 ? x / rating : NAN;
}

/* |I| at the end that carries more (shunt charging and distributed load
 * make the two ends differ). */
static double line_amps(const ends *x, int p)
{
    double a = cabs(x->i[p]);
    if (x->has_ir && cabs(x->ir[p]) > a)
        a = cabs(x->ir[p]);
    return a;
}

/* Phase p of a transformer section, against ratings scaled by k (1, or the
 * emergency rating over the normal one): the larger of the source side's
 * line current and the load side's (a single-phase unit's one winding: its
 * largest secondary current, a center tap's legs sitting in slots a and b). */
static double transformer_phase(const kl_feeder *f, const ends *e, int s, int p, double k)
{
    const kl_transformer *t = &f->transformers[f->sections[s].device];
    int up = kl_feeder_ratings_step_up(f, s);
    kl_winding ws = up ? t->low : t->high, wl = up ? t->high : t->low;
    double i_src = k * rated_line_a(t->kva, up ? t->kv_low : t->kv_high, ws);
    double i_load = k * rated_line_a(t->kva, up ? t->kv_high : t->kv_low, wl);
    double x = ratio(cabs(e->i[p]), i_src), y = 0;
    int unit = ws == KL_WINDING_SINGLE || wl == KL_WINDING_SINGLE || wl == KL_WINDING_CENTER_TAP;
    if (!e->has_ir)
        return x;
    for (int q = 0; q < 3; q++)
        if (unit || q == p)
            y = fmax(y, ratio(cabs(e->ir[q]), i_load));
    return fmax(x, y);
}

static double worst_of(const double ph[3], double bank)
{
    double w = NAN;
    for (int p = 0; p < 3; p++)
        if (isfinite(ph[p]) && !(w >= ph[p]))
            w = ph[p];
    if (isfinite(bank) && !(w >= bank))
        w = bank;
    return w;
}

/* The phases' normal and emergency ratings of a line or regulator, A. */
static void amp_ratings(const kl_feeder *f, const kl_section *sc, double *normal, double *emerg)
{
    *normal = *emerg = NAN;
    if (sc->kind == KL_SEC_LINE && sc->construction >= 0 && sc->construction < f->nconstructions) {
        *normal = f->constructions[sc->construction].ampacity_a;
        *emerg = f->constructions[sc->construction].emergency_ampacity_a;
    } else if (sc->kind == KL_SEC_REGULATOR && sc->device >= 0 && sc->device < f->nregulators) {
        *normal = f->regulators[sc->device].rated_current_a;
        *emerg = f->regulators[sc->device].emergency_current_a;
    }
}

static void transformer_loading(const kl_feeder *f, const ends *e, int s, kl_loading *out)
{
    const kl_transformer *t = &f->transformers[f->sections[s].device];
    int up = kl_feeder_ratings_step_up(f, s);
    double ke = t->emergency_kva > 0 ? t->emergency_kva / t->kva : NAN, sum = 0;
    out->rating = rated_line_a(t->kva, up ? t->kv_low : t->kv_high, up ? t->low : t->high);
    for (int p = 0; p < 3; p++) {
        if (!(e->phases & (1 << p)))
            continue;
        out->phase[p] = transformer_phase(f, e, s, p, 1.0);
        out->phase_emerg[p] = isfinite(ke) ? transformer_phase(f, e, s, p, ke) : NAN;
        sum += cabs(e->s[p]);
    }
    out->bank = e->has_s ? ratio(sum, t->kva * 1e3) : NAN;
    out->bank_emerg = e->has_s && t->emergency_kva > 0 ? sum / (t->emergency_kva * 1e3) : NAN;
}

static void clear(kl_loading *out)
{
    for (int p = 0; p < 3; p++)
        out->phase[p] = out->phase_emerg[p] = NAN;
    out->bank = out->bank_emerg = out->worst = out->worst_emerg = out->rating = NAN;
}

static void loading_of_ends(const kl_feeder *f, int s, const ends *e, kl_loading *out)
{
    const kl_section *sc = &f->sections[s];
    double normal, emerg;
    if (sc->kind == KL_SEC_TRANSFORMER && sc->device >= 0 && sc->device < f->ntransformers) {
        transformer_loading(f, e, s, out);
    } else {
        amp_ratings(f, sc, &normal, &emerg);
        if (!(normal > 0))
            return;
        out->rating = normal;
        for (int p = 0; p < 3; p++) {
            if (!(e->phases & (1 << p)))
                continue;
            out->phase[p] = line_amps(e, p) / normal;
            out->phase_emerg[p] = ratio(line_amps(e, p), emerg);
        }
    }
    out->worst = worst_of(out->phase, out->bank);
    out->worst_emerg = worst_of(out->phase_emerg, out->bank_emerg);
}

void kl_loading_section(const kl_feeder *f, const kl_loading_currents *c, int s, kl_loading *out)
{
    ends e;
    clear(out);
    if (c->sec_solved && !c->sec_solved[s])
        return;
    e.has_ir = c->i_recv != NULL;
    e.has_s = c->s_in != NULL;
    e.phases = f->sections[s].phases;
    for (int p = 0; p < 3; p++) {
        e.i[p] = c->i[3 * s + p];
        e.ir[p] = e.has_ir ? c->i_recv[3 * s + p] : 0;
        e.s[p] = e.has_s ? c->s_in[3 * s + p] : 0;
    }
    loading_of_ends(f, s, &e, out);
}

/* Whether section s has a rating to be loaded against (what the advisor
 * checks first, so that unrated sections cost it nothing). */
static int rated(const kl_feeder *f, const kl_section *sc)
{
    double normal, emerg;
    if (sc->kind == KL_SEC_TRANSFORMER)
        return sc->device >= 0 && sc->device < f->ntransformers && f->transformers[sc->device].kva > 0;
    amp_ratings(f, sc, &normal, &emerg);
    return normal > 0;
}

/* The network's branch currents: the sending end of the section's first
 * branch, the receiving end of its last (a distributed load splits a line in
 * two), the phases the network gives it now (a rephased lateral's). */
void kl_loading_network(const kl_network *n, int s, kl_loading *out)
{
    int k1 = n->sec_first[s], k2 = n->sec_last[s];
    ends e;
    clear(out);
    if (k1 < 0 || k2 < 0 || !rated(n->feeder, &n->feeder->sections[s]))
        return;
    kl_sweep_i_from(n, k1, e.i);
    const kl_complex *ir = kl_network_i_to(n, k2), *vf = kl_network_bus_v(n, n->br_from[k1]);
    for (int p = 0; p < 3; p++) {
        e.ir[p] = ir[p];
        e.s[p] = vf[p] * conj(e.i[p]);
    }
    e.has_ir = e.has_s = 1;
    e.phases = n->br_phases[k1];
    loading_of_ends(n->feeder, s, &e, out);
}

void kl_loading_of(const kl_feeder *f, const kl_flow_result *r, int s, kl_loading *out)
{
    kl_loading_currents c = {r->i, r->i_recv, r->s_in, r->sec_solved};
    kl_loading_section(f, &c, s, out);
}
