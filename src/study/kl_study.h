/* kilter, study layer (src/study): sequence quantities, unbalance indices,
 * limits, neutral sizing, contributors, the complaint check.  Visible to study
 * and the layers above. */
#ifndef KILTER_STUDY_INTERNAL_H
#define KILTER_STUDY_INTERNAL_H

#include "kl_flow.h"
#include "kilter/study.h"

/* ---- study.c, neutral_size.c, contrib.c: the feeder as a tree of
 * live sections, breadth-first from the source (parents before children). */
typedef struct {
    int *psec;    /* [nbuses] live section feeding the bus, -1 at the source / unreached */
    int *order;   /* [norder] live sections, parents before children */
    int norder;
} kl_study_tree;
/* sec_live: [nsections] 1 when the section carries current (NULL: closed ones). */
kl_status kl_study_tree_build(const kl_feeder *f, const int *sec_live, kl_study_tree *t);
void kl_study_tree_free(kl_study_tree *t);
/* kl_neutral_size and kl_contrib_rank (study.h) on a tree the caller built,
 * so that a study builds it once for both. */
kl_status kl_neutral_size_on(const kl_feeder *f, const kl_study_phases *ph,
                             const kl_study_tree *t, const kl_study_options *opt, kl_study *s,
                             kl_errors *err);
kl_status kl_contrib_rank_on(const kl_feeder *f, const kl_study_phases *ph,
                             const kl_study_tree *t, const kl_study_paths *paths,
                             const kl_study_options *opt, kl_study *s, kl_errors *err);

#endif
