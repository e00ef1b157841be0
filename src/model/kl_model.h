/* kilter, model layer (src/model): the feeder model (include/kilter/feeder.h)
 * and the facts derived from it alone.  Visible to model and the layers above. */
#ifndef KILTER_MODEL_INTERNAL_H
#define KILTER_MODEL_INTERNAL_H

#include "kl_math.h"
#include "kilter/feeder.h"

/* The source-side and load-side buses of a section (sections may be written
 * with `to` on the source side: kl_section.reversed). */
static inline int kl_sec_up(const kl_section *s) { return s->reversed ? s->to : s->from; }
static inline int kl_sec_down(const kl_section *s) { return s->reversed ? s->from : s->to; }

/* ---- feeder_tree.c: the feeder tree, breadth-first from the source (built
 * once per feeder: by the loader, kept in kl_feeder.tree and freed with the
 * feeder).  Positions 0 .. nlive - 1 are the energized buses, reached through
 * closed sections (position 0 the source); nlive .. nreached - 1 the buses
 * beyond open switches.  Sections are met in file order at each bus, so every
 * stage that walks the tree walks it in the same order. */
struct kl_feeder_tree {
    int nbuses;
    int nreached;   /* buses reached from the source, through closed sections or open switches */
    int nlive;      /* of which energized: positions [0, nlive) */
    int *order;     /* [nbuses] by position (the first nreached used): bus id */
    int *sec;       /* [nbuses] by position: the section feeding order[i], -1 at position 0 */
    int *up;        /* [nbuses] by position: position of the bus on the source side, -1 at 0;
                       up[i] < i and never decreases with i (breadth-first) */
    int *pos;       /* [nbuses] by bus id: position, -1 when not reached */
    int *links;     /* [nlinks] closed sections between energized buses that close a loop
                       (radial: false), in the order the search meets them */
    int nlinks;
    int nerrors;    /* topology errors found while building */
    int nomem;
};
typedef struct kl_feeder_tree kl_feeder_tree;
/* Builds the tree and checks: a closed section that closes a loop (radial
 * feeders; a link otherwise), a transformer or regulator fed from its `to`.
 * Errors go to err (may be NULL: checks counted in nerrors only).  Returns
 * KL_ETOPO after an error (*out still set), KL_ENOMEM (*out NULL). */
kl_status kl_feeder_tree_build(const kl_feeder *f, kl_feeder_tree **out, kl_errors *err);
void kl_feeder_tree_free(kl_feeder_tree *t);
/* f->tree, or for a feeder assembled in code (no tree) one built into *own,
 * which the caller frees. */
kl_status kl_feeder_tree_of(const kl_feeder *f, const kl_feeder_tree **t, kl_feeder_tree **own,
                            kl_errors *err);
/* Buses the source cannot reach, in one message: KL_ETOPO, else KL_OK. */
kl_status kl_feeder_tree_check_islands(const kl_feeder_tree *t, const kl_feeder *f, kl_errors *err);
/* depth[nbuses] (sections from the source) and dist_m[nbuses] (line length
 * from the source; devices count zero) of the energized buses; -1 and NAN
 * for the others. */
void kl_feeder_tree_distances(const kl_feeder_tree *t, const kl_feeder *f, int *depth, double *dist_m);
/* 1 when bus b is energized. */
static inline int kl_feeder_tree_live(const kl_feeder_tree *t, int b)
{
    return t->pos[b] >= 0 && t->pos[b] < t->nlive;
}
/* The section feeding energized bus b; -1 at the source and for the others. */
static inline int kl_feeder_tree_psec(const kl_feeder_tree *t, int b)
{
    return kl_feeder_tree_live(t, b) ? t->sec[t->pos[b]] : -1;
}
/* The bus on the source side of energized bus b; -1 likewise. */
static inline int kl_feeder_tree_pbus(const kl_feeder_tree *t, int b)
{
    return kl_feeder_tree_live(t, b) && t->pos[b] > 0 ? t->order[t->up[t->pos[b]]] : -1;
}

/* ---- feeder_ratings.c (kl_feeder_ratings_check is public, feeder.h).
 * The nominal kV across a unit at reached bus b: line-to-line for delta;
 * line-to-neutral for wye, half the rating on a center-tapped secondary's
 * legs (120 of 240 V). */
double kl_feeder_ratings_unit_kv(const kl_feeder *f, const kl_feeder_tree *t, int b, int delta);
/* 1 when transformer section e is fed from its low winding (step-up): the
 * winding rated closer to the nominal voltage of its source-side bus faces
 * the source. */
int kl_feeder_ratings_step_up(const kl_feeder *f, int e);

/* ---- phases.c: phase masks (kl_phases_str, kl_phases_count and
 * kl_phases_rotate are public, include/kilter/feeder.h). */
/* The phases of a transformer's load-side bus, as kl_transformer_matrices
 * names them for a step-down bank: abc below three-phase and open banks; the
 * two legs of a center-tapped secondary in slots a and b; a single-phase
 * secondary on the primary's phase (line-to-line primary: the slot of its
 * first phase, ab -> a, bc -> b, ca -> c).  The loader uses it so that the
 * file's phases and the load flow's agree. */
int kl_phases_transformer_load(const kl_transformer *t, int src_phases);

#endif
