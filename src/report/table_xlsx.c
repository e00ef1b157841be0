/* kilter: tables as the sheets of one spreadsheet workbook (.xlsx, Office Open
 * XML, ECMA-376), written with libxlsxwriter from the tables' one description
 * (kilter/table.h).
 *
 * Each sheet holds what the table's CSV holds, cell for cell: the CSV's rows
 * and sub-rows, a number as the number the CSV prints (the CSV's text read
 * back, so both formats give the same figure) shown with the CSV's decimals,
 * an undefined figure as an empty cell, text as text.  Above them two
 * header rows, frozen: the CSV's field names, then their units.  Column
 * widths follow the longest entry.  libxlsxwriter writes to a named file only,
 * so the workbook is built in a private temporary file and copied to the
 * caller's stream when complete: the stream (an output set's, kilter/output.h)
 * then receives the whole workbook or nothing. */
#include <errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include <xlsxwriter.h>
#include "kl_report.h"
#include "kilter/table.h"

#define XLSX_HEAD_ROWS 2   /* field names, units */
#define XLSX_WIDTH_MIN 6.0
#define XLSX_WIDTH_MAX 48.0
#define XLSX_MAX_COLS 96   /* more columns than any table has (checked) */

/* One sheet's per-column state while it is written. */
typedef struct {
    lxw_format *num[XLSX_MAX_COLS]; /* the column's number format, NULL: General */
    int chars[XLSX_MAX_COLS];       /* longest entry, characters */
} sheet_cols;

static int shows_csv(const kl_column *c)
{
    return (c->in >> KL_TABLE_CSV) & 1u;
}

/* "%.Nf" -> N decimals; -1 for any other format (shown as General). */
static int fixed_decimals(const char *fmt)
{
    if (!fmt)
        return 6; /* the CSV's default, %.6f */
    if (fmt[0] != '%' || fmt[1] != '.')
        return -1;
    char *end;
    long n = strtol(fmt + 2, &end, 10);
    return (end != fmt + 2 && strcmp(end, "f") == 0 && n >= 0 && n <= 12) ? (int)n : -1;
}

static lxw_format *number_format(lxw_workbook *wb, const kl_column *c)
{
    int d = fixed_decimals(c->csv);
    if (d < 0)
        return NULL;
    char pattern[20] = "0";
    if (d > 0) {
        pattern[1] = '.';
        memset(pattern + 2, '0', (size_t)d);
        pattern[2 + d] = '\0';
    }
    lxw_format *f = workbook_add_format(wb);
    if (f)
        format_set_num_format(f, pattern);
    return f;
}

static void widen(sheet_cols *w, int col, size_t n)
{
    if (n > (size_t)w->chars[col])
        w->chars[col] = n > 1000 ? 1000 : (int)n;
}

/* Row 0 the field names (bold), row 1 the units, each row whole before the
 * next (constant_memory: a row is flushed when a later one starts); the
 * number formats. */
static lxw_error write_head(lxw_workbook *wb, lxw_worksheet *ws, const kl_table *t,
                            lxw_format *bold, sheet_cols *w)
{
    lxw_error e = LXW_NO_ERROR;
    for (lxw_row_t row = 0; row < XLSX_HEAD_ROWS && !e; row++) {
        int n = 0;
        for (int k = 0; k < t->ncol && !e; k++) {
            const kl_column *c = &t->col[k];
            if (!shows_csv(c))
                continue;
            const char *s = row == 0 ? c->key : c->unit;
            if (s && s[0])
                e = worksheet_write_string(ws, row, (lxw_col_t)n, s, bold);
            if (row == 0) {
                w->num[n] = c->type == KL_CELL_NUM ? number_format(wb, c) : NULL;
                w->chars[n] = 0;
            }
            widen(w, n, s ? strlen(s) : 0);
            n++;
        }
    }
    return e;
}

/* One cell as the CSV writes it (table.c, csv_cell). */
static lxw_error write_cell(lxw_worksheet *ws, lxw_row_t row, int col, const kl_column *c,
                            const kl_cell *v, sheet_cols *w)
{
    char buf[64];
    lxw_col_t x = (lxw_col_t)col;
    switch (c->type) {
    case KL_CELL_NUM: {
        if (!isfinite(v->num))
            return LXW_NO_ERROR; /* not defined: an empty cell, as the CSV's empty field */
        int len = snprintf(buf, sizeof buf, c->csv ? c->csv : "%.6f", v->num);
        /* The figure as the CSV prints it, read back; a figure too long to print
         * here (no physical quantity of ours) keeps its own value. */
        double x_csv = len > 0 && (size_t)len < sizeof buf ? strtod(buf, NULL) : v->num;
        widen(w, col, len > 0 ? (size_t)len : 0);
        return worksheet_write_number(ws, row, x, x_csv, w->num[col]);
    }
    case KL_CELL_STR:
        if (!v->str || !v->str[0])
            return LXW_NO_ERROR;
        widen(w, col, strlen(v->str));
        return worksheet_write_string(ws, row, x, v->str, NULL);
    case KL_CELL_CHAR:
        buf[0] = (char)v->i;
        buf[1] = '\0';
        return worksheet_write_string(ws, row, x, buf, NULL);
    case KL_CELL_BOOL:
    case KL_CELL_INT:
        snprintf(buf, sizeof buf, "%d", v->i);
        widen(w, col, strlen(buf));
        return worksheet_write_number(ws, row, x, (double)v->i, NULL);
    }
    return LXW_NO_ERROR;
}

static lxw_error write_line(lxw_worksheet *ws, lxw_row_t row, const kl_table *t, const void *ctx,
                            int r, int sub, sheet_cols *w)
{
    lxw_error e = LXW_NO_ERROR;
    int n = 0;
    for (int k = 0; k < t->ncol && !e; k++) {
        const kl_column *c = &t->col[k];
        if (!shows_csv(c))
            continue;
        kl_cell v;
        v.num = NAN;
        v.i = 0;
        v.str = NULL;
        v.cls = NULL;
        c->get(ctx, r, sub, &v);
        e = write_cell(ws, row, n++, c, &v, w);
    }
    return e;
}

static int csv_cols(const kl_table *t)
{
    int n = 0;
    for (int k = 0; k < t->ncol; k++)
        n += shows_csv(&t->col[k]);
    return n;
}

/* The table's CSV rows from row 2 on; *last the last row written. */
static lxw_error write_rows(lxw_worksheet *ws, const kl_table *t, const void *ctx,
                            sheet_cols *w, lxw_row_t *last)
{
    int subs = t->next_sub && (!t->sub_in || ((t->sub_in >> KL_TABLE_CSV) & 1u));
    int nrows = t->rows(ctx);
    lxw_row_t row = XLSX_HEAD_ROWS;
    lxw_error e = LXW_NO_ERROR;
    for (int r = 0; r < nrows && !e; r++) {
        if (t->keep && !t->keep(ctx, r, KL_TABLE_CSV))
            continue;
        if (!subs) {
            if (row >= LXW_ROW_MAX)
                return LXW_ERROR_WORKSHEET_INDEX_OUT_OF_RANGE;
            e = write_line(ws, row++, t, ctx, r, -1, w);
            continue;
        }
        for (int j = t->next_sub(ctx, r, -1); j >= 0 && !e; j = t->next_sub(ctx, r, j)) {
            if (row >= LXW_ROW_MAX)
                return LXW_ERROR_WORKSHEET_INDEX_OUT_OF_RANGE;
            e = write_line(ws, row++, t, ctx, r, j, w);
        }
    }
    *last = row - 1;
    return e;
}

static kl_status sheet_error(kl_errors *err, const kl_table_sheet *s, lxw_error e)
{
    if (e == LXW_ERROR_WORKSHEET_INDEX_OUT_OF_RANGE)
        kl_errors_add(err, NULL, 0, 0, s->name, "workbook: the table has more rows than a sheet "
                      "holds (%u including its two header rows): write it as CSV (--format csv "
                      "--table %s) instead", (unsigned)LXW_ROW_MAX, s->t->name);
    else
        kl_errors_add(err, NULL, 0, 0, s->name, "workbook: cannot write the sheet: %s",
                      lxw_strerror(e));
    return e == LXW_ERROR_MEMORY_MALLOC_FAILED ? KL_ENOMEM : KL_EIO;
}

static kl_status write_sheet(lxw_workbook *wb, const kl_table_sheet *s, lxw_format *bold,
                             sheet_cols *w, kl_errors *err)
{
    int ncol = csv_cols(s->t);
    KL_ASSERT(ncol <= XLSX_MAX_COLS);
    if (ncol > XLSX_MAX_COLS || ncol == 0)
        return kl_errors_add(err, NULL, 0, 0, s->name, "workbook: internal error: the table has "
                             "%d columns (1 to %d expected)", ncol, XLSX_MAX_COLS), KL_EARG;
    lxw_worksheet *ws = workbook_add_worksheet(wb, s->name);
    if (!ws)
        return kl_errors_add(err, NULL, 0, 0, s->name, "workbook: cannot add the sheet (a name of "
                             "at most 31 characters, none of []:*?/\\, unique)"), KL_EARG;
    lxw_row_t last = 1;
    lxw_error e = write_head(wb, ws, s->t, bold, w);
    if (!e)
        e = write_rows(ws, s->t, s->ctx, w, &last);
    if (e)
        return sheet_error(err, s, e);
    worksheet_freeze_panes(ws, XLSX_HEAD_ROWS, 0);
    if (last >= XLSX_HEAD_ROWS)
        worksheet_autofilter(ws, XLSX_HEAD_ROWS - 1, 0, last, (lxw_col_t)(ncol - 1));
    for (int k = 0; k < ncol; k++) {
        double width = w->chars[k] + 2.0;
        width = width < XLSX_WIDTH_MIN ? XLSX_WIDTH_MIN : width > XLSX_WIDTH_MAX ? XLSX_WIDTH_MAX : width;
        worksheet_set_column(ws, (lxw_col_t)k, (lxw_col_t)k, width, NULL);
    }
    return KL_OK;
}

/* A private temporary file for libxlsxwriter to write: name in path[len]. */
static kl_status temp_name(char *path, size_t len, kl_errors *err)
{
    const char *dir = getenv("TMPDIR");
    if (!dir || !dir[0])
        dir = "/tmp";
    int n = snprintf(path, len, "%s/kilter-workbook-XXXXXX", dir);
    if (n < 0 || (size_t)n >= len)
        return kl_errors_add(err, NULL, 0, 0, NULL, "workbook: the temporary directory name "
                             "(TMPDIR) is too long"), KL_EIO;
    int fd = mkstemp(path);
    if (fd < 0)
        return kl_errors_add(err, path, 0, 0, NULL, "workbook: cannot create a temporary file: %s "
                             "(set TMPDIR to a writable directory)", strerror(errno)), KL_EIO;
    close(fd);
    return KL_OK;
}

static kl_status copy_out(const char *path, FILE *o, kl_errors *err)
{
    FILE *in = fopen(path, "rb");
    if (!in)
        return kl_errors_add(err, path, 0, 0, NULL, "workbook: cannot read the temporary file "
                             "back: %s", strerror(errno)), KL_EIO;
    char buf[1 << 14];
    size_t n;
    int bad = 0;
    while ((n = fread(buf, 1, sizeof buf, in)) > 0)
        bad |= fwrite(buf, 1, n, o) != n;
    bad |= ferror(in) != 0;
    fclose(in);
    if (bad)
        kl_errors_add(err, path, 0, 0, NULL, "workbook: copying the workbook failed");
    return bad ? KL_EIO : KL_OK;
}

kl_status kl_table_xlsx(FILE *o, const kl_table_sheet *sheets, int n, kl_errors *err)
{
    char path[4096];
    if (!o || !sheets || n < 1)
        return kl_errors_add(err, NULL, 0, 0, NULL, "workbook: no sheets to write"), KL_EARG;
    kl_status st = temp_name(path, sizeof path, err);
    if (st)
        return st;
    /* constant_memory: each row goes to disk when the next starts, so a large
     * feeder's workbook costs no more memory than a row (its strings are
     * written inline, not in a shared table). */
    lxw_workbook_options opt = { .constant_memory = LXW_TRUE, .tmpdir = NULL, .use_zip64 = LXW_TRUE };
    lxw_workbook *wb = workbook_new_opt(path, &opt);
    sheet_cols *w = kl_malloc(sizeof *w);
    lxw_format *bold = wb ? workbook_add_format(wb) : NULL;
    if (!wb) {
        /* libxlsxwriter says no more: its buffers, or its own temporary files */
        kl_errors_add(err, path, 0, 0, NULL, "workbook: cannot start the workbook (out of memory, "
                      "or no room for temporary files: set TMPDIR to a writable directory)");
        st = KL_EIO;
    } else if (!w || !bold) {
        kl_errors_add(err, NULL, 0, 0, NULL, "workbook: out of memory");
        st = KL_ENOMEM;
    } else {
        format_set_bold(bold);
    }
    for (int k = 0; k < n && !st; k++)
        st = write_sheet(wb, &sheets[k], bold, w, err);
    if (wb) {
        lxw_error e = workbook_close(wb); /* writes the file, frees wb */
        if (!st && e) {
            kl_errors_add(err, path, 0, 0, NULL, "workbook: cannot write the workbook: %s",
                          lxw_strerror(e));
            st = KL_EIO;
        }
    }
    if (!st)
        st = copy_out(path, o, err);
    kl_free(w);
    unlink(path);
    return st;
}
