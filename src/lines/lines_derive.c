/* kilter: per-metre section matrices of every line construction.
 *
 * Overhead: primitive matrix by Carson's equations over the phases and the
 * separate neutrals, Kron reduction of the neutrals (Z_abc, t_n), shunt by
 * potential coefficients.  Cable: the same with each phase's concentric
 * neutral or tape shield as an extra equivalent conductor (always grounded),
 * shunt by the closed forms.  Matrix constructions copy the given values. */
#include <math.h>
#include <stdio.h>
#include <string.h>
#include "kilter/lines.h"
#include "kilter/units.h"


/* The system of one construction: np phases first (in a, b, c order), then
 * the conductors Kron reduces away. */
typedef struct {
    kl_wire w[KL_LINES_MAX_WIRES];
    int n, np;
    int phase[3]; /* phase index (0 a, 1 b, 2 c) of each of the first np wires */
    char what[KL_LINES_MAX_WIRES][48]; /* for messages: "phase a", "shield of phase a", ... */
} wire_set;

typedef struct {
    const kl_feeder *f;
    const kl_construction *c;
    kl_errors *err;
} where;

static kl_status fail(const where *at, const char *what)
{
    char elem[128];
    snprintf(elem, sizeof elem, "construction %s", at->c->name ? at->c->name : "?");
    kl_errors_add(at->err, at->f->path, at->c->loc.line, at->c->loc.col, elem, "%s", what);
    return KL_EINPUT;
}

static void wire_from_conductor(const kl_conductor *k, double x, double y, kl_wire *w)
{
    memset(w, 0, sizeof *w);
    w->x_m = x;
    w->y_m = y;
    w->r_ohm_per_m = k->r_ohm_per_m;
    w->gmr_m = k->gmr_m;
    w->radius_m = k->diameter_m / 2.0;
}

/* Position `wire` of the construction's layout, checked. */
static kl_status layout_point(const where *at, int wire, double *x, double *y)
{
    const kl_feeder *f = at->f;
    if (at->c->layout < 0 || at->c->layout >= f->nlayouts)
        return fail(at, "needs a layout: name one of the file's layouts");
    const kl_layout *L = &f->layouts[at->c->layout];
    if (wire < 0 || wire >= L->nwires)
        return fail(at, "a phase or neutral refers to a position the layout does not have: "
                        "use one of the layout's position ids");
    *x = L->x_m[wire];
    *y = L->y_m[wire];
    if (!L->underground && !(*y > 0))
        return fail(at, "an overhead position must be above ground: give a positive height");
    if (L->underground && !(*y < 0))
        return fail(at, "an underground position needs a depth below the surface: give a positive depth");
    return KL_OK;
}

static kl_status conductor_at(const where *at, int idx, const kl_conductor **k)
{
    if (idx < 0 || idx >= at->f->nconductors)
        return fail(at, "refers to a conductor the file does not define: add it under conductors");
    *k = &at->f->conductors[idx];
    if (!((*k)->gmr_m > 0) || !((*k)->r_ohm_per_m >= 0) || !((*k)->diameter_m > 0))
        return fail(at, "a conductor it uses lacks a positive GMR, diameter or resistance: give all three");
    return KL_OK;
}

/* Phases, in a, b, c order, as solid conductors of type `cond`. */
static kl_status add_phases(const where *at, int cond, wire_set *s)
{
    const kl_conductor *k;
    kl_status st = conductor_at(at, cond, &k);
    for (int p = 0; p < 3 && st == KL_OK; p++) {
        if (!(at->c->phases & (1 << p)))
            continue;
        double x, y;
        st = layout_point(at, at->c->phase_wire[p], &x, &y);
        if (st == KL_OK) {
            s->phase[s->np] = p;
            snprintf(s->what[s->n], sizeof s->what[0], "phase %c", 'a' + p);
            wire_from_conductor(k, x, y, &s->w[s->n++]);
            s->np++;
        }
    }
    if (st == KL_OK && s->np == 0)
        return fail(at, "has no phases: give at least one of a, b, c");
    return st;
}

static kl_status add_neutrals(const where *at, wire_set *s)
{
    kl_status st = KL_OK;
    if (at->c->nneutrals < 0 || at->c->nneutrals > KL_MAX_NEUTRALS)
        return fail(at, "too many neutrals: at most 2");
    for (int i = 0; i < at->c->nneutrals && st == KL_OK; i++) {
        const kl_conductor *k;
        double x, y;
        st = conductor_at(at, at->c->neutral_conductor[i], &k);
        if (st == KL_OK)
            st = layout_point(at, at->c->neutral_wire[i], &x, &y);
        if (st == KL_OK) {
            const char *id = at->f->layouts[at->c->layout].wire[at->c->neutral_wire[i]];
            snprintf(s->what[s->n], sizeof s->what[0], "the neutral at position %s", id ? id : "?");
            wire_from_conductor(k, x, y, &s->w[s->n++]);
        }
    }
    return st;
}

/* The concentric neutral or tape shield of each phase cable, after the phases. */
static kl_status add_shields(const where *at, const kl_cable *cb, wire_set *s)
{
    const kl_conductor *strand = NULL;
    kl_status st = KL_OK;
    if (cb->kind == KL_CABLE_CONCENTRIC)
        st = conductor_at(at, cb->strand_conductor, &strand);
    for (int i = 0; i < s->np && st == KL_OK; i++) {
        kl_wire *r = &s->w[s->n];
        *r = s->w[i];
        if (cb->kind == KL_CABLE_CONCENTRIC)
            st = kl_cable_concentric_ring(strand->r_ohm_per_m, strand->gmr_m, strand->diameter_m,
                                          cb->strands, cb->diameter_over_neutral_m, r);
        else if (cb->kind == KL_CABLE_TAPE)
            st = kl_cable_tape_ring(cb->tape_resistivity_ohm_m, cb->tape_diameter_m,
                                    cb->tape_thickness_m, r);
        else
            st = KL_EARG;
        if (st != KL_OK)
            return fail(at, "its cable's shield cannot be modelled: check strands (>= 1), "
                            "diameter over the neutral (> phase conductor + strand), tape "
                            "diameter, thickness and resistivity (all positive)");
        snprintf(s->what[s->n], sizeof s->what[0], "the %s of phase %c",
                 cb->kind == KL_CABLE_TAPE ? "tape shield" : "concentric neutral", 'a' + s->phase[i]);
        if (r->ring_m <= s->w[i].radius_m)
            return fail(at, "its cable's shield lies inside the phase conductor: check the "
                            "cable diameters");
        s->n++;
    }
    return st;
}

static void scatter_z(const wire_set *s, const kl_complex *zr, const kl_complex *tn, int ntn,
                      kl_construction *c)
{
    memset(c->zabc, 0, sizeof c->zabc);
    memset(c->tn, 0, sizeof c->tn);
    for (int i = 0; i < s->np; i++)
        for (int j = 0; j < s->np; j++)
            c->zabc[s->phase[i]][s->phase[j]] = zr[i * s->np + j];
    for (int r = 0; r < ntn; r++)
        for (int j = 0; j < s->np; j++)
            c->tn[r][s->phase[j]] = tn[r * s->np + j];
    c->ntn = ntn;
}

/* Two conductors in one place, or a conductor inside another cable's shield. */
static kl_status check_overlap(const where *at, const wire_set *s)
{
    for (int i = 0; i < s->n; i++)
        for (int j = i + 1; j < s->n; j++) {
            if (kl_wire_gmd(&s->w[i], &s->w[j]) > 0)
                continue;
            char msg[300];
            snprintf(msg, sizeof msg, "%s and %s overlap (centres %.4g m apart): move their "
                     "layout positions apart", s->what[i], s->what[j],
                     hypot(s->w[i].x_m - s->w[j].x_m, s->w[i].y_m - s->w[j].y_m));
            return fail(at, msg);
        }
    return KL_OK;
}

static kl_status series(const where *at, const wire_set *s, int isolated, double freq,
                        double rho, kl_carson_form form, kl_construction *c)
{
    kl_complex zp[KL_LINES_MAX_WIRES * KL_LINES_MAX_WIRES], zr[9];
    kl_complex tn[KL_LINES_MAX_WIRES * 3];
    kl_errors local;
    if (check_overlap(at, s) != KL_OK)
        return KL_EINPUT;
    kl_errors_init(&local);
    kl_status st = kl_carson_primitive(s->w, s->n, freq, rho, form, zp, &local);
    if (st != KL_OK) {
        char msg[800];
        snprintf(msg, sizeof msg, "Carson's equations: %s",
                 local.count ? local.items[0].message : "invalid conductor data");
        kl_errors_free(&local);
        return fail(at, msg);
    }
    kl_errors_free(&local);
    if (isolated && s->n > s->np)
        st = kl_kron_reduce_isolated(zp, s->n, s->np, zr, tn);
    else
        st = kl_kron_reduce(zp, s->n, s->np, zr, tn);
    if (st != KL_OK)
        return fail(at, "the neutral impedance matrix is singular: two neutrals in one place?");
    scatter_z(s, zr, tn, s->n - s->np, c);
    return KL_OK;
}

static kl_status derive_overhead(const where *at, double freq, double rho, kl_carson_form form,
                                 kl_construction *c)
{
    wire_set s = {0};
    kl_status st = add_phases(at, c->phase_conductor, &s);
    if (st == KL_OK)
        st = add_neutrals(at, &s);
    if (st == KL_OK && at->f->layouts[c->layout].underground)
        return fail(at, "bare conductors on an underground layout: use a cable, or an overhead layout");
    if (st == KL_OK)
        st = series(at, &s, !c->neutral_grounded, freq, rho, form, c);
    if (st != KL_OK)
        return st;
    double b[9];
    kl_errors local;
    kl_errors_init(&local);
    st = kl_shunt_overhead(s.w, s.n, s.np, c->neutral_grounded, freq, b, &local);
    kl_errors_free(&local);
    if (st != KL_OK)
        return fail(at, "shunt admittance: conductors touch or coincide; check the layout positions");
    memset(c->yabc, 0, sizeof c->yabc);
    for (int i = 0; i < s.np; i++)
        for (int j = 0; j < s.np; j++)
            c->yabc[s.phase[i]][s.phase[j]] = I * b[i * s.np + j];
    return KL_OK;
}

static kl_status derive_cable(const where *at, double freq, double rho, kl_carson_form form,
                              kl_construction *c)
{
    if (c->cable < 0 || c->cable >= at->f->ncables)
        return fail(at, "refers to a cable the file does not define: add it under cables");
    const kl_cable *cb = &at->f->cables[c->cable];
    wire_set s = {0};
    kl_status st = add_phases(at, cb->phase_conductor, &s);
    if (st == KL_OK)
        st = add_shields(at, cb, &s);
    if (st == KL_OK)
        st = add_neutrals(at, &s);
    if (st == KL_OK)
        st = series(at, &s, 0, freq, rho, form, c); /* shields are grounded: never isolated */
    if (st != KL_OK)
        return st;
    double eps = cb->insulation_permittivity > 0 ? cb->insulation_permittivity : 2.3;
    memset(c->yabc, 0, sizeof c->yabc);
    for (int i = 0; i < s.np; i++) {
        const kl_wire *ph = &s.w[i], *sh = &s.w[s.np + i];
        double y = (cb->kind == KL_CABLE_CONCENTRIC)
            ? kl_shunt_concentric(freq, eps, sh->ring_m, ph->radius_m,
                                  at->f->conductors[cb->strand_conductor].diameter_m / 2.0, cb->strands)
            : kl_shunt_tape(freq, eps, sh->ring_m, ph->radius_m);
        if (!(y > 0) || !isfinite(y))
            return fail(at, "its cable's insulation is too thin for the shunt formula: check the diameters");
        c->yabc[s.phase[i]][s.phase[i]] = I * y;
    }
    return KL_OK;
}

static void derive_matrix(kl_construction *c)
{
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++) {
            int on = (c->phases & (1 << i)) && (c->phases & (1 << j));
            c->zabc[i][j] = on ? c->z_given[i][j] : 0;
            c->yabc[i][j] = on ? I * c->b_given[i][j] : 0;
        }
    memset(c->tn, 0, sizeof c->tn);
    c->ntn = 0;
}

kl_status kl_lines_derive(kl_feeder *f, kl_carson_form form, kl_errors *err)
{
    kl_status worst = KL_OK;
    double freq = f->source.freq_hz;
    for (int i = 0; i < f->nconstructions; i++) {
        kl_construction *c = &f->constructions[i];
        where at = {f, c, err};
        double rho = c->earth_resistivity_ohm_m > 0 ? c->earth_resistivity_ohm_m
                   : f->earth_resistivity_ohm_m > 0 ? f->earth_resistivity_ohm_m : 100.0;
        kl_status st = KL_OK;
        c->derived = 0;
        if (!(freq > 0))
            st = fail(&at, "the source frequency is not positive: give `frequency` under source");
        else if (c->kind == KL_CONS_OVERHEAD)
            st = derive_overhead(&at, freq, rho, form, c);
        else if (c->kind == KL_CONS_CABLE)
            st = derive_cable(&at, freq, rho, form, c);
        else if (c->kind == KL_CONS_MATRIX)
            derive_matrix(c);
        else
            st = fail(&at, "unknown construction kind: give a layout, a cable or matrices");
        if (st == KL_OK)
            c->derived = 1;
        else
            worst = KL_EINPUT;
    }
    return worst;
}
