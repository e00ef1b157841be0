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
