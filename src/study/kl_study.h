/* kilter, study layer (src/study): sequence quantities, unbalance indices,
 * limits, neutral sizing, contributors, the complaint check.  Visible to study
 * and the layers above. */
#ifndef KILTER_STUDY_INTERNAL_H
#define KILTER_STUDY_INTERNAL_H

#include "kl_flow.h"
#include "kilter/study.h"

/* kl_neutral_size and kl_contrib_rank (study.h) on the feeder tree
 * (src/model/feeder_tree.c: its energized part, sections at positions
 * 1 .. nlive - 1, parents before children), handed down by kl_study_run. */
kl_status kl_neutral_size_on(const kl_feeder *f, const kl_study_phases *ph,
                             const kl_feeder_tree *t, const kl_study_options *opt, kl_study *s,
                             kl_errors *err);
kl_status kl_contrib_rank_on(const kl_feeder *f, const kl_study_phases *ph,
                             const kl_feeder_tree *t, const kl_study_paths *paths,
                             const kl_study_options *opt, kl_study *s, kl_errors *err);

#endif
