/* kilter, report layer (src/report): the HTML report and its plots.  Visible
 * to report and the program. */
#ifndef KILTER_REPORT_INTERNAL_H
#define KILTER_REPORT_INTERNAL_H

#include <stdio.h>
#include "kl_study.h"
#include "kl_rebalance.h"
#include "kilter/report.h"
#include "kilter/unbalance.h"

/* ---- numfmt.c: numbers exactly as printf writes them, faster.
 * kl_numfmt_fixed: snprintf(buf, len, "%.*f", prec, x), byte for byte (len
 * at least 400 for any double); returns the length.  kl_numfmt_general: the
 * same for "%.*g".  kl_numfmt_put: fprintf(o, fmt, x) for a format taking one
 * double, by those two when fmt is text, "%", an optional width, ".", one
 * digit, "f" or "g", text (no flags), by fprintf otherwise. */
int kl_numfmt_fixed(char *buf, size_t len, double x, int prec);
int kl_numfmt_general(char *buf, size_t len, double x, int prec);
void kl_numfmt_put(FILE *o, const char *fmt, double x);

/* ---- svg.c, plot_tree.c, plot_*.c, report_html.c (the report): a small
 * SVG/HTML writer over a FILE*.  Attribute strings (`attr`) are ours, never
 * data; every string that may come from a feeder file goes through
 * kl_xml_escape.  Elements with a non-finite coordinate are left out. */
void kl_xml_escape(FILE *out, const char *s); /* & < > " ' escaped; C0 controls -> U+FFFD */
void kl_svg_open(FILE *out, double w, double h, const char *label);
void kl_svg_close(FILE *out);
void kl_svg_text(FILE *out, double x, double y, const char *attr, const char *text);
void kl_svg_textf(FILE *out, double x, double y, const char *attr, const char *fmt, ...)
    __attribute__((format(printf, 5, 6)));
void kl_svg_line(FILE *out, double x1, double y1, double x2, double y2, const char *attr);
void kl_svg_polyline(FILE *out, const double *x, const double *y, int n, const char *attr);
void kl_svg_rect(FILE *out, double x, double y, double w, double h, const char *attr);
void kl_svg_circle(FILE *out, double cx, double cy, double r, const char *attr);
/* Line from (x1,y1) to (x2,y2) ending in a filled arrowhead of length `head`. */
void kl_svg_arrow(FILE *out, double x1, double y1, double x2, double y2, double head,
                  const char *colour, double width, const char *dash);
/* "Nice" tick positions covering [lo, hi] (Heckbert, Graphics Gems 1990):
 * writes at most cap ticks, returns their number (0 on a bad range). */
int kl_svg_ticks(double lo, double hi, int nwant, double *ticks, int cap);
/* A plot frame: pixel box (px, py, pw, ph) showing data [x0,x1] x [y0,y1]. */
typedef struct { double px, py, pw, ph, x0, x1, y0, y1; } kl_svg_frame;
double kl_svg_fx(const kl_svg_frame *f, double x);
double kl_svg_fy(const kl_svg_frame *f, double y);
/* Grid, frame, ticks with `xdec`/`ydec` decimals (xdec < 0: no x ticks for a
 * category axis), axis labels (escaped). */
void kl_svg_axes(FILE *out, const kl_svg_frame *f, const char *xlabel, int xdec,
                 const char *ylabel, int ydec);
/* Horizontal band ylo..yhi across the frame with a label at its right end. */
void kl_svg_band(FILE *out, const kl_svg_frame *f, double ylo, double yhi,
                 const char *fill, const char *label);
/* Legend rows at (x, y): a line sample drawn with attr[i] and labels[i]. */
void kl_svg_legend(FILE *out, double x, double y, int n, const char *const *labels,
                   const char *const *attr);
/* Sequential colour scale of our own (teal -> sand -> brick) at t in [0,1];
 * writes "#rrggbb" into buf[8]. */
const char *kl_svg_colour_scale(double t, char buf[8]);

/* plot_tree.c: the feeder tree as the plots draw it: its energized part,
 * with depths and distances (kl_feeder_tree_pbus / _psec give the parents). */
typedef struct {
    const kl_feeder_tree *tree; /* the feeder's, or own */
    kl_feeder_tree *own;        /* built for a feeder assembled in code; NULL otherwise */
    int nbuses;
    int nreached;     /* energized buses, the ones drawn: order[0 .. nreached) */
    const int *order; /* tree->order: bus ids breadth-first from the source */
    int *depth;       /* [nbuses] sections from the source, -1 not drawn */
    double *dist_m;   /* [nbuses] line length from the source, NAN not drawn */
} kl_plot_tree;
kl_status kl_plot_tree_build(const kl_feeder *f, kl_plot_tree **out, kl_errors *err);
void kl_plot_tree_free(kl_plot_tree *t);
/* Layered layout: x[b] = depth, y[b] = row; NAN for unreached buses. */
kl_status kl_plot_tree_layout(const kl_feeder *f, const kl_plot_tree *t, double *x, double *y,
                              int *nrows, kl_errors *err);

/* report_values.c: the figures the report shows (NAN when not defined). */
kl_status kl_report_input_check(FILE *out, const kl_report_input *in, kl_errors *err);
int kl_report_bus_phases(const kl_report_input *in, int b);
double kl_report_v_pu(const kl_report_input *in, int b, int p);
double kl_report_vmin_pu(const kl_report_input *in, int b);
int kl_report_bus_unbalance(const kl_report_input *in, int b, double v012_pu[3],
                            kl_unb_voltage *u);
double kl_report_vuf_pct(const kl_report_input *in, int b);
double kl_report_neutral_a(const kl_report_input *in, int s);
double kl_report_map_value(const kl_report_input *in, kl_map_index ix, int s, int far_bus);
double kl_report_loading_pct(const kl_report_input *in, int s);
const char *kl_report_map_index_name(kl_map_index ix);
/* Most sections a plot draws; beyond it the map and profile keep the
 * three-phase part and say so (a browser slows badly past ~10^5 elements). */
#define KL_PLOT_MAX_SECTIONS 20000

/* table_html.c: the cells of every report table; report_tables.c: the
 * tables built from the phase arrays. */
typedef struct {
    double key;
    int id;
} kl_ranked;
int kl_report_rank_cmp(const void *a, const void *b); /* qsort: key descending, then id */
const char *kl_report_bus_name(const kl_feeder *f, int b);
void kl_html_td_num(FILE *out, const char *fmt, double v); /* NAN -> dash */
void kl_html_td_name(FILE *out, const char *name);       /* escaped */
kl_status kl_report_table_unbalance(FILE *out, const kl_report_input *in, kl_errors *err);
kl_status kl_report_table_neutral(FILE *out, const kl_report_input *in, kl_errors *err);

/* report_study.c: the study's tables (in->study must be set). */
kl_status kl_report_study_neutral(FILE *out, const kl_report_input *in, kl_errors *err);
kl_status kl_report_study_runs(FILE *out, const kl_report_input *in, kl_errors *err);
void kl_report_study_contrib(FILE *out, const kl_report_input *in);
kl_status kl_report_study_motors(FILE *out, const kl_report_input *in, kl_errors *err);
/* The most loaded sections (table), inside the loading map's section. */
kl_status kl_report_study_loading(FILE *out, const kl_report_input *in, kl_errors *err);

/* plot_moves.c: the body of "Suggested phase moves" (in->plan set). */
kl_status kl_report_moves(FILE *out, const kl_report_input *in, kl_errors *err);

/* The trade's usual phase colours are not one convention: these are ours,
 * stated in every legend (phase a dark red, b dark blue, c amber). */
#define KL_COLOUR_A "#a4262c"
#define KL_COLOUR_B "#1f4e9a"
#define KL_COLOUR_C "#c98a00"

#endif
