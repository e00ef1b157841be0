/* kilter: declarations shared inside the library (not part of the public API).
 * Each area appends its own block, headed by a comment naming its files. */
#ifndef KILTER_INTERNAL_H
#define KILTER_INTERNAL_H

#include <stddef.h>
#include "kilter/error.h"
#include "kilter/feeder.h"

/* ---- alloc.c: the one allocator every library allocation goes through.
 * Tests inject failures with kl_alloc_fail_after(n): the n-th allocation from
 * now (0 = the next one) and every later one fails, until kl_alloc_fail_after(-1). */
void *kl_malloc(size_t n);
void *kl_calloc(size_t count, size_t size);
void *kl_realloc(void *p, size_t n);
void kl_free(void *p);
void kl_alloc_fail_after(long n);
long kl_alloc_count(void); /* allocations made so far (for the injection tests) */


/* ---- svg.c, plot_tree.c, plot_*.c, report_html.c (the report): a small
 * SVG/HTML writer over a FILE*.  Attribute strings (`attr`) are ours, never
 * data; every string that may come from a feeder file goes through
 * kl_xml_escape.  Elements with a non-finite coordinate are left out. */
#include <stdio.h>
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
/* Grid, frame, ticks with `xdec`/`ydec` decimals, axis labels (escaped). */
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

/* plot_tree.c: the radial tree as the plots see it (breadth-first from the
 * source over closed sections; unreached buses have depth -1). */
typedef struct {
    int nbuses;
    int nreached;    /* buses reached from the source */
    int *order;      /* [nreached] bus ids, breadth-first from the source */
    int *parent_bus; /* [nbuses] -1 for the source and unreached buses */
    int *parent_sec; /* [nbuses] section feeding the bus, -1 likewise */
    int *depth;      /* [nbuses] sections from the source, -1 unreached */
    double *dist_m;  /* [nbuses] line length from the source, NAN unreached */
    int *adj_start;  /* [nbuses+1] slices of adj_sec */
    int *adj_sec;    /* [2*nsections] closed sections at each bus */
} kl_plot_tree;
kl_status kl_plot_tree_build(const kl_feeder *f, kl_plot_tree **out, kl_errors *err);
void kl_plot_tree_free(kl_plot_tree *t);
/* Layered layout: x[b] = depth, y[b] = row; NAN for unreached buses. */
kl_status kl_plot_tree_layout(const kl_feeder *f, const kl_plot_tree *t, double *x, double *y,
                              int *nrows, kl_errors *err);

/* report_values.c: the figures the report shows (NAN when not defined). */
#include "kilter/report.h"
#include "kilter/unbalance.h"
kl_status kl_report_input_check(FILE *out, const kl_report_input *in, kl_errors *err);
int kl_report_bus_phases(const kl_report_input *in, int b);
double kl_report_v_pu(const kl_report_input *in, int b, int p);
double kl_report_vmin_pu(const kl_report_input *in, int b);
int kl_report_bus_unbalance(const kl_report_input *in, int b, double v012_pu[3],
                            kl_unb_voltage *u);
double kl_report_vuf_pct(const kl_report_input *in, int b);
double kl_report_neutral_a(const kl_report_input *in, int s);
double kl_report_map_value(const kl_report_input *in, kl_map_index ix, int s, int far_bus);
const char *kl_report_map_index_name(kl_map_index ix);
/* Most sections a plot draws; beyond it the map and profile keep the
 * three-phase part and say so (a browser slows badly past ~10^5 elements). */
#define KL_PLOT_MAX_SECTIONS 20000

/* The trade's usual phase colours are not one convention: these are ours,
 * stated in every legend (phase a dark red, b dark blue, c amber). */
#define KL_COLOUR_A "#a4262c"
#define KL_COLOUR_B "#1f4e9a"
#define KL_COLOUR_C "#c98a00"

#endif
