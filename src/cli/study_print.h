/* kilter program: printing the unbalance study (table, CSV, JSON). */
#ifndef KILTER_STUDY_PRINT_H
#define KILTER_STUDY_PRINT_H

#include <stdio.h>
#include "kilter/feeder.h"
#include "kilter/flow.h"
#include "kilter/study.h"

#define KL_STUDY_CAUTION "results are planning estimates; field work follows the utility's " \
    "switching and safety rules, local codes, and review by a licensed engineer"

typedef enum { KL_TAB_BUSES = 0, KL_TAB_SECTIONS, KL_TAB_NEUTRALS, KL_TAB_RUNS,
               KL_TAB_CONTRIB, KL_TAB_REGULATORS } kl_study_table;

/* Everything the printers read. */
typedef struct {
    const kl_feeder *f;
    const kl_study *s;
    const kl_flow_result *flow;  /* the load flow the study read (its regulators) */
    const kl_study_phases *ph;
    const kl_study_options *opt;
    int iterations;              /* load-flow iterations */
    int range_b;                 /* 1: only Range B counts as broken (--range B) */
    const kl_complaint_result *cr; /* --at: the focused report; NULL otherwise */
    const kl_complaint_input *ci;
} kl_study_print;

void kl_study_print_table(FILE *o, const kl_study_print *p);
void kl_study_print_at(FILE *o, const kl_study_print *p);
void kl_study_print_csv(FILE *o, const kl_study_print *p, kl_study_table t);
void kl_study_print_json(FILE *o, const kl_study_print *p);

#endif
