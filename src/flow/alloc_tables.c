/* kilter: the tables that turn customers' energy into demand (allocate.h):
 * the customer classes, each with its kWh-to-kW relation (a linear relation
 * or a load factor), and the diversity factor by number of customers. */
#include <math.h>
#include <string.h>
#include "kilter/allocate.h"
#include "kl_io.h"

#define HOURS_MONTH 730.0 /* 8760 h / 12: an average month (common practice) */

static char *dup_name(const char *s)
{
    size_t n = strlen(s);
    char *d = kl_malloc(n + 1);
    if (d)
        memcpy(d, s, n + 1);
    return d;
}

/* An optional number: 1 read, 0 empty cell (or no column), -1 after a message. */
static int opt_number(const kl_csv *t, int r, int col, const char *what, double *v, kl_errors *err)
{
    char buf[64];
    if (col < 0)
        return 0;
    if (kl_csv_text(t, r, col, what, buf, sizeof buf, err) < 0)
        return -1;
    if (!buf[0])
        return 0;
    return kl_csv_number(t, r, col, what, v, err) < 0 ? -1 : 1;
}

enum { K_CLASS, K_INTERCEPT, K_SLOPE, K_LF, K_HOURS, NK };
static const char *const CLASS_COLS[NK + 1] = {"class", "intercept_kw", "kw_per_kwh", "load_factor", "hours",
                                               NULL};

/* Row r of the class table into c; 0, or -1 after a message. */
static int class_row(const kl_csv *t, int r, const int *col, kl_customer_class *c, kl_errors *err)
{
    double a = 0, b = 0, lf = 0, h = HOURS_MONTH;
    if (kl_csv_text(t, r, col[K_CLASS], "class", c->name, sizeof c->name, err) < 0)
        return -1;
    kl_loc at = kl_csv_loc(t, r, col[K_CLASS]);
    c->loc = at;
    int ga = opt_number(t, r, col[K_INTERCEPT], "intercept_kw", &a, err);
    int gb = opt_number(t, r, col[K_SLOPE], "kw_per_kwh", &b, err);
    int gl = opt_number(t, r, col[K_LF], "load_factor", &lf, err);
    int gh = opt_number(t, r, col[K_HOURS], "hours", &h, err);
    if (ga < 0 || gb < 0 || gl < 0 || gh < 0)
        return -1;
    const char *why = NULL;
    if (!c->name[0])
        why = "a class needs a name";
    else if ((ga || gb) && gl)
        why = "give either intercept_kw and kw_per_kwh (a linear relation) or load_factor, not both";
    else if (!gl && !(ga && gb))
        why = "give intercept_kw and kw_per_kwh (kW = intercept + slope x kWh), or load_factor";
    else if (gl && !(lf > 0 && lf <= 1))
        why = "a load factor is above 0 and at most 1 (average over peak demand)";
    else if (gl && !(h > 0))
        why = "hours (of a billing period) must be above 0";
    else if (!gl && !(b >= 0))
        why = "kw_per_kwh must be 0 or more: demand does not fall with energy";
    if (why) {
        kl_errors_add(err, t->path, at.line, at.col, NULL, "class '%s': %s", c->name, why);
        return -1;
    }
    c->intercept_w = a * 1e3;
    c->w_per_kwh = b * 1e3;
    c->load_factor = gl ? lf : 0;
    c->hours = h;
    return 0;
}

static kl_status class_table(const kl_csv *t, kl_class_table *out, kl_errors *err)
{
    int col[NK], bad = 0;
    if (kl_csv_columns(t, CLASS_COLS, col, "class, intercept_kw, kw_per_kwh, load_factor, hours", err) < 0)
        return KL_EINPUT;
    if (col[K_CLASS] < 0) {
        kl_loc h = kl_csv_loc(t, -1, 0);
        kl_errors_add(err, t->path, h.line, h.col, NULL, "the header needs a 'class' column");
        return KL_EINPUT;
    }
    if (!(out->c = kl_calloc((size_t)t->nrows + 1, sizeof *out->c)))
        return KL_ENOMEM;
    for (int r = 0; r < t->nrows; r++) {
        kl_customer_class *c = &out->c[out->n];
        if (class_row(t, r, col, c, err) < 0) {
            bad = 1;
            continue;
        }
        for (int k = 0; k < out->n; k++)
            if (strcmp(out->c[k].name, c->name) == 0) {
                kl_errors_add(err, t->path, c->loc.line, c->loc.col, NULL, "class '%s' is given twice (first on "
                              "line %d)", c->name, out->c[k].loc.line);
                bad = 1;
            }
        out->n++;
    }
    if (!bad && !out->n) {
        kl_errors_add(err, t->path, 2, 1, NULL, "no class after the header: give a row per customer class");
        bad = 1;
    }
    return bad ? KL_EINPUT : KL_OK;
}

void kl_class_table_free(kl_class_table *t)
{
    if (!t)
        return;
    kl_free(t->c);
    kl_free(t->file);
    memset(t, 0, sizeof *t);
}

static kl_status read_either(const char *text, size_t len, const char *name, char **file, kl_csv **t,
                             kl_errors *err)
{
    if (!(*file = dup_name(name)))
        return KL_ENOMEM;
    return text ? kl_csv_read_buffer(text, len, *file, t, err) : kl_csv_read(*file, t, err);
}

static kl_status class_read(const char *text, size_t len, const char *name, kl_class_table *out, kl_errors *err)
{
    kl_csv *t = NULL;
    memset(out, 0, sizeof *out);
    kl_status st = read_either(text, len, name, &out->file, &t, err);
    if (!st)
        st = class_table(t, out, err);
    kl_csv_free(t);
    if (st)
        kl_class_table_free(out);
    return st;
}

kl_status kl_class_read(const char *path, kl_class_table *out, kl_errors *err)
{
    return class_read(NULL, 0, path, out, err);
}

kl_status kl_class_read_buffer(const char *text, size_t len, const char *name, kl_class_table *out,
                               kl_errors *err)
{
    return class_read(text, len, name, out, err);
}

/* ---- diversity factors */

static const char *const DIV_COLS[3] = {"customers", "diversity_factor", NULL};

static kl_status diversity_table(const kl_csv *t, kl_diversity_table *out, kl_errors *err)
{
    int col[2], bad = 0;
    if (kl_csv_columns(t, DIV_COLS, col, "customers, diversity_factor", err) < 0)
        return KL_EINPUT;
    if (col[0] < 0 || col[1] < 0) {
        kl_loc h = kl_csv_loc(t, -1, 0);
        kl_errors_add(err, t->path, h.line, h.col, NULL, "the header needs the columns customers and "
                      "diversity_factor");
        return KL_EINPUT;
    }
    out->customers = kl_calloc((size_t)t->nrows + 1, sizeof *out->customers);
    out->factor = kl_calloc((size_t)t->nrows + 1, sizeof *out->factor);
    if (!out->customers || !out->factor)
        return KL_ENOMEM;
    for (int r = 0; r < t->nrows; r++) {
        double n, df;
        if (kl_csv_number(t, r, col[0], "customers", &n, err) < 0 ||
            kl_csv_number(t, r, col[1], "diversity_factor", &df, err) < 0) {
            bad = 1;
            continue;
        }
        kl_loc at = kl_csv_loc(t, r, col[0]);
        const char *why = NULL;
        if (!(n >= 1 && n <= 1e6 && n == floor(n)))
            why = "customers is a whole number, 1 or more";
        else if (out->n && !(n > out->customers[out->n - 1]))
            why = "rows go in increasing number of customers";
        else if (!(df >= 1))
            why = "a diversity factor is 1 or more (the sum of the peaks over the group's peak)";
        else if (out->n && !(df >= out->factor[out->n - 1]))
            why = "a diversity factor does not fall as customers are added";
        if (why) {
            kl_errors_add(err, t->path, at.line, at.col, NULL, "%s", why);
            bad = 1;
            continue;
        }
        out->customers[out->n] = (int)n; /* a whole number, 1 to 1e6 */
        out->factor[out->n++] = df;
    }
    if (!bad && !out->n) {
        kl_errors_add(err, t->path, 2, 1, NULL, "no row after the header: give customers,diversity_factor rows");
        bad = 1;
    }
    return bad ? KL_EINPUT : KL_OK;
}

void kl_diversity_table_free(kl_diversity_table *t)
{
    if (!t)
        return;
    kl_free(t->customers);
    kl_free(t->factor);
    kl_free(t->file);
    memset(t, 0, sizeof *t);
}

static kl_status diversity_read(const char *text, size_t len, const char *name, kl_diversity_table *out,
                                kl_errors *err)
{
    kl_csv *t = NULL;
    memset(out, 0, sizeof *out);
    kl_status st = read_either(text, len, name, &out->file, &t, err);
    if (!st)
        st = diversity_table(t, out, err);
    kl_csv_free(t);
    if (st)
        kl_diversity_table_free(out);
    return st;
}

kl_status kl_diversity_read(const char *path, kl_diversity_table *out, kl_errors *err)
{
    return diversity_read(NULL, 0, path, out, err);
}

kl_status kl_diversity_read_buffer(const char *text, size_t len, const char *name, kl_diversity_table *out,
                                   kl_errors *err)
{
    return diversity_read(text, len, name, out, err);
}

double kl_diversity_factor(const kl_diversity_table *t, int n)
{
    if (!t || !t->n || n <= 1)
        return 1.0;
    int n0 = 1;
    double f0 = 1.0; /* one customer: no diversity, by the definition */
    for (int k = 0; k < t->n; k++) {
        if (n <= t->customers[k])
            return t->customers[k] == n0 ? t->factor[k]
                                         : f0 + (t->factor[k] - f0) * (n - n0) / (t->customers[k] - n0);
        n0 = t->customers[k];
        f0 = t->factor[k];
    }
    return f0;
}
