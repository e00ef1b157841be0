/* Rated voltages against the bus they sit on: a transformer's source-side
 * winding, a regulator's PT (pt_ratio x 120 V) and a capacitor's units
 * (rated_voltage) compared with the nominal voltage the loader carried down
 * the feeder tree (kl_bus.base_kv_ll).  A transformer rated 12.47 kV on a
 * 24.94 kV feeder otherwise solves to 1.94 pu on its secondary.  The loader
 * calls this with KL_RATING_ERROR_TOL (errors); the program again with
 * KL_RATING_WARN_TOL (warnings). */
#include <math.h>
#include <stdio.h>
#include "kl_model.h"

#define SQRT3 1.7320508075688772

double kl_feeder_ratings_unit_kv(const kl_feeder *f, const kl_feeder_tree *t, int b, int delta)
{
    if (delta)
        return f->buses[b].base_kv_ll;
    int s = kl_feeder_tree_psec(t, b);
    if (s >= 0 && f->sections[s].kind == KL_SEC_TRANSFORMER && f->sections[s].device >= 0 &&
        f->transformers[f->sections[s].device].low == KL_WINDING_CENTER_TAP)
        return f->buses[b].base_kv_ll / 2.0;
    return f->buses[b].base_kv_ll / SQRT3;
}

/* A winding's rating as a line-to-line kV: a single-phase winding across one
 * phase is line-to-neutral (x sqrt 3), across two line-to-line. */
static double winding_ll(double kv, kl_winding w, int nph)
{
    return w == KL_WINDING_SINGLE && nph == 1 ? kv * SQRT3 : kv;
}

static int report(kl_errors *err, const kl_feeder *f, const kl_loc *at, const char *elem,
                  double rated_kv, double nominal_kv, const char *measure, const char *what,
                  const char *fix, double tol)
{
    kl_errors_add(err, f->path, at->line, at->col, elem,
                  "%s is rated %.4g kV %s but its bus is nominal %.4g kV %s (%.0f %% off, more than "
                  "the %.0f %% allowed): %s", what, rated_kv, measure, nominal_kv, measure,
                  100.0 * fabs(rated_kv / nominal_kv - 1.0), 100.0 * tol, fix);
    return 1;
}

static int off(double rated, double nominal, double tol)
{
    return rated > 0 && nominal > 0 && fabs(rated / nominal - 1.0) > tol * (1.0 + 1e-12);
}

/* The winding facing the source is the one rated closer to the source-side
 * bus (the rule kl_network_build uses to tell step-up from step-down). */
int kl_feeder_ratings_step_up(const kl_feeder *f, int e)
{
    const kl_section *s = &f->sections[e];
    const kl_transformer *x = &f->transformers[s->device];
    int nph = kl_phases_count(s->phases);
    double vn = f->buses[kl_sec_up(s)].base_kv_ll;
    double hi = winding_ll(x->kv_high, x->high, nph), lo = winding_ll(x->kv_low, x->low, nph);
    return lo > 0 && hi > 0 && vn > 0 && fabs(log(vn / lo)) < fabs(log(vn / hi));
}

static int transformer(const kl_feeder *f, int e, double tol, kl_errors *err)
{
    const kl_section *s = &f->sections[e];
    const kl_transformer *x = &f->transformers[s->device];
    int u = kl_sec_up(s), nph = kl_phases_count(s->phases), up = kl_feeder_ratings_step_up(f, e);
    double vn = f->buses[u].base_kv_ll;
    double r = up ? winding_ll(x->kv_low, x->low, nph) : winding_ll(x->kv_high, x->high, nph);
    char elem[300], what[400];
    if (!off(r, vn, tol))
        return 0;
    snprintf(elem, sizeof elem, "section \"%s\"", s->name);
    snprintf(what, sizeof what, "transformer '%s' (defined at line %d) fed from bus '%s': its %s winding", x->name,
             x->loc.line, f->buses[u].name, up ? "low" : "high");
    return report(err, f, &s->loc, elem, r, vn, "line-to-line", what,
                  "correct the transformer's voltages, or place it where the feeder has that voltage", tol);
}

/* The PT brings the unit's voltage to 120 V: pt_ratio x 120 V is the rated
 * line-to-neutral voltage of a wye unit, line-to-line of a delta one. */
static int regulator(const kl_feeder *f, const kl_feeder_tree *t, int e, double tol, kl_errors *err)
{
    const kl_section *s = &f->sections[e];
    const kl_regulator *g = &f->regulators[s->device];
    int u = kl_sec_up(s), wye = g->conn == KL_REG_WYE;
    double r = g->pt_ratio * 0.120;
    double vn = kl_feeder_ratings_unit_kv(f, t, u, !wye);
    char elem[300], what[400];
    if (!(g->pt_ratio > 0) || !off(r, vn, tol))
        return 0;
    snprintf(elem, sizeof elem, "section \"%s\"", s->name);
    snprintf(what, sizeof what, "regulator '%s' (defined at line %d) fed from bus '%s': with PT ratio %.4g (x 120 V) it",
             g->name, g->loc.line, f->buses[u].name, g->pt_ratio);
    return report(err, f, &s->loc, elem, r, vn, wye ? "line-to-neutral" : "line-to-line", what,
                  "correct pt_ratio to the bus voltage over 120 V, or place the regulator where the "
                  "feeder has that voltage", tol);
}

static int capacitor(const kl_feeder *f, const kl_feeder_tree *t, int c, double tol, kl_errors *err)
{
    const kl_capacitor *cp = &f->capacitors[c];
    int wye = cp->conn != KL_CONN_DELTA;
    double vn = kl_feeder_ratings_unit_kv(f, t, cp->bus, !wye);
    char elem[300], what[300];
    if (!off(cp->rated_v / 1e3, vn, tol))
        return 0;
    snprintf(elem, sizeof elem, "capacitor \"%s\"", cp->name);
    snprintf(what, sizeof what, "on bus '%s', each unit", f->buses[cp->bus].name);
    return report(err, f, &cp->loc, elem, cp->rated_v / 1e3, vn, wye ? "line-to-neutral" : "line-to-line",
                  what, "correct rated_voltage (across each unit: line-to-neutral for wye, "
                  "line-to-line for delta), or place the capacitor where the feeder has that voltage", tol);
}

int kl_feeder_ratings_check(const kl_feeder *f, double tol, kl_errors *err)
{
    const kl_feeder_tree *t = f->tree;
    int n = 0;
    if (!t)
        return 0;
    for (int e = 0; e < f->nsections; e++) {
        const kl_section *s = &f->sections[e];
        if (s->device < 0 || s->from < 0 || s->to < 0 || t->pos[kl_sec_up(s)] < 0)
            continue;
        if (s->kind == KL_SEC_TRANSFORMER && s->device < f->ntransformers)
            n += transformer(f, e, tol, err);
        else if (s->kind == KL_SEC_REGULATOR && s->device < f->nregulators)
            n += regulator(f, t, e, tol, err);
    }
    for (int c = 0; c < f->ncapacitors; c++)
        if (f->capacitors[c].bus >= 0 && t->pos[f->capacitors[c].bus] >= 0)
            n += capacitor(f, t, c, tol, err);
    return n;
}
