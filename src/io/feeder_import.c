/* kilter: a feeder file from CSV tables and a library (kilter/import.h).
 *
 * The library's text is copied as it is; each table row becomes one flow
 * mapping line of its list (buses, sections, loads, capacitors), the cells
 * written as YAML scalars under the feeder file's keys.  While writing, a map
 * records where each value came from (table, line, column); the text is then
 * loaded by the ordinary loader, and each of its messages is moved back from
 * the generated text to the cell (or the library line) it concerns.  So the
 * import checks exactly what a feeder file is checked for, and says where in
 * the tables the problem is. */
#include <math.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>
#include "kilter/geo.h"
#include "kilter/import.h"
#include "kl_io.h"

/* ---- the text being built, and where its values came from */

typedef struct {
    int yline, ycol;        /* where the value starts in the generated text */
    int table;              /* index into the tables' paths */
    int line, col;          /* the cell */
} origin;

typedef struct {
    char *buf;
    size_t len, cap;
    int line, col;          /* position of the next byte, 1-based */
    origin *map;
    int nmap, map_cap;
    int lib_lines;          /* the library's lines: the text's first lines */
    const char *path[7];    /* library, then the tables (TB_*) */
    int nomem;
} text;

static void put_bytes(text *t, const char *s, size_t n)
{
    if (t->nomem)
        return;
    if (t->len + n + 1 > t->cap) {
        size_t cap = t->cap ? t->cap : 1 << 16;
        while (t->len + n + 1 > cap)
            cap *= 2;
        char *b = kl_realloc(t->buf, cap);
        if (!b) {
            t->nomem = 1;
            return;
        }
        t->buf = b;
        t->cap = cap;
    }
    memcpy(t->buf + t->len, s, n);
    t->len += n;
    t->buf[t->len] = '\0';
    for (size_t i = 0; i < n; i++) {
        if (s[i] == '\n') {
            t->line++;
            t->col = 1;
        } else {
            t->col++;
        }
    }
}

static void put(text *t, const char *s)
{
    put_bytes(t, s, strlen(s));
}

static void putf(text *t, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static void putf(text *t, const char *fmt, ...)
{
    char b[512];
    va_list ap;
    va_start(ap, fmt);
    int n = vsnprintf(b, sizeof b, fmt, ap);
    va_end(ap);
    if (n > 0)
        put_bytes(t, b, (size_t)n < sizeof b ? (size_t)n : sizeof b - 1);
}

/* The next value written comes from this cell. */
static void mark(text *t, int table, const kl_csv_field *f)
{
    if (t->nomem)
        return;
    if (t->nmap == t->map_cap) {
        int cap = t->map_cap ? 2 * t->map_cap : 1024;
        origin *m = kl_realloc(t->map, (size_t)cap * sizeof *m);
        if (!m) {
            t->nomem = 1;
            return;
        }
        t->map = m;
        t->map_cap = cap;
    }
    t->map[t->nmap++] = (origin){ t->line, t->col, table, f->line, f->col };
}

/* A scalar as YAML: plain when it is a simple word or number, else quoted
 * with its quotes and backslashes escaped. */
static void put_scalar(text *t, const char *s)
{
    int plain = s[0] != '\0';
    for (const char *p = s; *p && plain; p++)
        plain = (*p >= 'a' && *p <= 'z') || (*p >= 'A' && *p <= 'Z') || (*p >= '0' && *p <= '9')
                || *p == '-' || *p == '_' || *p == '.' || *p == '/';
    if (plain && strchr("-.", s[0]) == NULL) {
        put(t, s);
        return;
    }
    put(t, "\"");
    for (const char *p = s; *p; p++) {
        if (*p == '"' || *p == '\\')
            put_bytes(t, "\\", 1);
        put_bytes(t, p, 1);
    }
    put(t, "\"");
}

/* ---- the tables' columns */

/* In the order written: the equipment first, as a feeder file lists it. */
enum { TB_TRANSFORMERS = 1, TB_REGULATORS, TB_BUSES, TB_SECTIONS, TB_LOADS, TB_CAPACITORS, TB_COUNT };

typedef struct {
    const char *name;
    int required;
} column;

#define MAXCOL 24

typedef struct {
    const kl_csv *csv;
    int table;                 /* TB_* (index into text.path) */
    int at[MAXCOL];            /* column k's position in the file, -1 absent */
} table;

static const column bus_cols[] = {
    {"name", 1}, {"x", 0}, {"y", 0}, {"description", 0}, {NULL, 0}};
static const column sec_cols[] = {
    {"name", 0}, {"from", 1}, {"to", 1}, {"phases", 0}, {"length_m", 0}, {"length_ft", 0},
    {"length_km", 0}, {"length_mi", 0}, {"construction", 0}, {"switch", 0}, {"transformer", 0},
    {"regulator", 0}, {NULL, 0}};
enum { SC_NAME, SC_FROM, SC_TO, SC_PHASES, SC_LEN_M, SC_LEN_FT, SC_LEN_KM, SC_LEN_MI, SC_CONS,
       SC_SWITCH, SC_XF, SC_REG };
static const char *const length_units[] = {"m", "ft", "km", "mi"};
static const column load_cols[] = {
    {"name", 1}, {"bus", 0}, {"section", 0}, {"connection", 0}, {"model", 0}, {"phase", 1},
    {"kw", 1}, {"kvar", 0}, {"zip_impedance_pct", 0}, {"zip_current_pct", 0}, {"zip_power_pct", 0},
    {"motor", 0}, {"third_harmonic_pct", 0}, {"pinned", 0}, {"forbidden_phases", 0},
    {"move_cost", 0}, {"description", 0}, {"connected_kva", 0}, {"fixed_power", 0}, {NULL, 0}};
enum { LD_NAME, LD_BUS, LD_SECTION, LD_CONN, LD_MODEL, LD_PHASE, LD_KW, LD_KVAR, LD_ZI, LD_ZC,
       LD_ZP, LD_MOTOR, LD_H3, LD_PINNED, LD_FORBID, LD_COST, LD_DESC, LD_KVA, LD_FIXED };
static const column cap_cols[] = {
    {"name", 1}, {"bus", 1}, {"connection", 0}, {"phase", 1}, {"kvar", 1}, {"rated_voltage_kv", 0},
    {NULL, 0}};
enum { CP_NAME, CP_BUS, CP_CONN, CP_PHASE, CP_KVAR, CP_RATED };

static int ncols(const column *c)
{
    int n = 0;
    while (c[n].name)
        n++;
    return n;
}

static const kl_csv_field *row_fields(const kl_csv *c, int r, int *n)
{
    *n = c->row_start[r + 2] - c->row_start[r + 1];
    return c->field + c->row_start[r + 1];
}

/* Matches the header to the columns: unknown, repeated and missing names. */
static int read_header(table *tb, const column *cols, kl_errors *err)
{
    int n, bad = 0, nc = ncols(cols);
    const kl_csv_field *h = row_fields(tb->csv, -1, &n);
    for (int k = 0; k < nc; k++)
        tb->at[k] = -1;
    for (int i = 0; i < n; i++) {
        int k = 0;
        while (k < nc && strcmp(cols[k].name, h[i].text) != 0)
            k++;
        if (k == nc) {
            char list[400] = "";
            for (int j = 0; j < nc; j++)
                snprintf(list + strlen(list), sizeof list - strlen(list), "%s%s", j ? ", " : "",
                         cols[j].name);
            kl_errors_add(err, tb->csv->path, h[i].line, h[i].col, NULL, "unknown column '%s': the "
                          "columns of this table are %s (docs/import.md)", h[i].text, list);
            bad = 1;
        } else if (tb->at[k] >= 0) {
            kl_errors_add(err, tb->csv->path, h[i].line, h[i].col, NULL, "column '%s' given twice",
                          h[i].text);
            bad = 1;
        } else {
            tb->at[k] = i;
        }
    }
    for (int k = 0; k < nc; k++)
        if (cols[k].required && tb->at[k] < 0) {
            kl_errors_add(err, tb->csv->path, h[0].line, 1, NULL, "the table has no column '%s', "
                          "which it needs (docs/import.md)", cols[k].name);
            bad = 1;
        }
    return bad ? -1 : 0;
}

/* Cell k of row r, NULL when the column is absent or the cell empty. */
static const kl_csv_field *cell(const table *tb, int r, int k, kl_errors *err)
{
    int n;
    const kl_csv_field *f = row_fields(tb->csv, r, &n);
    (void)err;
    if (tb->at[k] < 0 || tb->at[k] >= n)
        return NULL; /* absent, or a short row: the cells missing are empty */
    return f[tb->at[k]].text[0] ? &f[tb->at[k]] : NULL;
}

/* A number cell: finite, the whole cell. */
static int number_ok(const table *tb, const kl_csv_field *f, const char *col, kl_errors *err)
{
    char *end;
    double x = strtod(f->text, &end);
    while (*end == ' ')
        end++;
    if (end != f->text && !*end && isfinite(x))
        return 1;
    kl_errors_add(err, tb->csv->path, f->line, f->col, NULL, "'%s' is '%s': expected a number", col,
                  f->text);
    return 0;
}

/* `, key: value` from cell k of row r when it is there. */
static void key_cell(text *t, const table *tb, int r, int k, const char *key, kl_errors *err)
{
    const kl_csv_field *f = cell(tb, r, k, err);
    if (!f)
        return;
    putf(t, ", %s: ", key);
    mark(t, tb->table, f);
    put_scalar(t, f->text);
}

/* A row's line starts at its first cell (for messages on the whole element). */
static void row_open(text *t, const table *tb, int r)
{
    int n;
    const kl_csv_field *f = row_fields(tb->csv, r, &n);
    put(t, "  - ");
    mark(t, tb->table, &f[0]);
    put(t, "{");
}

/* ---- each table */

static int import_buses(text *t, table *tb, kl_errors *err)
{
    if (read_header(tb, bus_cols, err) < 0)
        return -1;
    put(t, "buses:\n");
    int bad = 0;
    for (int r = 0; r < tb->csv->nrows; r++) {
        const kl_csv_field *x = cell(tb, r, 1, err), *y = cell(tb, r, 2, err);
        bad |= x && !number_ok(tb, x, "x", err);
        bad |= y && !number_ok(tb, y, "y", err);
        row_open(t, tb, r);
        const kl_csv_field *name = cell(tb, r, 0, err);
        put(t, "name: ");
        if (name)
            mark(t, tb->table, name);
        put_scalar(t, name ? name->text : "");
        key_cell(t, tb, r, 1, "x", err);
        key_cell(t, tb, r, 2, "y", err);
        key_cell(t, tb, r, 3, "description", err);
        put(t, "}\n");
    }
    return bad ? -1 : 0;
}

static int import_sections(text *t, table *tb, kl_errors *err)
{
    if (read_header(tb, sec_cols, err) < 0)
        return -1;
    int nlen = 0;
    for (int k = SC_LEN_M; k <= SC_LEN_MI; k++)
        nlen += tb->at[k] >= 0;
    if (nlen > 1) {
        kl_errors_add(err, tb->csv->path, 1, 1, NULL, "give the lengths in one column: length_m, "
                      "length_ft, length_km or length_mi");
        return -1;
    }
    put(t, "sections:\n");
    int bad = 0;
    for (int r = 0; r < tb->csv->nrows; r++) {
        row_open(t, tb, r);
        int first = 1;
        static const int keys[] = { SC_NAME, SC_FROM, SC_TO, SC_PHASES, SC_CONS, SC_SWITCH, SC_XF,
                                    SC_REG };
        for (size_t i = 0; i < sizeof keys / sizeof keys[0]; i++) {
            const kl_csv_field *f = cell(tb, r, keys[i], err);
            if (!f)
                continue;
            putf(t, "%s%s: ", first ? "" : ", ", sec_cols[keys[i]].name);
            mark(t, tb->table, f);
            put_scalar(t, f->text);
            first = 0;
        }
        for (int k = SC_LEN_M; k <= SC_LEN_MI; k++) {
            const kl_csv_field *f = cell(tb, r, k, err);
            if (!f)
                continue;
            bad |= !number_ok(tb, f, sec_cols[k].name, err);
            putf(t, "%slength: ", first ? "" : ", ");
            mark(t, tb->table, f);
            putf(t, "%s %s", f->text, length_units[k - SC_LEN_M]);
            first = 0;
        }
        put(t, "}\n");
    }
    return bad ? -1 : 0;
}

/* The rows of one load or capacitor: consecutive rows of the same name. */
static int group_end(const table *tb, int r, kl_errors *err)
{
    const kl_csv_field *name = cell(tb, r, 0, err);
    int e = r + 1;
    while (name && e < tb->csv->nrows) {
        const kl_csv_field *n = cell(tb, e, 0, err);
        if (!n || strcmp(n->text, name->text) != 0)
            break;
        e++;
    }
    return e;
}

/* `key: {PHASE: VALUE, ...}` over rows r .. e-1; value(f_kw, f_kvar) written by
 * the caller's unit: complex kVA for loads (kw, kvar), kvar for capacitors. */
static int phase_map(text *t, const table *tb, int r, int e, int kphase, int kp, int kq,
                     const char *key, kl_errors *err)
{
    int bad = 0;
    putf(t, ", %s: {", key);
    for (int i = r; i < e; i++) {
        const kl_csv_field *ph = cell(tb, i, kphase, err), *p = cell(tb, i, kp, err);
        const kl_csv_field *q = kq >= 0 ? cell(tb, i, kq, err) : NULL;
        int n;
        const kl_csv_field *row = row_fields(tb->csv, i, &n);
        if (!ph || !p) {
            kl_errors_add(err, tb->csv->path, row[0].line, row[0].col, NULL, "the row needs its "
                          "'%s' and '%s'", tb->csv->field[tb->csv->row_start[0] + tb->at[kphase]].text,
                          tb->csv->field[tb->csv->row_start[0] + tb->at[kp]].text);
            bad = 1;
            continue;
        }
        int ok = number_ok(tb, p, kq >= 0 ? "kw" : "kvar", err) && (!q || number_ok(tb, q, "kvar", err));
        bad |= !ok;
        if (i > r)
            put(t, ", ");
        mark(t, tb->table, ph);
        put_scalar(t, ph->text);
        put(t, ": ");
        mark(t, tb->table, p);
        if (!ok)
            put(t, "0");
        else if (kq < 0)
            putf(t, "%s kvar", p->text);
        else {
            /* P + jQ as the cells give them (the sign of kvar before the j) */
            const char *qt = q ? q->text : "0";
            int neg = qt[0] == '-';
            putf(t, "%s %s j%s kVA", p->text, neg ? "-" : "+", qt + (neg || qt[0] == '+'));
        }
    }
    put(t, "}");
    return bad ? -1 : 0;
}

/* `, connected_kva: {PHASE: N kVA, ...}` from the rows r .. e-1 of a load
 * that give one (allocation's basis, docs/allocate.md); nothing when none does. */
static int connected_kva(text *t, const table *tb, int r, int e, kl_errors *err)
{
    int bad = 0, any = 0;
    for (int i = r; i < e; i++) {
        const kl_csv_field *ph = cell(tb, i, LD_PHASE, err), *k = cell(tb, i, LD_KVA, err);
        if (!k || !ph)
            continue;
        bad |= !number_ok(tb, k, "connected_kva", err);
        put(t, any++ ? ", " : ", connected_kva: {");
        put_scalar(t, ph->text);
        put(t, ": ");
        mark(t, tb->table, k);
        putf(t, "%s kVA", k->text);
    }
    if (any)
        put(t, "}");
    return bad ? -1 : 0;
}

static int import_loads(text *t, table *tb, kl_errors *err)
{
    if (read_header(tb, load_cols, err) < 0)
        return -1;
    put(t, "loads:\n");
    int bad = 0;
    for (int r = 0; r < tb->csv->nrows;) {
        int e = group_end(tb, r, err);
        row_open(t, tb, r);
        const kl_csv_field *name = cell(tb, r, LD_NAME, err);
        put(t, "name: ");
        if (name)
            mark(t, tb->table, name);
        put_scalar(t, name ? name->text : "");
        key_cell(t, tb, r, LD_BUS, "bus", err);
        key_cell(t, tb, r, LD_SECTION, "section", err);
        key_cell(t, tb, r, LD_CONN, "connection", err);
        key_cell(t, tb, r, LD_MODEL, "model", err);
        bad |= phase_map(t, tb, r, e, LD_PHASE, LD_KW, LD_KVAR, "power", err) < 0;
        const kl_csv_field *z[3] = { cell(tb, r, LD_ZI, err), cell(tb, r, LD_ZC, err), cell(tb, r, LD_ZP, err) };
        if (z[0] || z[1] || z[2]) {
            static const char *const zk[3] = { "impedance", "current", "power" };
            put(t, ", zip: {");
            for (int k = 0; k < 3; k++) {
                putf(t, "%s%s: ", k ? ", " : "", zk[k]);
                if (z[k]) {
                    bad |= !number_ok(tb, z[k], load_cols[LD_ZI + k].name, err);
                    mark(t, tb->table, z[k]);
                }
                putf(t, "%s %%", z[k] ? z[k]->text : "0");
            }
            put(t, "}");
        }
        key_cell(t, tb, r, LD_MOTOR, "motor", err);
        const kl_csv_field *h3 = cell(tb, r, LD_H3, err);
        if (h3) {
            bad |= !number_ok(tb, h3, "third_harmonic_pct", err);
            put(t, ", third_harmonic: ");
            mark(t, tb->table, h3);
            putf(t, "%s %%", h3->text);
        }
        key_cell(t, tb, r, LD_PINNED, "pinned", err);
        key_cell(t, tb, r, LD_FORBID, "forbidden_phases", err);
        key_cell(t, tb, r, LD_COST, "move_cost", err);
        key_cell(t, tb, r, LD_DESC, "description", err);
        bad |= connected_kva(t, tb, r, e, err) < 0;
        key_cell(t, tb, r, LD_FIXED, "fixed_power", err);
        put(t, "}\n");
        r = e;
    }
    return bad ? -1 : 0;
}

static int import_capacitors(text *t, table *tb, kl_errors *err)
{
    if (read_header(tb, cap_cols, err) < 0)
        return -1;
    put(t, "capacitors:\n");
    int bad = 0;
    for (int r = 0; r < tb->csv->nrows;) {
        int e = group_end(tb, r, err);
        row_open(t, tb, r);
        const kl_csv_field *name = cell(tb, r, CP_NAME, err);
        put(t, "name: ");
        if (name)
            mark(t, tb->table, name);
        put_scalar(t, name ? name->text : "");
        key_cell(t, tb, r, CP_BUS, "bus", err);
        key_cell(t, tb, r, CP_CONN, "connection", err);
        bad |= phase_map(t, tb, r, e, CP_PHASE, CP_KVAR, -1, "reactive_power", err) < 0;
        const kl_csv_field *kv = cell(tb, r, CP_RATED, err);
        if (kv) {
            bad |= !number_ok(tb, kv, "rated_voltage_kv", err);
            put(t, ", rated_voltage: ");
            mark(t, tb->table, kv);
            putf(t, "%s kV", kv->text);
        }
        put(t, "}\n");
        r = e;
    }
    return bad ? -1 : 0;
}

/* ---- equipment: a column per key, a number's unit in the column's name */

typedef struct {
    const char *col;    /* the column */
    const char *key;    /* the feeder file's key; "high.voltage": key voltage in mapping high */
    const char *unit;   /* written after a number ("kVA", "%"); NULL: the cell as a word or text */
    int required;
} key_col;

static const key_col xf_cols[] = {
    {"name", "name", NULL, 1}, {"rating_kva", "rating", "kVA", 1},
    {"high_kv", "high.voltage", "kV", 1}, {"high_connection", "high.connection", NULL, 1},
    {"low_kv", "low.voltage", "kV", 1}, {"low_connection", "low.connection", NULL, 1},
    {"connection", "connection", NULL, 0},
    {"resistance_pct", "resistance", "%", 1}, {"reactance_pct", "reactance", "%", 1},
    {"no_load_loss_pct", "no_load_loss", "%", 0}, {"emergency_rating_kva", "emergency_rating", "kVA", 0},
    {NULL, NULL, NULL, 0}};
static const key_col reg_cols[] = {
    {"name", "name", NULL, 1}, {"connection", "connection", NULL, 0}, {"phases", "phases", NULL, 0},
    {"control", "control", NULL, 0}, {"tap_a", "taps.a", "", 0}, {"tap_b", "taps.b", "", 0},
    {"tap_c", "taps.c", "", 0}, {"steps", "steps", "", 0}, {"step_pct", "step", "%", 0},
    {"voltage_level_v", "voltage_level", "V", 0}, {"bandwidth_v", "bandwidth", "V", 0},
    {"pt_ratio", "pt_ratio", "", 0}, {"ct_primary_a", "ct_primary", "A", 0},
    {"compensator_r_v", "compensator_r", "V", 0}, {"compensator_x_v", "compensator_x", "V", 0},
    {"monitored", "monitored", NULL, 0}, {"rated_current_a", "rated_current", "A", 0},
    {"emergency_current_a", "emergency_current", "A", 0}, {NULL, NULL, NULL, 0}};

/* The key_col list as the header's column list. */
static void key_columns(const key_col *kc, column *out)
{
    int n = 0;
    for (; kc[n].col; n++)
        out[n] = (column){ kc[n].col, kc[n].required };
    out[n] = (column){ NULL, 0 };
}

/* One row: the keys in list order, consecutive "m.k" keys in one mapping m. */
static int equipment_row(text *t, const table *tb, const key_col *kc, int r, kl_errors *err)
{
    int bad = 0, first = 1;
    const char *open = NULL; /* the mapping being written, NULL none */
    size_t open_len = 0;
    row_open(t, tb, r);
    for (int k = 0; kc[k].col; k++) {
        const kl_csv_field *f = cell(tb, r, k, err);
        if (!f)
            continue;
        const char *dot = strchr(kc[k].key, '.');
        size_t plen = dot ? (size_t)(dot - kc[k].key) : 0;
        if (open && (!dot || plen != open_len || strncmp(open, kc[k].key, plen) != 0)) {
            put(t, "}"); /* the mapping ends where its keys do */
            open = NULL;
        }
        if (kc[k].unit)
            bad |= !number_ok(tb, f, kc[k].col, err);
        if (dot && !open) {
            putf(t, "%s%.*s: {", first ? "" : ", ", (int)plen, kc[k].key);
            open = kc[k].key;
            open_len = plen;
            first = 1;
        }
        putf(t, "%s%s: ", first ? "" : ", ", dot ? dot + 1 : kc[k].key);
        first = 0;
        mark(t, tb->table, f);
        if (kc[k].unit)
            putf(t, "%s%s%s", f->text, kc[k].unit[0] ? " " : "", kc[k].unit);
        else
            put_scalar(t, f->text);
    }
    if (open)
        put(t, "}");
    put(t, "}\n");
    return bad ? -1 : 0;
}

static int import_equipment(text *t, table *tb, const key_col *kc, const char *list, kl_errors *err)
{
    column cols[MAXCOL + 1];
    key_columns(kc, cols);
    if (read_header(tb, cols, err) < 0)
        return -1;
    putf(t, "%s:\n", list);
    int bad = 0;
    for (int r = 0; r < tb->csv->nrows; r++)
        bad |= equipment_row(t, tb, kc, r, err) < 0;
    return bad ? -1 : 0;
}

static int import_transformers(text *t, table *tb, kl_errors *err)
{
    return import_equipment(t, tb, xf_cols, "transformers", err);
}

static int import_regulators(text *t, table *tb, kl_errors *err)
{
    return import_equipment(t, tb, reg_cols, "regulators", err);
}

/* ---- the library, and the loader's messages moved back */

/* The library's text; a top-level list a table gives is an error at its line. */
static int copy_library(text *t, const kl_import_tables *in, kl_errors *err)
{
    FILE *f = fopen(in->library, "rb");
    if (!f) {
        kl_errors_add(err, in->library, 0, 0, NULL, "cannot open the library (a feeder file with the "
                      "source, equipment and constructions)");
        return -1;
    }
    char line[4096];
    int n = 0, bad = 0;
    static const char *const given[6] = { "transformers:", "regulators:", "buses:", "sections:",
                                          "loads:", "capacitors:" };
    const char *paths[6] = { in->transformers, in->regulators, in->buses, in->sections, in->loads,
                             in->capacitors };
    while (fgets(line, sizeof line, f)) {
        n++;
        for (int k = 0; k < 6; k++)
            if (paths[k] && strncmp(line, given[k], strlen(given[k])) == 0) {
                kl_errors_add(err, in->library, n, 1, NULL, "the library has '%s' and the table %s "
                              "gives them too: remove the list from the library", given[k], paths[k]);
                bad = 1;
            }
        put(t, line);
        if (!strchr(line, '\n') && !feof(f)) {
            kl_errors_add(err, in->library, n, 1, NULL, "a line longer than %d bytes",
                          (int)sizeof line - 1);
            bad = 1;
            break;
        }
    }
    if (t->len && t->buf[t->len - 1] != '\n')
        put(t, "\n");
    fclose(f);
    t->lib_lines = t->line - 1;
    return bad ? -1 : 0;
}

/* The cell a position of the generated text came from: the last value that
 * starts at or before it on its line; the library's lines are its own. */
static void move_back(const text *t, const kl_error_item *it, kl_errors *err)
{
    const char *file = it->file;
    int line = it->line, col = it->col;
    if (it->line > t->lib_lines) {
        const origin *best = NULL;
        for (int i = 0; i < t->nmap; i++) {
            const origin *o = &t->map[i];
            if (o->yline == it->line && (o->ycol <= it->col || !best))
                best = o;
        }
        if (best) {
            file = t->path[best->table];
            line = best->line;
            col = best->col;
        }
    } else if (it->line > 0) {
        file = t->path[0];
    }
    if (it->warning)
        kl_errors_warn(err, file, line, col, it->element[0] ? it->element : NULL, "%s", it->message);
    else
        kl_errors_add(err, file, line, col, it->element[0] ? it->element : NULL, "%s", it->message);
}

/* With the buses placed on Earth, each line's length against the distance
 * between its buses (kilter/geo.h): warnings, at the section's row.  KL_EINPUT
 * when the coordinates do not convert (an EPSG code PROJ does not hold). */
static kl_status geo_lengths(const kl_feeder *f, kl_errors *sub)
{
    if (f->coordinates.system == KL_COORD_PLOT)
        return KL_OK;
    size_t nb = (size_t)f->nbuses + 1;
    double *lon = kl_malloc(nb * sizeof *lon), *lat = kl_malloc(nb * sizeof *lat);
    double *dist = kl_malloc(((size_t)f->nsections + 1) * sizeof *dist);
    kl_status st = lon && lat && dist ? KL_OK : KL_ENOMEM;
    int local = f->coordinates.system == KL_COORD_LOCAL;
    if (!st && !local)
        st = kl_geo_lonlat(f, lon, lat, sub);
    if (!st) {
        kl_geo_section_distances(f, local ? NULL : lon, local ? NULL : lat, dist);
        kl_geo_check_lengths(f, dist, sub);
    }
    kl_free(lon);
    kl_free(lat);
    kl_free(dist);
    return st;
}

typedef int (*importer)(text *, table *, kl_errors *);

kl_status kl_import_feeder(FILE *o, const kl_import_tables *in, kl_errors *err)
{
    if (!o || !in || !in->library)
        return kl_errors_add(err, NULL, 0, 0, NULL, "import: the library is required"), KL_EARG;
    text t;
    memset(&t, 0, sizeof t);
    t.line = t.col = 1;
    const char *paths[TB_COUNT] = { in->library, in->transformers, in->regulators, in->buses,
                                    in->sections, in->loads, in->capacitors };
    static const importer run[TB_COUNT] = { NULL, import_transformers, import_regulators, import_buses,
                                            import_sections, import_loads, import_capacitors };
    memcpy(t.path, paths, sizeof paths);
    kl_status st = KL_OK;
    int bad = copy_library(&t, in, err) < 0;
    if (!bad)
        put(&t, "# ---- from the tables (kilter import)\n");
    for (int k = 1; k < TB_COUNT && !st; k++) {
        if (!paths[k])
            continue;
        kl_csv *csv = NULL;
        st = kl_csv_read(paths[k], &csv, err);
        if (st == KL_EINPUT) {
            bad = 1;
            st = KL_OK;
            continue;
        }
        if (st)
            break;
        table tb = { csv, k, {0} };
        bad |= run[k](&t, &tb, err) < 0;
        kl_csv_free(csv);
    }
    if (!st && t.nomem)
        st = KL_ENOMEM;
    if (!st && !bad) {
        kl_errors sub;
        kl_errors_init(&sub);
        kl_feeder *f = NULL;
        kl_status ls = kl_feeder_load_buffer(t.buf, t.len, "import", &f, &sub);
        if (ls == KL_OK)
            ls = geo_lengths(f, &sub);
        for (int i = 0; i < sub.count; i++)
            move_back(&t, &sub.items[i], err);
        kl_errors_free(&sub);
        kl_feeder_free(f);
        if (ls == KL_ENOMEM)
            st = KL_ENOMEM;
        else if (ls)
            bad = 1;
    }
    if (!st && bad)
        st = KL_EINPUT;
    if (!st && fwrite(t.buf, 1, t.len, o) != t.len) {
        kl_errors_add(err, NULL, 0, 0, NULL, "import: writing the feeder file failed");
        st = KL_EIO;
    }
    if (st == KL_ENOMEM)
        kl_errors_add(err, NULL, 0, 0, NULL, "import: out of memory");
    kl_free(t.buf);
    kl_free(t.map);
    return st;
}
