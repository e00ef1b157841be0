/* kilter: reading a CSV table (RFC 4180) with the position of every field, for
 * the feeder import (feeder_import.c): a header line of column names, then
 * records.  Fields may be quoted ("a, b", "say ""x"""); a quoted field may not
 * span lines here (a GIS export's attribute never needs to).  Blank lines and
 * lines starting with '#' are skipped.  Every field keeps its line and column
 * (1-based, the column of its first character, the quote for a quoted field). */
#include <stdio.h>
#include <string.h>
#include "kl_io.h"

void kl_csv_free(kl_csv *t)
{
    if (!t)
        return;
    kl_free(t->text);
    kl_free(t->field);
    kl_free(t->row_start);
    kl_free(t);
}

static int grow(kl_csv *t, int need)
{
    if (need <= t->cap)
        return 0;
    int cap = t->cap ? 2 * t->cap : 256;
    while (cap < need)
        cap *= 2;
    kl_csv_field *f = kl_realloc(t->field, (size_t)cap * sizeof *f);
    if (!f)
        return -1;
    t->field = f;
    t->cap = cap;
    return 0;
}

static int grow_rows(kl_csv *t, int need)
{
    if (need <= t->row_cap)
        return 0;
    int cap = t->row_cap ? 2 * t->row_cap : 64;
    while (cap < need)
        cap *= 2;
    int *r = kl_realloc(t->row_start, (size_t)(cap + 1) * sizeof *r);
    if (!r)
        return -1;
    t->row_start = r;
    t->row_cap = cap;
    return 0;
}

/* Splits one line (s[0 .. n), NUL-terminated in place at the end) into fields. */
static kl_status split_line(kl_csv *t, char *s, int line, kl_errors *err)
{
    /* a control character would become a line break or worse in the feeder
     * file written from the table (and move every later message's position) */
    for (char *c = s; *c; c++)
        if ((unsigned char)*c < 0x20 || *c == 0x7f)
            return kl_errors_add(err, t->path, line, (int)(c - s) + 1, NULL, "a control character "
                                 "(byte 0x%02x) in the table: a cell holds printable text only",
                                 (unsigned)(unsigned char)*c), KL_EINPUT;
    char *p = s;
    for (;;) {
        if (grow(t, t->nfield + 1) < 0)
            return KL_ENOMEM;
        kl_csv_field *f = &t->field[t->nfield];
        f->line = line;
        f->col = (int)(p - s) + 1;
        if (*p == '"') {
            char *w = ++p;
            f->text = w;
            for (;;) {
                if (!*p)
                    return kl_errors_add(err, t->path, line, f->col, NULL, "a quoted field is not "
                                         "closed on its line: end it with \" (a quote inside is "
                                         "written twice)"), KL_EINPUT;
                if (*p == '"' && p[1] == '"') {
                    *w++ = '"';
                    p += 2;
                } else if (*p == '"') {
                    p++;
                    break;
                } else {
                    *w++ = *p++;
                }
            }
            if (*p && *p != ',')
                return kl_errors_add(err, t->path, line, (int)(p - s) + 1, NULL, "text after a "
                                     "quoted field: expected a comma"), KL_EINPUT;
            *w = '\0';
        } else {
            f->text = p;
            while (*p && *p != ',')
                p++;
        }
        t->nfield++;
        if (!*p)
            return KL_OK;
        *p++ = '\0';
    }
}

/* The file's bytes, NUL-terminated; NULL with *st KL_EIO or KL_ENOMEM. */
static char *read_all(const char *path, size_t *len, kl_status *st, kl_errors *err)
{
    FILE *in = fopen(path, "rb");
    *st = KL_EIO;
    if (!in) {
        kl_errors_add(err, path, 0, 0, NULL, "cannot open the table: check the path");
        return NULL;
    }
    size_t cap = 1 << 16, n = 0;
    char *buf = kl_malloc(cap);
    size_t got;
    while (buf && (got = fread(buf + n, 1, cap - n - 1, in)) > 0) {
        n += got;
        if (cap - n - 1 == 0) {
            char *b = kl_realloc(buf, cap * 2);
            if (!b) {
                kl_free(buf);
                buf = NULL;
                break;
            }
            buf = b;
            cap *= 2;
        }
    }
    int bad = ferror(in);
    fclose(in);
    if (!buf) {
        kl_errors_add(err, path, 0, 0, NULL, "out of memory reading the table");
        *st = KL_ENOMEM;
    } else if (bad) {
        kl_errors_add(err, path, 0, 0, NULL, "cannot read the table");
        kl_free(buf);
        return NULL;
    }
    if (buf) {
        buf[n] = '\0';
        *st = KL_OK;
    }
    *len = n;
    return buf;
}

static kl_status parse(kl_csv *t, size_t len, kl_csv **out, kl_errors *err);

kl_status kl_csv_read(const char *path, kl_csv **out, kl_errors *err)
{
    *out = NULL;
    kl_csv *t = kl_calloc(1, sizeof *t);
    if (!t)
        return KL_ENOMEM;
    t->path = path;
    size_t len = 0;
    kl_status rs;
    t->text = read_all(path, &len, &rs, err);
    if (!t->text) {
        kl_csv_free(t);
        return rs;
    }
    return parse(t, len, out, err);
}

kl_status kl_csv_read_buffer(const char *text, size_t len, const char *name, kl_csv **out, kl_errors *err)
{
    *out = NULL;
    kl_csv *t = kl_calloc(1, sizeof *t);
    if (!t || !(t->text = kl_malloc(len + 1))) {
        kl_free(t);
        return KL_ENOMEM;
    }
    memcpy(t->text, text, len);
    t->text[len] = '\0';
    t->path = name;
    return parse(t, len, out, err);
}

/* Splits t->text (len bytes) into rows and fields. */
static kl_status parse(kl_csv *t, size_t len, kl_csv **out, kl_errors *err)
{
    const char *path = t->path;
    if (memchr(t->text, '\0', len)) {
        kl_errors_add(err, path, 0, 0, NULL, "the table holds a NUL byte: it is not a text CSV file");
        kl_csv_free(t);
        return KL_EINPUT;
    }
    kl_status st = KL_OK;
    char *p = t->text;
    if ((unsigned char)p[0] == 0xEF && (unsigned char)p[1] == 0xBB && (unsigned char)p[2] == 0xBF)
        p += 3; /* a UTF-8 byte-order mark, as spreadsheet programs write */
    int line = 0;
    t->nrows = -1; /* the header is row -1 */
    while (*p && !st) {
        char *end = strchr(p, '\n');
        char *next = end ? end + 1 : p + strlen(p);
        if (end)
            *end = '\0';
        if (end && end > p && end[-1] == '\r')
            end[-1] = '\0';
        line++;
        if (p[0] != '\0' && p[0] != '#') {
            if (grow_rows(t, t->nrows + 2) < 0)
                st = KL_ENOMEM;
            else {
                t->row_start[t->nrows + 1] = t->nfield;
                st = split_line(t, p, line, err);
                t->nrows++;
            }
        }
        p = next;
    }
    if (!st && t->nrows < 0) {
        kl_errors_add(err, path, 1, 1, NULL, "the table is empty: its first line names the columns");
        st = KL_EINPUT;
    }
    if (!st && grow_rows(t, t->nrows + 2) < 0)
        st = KL_ENOMEM;
    if (st == KL_ENOMEM)
        kl_errors_add(err, path, 0, 0, NULL, "out of memory reading the table");
    if (st) {
        kl_csv_free(t);
        return st;
    }
    t->row_start[t->nrows + 1] = t->nfield;
    *out = t;
    return KL_OK;
}
