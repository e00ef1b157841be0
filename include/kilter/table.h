/* kilter: one description per result table, read by every output format.
 *
 * A table is a list of columns.  A column says once what a figure is (its
 * key, unit and definition), how to get it for row i (and sub-row j: a phase
 * of a bus, a ranked contributor of a bus) from the result, and how each
 * format shows it.  The writers below stream a table as text, CSV, JSON or
 * HTML from that one description, so a figure is computed in one place and
 * every format prints that number.  Nothing is allocated per cell; the
 * writers print as they go (the HTML ranking allocates one array per table).
 *
 * The tables of the flow, the study and the rebalancing plan are declared at
 * the end with the row records they read (src/report/table_*.c define them,
 * next to the getters of their figures). */
#ifndef KILTER_TABLE_H
#define KILTER_TABLE_H

#include <stdio.h>
#include "kilter/allocate.h"
#include "kilter/error.h"
#include "kilter/fault.h"
#include "kilter/relay.h"
#include "kilter/feeder.h"
#include "kilter/flow.h"
#include "kilter/rebalance.h"
#include "kilter/series.h"
#include "kilter/study.h"

typedef enum { KL_TABLE_TEXT = 0, KL_TABLE_CSV = 1, KL_TABLE_JSON = 2, KL_TABLE_HTML = 3 } kl_table_format;

/* Formats a column appears in (kl_column.in). */
#define KL_IN_TEXT (1u << KL_TABLE_TEXT)
#define KL_IN_CSV (1u << KL_TABLE_CSV)
#define KL_IN_JSON (1u << KL_TABLE_JSON)
#define KL_IN_HTML (1u << KL_TABLE_HTML)

typedef enum {
    KL_CELL_NUM = 0, /* double; NAN (or any non-finite) when not defined */
    KL_CELL_INT,     /* int */
    KL_CELL_STR,     /* string; NULL when not defined */
    KL_CELL_CHAR,    /* one character (a phase letter) */
    KL_CELL_BOOL     /* 0 or 1 */
} kl_cell_type;

/* One value, as a getter fills it. */
typedef struct {
    double num;       /* KL_CELL_NUM */
    int i;            /* KL_CELL_INT, _CHAR, _BOOL */
    const char *str;  /* KL_CELL_STR */
    const char *cls;  /* HTML: class added to the cell ("ok", "bad"); NULL none */
    char buf[32];     /* room for a string the getter builds (str may point here) */
} kl_cell;

/* The value of a column at row `row`, sub-row `sub` (-1 for a row's own
 * columns); ctx is the table's row record (below). */
typedef void (*kl_cell_get)(const void *ctx, int row, int sub, kl_cell *c);

/* How the formats show a value that is not defined: text a dash right-aligned
 * in the field's width after its separator less one space (the study's tables
 * have always printed it so, one column left of the figures), CSV an
 * empty field, JSON null, HTML a dash cell.  Strings are escaped for CSV
 * (quoted when needed), JSON and HTML. */
typedef struct {
    const char *key;       /* the figure's name: CSV header field and JSON key */
    const char *unit;      /* "V", "pu", "%", "A", "kW", ... ("" none) */
    const char *help;      /* its definition (docs/<command>.md says the same) */
    kl_cell_type type;
    kl_cell_get get;
    unsigned in;           /* formats that show it (KL_IN_*); a figure shown two ways
                              is two columns with one getter or two getters of one figure */
    int sub;               /* 1: a column of the sub-rows (one value per sub-row) */
    const char *json_key;  /* JSON key when not `key`: "a.b" puts b inside object a,
                              and consecutive columns keyed "a[]" form the array a */
    const char *text_head; /* text header ("": none) */
    const char *text;      /* text printf format with its separator, width and suffix,
                              e.g. " %9.4f", "  %-14s", " %7.0f%%"; the header takes
                              the same separator and width */
    const char *text_hfmt; /* text header format when it is not the line's (NULL: derived) */
    const char *csv;       /* CSV printf format of a number (NULL: %.6f) */
    const char *json;      /* JSON printf format of a number (NULL: %.8g) */
    const char *html_head; /* HTML header cell */
    const char *html;      /* HTML printf format of a number shown (the cell's data-v
                              attribute holds it as the CSV prints it, %.6f); for a
                              string, "%s" says the getter writes markup of ours, not
                              data (printed unescaped) */
} kl_column;

#define KL_TABLE_JSON_EMPTY_INLINE 1u /* an empty JSON array prints as [] (else [ newline ]) */

typedef struct {
    const char *name;      /* the table's name (`--table NAME`) */
    const char *json_key;  /* key of its JSON array (NULL: name) */
    const char *help;      /* one line: what a row is */
    const kl_column *col;
    int ncol;
    int (*rows)(const void *ctx); /* number of rows */
    /* Whether the format shows row `row` (NULL: every row). */
    int (*keep)(const void *ctx, int row, kl_table_format fmt);
    /* Sub-rows: the one after `sub` (-1: the first), -1 after the last; NULL:
     * none.  Text and CSV print a line per sub-row (the row's own columns
     * repeated), JSON an object (sub_name given) or an array under sub_key. */
    int (*next_sub)(const void *ctx, int row, int sub);
    unsigned sub_in;       /* formats with sub-rows (KL_IN_*; 0: every format) */
    const char *sub_key;
    const char *(*sub_name)(const void *ctx, int row, int sub, char buf[8]);
    /* Text: bespoke lines written after a row's lines (a note, an open section). */
    void (*text_after)(FILE *o, const void *ctx, int row);
    /* HTML: the ranking key, largest first; rows with a non-finite key are left
     * out (NULL: file order, as `keep` says). */
    double (*rank)(const void *ctx, int row);
    unsigned flags;        /* KL_TABLE_* */
    int json_indent;       /* JSON: spaces before the member, twice that before a row
                              (0: 2) */
} kl_table;

/* ---- writers (table.c) */

void kl_table_text_head(FILE *o, const kl_table *t);
/* The text line of one (row, sub) pair; sub -1 for a table without sub-rows. */
void kl_table_text_line(FILE *o, const kl_table *t, const void *ctx, int row, int sub);
/* The rows the text format keeps, each with its lines and text_after. */
void kl_table_text_rows(FILE *o, const kl_table *t, const void *ctx);
/* Header and rows. */
void kl_table_text(FILE *o, const kl_table *t, const void *ctx);

/* The value of the column `key` shown in format fmt at (row, sub), for prose
 * that quotes a table's figure; 0, or -1 (v untouched) when there is no such
 * column. */
int kl_table_get(const kl_table *t, const void *ctx, const char *key, kl_table_format fmt,
                 int row, int sub, kl_cell *v);
/* Rows the format keeps. */
int kl_table_count(const kl_table *t, const void *ctx, kl_table_format fmt);

void kl_table_csv(FILE *o, const kl_table *t, const void *ctx); /* header and rows */
/* The member `"json_key": [ rows ]`, indented as a member of the top object;
 * the caller writes what separates it from the next member. */
void kl_table_json(FILE *o, const kl_table *t, const void *ctx);
/* The members of one row's JSON object, without the braces. */
void kl_table_json_members(FILE *o, const kl_table *t, const void *ctx, int row);

/* HTML: the rows shown, ranked by t->rank (or in file order) and cut to at most
 * max_rows; one array owned by the record (kl_table_shown_free). */
typedef struct {
    double key;
    int row;
} kl_table_rank;
typedef struct {
    kl_table_rank *r; /* [total] the rows that qualify, in the order shown */
    int shown;        /* rows shown: the first min(total, max_rows) */
    int total;
} kl_table_shown;
kl_status kl_table_html_select(const kl_table *t, const void *ctx, int max_rows,
                               kl_table_shown *out, kl_errors *err);
void kl_table_shown_free(kl_table_shown *s);
/* <table class="cls"> with its header and the rows of s, closed. */
void kl_table_html(FILE *o, const kl_table *t, const void *ctx, const char *cls,
                   const kl_table_shown *s);
void kl_table_html_head(FILE *o, const kl_table *t);
void kl_table_html_row(FILE *o, const kl_table *t, const void *ctx, int row);

/* Escapes shared with the program's bespoke parts. */
void kl_table_json_str(FILE *o, const char *s); /* quoted and escaped; NULL -> null */
void kl_table_json_num(FILE *o, double x);      /* %.8g; non-finite -> null */
void kl_table_csv_str(FILE *o, const char *s);  /* quoted when it holds , " or a newline */

/* ---- a workbook (table_xlsx.c): tables as the sheets of one .xlsx file.
 * Each sheet holds the table's CSV cell for cell (numbers as numbers, with
 * the CSV's decimals; an undefined figure an empty cell) under two frozen
 * header rows, the CSV's field names and their units.  The workbook is built
 * in a temporary file and copied to o when complete.  KL_EIO, KL_ENOMEM, or
 * KL_EARG (a bad sheet name); a table longer than a sheet is an error naming
 * its CSV, never cut short. */
typedef struct {
    const kl_table *t;
    const void *ctx;   /* t's row record */
    const char *name;  /* sheet name, at most 31 characters */
} kl_table_sheet;
kl_status kl_table_xlsx(FILE *o, const kl_table_sheet *sheets, int n, kl_errors *err);

/* ---- the flow's tables (table_flow.c); docs/flow.md has the contract */
typedef struct {
    const kl_feeder *feeder;
    const kl_flow_result *flow;
} kl_flow_rows;
extern const kl_table kl_table_flow_buses;    /* a line per bus and phase */
extern const kl_table kl_table_flow_sections; /* a line per section and phase */
extern const kl_table kl_table_flow_regulators; /* a line per regulator and unit */
extern const kl_table kl_table_flow_regulator_units; /* HTML: a row per regulator unit */

/* ---- the unbalance study's tables (table_study.c); docs/study.md */
typedef struct {
    const kl_feeder *feeder;
    const kl_study *study;
    const kl_study_phases *ph; /* the flow's phases the study read (bases) */
    int only_bus;              /* CSV and JSON buses: this bus alone (--at); -1 all */
    const kl_study_options *opt; /* summary and compliance: the limits the study used */
    int range_b;               /* compliance: 1 when only Range B counts as broken */
    /* ph may be NULL for the HTML columns, which read the study alone */
} kl_study_rows;
extern const kl_table kl_table_study_buses;        /* text: three-phase buses */
extern const kl_table kl_table_study_small_buses;  /* text: single- and two-phase buses */
extern const kl_table kl_table_study_sections;
extern const kl_table kl_table_study_neutrals;
extern const kl_table kl_table_study_runs;
extern const kl_table kl_table_study_contributors;
extern const kl_table kl_table_study_motors;       /* HTML: motor buses */
extern const kl_table kl_table_study_loading;      /* HTML: rated sections, most loaded first */
extern const kl_table kl_table_study_summary;      /* the worst figures and where (table_summary.c) */
extern const kl_table kl_table_study_compliance;   /* each limit and what breaks it (table_summary.c) */

/* ---- the rebalancing plan's tables (table_plan.c); docs/rebalance.md */
typedef struct {
    const kl_feeder *feeder;
    const kl_rephaser *rp;
    const kl_rebalance_plan *plan;
    int level;      /* steps: the rows of this load level; -1 every level, one after another */
    const kl_rebalance_summary *levels; /* levels: plan->before or plan->after */
} kl_plan_rows;
extern const kl_table kl_table_plan_steps;  /* text and HTML: set level; CSV and JSON: -1 */
extern const kl_table kl_table_plan_levels; /* JSON members of one level's summary */
extern const kl_table kl_table_plan_items;  /* text: the movable items */

/* ---- the series' tables (table_series.c); docs/series.md */
typedef struct {
    const kl_feeder *feeder;
    const kl_series_stats *stats;
} kl_series_rows;
extern const kl_table kl_table_series_unbalance;  /* three-phase buses: VUF over time */
extern const kl_table kl_table_series_voltage;    /* bus phases: service voltage over time */
extern const kl_table kl_table_series_sections;   /* neutral and earth current, losses */
extern const kl_table kl_table_series_regulators; /* tap operations per unit */
extern const kl_table kl_table_series_capacitors; /* switchings and hours in service per bank */
extern const kl_table kl_table_series_failures;   /* steps that did not converge */

/* ---- the fault study's tables (table_fault.c); docs/faults.md */
typedef struct {
    const kl_feeder *feeder;
    const kl_fault_result *faults;
    const kl_relay_window *relay; /* NULL, or pickup_a 0: no relay table rows */
} kl_fault_rows;
extern const kl_table kl_table_fault_buses; /* a row per bus: impedances, grounding, max and min */
extern const kl_table kl_table_fault_cases; /* a row per bus, fault and fault impedance */
extern const kl_table kl_table_fault_relay; /* the ground relay's window: one row (none without a pickup) */

/* ---- the allocation's tables (table_alloc.c); docs/allocate.md */
typedef struct {
    const kl_feeder *feeder;       /* as allocated (the loads table reads its powers) */
    const kl_head_reading *head;   /* [nsteps] the readings */
    const kl_alloc_result *alloc;  /* [nsteps] their allocations */
    int nsteps;
    const double *basis;           /* [3 * feeder->nloads] kl_alloc_basis_* */
} kl_alloc_rows;
extern const kl_table kl_table_alloc_phases; /* a line per reading and head phase */
extern const kl_table kl_table_alloc_loads;  /* a line per load entry */

#endif
