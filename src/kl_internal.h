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

/* report_tables.c: table cells and the tables built from the phase arrays. */
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
void kl_report_study_runs(FILE *out, const kl_report_input *in);
void kl_report_study_contrib(FILE *out, const kl_report_input *in);
void kl_report_study_motors(FILE *out, const kl_report_input *in);

/* plot_moves.c: the body of "Suggested phase moves" (in->plan set). */
kl_status kl_report_moves(FILE *out, const kl_report_input *in, kl_errors *err);

/* The trade's usual phase colours are not one convention: these are ours,
 * stated in every legend (phase a dark red, b dark blue, c amber). */
#define KL_COLOUR_A "#a4262c"
#define KL_COLOUR_B "#1f4e9a"
#define KL_COLOUR_C "#c98a00"
/* ---- arena.c, names.c (loader): the string arena that owns every name of a
 * feeder, and an open-addressing table from name to element index. */
kl_arena *kl_arena_new(void);
void kl_arena_free(kl_arena *a);
const char *kl_arena_strndup(kl_arena *a, const char *s, size_t len); /* NULL: out of memory */
const char *kl_arena_strdup(kl_arena *a, const char *s);
size_t kl_arena_bytes(const kl_arena *a);
/* prefault.c: maps the whole pages of [p, p + n) for writing in one call
 * (a hint: ignored where the system does not offer it). */
void kl_prefault(void *p, size_t n);
/* Asks for transparent huge pages on the 2 MiB pages inside [p, p + n)
 * (a hint, for large arrays read in random order). */
void kl_hugepage(void *p, size_t n);

typedef struct {
    unsigned hash; /* FNV-1a of the name */
    int ref;       /* element index + 1; 0: empty slot */
} kl_name_slot;

/* The names themselves are not copied: entry `index` is the name of element
 * `index` of the array *elems (elements `stride` bytes apart, the name their
 * first member), so the table follows the array when it is reallocated. */
typedef struct {
    kl_name_slot *slots; /* [cap], cap a power of two, at most half full */
    unsigned cap;
    int count;
    void *const *elems;  /* address of the element array's pointer */
    size_t stride;       /* sizeof one element */
} kl_names;

void kl_names_init(kl_names *t, void *const *elems, size_t stride);
void kl_names_free(kl_names *t); /* the slots only: the table can be used again */
/* Index stored for s[0..len), or -1. */
int kl_names_find(const kl_names *t, const char *s, size_t len);
/* Where a look-up that missed stopped, for adding the same name after it
 * without probing again (kl_names_add_hint). */
typedef struct {
    const kl_names *table; /* the table looked in */
    unsigned hash, slot, cap;
    int count;
    size_t len;
} kl_name_hint;
int kl_names_find_hint(const kl_names *t, const char *s, size_t len, kl_name_hint *hint);
/* kl_names_add, straight into the hinted slot when the table is unchanged
 * since the look-up (and `name` is its s[0..len)). */
kl_status kl_names_add_hint(kl_names *t, const char *name, int index, const kl_name_hint *hint);
/* Adds name -> index; `name` must be element index's name (an arena
 * string).  The caller checks for duplicates with kl_names_find first. */
kl_status kl_names_add(kl_names *t, const char *name, int index);
/* The element indices of the table's count names into order[count], in a
 * fixed order independent of the hash (names.c); count, or -1 when out of
 * memory. */
int kl_names_scan_order(const kl_names *t, int *order);
const char *kl_names_name(const kl_names *t, int index); /* element index's name */
/* The name held in slot i (0 <= i < cap), NULL for an empty slot. */
const char *kl_names_slot_name(const kl_names *t, unsigned i);

/* ---- feeder_yaml.c (loader): libyaml's event stream, read one element at a
 * time into a small reusable tree of nodes.  Memory is bounded by the largest
 * element, never by the file. */
typedef enum {
    KL_YEV_ERROR = -1, KL_YEV_STREAM_END = 0, KL_YEV_DOC_START, KL_YEV_DOC_END,
    KL_YEV_MAP_START, KL_YEV_MAP_END, KL_YEV_SEQ_START, KL_YEV_SEQ_END, KL_YEV_SCALAR
} kl_yev;

enum { KL_YSCALAR = 1, KL_YMAP = 2, KL_YSEQ = 3 };

typedef struct {
    int kind;       /* KL_YSCALAR, KL_YMAP, KL_YSEQ */
    int line, col;  /* 1-based start */
    int text, len;  /* scalar: offset of its NUL-terminated text in the pool */
    int first;      /* map / sequence: first child (maps: key, value, key, ...), -1 */
    int next;       /* next sibling, -1 */
    int count;      /* children */
} kl_ynode;

typedef struct kl_yreader kl_yreader;

/* The reader reports syntax errors, anchors and aliases into err (as file
 * `file`) and from then on returns KL_YEV_ERROR. */
kl_yreader *kl_yreader_new_file(void *fp, const char *file, kl_errors *err);
kl_yreader *kl_yreader_new_buffer(const char *text, size_t len, const char *file, kl_errors *err);
void kl_yreader_free(kl_yreader *r);
kl_yev kl_yreader_peek(kl_yreader *r);
void kl_yreader_consume(kl_yreader *r);
void kl_yreader_mark(const kl_yreader *r, int *line, int *col); /* of the peeked event */
int kl_yreader_nomem(const kl_yreader *r);
int kl_yreader_failed(const kl_yreader *r); /* a syntax or structure error was reported */
/* Reads the next complete value into the node pool; root index or -1. */
int kl_yreader_tree(kl_yreader *r);
/* Consumes the next complete value without storing it; -1 on error. */
int kl_yreader_skip(kl_yreader *r);
void kl_yreader_reset(kl_yreader *r); /* empties the node pool */
/* The peeked event's scalar bytes (len set; "" for other events).  For
 * tests of the reader: the loader reads values through the node pool. */
const char *kl_yreader_text(const kl_yreader *r, size_t *len);
/* 1 once libyaml reads the input: the fast scanner declined (see
 * yaml_fast.c), or the input cannot be read again from its start. */
int kl_yreader_declined(const kl_yreader *r);
/* kl_yreader_new_file with a given window for the fast scanner (tests use a
 * small one to exercise the window's moves). */
kl_yreader *kl_yreader_new_file_window(void *fp, const char *file, kl_errors *err, size_t window);

/* yaml_fast.c: the scanner for the YAML subset of feeder files.  It yields
 * the events libyaml would, or declines (returns 0) from some point on, and
 * never reports an error itself. */
typedef struct kl_yfast kl_yfast;
typedef struct {
    int kind;          /* kl_yev */
    size_t line, col;  /* 0-based start mark, as libyaml's */
    const char *text;  /* scalar bytes, valid until the next call; 8 more may be read */
    size_t len;
} kl_yfast_event;
#define KL_YFAST_WINDOW ((size_t)1 << 20) /* bytes of file input held at once */
/* Reads from fp (a FILE *, with a window of `window` bytes) or, when fp is
 * NULL, from text[0 .. len).  NULL when out of memory. */
kl_yfast *kl_yfast_new(void *fp, const char *text, size_t len, size_t window);
int kl_yfast_next(kl_yfast *s, kl_yfast_event *ev); /* 1: an event; 0: declined; -1: out of memory */
void kl_yfast_free(kl_yfast *s);
/* The node pool is the reader's first member, so that these two, called for
 * every key and value the loader reads, are inlined (C11 6.7.2.1p15: a
 * pointer to a structure points to its first member). */
typedef struct {
    kl_ynode *nodes; /* [nnodes] */
    char *text;      /* NUL-terminated scalar texts */
} kl_ypool;
static inline const kl_ynode *kl_ynode_at(const kl_yreader *r, int i)
{
    return &((const kl_ypool *)(const void *)r)->nodes[i];
}
/* A scalar's text; "" for a mapping or sequence. */
static inline const char *kl_ynode_text(const kl_yreader *r, int i)
{
    const kl_ypool *p = (const kl_ypool *)(const void *)r;
    return p->nodes[i].kind == KL_YSCALAR ? p->text + p->nodes[i].text : "";
}

/* ---- feeder_load.c, feeder_fields.c, feeder_elements.c, feeder_topology.c:
 * the loader's working state, shared by its files. */
enum {
    KL_REF_SOURCE_BUS, KL_REF_CABLE_COND, KL_REF_CABLE_STRAND, KL_REF_CONS_LAYOUT,
    KL_REF_CONS_COND, KL_REF_CONS_CABLE, KL_REF_CONS_NEUTRAL0, KL_REF_CONS_NEUTRAL1,
    KL_REF_SEC_CONS, KL_REF_SEC_XF, KL_REF_SEC_REG, KL_REF_LOAD_BUS, KL_REF_LOAD_SEC,
    KL_REF_CAP_BUS
};

typedef struct {
    int what;          /* KL_REF_* */
    int elem;          /* index of the referring element */
    const char *name;  /* the name referred to (arena) */
    kl_loc loc;
} kl_pending_ref;

/* Phase and neutral positions of a construction, by position id, resolved
 * against its layout once every layout has been read. */
typedef struct {
    const char *pos[3 + KL_MAX_NEUTRALS]; /* a, b, c, neutral 0, neutral 1; NULL when absent */
    kl_loc loc[3 + KL_MAX_NEUTRALS];
    int given_phases;  /* matrix constructions: mask from `phases:` */
} kl_cons_pos;

typedef struct {
    kl_feeder *f;
    kl_yreader *r;
    kl_errors *err;
    const char *file;
    int nerr;               /* problems this load has reported */
    int nomem;
    const char *elem_kind;  /* the element being read, for messages (kl_ld_label) */
    const char *elem_name;
    int elem_index;
    kl_name_hint name_hint;  /* the element's own name, looked up and not found */
    char elem[160];         /* its label, formatted when a problem is reported */
    kl_names h_bus, h_cond, h_cable, h_layout, h_cons, h_sec, h_xf, h_reg, h_load, h_cap;
    int cap_conductors, cap_cables, cap_layouts, cap_constructions, cap_buses,
        cap_sections, cap_loads, cap_capacitors, cap_transformers, cap_regulators,
        cap_declared, cap_secph, cap_conspos;
    unsigned char *bus_declared; /* [cap_buses]: 1 once listed under buses: */
    int *sec_phases_given;       /* [cap_sections]: mask written in the file, 0 = default */
    kl_cons_pos *cons_pos;       /* [cap_constructions] */
    kl_pending_ref *pending;
    int npending, cap_pending;
    int has_source;
} kl_loader;

/* Fields of one mapping, looked up by key index. */
#define KL_FIELDS_MAX 40
typedef struct {
    int map;                   /* the mapping node */
    const char *const *keys;   /* NULL-terminated */
    int val[KL_FIELDS_MAX];    /* value node per key, -1 when absent */
} kl_fields;

enum { KL_F_REQ = 1, KL_F_POS = 2, KL_F_NONNEG = 4 };

void kl_ld_error(kl_loader *L, int node, const char *fmt, ...) __attribute__((format(printf, 3, 4)));
void kl_ld_error_at(kl_loader *L, int line, int col, const char *fmt, ...) __attribute__((format(printf, 4, 5)));
void kl_ld_label(kl_loader *L, const char *kind, const char *name, int index);
int kl_ld_grow(kl_loader *L, void **arr, int *cap, int n, size_t size);
const char *kl_ld_strdup(kl_loader *L, const char *s);
int kl_ld_fields(kl_loader *L, int map, const char *const *keys, kl_fields *fl, const char *what);
const char *kl_ld_str(kl_loader *L, const kl_fields *fl, int k, int flags);
int kl_ld_real(kl_loader *L, const kl_fields *fl, int k, int q, double *out, double def, int flags);
int kl_ld_real_node(kl_loader *L, int node, const char *key, int q, double *out, int flags);
int kl_ld_complex_node(kl_loader *L, int node, const char *key, int q, kl_complex *out);
int kl_ld_complex(kl_loader *L, const kl_fields *fl, int k, int q, kl_complex *out, int flags);
int kl_ld_int(kl_loader *L, const kl_fields *fl, int k, int *out, int def, int flags);
int kl_ld_bool(kl_loader *L, const kl_fields *fl, int k, int def);
int kl_ld_enum(kl_loader *L, const kl_fields *fl, int k, const char *const *names, int def);
int kl_ld_phases(kl_loader *L, int node, const char *key);
int kl_ld_node(kl_loader *L, const kl_fields *fl, int k, int kind, int flags);
int kl_ld_suggest(const char *word, const char *const *names, int n);
void kl_ld_ref(kl_loader *L, int what, int elem, const char *name, int node, int *target,
               const kl_names *table);

void kl_ld_source(kl_loader *L, int map);
void kl_ld_conductor(kl_loader *L, int map);
void kl_ld_cable(kl_loader *L, int map);
void kl_ld_layout(kl_loader *L, int map);
void kl_ld_construction(kl_loader *L, int map);
void kl_ld_bus(kl_loader *L, int map);
void kl_ld_section(kl_loader *L, int map);
void kl_ld_transformer(kl_loader *L, int map);
void kl_ld_regulator(kl_loader *L, int map);
void kl_ld_load(kl_loader *L, int map);
void kl_ld_capacitor(kl_loader *L, int map);
int kl_ld_bus_ref(kl_loader *L, int node, const char *key);
void kl_ld_resolve(kl_loader *L);
void kl_ld_topology(kl_loader *L);

/* ---- cmatrix3.c, network.c, transformer.c, regulator.c, load_model.c,
 * sweep.c, flow.c: the load flow (include/kilter/network.h, flow.h). */
struct kl_network;
struct kl_flow_result;
void kl_cm3_identity(kl_complex m[9], int mask);
void kl_cm3_mul(const kl_complex x[9], const kl_complex y[9], kl_complex r[9]);
void kl_cm3_vec(const kl_complex m[9], const kl_complex v[3], kl_complex r[3]);
void kl_cm3_transpose(const kl_complex m[9], kl_complex r[9]);
void kl_cm3_mask(kl_complex m[9], int mask);
int kl_cm3_inverse(const kl_complex m[9], kl_complex r[9]);

/* transformer.c: the ideal ratio matrix A (V_load = A V_source - B I_load,
 * I_source = A^T I_load) and B of one bank.  step_up: the source side is the
 * bank's low winding.  Fills the load-side phase mask and line-to-neutral base;
 * returns KL_EINPUT with `why` filled for a connection it cannot model. */
kl_status kl_transformer_matrices(const kl_transformer *t, int src_phases, int step_up,
                                  kl_complex A[9], kl_complex B[9], int *load_phases,
                                  double *load_base_ln, char *why, size_t nwhy);
/* The phases of a transformer's load-side bus, as kl_transformer_matrices
 * names them for a step-down bank: abc below three-phase and open banks; the
 * two legs of a center-tapped secondary in slots a and b; a single-phase
 * secondary on the primary's phase (line-to-line primary: the slot of its
 * first phase, ab -> a, bc -> b, ca -> c).  The loader uses it so that the
 * file's phases and the load flow's agree. */
int kl_transformer_load_phases(const kl_transformer *t, int src_phases);

/* regulator.c */
void kl_regulator_matrices(const kl_regulator *r, const int tap[3], int phases,
                           kl_complex A[9], kl_complex d[9], kl_complex a[9]);
/* Moves the taps of automatic regulator r once, from the solved state in net;
 * returns the number of units whose tap moved. */
int kl_regulator_control(struct kl_network *net, int r);
/* Relay (compensated) voltage of each unit on the 120 V base. */
void kl_regulator_relay_voltage(const struct kl_network *net, int r, double vr[3]);

/* load_model.c: adds every load's and capacitor's current at the present
 * voltages (net->vs) into net->js, both by sweep position (scale multiplies
 * load powers).  Reads the load parts (network.h), refreshing their phase
 * slots first when ld_slot has changed. */
void kl_load_inject(struct kl_network *net, double scale);
/* sweep.c: the tree part of a backward sweep at the present voltages, from
 * the bus currents already in net->js (loads, loop-closing branches): fills
 * the branches' sending-end currents into js toward the source (nodal.c
 * uses it too). */
void kl_sweep_tree_currents(struct kl_network *net);
/* Builds net->parts from the network loads and capacitors (kl_network_build). */
kl_status kl_load_parts_build(struct kl_network *net);
/* Actual powers at the present voltages into res->s_load, q_cap, s_loads. */
void kl_load_powers(const struct kl_network *net, double scale, struct kl_flow_result *res);

/* ---- study.c, neutral_sizing.c, contributors.c: the feeder as a tree of
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
#include "kilter/study.h"
kl_status kl_neutral_size_on(const kl_feeder *f, const kl_study_phases *ph,
                             const kl_study_tree *t, const kl_study_options *opt, kl_study *s,
                             kl_errors *err);
kl_status kl_contrib_rank_on(const kl_feeder *f, const kl_study_phases *ph,
                             const kl_study_tree *t, const kl_study_paths *paths,
                             const kl_study_options *opt, kl_study *s, kl_errors *err);
/* The source-side and load-side buses of a section (sections may be written
 * with `to` on the source side: kl_section.reversed). */
static inline int kl_sec_up(const kl_section *s) { return s->reversed ? s->to : s->from; }
static inline int kl_sec_down(const kl_section *s) { return s->reversed ? s->from : s->to; }

#endif
