/* kilter program: printing the unbalance study (table, CSV, JSON). */
#ifndef KILTER_STUDY_PRINT_H
#define KILTER_STUDY_PRINT_H

#include <stdio.h>
#include "kilter/feeder.h"
#include "kilter/flow.h"
#include "kilter/study.h"
#include "kilter/table.h"

#define KL_STUDY_CAUTION "results are planning estimates; field work follows the utility's " \
    "switching and safety rules, local codes, and review by a licensed engineer"

/* The study's tables (--table NAME), in the workbook's sheet order after the
 * first two. */
typedef enum { KL_TAB_BUSES = 0, KL_TAB_SECTIONS, KL_TAB_NEUTRALS, KL_TAB_RUNS,
               KL_TAB_CONTRIB, KL_TAB_REGULATORS, KL_TAB_SUMMARY, KL_TAB_COMPLIANCE,
               KL_TAB_COUNT } kl_study_table;
#define KL_STUDY_TABLE_NAMES "buses, sections, neutrals, runs, contributors, regulators, summary or " \
    "compliance"

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
/* The table named `name` (kl_table.name), or -1. */
int kl_study_table_parse(const char *name);
/* Every table of the study as the sheets of one workbook: summary,
 * compliance, then the others in --table order; they read *rows and *flow
 * (the regulators), filled here. */
void kl_study_sheets(const kl_study_print *p, kl_study_rows *rows, kl_flow_rows *flow,
                     kl_table_sheet sheet[KL_TAB_COUNT]);
void kl_study_print_json(FILE *o, const kl_study_print *p);

#endif
