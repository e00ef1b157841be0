/* kilter, input/output layer (src/io): the YAML reader, the feeder loader and
 * the feeder writer.  Visible to io and the layers above. */
#ifndef KILTER_IO_INTERNAL_H
#define KILTER_IO_INTERNAL_H

#include "kl_model.h"

/* ---- yreader.c (loader): libyaml's event stream, read one element at a
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

/* yfast.c: the scanner for the YAML subset of feeder files.  It yields
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

/* ---- loader.c, loader_fields.c, loader_equipment.c, loader_sections.c,
 * loader_loads.c, loader_resolve.c, loader_topology.c:
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

/* A cached look-up of the range table (loader_ranges.c). */
typedef struct {
    const char *kind, *key;
    int q;
    int row; /* 1 + the row, -1 for none, 0 for an empty slot */
} kl_range_slot;
#define KL_RANGE_CACHE 64
#define KL_WARNINGS_MAX 50 /* warnings kept per load; more are counted */

typedef struct {
    kl_feeder *f;
    kl_yreader *r;
    kl_errors *err;
    const char *file;
    int nerr;               /* problems this load has reported */
    int nomem;
    const char *elem_kind;  /* the element being read, for messages (kl_ld_label): a literal */
    char elem_name[124];    /* its name, copied (the label prints 120 bytes at most): a pointer
                             * kept here outlived the naming helpers' buffers (issue 14) */
    int elem_index;
    kl_name_hint name_hint;  /* the element's own name, looked up and not found */
    char elem[160];         /* its label, formatted when a problem is reported */
    kl_names h_bus, h_cond, h_cable, h_layout, h_cons, h_sec, h_xf, h_reg, h_load, h_cap;
    int cap_conductors, cap_cables, cap_layouts, cap_constructions, cap_buses,
        cap_sections, cap_loads, cap_capacitors, cap_transformers, cap_regulators,
        cap_declared, cap_secph, cap_conspos,
        cap_nameplate;           /* entries of f->load_nameplate (0 while it is NULL) */
    unsigned char *bus_declared; /* [cap_buses]: 1 once listed under buses: */
    int *sec_phases_given;       /* [cap_sections]: mask written in the file, 0 = default */
    kl_cons_pos *cons_pos;       /* [cap_constructions] */
    kl_pending_ref *pending;
    int npending, cap_pending;
    int has_source;
    int nwarn;               /* warnings this load has given */
    kl_range_slot range_cache[KL_RANGE_CACHE];
} kl_loader;

/* Fields of one mapping, looked up by key index. */
#define KL_FIELDS_MAX 40
typedef struct {
    int map;                   /* the mapping node */
    const char *const *keys;   /* NULL-terminated */
    int val[KL_FIELDS_MAX];    /* value node per key, -1 when absent */
} kl_fields;

enum { KL_F_REQ = 1, KL_F_POS = 2, KL_F_NONNEG = 4,
       KL_F_TEXT = 8 /* kl_ld_str: free text (descriptions), line feeds and tabs allowed */ };

void kl_ld_error(kl_loader *L, int node, const char *fmt, ...) __attribute__((format(printf, 3, 4)));
void kl_ld_error_at(kl_loader *L, int line, int col, const char *fmt, ...) __attribute__((format(printf, 4, 5)));
/* A value accepted but unusual: a located warning, not counted as a problem. */
void kl_ld_warning(kl_loader *L, int node, const char *fmt, ...) __attribute__((format(printf, 3, 4)));
/* The value x read at node for key (a kl_quantity q) of the element being
 * read, against its plausible range; 0, or -1 after an error. */
int kl_ld_range(kl_loader *L, int node, const char *key, int q, double x);
/* loader_ranges.c: 0 when x is usual for (kind, key, q) or has no range, 1
 * when unusual, 2 when outside the hard limits; *what names the quantity and
 * span the band (the usual one for 1, the accepted one for 2). */
int kl_ld_range_judge(kl_range_slot *cache, const char *kind, const char *key, int q, double x,
                      const char **what, char *span, size_t n);
void kl_ld_label(kl_loader *L, const char *kind, const char *name, int index);
int kl_ld_grow(kl_loader *L, void **arr, int *cap, int n, size_t size);
const char *kl_ld_strdup(kl_loader *L, const char *s);
int kl_ld_fields(kl_loader *L, int map, const char *const *keys, kl_fields *fl, const char *what);
const char *kl_ld_str(kl_loader *L, const kl_fields *fl, int k, int flags);
/* 0, or -1 after a located message when the scalar at node holds NUL or a
 * control character (KL_F_TEXT: line feeds and tabs allowed). */
int kl_ld_printable(kl_loader *L, int node, const char *key, int flags);
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

/* ---- csv_stream.c: comma-separated values streamed row by row, each field
 * with its column (for located messages), copied unquoted into buf: for
 * interval data (load shapes, meter readings), whose files may hold millions
 * of rows that need not be in memory as fields at once (csv_read.c keeps a
 * whole table's fields, for the feeder import). */
#define KL_CSV_STREAM_MAX_FIELDS 64
typedef struct {
    const char *text;  /* NUL-terminated 1-based column col */
    int col;
} kl_csv_cell;
typedef struct {
    const char *text;
    size_t len, at;
    const char *file;
    kl_errors *err;
    int line, next_line;      /* line of the present row (1-based) */
    int nfields;
    kl_csv_cell f[KL_CSV_STREAM_MAX_FIELDS];
    char buf[4096];
} kl_csv_stream;
/* Reads a whole file (at most max_bytes) into *text (NUL-terminated, the
 * caller frees it with kl_free). */
kl_status kl_csv_stream_file(const char *path, size_t max_bytes, char **text, size_t *len, kl_errors *err);
void kl_csv_stream_init(kl_csv_stream *c, const char *text, size_t len, const char *file, kl_errors *err);
/* The next row that is not blank or a '#' note: 1, 0 at the end, -1 after a
 * located message in err. */
int kl_csv_stream_row(kl_csv_stream *c);

void kl_ld_source(kl_loader *L, int map);
/* loader_coordinates.c: the top-level `coordinates` mapping; and, once every
 * bus is read, the buses' x and y against it (longitude and latitude ranges). */
void kl_ld_coordinates(kl_loader *L, int map);
void kl_ld_coordinates_check(kl_loader *L);
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

/* ---- csv_read.c: a CSV table (RFC 4180, one record a line) with the
 * position of every field, for the feeder import. */
typedef struct {
    const char *text; /* the field, unquoted, NUL-terminated */
    int line, col;    /* where it starts in the file, 1-based */
} kl_csv_field;

typedef struct {
    const char *path;
    char *text;             /* the file, split in place (owned) */
    kl_csv_field *field;    /* [nfield] every field, header first (owned) */
    int nfield, cap;
    int *row_start;         /* [nrows + 2] first field of the header (0) and of data row r (r + 1) */
    int row_cap;
    int nrows;              /* data rows, the header not counted */
} kl_csv;

kl_status kl_csv_read(const char *path, kl_csv **out, kl_errors *err);
/* The same from text in memory (copied); `name` stands for the file in messages. */
kl_status kl_csv_read_buffer(const char *text, size_t len, const char *name, kl_csv **out, kl_errors *err);
void kl_csv_free(kl_csv *t);

/* ---- csv_cells.c: reading the cells of a kl_csv by column name, for the
 * allocation's inputs.  Rows r = -1 (the header) .. nrows - 1.  Names and
 * cells are read without their surrounding blanks; names without regard to case. */
const kl_csv_field *kl_csv_row(const kl_csv *t, int r, int *n);
/* col[k]: the header's column named names[k] (a NULL-terminated list), -1
 * when absent.  An unknown or repeated name is reported (expected: what the
 * message lists); -1 then. */
int kl_csv_columns(const kl_csv *t, const char *const *names, int *col, const char *expected, kl_errors *err);
/* The cell of row r, column i, trimmed, into buf (n bytes); 0, or -1 after
 * a located message when the row has no such cell or it is longer. */
int kl_csv_text(const kl_csv *t, int r, int i, const char *what, char *buf, size_t n, kl_errors *err);
/* The cell as a finite number; -1 after a located message naming `what`. */
int kl_csv_number(const kl_csv *t, int r, int i, const char *what, double *v, kl_errors *err);
/* Line and column of a cell (the row's last cell's when beyond its end). */
kl_loc kl_csv_loc(const kl_csv *t, int r, int i);

#endif
