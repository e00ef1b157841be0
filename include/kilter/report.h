/* kilter: the study report as one self-contained HTML file, and its plots.
 *
 * The report is inline SVG and CSS only: no script, no external asset, so it
 * can be mailed or archived and still reads the same.  Every name taken from
 * the feeder file is escaped before it reaches HTML or SVG.
 *
 * The library writes to a caller's FILE* (a file, or a memory stream from
 * open_memstream); writing the file whole or not at all (temporary name and
 * rename) is the caller's job.  All arrays are indexed by the feeder's own
 * bus and section ids, as the load-flow result holds them. */
#ifndef KILTER_REPORT_H
#define KILTER_REPORT_H

#include <stdio.h>
#include "kilter/error.h"
#include "kilter/feeder.h"
#include "kilter/limits.h"
#include "kilter/progress.h"

/* What colours the sections of the feeder map. */
typedef enum {
    KL_MAP_BY_VOLTAGE = 0, /* lowest phase voltage at the section's far bus, per unit */
    KL_MAP_BY_VUF = 1,     /* voltage unbalance factor |V2|/|V1| at the far bus, % */
    KL_MAP_BY_NEUTRAL = 2, /* neutral current of the section, A */
    KL_MAP_BY_LOADING = 3  /* the section's loading, % of its continuous rating (flow.h
                              kl_loading.worst), in bands: within, over the warning level,
                              over the rating */
} kl_map_index;

/* Phase quantities from a solved load flow (flow.h's kl_flow_result holds
 * exactly these arrays). */
typedef struct {
    const kl_complex *v;         /* [3*nbuses] phase-to-neutral volts, 0 for absent phases */
    const double *v_base_ln;     /* [nbuses] line-to-neutral base volts of each bus */
    const kl_complex *i;         /* [3*nsections] sending-end phase currents, A */
    const kl_complex *i_neutral; /* [nsections] neutral-conductor current, A; NULL if unknown */
} kl_report_phases;

struct kl_flow_result;
/* The arrays above, taken from a solved load flow (flow.h). */
kl_report_phases kl_report_phases_of(const struct kl_flow_result *res);

typedef struct {
    const char *title;           /* NULL: "Unbalance study of <feeder name>" */
    kl_map_index map_index;
    int phasor_bus;              /* bus id, or -1: the bus with the largest VUF */
    kl_limits limits;            /* service-voltage bands and unbalance levels (limits.h) */
    double load_scale;           /* load level the flow was solved at (1 = as in the file) */
    int max_table_rows;          /* longest table printed (worst rows first); default 40 */
} kl_report_options;

struct kl_study;
struct kl_rebalance_plan;
struct kl_rephaser;

typedef struct {
    const kl_feeder *feeder;
    kl_report_phases ph;
    const struct kl_study *study; /* the unbalance study (study.h) of the same solution, or
                                     NULL: the page then shows what the phases alone give */
    const struct kl_rebalance_plan *plan; /* suggested phase moves (rebalance.h), or NULL */
    const struct kl_rephaser *rephaser;   /* the plan's items (their names); with plan */
    const struct kl_flow_result *flow;    /* the load flow the phases come from, or NULL: its
                                             regulators' taps and control are then not shown */
    kl_report_options opt;
    kl_progress *progress;       /* may be NULL */
} kl_report_input;

/* "voltage", "vuf", "neutral" or "loading" -> the kl_map_index; -1 for anything else. */
int kl_map_index_parse(const char *s);

/* Fills the defaults stated in kl_report_options. */
void kl_report_options_default(kl_report_options *o);

/* Number formats of the HTML tables.  Each table cell also carries the
 * figure as the CSV outputs print it (KL_NUM_CSV, in a data-v attribute), so
 * the page and the CSV agree to the digit (tests/cli_report_html.sh). */
#define KL_NUM_CSV "%.6f"  /* the study's and flow's CSV figures */
#define KL_NUM_PU "%.4f"   /* per-unit voltages and sequence magnitudes */
#define KL_NUM_PCT "%.2f"  /* unbalance factors and rates, % */
#define KL_NUM_AMP "%.1f"  /* currents, A */
#define KL_NUM_DEG "%.2f"  /* angles, degrees */

/* The whole report.  KL_EARG when in/feeder/arrays are missing or the phasor
 * bus is out of range; KL_ENOMEM; KL_EIO when writing to `out` failed. */
kl_status kl_report_html_write(FILE *out, const kl_report_input *in, kl_errors *err);

/* Single plots, as standalone SVG elements (also used by the report). */
kl_status kl_plot_profile_write(FILE *out, const kl_report_input *in, kl_errors *err);
kl_status kl_plot_map_write(FILE *out, const kl_report_input *in, kl_errors *err);
/* The same map coloured by loading (KL_MAP_BY_LOADING), whatever map_index says. */
kl_status kl_plot_map_loading_write(FILE *out, const kl_report_input *in, kl_errors *err);
kl_status kl_plot_phasor_write(FILE *out, const kl_report_input *in, int bus, kl_errors *err);
/* Head currents before and after the plan's moves, and the residual after
 * each move (in->plan required; KL_EARG without it). */
kl_status kl_plot_moves_write(FILE *out, const kl_report_input *in, kl_errors *err);

#endif
