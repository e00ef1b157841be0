/* kilter: references by name, resolved after the whole file is read, and the
 * construction fields that depend on them (loader). */
#include <stdio.h>
#include <string.h>
#include "kl_io.h"

typedef struct {
    const char *kind;      /* what is referred to, for the message */
    const char *list;      /* the top-level list it is declared under */
} ref_info;

static const ref_info infos[] = {
    [KL_REF_SOURCE_BUS] = {"bus", "sections"},
    [KL_REF_CABLE_COND] = {"conductor", "conductors"},
    [KL_REF_CABLE_STRAND] = {"conductor", "conductors"},
    [KL_REF_CONS_LAYOUT] = {"layout", "layouts"},
    [KL_REF_CONS_COND] = {"conductor", "conductors"},
    [KL_REF_CONS_CABLE] = {"cable", "cables"},
    [KL_REF_CONS_NEUTRAL0] = {"conductor", "conductors"},
    [KL_REF_CONS_NEUTRAL1] = {"conductor", "conductors"},
    [KL_REF_SEC_CONS] = {"construction", "constructions"},
    [KL_REF_SEC_XF] = {"transformer", "transformers"},
    [KL_REF_SEC_REG] = {"regulator", "regulators"},
    [KL_REF_LOAD_BUS] = {"bus", "sections"},
    [KL_REF_LOAD_SEC] = {"section", "sections"},
    [KL_REF_CAP_BUS] = {"bus", "sections"},
};

/* The field that receives the index, the table to look in, and the label of
 * the referring element. */
static int *ref_target(kl_loader *L, const kl_pending_ref *p, const kl_names **t)
{
    kl_feeder *f = L->f;
    int e = p->elem;
    switch (p->what) {
    case KL_REF_SOURCE_BUS: *t = &L->h_bus; kl_ld_label(L, "source", NULL, -1); return &f->source.bus;
    case KL_REF_CABLE_COND: *t = &L->h_cond; kl_ld_label(L, "cable", f->cables[e].name, e); return &f->cables[e].phase_conductor;
    case KL_REF_CABLE_STRAND: *t = &L->h_cond; kl_ld_label(L, "cable", f->cables[e].name, e); return &f->cables[e].strand_conductor;
    case KL_REF_CONS_LAYOUT: *t = &L->h_layout; break;
    case KL_REF_CONS_COND: *t = &L->h_cond; break;
    case KL_REF_CONS_CABLE: *t = &L->h_cable; break;
    case KL_REF_CONS_NEUTRAL0: *t = &L->h_cond; break;
    case KL_REF_CONS_NEUTRAL1: *t = &L->h_cond; break;
    case KL_REF_SEC_CONS: *t = &L->h_cons; kl_ld_label(L, "section", f->sections[e].name, e); return &f->sections[e].construction;
    case KL_REF_SEC_XF: *t = &L->h_xf; kl_ld_label(L, "section", f->sections[e].name, e); return &f->sections[e].device;
    case KL_REF_SEC_REG: *t = &L->h_reg; kl_ld_label(L, "section", f->sections[e].name, e); return &f->sections[e].device;
    case KL_REF_LOAD_BUS: *t = &L->h_bus; kl_ld_label(L, "load", f->loads[e].name, e); return &f->loads[e].bus;
    case KL_REF_LOAD_SEC: *t = &L->h_sec; kl_ld_label(L, "load", f->loads[e].name, e); return &f->loads[e].section;
    case KL_REF_CAP_BUS: *t = &L->h_bus; kl_ld_label(L, "capacitor", f->capacitors[e].name, e); return &f->capacitors[e].bus;
    default: return NULL;
    }
    kl_ld_label(L, "construction", f->constructions[e].name, e);
    switch (p->what) {
    case KL_REF_CONS_LAYOUT: return &f->constructions[e].layout;
    case KL_REF_CONS_COND: return &f->constructions[e].phase_conductor;
    case KL_REF_CONS_CABLE: return &f->constructions[e].cable;
    case KL_REF_CONS_NEUTRAL0: return &f->constructions[e].neutral_conductor[0];
    default: return &f->constructions[e].neutral_conductor[1];
    }
}

/* The closest known name, when the table is small enough to scan; the
 * shortest of equally close ones, the first in kl_names_scan_order's order. */
static const char *closest(kl_loader *L, const kl_names *t, const char *name)
{
    const char *best = NULL;
    int order[2000], n, i;
    if (t->count > 2000)
        return NULL;
    n = kl_names_scan_order(t, order);
    if (n < 0)
        L->nomem = 1;
    for (i = 0; i < n; i++) {
        const char *cand[2] = {kl_names_name(t, order[i]), NULL};
        if (kl_ld_suggest(name, cand, 1) == 0)
            if (!best || strlen(cand[0]) < strlen(best))
                best = cand[0];
    }
    return best;
}

static void resolve_one(kl_loader *L, const kl_pending_ref *p)
{
    const kl_names *t = NULL;
    int *target = ref_target(L, p, &t), i;
    const char *near;
    if (!target)
        return;
    i = kl_names_find(t, p->name, strlen(p->name));
    *target = i;
    if (i >= 0)
        return;
    near = closest(L, t, p->name);
    if (near)
        kl_ld_error_at(L, p->loc.line, p->loc.col, "unknown %s '%s': did you mean '%s'?",
                       infos[p->what].kind, p->name, near);
    else if (t == &L->h_bus)
        kl_ld_error_at(L, p->loc.line, p->loc.col, "unknown bus '%s': no section or buses: entry names it; "
                       "check the spelling", p->name);
    else
        kl_ld_error_at(L, p->loc.line, p->loc.col, "unknown %s '%s': declare it under '%s:' or fix the name",
                       infos[p->what].kind, p->name, infos[p->what].list);
}

static int wire_index(const kl_layout *la, const char *id)
{
    int w;
    for (w = 0; w < la->nwires; w++)
        if (strcmp(la->wire[w], id) == 0)
            return w;
    return -1;
}

/* Phase and neutral position ids against the layout's positions. */
static void cons_wires(kl_loader *L, kl_construction *c, const kl_cons_pos *cp)
{
    const kl_layout *la = &L->f->layouts[c->layout];
    int k, used = 0;
    for (k = 0; k < 3 + KL_MAX_NEUTRALS; k++) {
        int w;
        char ids[KL_MAX_WIRES * 24] = "";
        if (!cp->pos[k])
            continue;
        w = wire_index(la, cp->pos[k]);
        if (w < 0) {
            int j;
            for (j = 0; j < la->nwires; j++)
                snprintf(ids + strlen(ids), sizeof ids - strlen(ids), "%s'%.16s'", j ? ", " : "", la->wire[j]);
            kl_ld_error_at(L, cp->loc[k].line, cp->loc[k].col, "position '%s' is not in layout '%s' "
                           "(its positions are %s)", cp->pos[k], la->name ? la->name : "?", ids);
            continue;
        }
        if (used >> w & 1)
            kl_ld_error_at(L, cp->loc[k].line, cp->loc[k].col, "position '%s' is used twice in this construction",
                           cp->pos[k]);
        used |= 1 << w;
        if (k < 3)
            c->phase_wire[k] = w;
        else
            c->neutral_wire[k - 3] = w;
    }
}

/* Ampacities come from the conductors and cables the construction uses; a
 * concentric neutral carries strands x one strand's ampacity. */
static void cons_ampacity(kl_feeder *f, kl_construction *c)
{
    if (c->kind == KL_CONS_OVERHEAD && c->phase_conductor >= 0) {
        c->ampacity_a = f->conductors[c->phase_conductor].ampacity_a;
        c->emergency_ampacity_a = f->conductors[c->phase_conductor].emergency_ampacity_a;
    }
    if (c->kind == KL_CONS_CABLE && c->cable >= 0) {
        const kl_cable *cb = &f->cables[c->cable];
        c->ampacity_a = cb->ampacity_a;
        c->emergency_ampacity_a = cb->emergency_ampacity_a;
        if (c->ampacity_a == 0.0 && cb->phase_conductor >= 0) {
            c->ampacity_a = f->conductors[cb->phase_conductor].ampacity_a;
            c->emergency_ampacity_a = f->conductors[cb->phase_conductor].emergency_ampacity_a;
        }
        if (cb->kind == KL_CABLE_CONCENTRIC && cb->strand_conductor >= 0)
            c->neutral_ampacity_a = cb->strands * f->conductors[cb->strand_conductor].ampacity_a;
    }
    if (c->nneutrals > 0 && c->neutral_conductor[0] >= 0)
        c->neutral_ampacity_a += f->conductors[c->neutral_conductor[0]].ampacity_a;
}

static void finish_constructions(kl_loader *L)
{
    kl_feeder *f = L->f;
    int i;
    for (i = 0; i < f->nconstructions; i++) {
        kl_construction *c = &f->constructions[i];
        if (c->earth_resistivity_ohm_m <= 0)
            c->earth_resistivity_ohm_m = f->earth_resistivity_ohm_m;
        kl_ld_label(L, "construction", c->name, i);
        if (c->kind != KL_CONS_MATRIX && c->layout >= 0)
            cons_wires(L, c, &L->cons_pos[i]);
        if (c->kind != KL_CONS_MATRIX)
            cons_ampacity(f, c);
    }
}

/* A line's phases: those written on the section, which must be a subset of
 * its construction's, or else the construction's. */
static void section_phases(kl_loader *L)
{
    kl_feeder *f = L->f;
    int i;
    for (i = 0; i < f->nsections; i++) {
        kl_section *s = &f->sections[i];
        int given = L->sec_phases_given[i], has = 0;
        char b1[4], b2[4];
        if (s->kind == KL_SEC_LINE && s->construction >= 0)
            has = f->constructions[s->construction].phases;
        else if (s->kind == KL_SEC_REGULATOR && s->device >= 0)
            has = f->regulators[s->device].conn == KL_REG_OPEN_DELTA ? KL_PH_ABC
                                                                     : f->regulators[s->device].phases;
        if (s->kind == KL_SEC_REGULATOR && s->device >= 0 && given && given != KL_PH_ABC
            && f->regulators[s->device].conn == KL_REG_OPEN_DELTA) {
            kl_ld_label(L, "section", s->name, i);
            kl_ld_error_at(L, s->loc.line, s->loc.col, "an open-delta regulator passes all three "
                           "phases; leave 'phases' out or write 'abc' (its units are named in "
                           "the regulator's 'units')");
        }
        s->phases = (uint8_t)(given ? given : has); /* phase masks, 0-7 */
        if (given && has && (given & ~has)) {
            kl_ld_label(L, "section", s->name, i);
            kl_ld_error_at(L, s->loc.line, s->loc.col, "phases '%s' are not all in its %s '%s' (which has %s): "
                           "use a subset or another %s", kl_phases_str(given, b1),
                           s->kind == KL_SEC_LINE ? "construction" : "regulator",
                           s->kind == KL_SEC_LINE ? f->constructions[s->construction].name
                                                  : f->regulators[s->device].name,
                           kl_phases_str(has, b2), s->kind == KL_SEC_LINE ? "construction" : "regulator");
        }
    }
}

void kl_ld_resolve(kl_loader *L)
{
    int i;
    for (i = 0; i < L->npending; i++)
        resolve_one(L, &L->pending[i]);
    finish_constructions(L);
    section_phases(L);
}
