/* kilter: the cells of a CSV table (csv_read.c) by column name, trimmed of
 * surrounding blanks, with located messages: what the allocation's input
 * files (head measurement, customer energy, classes, diversity) read. */
#include <ctype.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include "kl_io.h"

const kl_csv_field *kl_csv_row(const kl_csv *t, int r, int *n)
{
    int a = t->row_start[r + 1], b = t->row_start[r + 2];
    *n = b - a;
    return t->field + a;
}

/* s without its surrounding blanks: start and length. */
static const char *trim(const char *s, size_t *len)
{
    while (*s == ' ' || *s == '\t')
        s++;
    size_t n = strlen(s);
    while (n > 0 && (s[n - 1] == ' ' || s[n - 1] == '\t'))
        n--;
    *len = n;
    return s;
}

static int same_name(const char *cell, const char *name)
{
    size_t n;
    const char *s = trim(cell, &n);
    if (n != strlen(name))
        return 0;
    for (size_t i = 0; i < n; i++)
        if (tolower((unsigned char)s[i]) != name[i])
            return 0;
    return 1;
}

int kl_csv_columns(const kl_csv *t, const char *const *names, int *col, const char *expected, kl_errors *err)
{
    int n = 0, nf, bad = 0;
    while (names[n])
        col[n++] = -1;
    const kl_csv_field *h = kl_csv_row(t, -1, &nf);
    for (int i = 0; i < nf; i++) {
        int k = 0;
        while (k < n && !same_name(h[i].text, names[k]))
            k++;
        if (k == n)
            kl_errors_add(err, t->path, h[i].line, h[i].col, NULL, "unknown column '%s': expected %s",
                          h[i].text, expected);
        else if (col[k] >= 0)
            kl_errors_add(err, t->path, h[i].line, h[i].col, NULL, "column '%s' is given twice", h[i].text);
        else
            col[k] = i;
        bad |= k == n || col[k] != i;
    }
    return bad ? -1 : 0;
}

kl_loc kl_csv_loc(const kl_csv *t, int r, int i)
{
    int n;
    const kl_csv_field *f = kl_csv_row(t, r, &n);
    if (i >= 0 && i < n)
        return (kl_loc){f[i].line, f[i].col};
    return n ? (kl_loc){f[n - 1].line, f[n - 1].col} : (kl_loc){0, 0};
}

int kl_csv_text(const kl_csv *t, int r, int i, const char *what, char *buf, size_t n, kl_errors *err)
{
    int nf;
    const kl_csv_field *f = kl_csv_row(t, r, &nf);
    kl_loc at = kl_csv_loc(t, r, i);
    if (i < 0 || i >= nf) {
        kl_errors_add(err, t->path, at.line, at.col, NULL, "the row ends before its column '%s': give every column "
                      "of the header", what);
        return -1;
    }
    size_t len;
    const char *s = trim(f[i].text, &len);
    if (len >= n) {
        kl_errors_add(err, t->path, at.line, at.col, NULL, "the %s is longer than %zu characters", what, n - 1);
        return -1;
    }
    memcpy(buf, s, len);
    buf[len] = '\0';
    return 0;
}

int kl_csv_number(const kl_csv *t, int r, int i, const char *what, double *v, kl_errors *err)
{
    char buf[64], *end;
    if (kl_csv_text(t, r, i, what, buf, sizeof buf, err) < 0)
        return -1;
    double x = strtod(buf, &end);
    if (!buf[0] || end == buf || *end || !isfinite(x)) {
        kl_loc at = kl_csv_loc(t, r, i);
        kl_errors_add(err, t->path, at.line, at.col, NULL, "%s%s%s is not a number: give %s as a plain "
                      "number", buf[0] ? "'" : "", buf[0] ? buf : "an empty cell", buf[0] ? "'" : "", what);
        return -1;
    }
    *v = x;
    return 0;
}
