/* kilter: allocation by energy (allocate.h): customers' billed energy,
 * mapped to the feeder's loads (their distribution transformers), turned
 * into each load's peak-demand estimate by its customers' classes and the
 * diversity of their number: the basis the head demand is shared by. */
#include <stdlib.h>
#include <string.h>
#include "kilter/allocate.h"
#include "kl_io.h"

enum { E_CUSTOMER, E_LOAD, E_KWH, E_PERIOD, E_CLASS, NE };
static const char *const ENERGY_COLS[NE + 1] = {"customer", "load", "kwh", "period", "class", NULL};

typedef struct {
    const kl_csv *t;
    const kl_feeder *f;
    const kl_class_table *classes;
    kl_energy_table *out;
    kl_names loads;      /* the feeder's loads by name */
    kl_errors *err;
    int col[NE];
    int bad;
} energy_reader;

/* The load named in row r (a feeder load that allocation may scale): its id, or -1. */
static int row_load(energy_reader *R, int r, kl_loc at)
{
    char name[128];
    if (kl_csv_text(R->t, r, R->col[E_LOAD], "load", name, sizeof name, R->err) < 0)
        return -1;
    int l = kl_names_find(&R->loads, name, strlen(name));
    if (l < 0) {
        kl_errors_add(R->err, R->t->path, at.line, at.col, NULL, "load '%s' is not in the feeder %s: name the "
                      "load (distribution transformer) that serves the customer", name, R->f->path);
        return -1;
    }
    const kl_load_nameplate *np = R->f->load_nameplate ? &R->f->load_nameplate[l] : NULL;
    if (np && np->fixed_power) {
        kl_errors_add(R->err, R->t->path, at.line, at.col, NULL, "load '%s' is held at its metered power "
                      "(fixed_power: true), so its customers' energy is not used: remove the row or the mark",
                      name);
        return -1;
    }
    return l;
}

static int row_class(energy_reader *R, int r)
{
    char name[40];
    if (R->col[E_CLASS] < 0)
        return 0; /* one class: checked with the header */
    if (kl_csv_text(R->t, r, R->col[E_CLASS], "class", name, sizeof name, R->err) < 0)
        return -1;
    for (int k = 0; k < R->classes->n; k++)
        if (strcmp(R->classes->c[k].name, name) == 0)
            return k;
    kl_loc at = kl_csv_loc(R->t, r, R->col[E_CLASS]);
    kl_errors_add(R->err, R->t->path, at.line, at.col, NULL, "class '%s' is not in the class table %s: give "
                  "it a row there, or use one of its classes (the first: '%s')", name, R->classes->file,
                  R->classes->c[0].name);
    return -1;
}

/* Row r into e; 0, or -1 after a message. */
static int energy_row(energy_reader *R, int r, kl_customer_energy *e)
{
    e->loc = kl_csv_loc(R->t, r, 0);
    if (kl_csv_text(R->t, r, R->col[E_CUSTOMER], "customer", e->customer, sizeof e->customer, R->err) < 0 ||
        kl_csv_text(R->t, r, R->col[E_PERIOD], "period", e->period, sizeof e->period, R->err) < 0)
        return -1;
    if (!e->customer[0] || !e->period[0]) {
        kl_loc at = kl_csv_loc(R->t, r, R->col[e->customer[0] ? E_PERIOD : E_CUSTOMER]);
        kl_errors_add(R->err, R->t->path, at.line, at.col, NULL, "the %s is empty: every row names its customer "
                      "(or meter) and billing period", e->customer[0] ? "period" : "customer");
        return -1;
    }
    int bad = (e->load = row_load(R, r, kl_csv_loc(R->t, r, R->col[E_LOAD]))) < 0;
    bad |= (e->cls = row_class(R, r)) < 0;
    if (kl_csv_number(R->t, r, R->col[E_KWH], "kwh", &e->kwh, R->err) < 0)
        return -1;
    if (!(e->kwh >= 0)) {
        kl_loc at = kl_csv_loc(R->t, r, R->col[E_KWH]);
        kl_errors_add(R->err, R->t->path, at.line, at.col, NULL, "energy %g kWh is negative: a billed energy "
                      "is 0 or more (a net-metered export is not a demand)", e->kwh);
        return -1;
    }
    return bad ? -1 : 0;
}

static int by_customer(const void *a, const void *b)
{
    const kl_customer_energy *x = a, *y = b;
    int c = strcmp(x->customer, y->customer);
    return c ? c : x->loc.line - y->loc.line;
}

/* The period to keep: the caller's, or the file's only one. */
static int pick_period(energy_reader *R, const char *period)
{
    kl_energy_table *o = R->out;
    if (period) {
        int m = 0;
        for (int k = 0; k < o->n; k++)
            if (strcmp(o->r[k].period, period) == 0)
                o->r[m++] = o->r[k];
        if (!m && o->n) {
            kl_errors_add(R->err, R->t->path, 0, 0, NULL, "no row of period '%s' (the file has '%s', ...)",
                          period, o->r[0].period);
            return -1;
        }
        o->n = m;
        snprintf(o->period, sizeof o->period, "%s", period);
        return 0;
    }
    for (int k = 1; k < o->n; k++)
        if (strcmp(o->r[k].period, o->r[0].period)) {
            kl_errors_add(R->err, R->t->path, o->r[k].loc.line, o->r[k].loc.col, NULL, "the file holds more than "
                          "one billing period ('%s' on line %d, '%s' here): pick one (--period)",
                          o->r[0].period, o->r[0].loc.line, o->r[k].period);
            return -1;
        }
    if (o->n)
        snprintf(o->period, sizeof o->period, "%s", o->r[0].period);
    return 0;
}

static kl_status energy_table(energy_reader *R, const char *period)
{
    const kl_csv *t = R->t;
    kl_loc h = kl_csv_loc(t, -1, 0);
    if (kl_csv_columns(t, ENERGY_COLS, R->col, "customer, load, kwh, period, class", R->err) < 0)
        return KL_EINPUT;
    for (int k = 0; k < E_CLASS; k++)
        if (R->col[k] < 0) {
            kl_errors_add(R->err, t->path, h.line, h.col, NULL, "the header needs the column '%s' (customer, "
                          "load, kwh, period, and class when there are several)", ENERGY_COLS[k]);
            return KL_EINPUT;
        }
    if (R->col[E_CLASS] < 0 && R->classes->n > 1) {
        kl_errors_add(R->err, t->path, h.line, h.col, NULL, "the class table %s has %d classes: give each "
                      "customer's in a 'class' column", R->classes->file, R->classes->n);
        return KL_EINPUT;
    }
    kl_energy_table *o = R->out;
    if (!(o->r = kl_calloc((size_t)t->nrows + 1, sizeof *o->r)))
        return KL_ENOMEM;
    for (int r = 0; r < t->nrows; r++) {
        if (energy_row(R, r, &o->r[o->n]) < 0)
            R->bad = 1;
        else
            o->n++;
    }
    if (pick_period(R, period) < 0)
        return KL_EINPUT;
    qsort(o->r, (size_t)o->n, sizeof *o->r, by_customer);
    for (int k = 1; k < o->n; k++)
        if (strcmp(o->r[k].customer, o->r[k - 1].customer) == 0) {
            kl_errors_add(R->err, t->path, o->r[k].loc.line, o->r[k].loc.col, NULL, "customer '%s' is given "
                          "twice in period %s (first on line %d): give one row per customer and period",
                          o->r[k].customer, o->period, o->r[k - 1].loc.line);
            R->bad = 1;
        }
    return R->bad ? KL_EINPUT : KL_OK;
}

void kl_energy_table_free(kl_energy_table *t)
{
    if (!t)
        return;
    kl_free(t->r);
    kl_free(t->file);
    memset(t, 0, sizeof *t);
}

static kl_status energy_read(const char *text, size_t len, const char *name, const kl_feeder *f,
                             const kl_class_table *classes, const char *period, kl_energy_table *out,
                             kl_errors *err)
{
    energy_reader R;
    kl_csv *t = NULL;
    memset(out, 0, sizeof *out);
    memset(&R, 0, sizeof R);
    if (!classes || !classes->n)
        return KL_EARG;
    size_t nl = strlen(name);
    if (!(out->file = kl_malloc(nl + 1)))
        return KL_ENOMEM;
    memcpy(out->file, name, nl + 1);
    kl_names_init(&R.loads, (void *const *)&f->loads, sizeof *f->loads);
    kl_status st = KL_OK;
    for (int l = 0; l < f->nloads && !st; l++)
        if (kl_names_find(&R.loads, f->loads[l].name, strlen(f->loads[l].name)) < 0)
            st = kl_names_add(&R.loads, f->loads[l].name, l);
    if (!st)
        st = text ? kl_csv_read_buffer(text, len, out->file, &t, err) : kl_csv_read(out->file, &t, err);
    if (!st) {
        R.t = t;
        R.f = f;
        R.classes = classes;
        R.out = out;
        R.err = err;
        st = energy_table(&R, period);
    }
    kl_csv_free(t);
    kl_names_free(&R.loads);
    if (st)
        kl_energy_table_free(out);
    return st;
}

kl_status kl_energy_read(const char *path, const kl_feeder *f, const kl_class_table *classes,
                         const char *period, kl_energy_table *out, kl_errors *err)
{
    return energy_read(NULL, 0, path, f, classes, period, out, err);
}

kl_status kl_energy_read_buffer(const char *text, size_t len, const char *name, const kl_feeder *f,
                                const kl_class_table *classes, const char *period, kl_energy_table *out,
                                kl_errors *err)
{
    return energy_read(text, len, name, f, classes, period, out, err);
}

/* A customer's peak-demand estimate, W: the class's linear relation, or
 * kWh / (hours x load factor). */
static double peak_w(const kl_customer_class *c, double kwh)
{
    if (c->load_factor > 0)
        return kwh * 1e3 / (c->hours * c->load_factor);
    double w = c->intercept_w + c->w_per_kwh * kwh;
    return w > 0 ? w : 0;
}

kl_status kl_alloc_basis_energy(const kl_feeder *f, const kl_energy_table *e, const kl_class_table *c,
                                const kl_diversity_table *div, double *basis, int *n, kl_errors *err)
{
    double *sum = kl_calloc((size_t)f->nloads + 1, sizeof *sum);
    int *count = kl_calloc((size_t)f->nloads + 1, sizeof *count);
    kl_status st = sum && count ? KL_OK : KL_ENOMEM;
    *n = 0;
    for (int k = 0; !st && k < e->n; k++) {
        sum[e->r[k].load] += peak_w(&c->c[e->r[k].cls], e->r[k].kwh);
        count[e->r[k].load]++;
    }
    for (int l = 0; st != KL_ENOMEM && l < f->nloads; l++) {
        const kl_load *ld = &f->loads[l];
        int entries = kl_phases_count(ld->phases), given = 0;
        for (int k = 0; k < 3; k++) {
            basis[3 * l + k] = 0;
            given |= creal(ld->s_va[k]) != 0 || cimag(ld->s_va[k]) != 0;
        }
        if (kl_deenergized_load(f, l))
            continue;
        if (!count[l]) {
            const kl_load_nameplate *np = f->load_nameplate ? &f->load_nameplate[l] : NULL;
            if (!given && !(np && np->fixed_power)) {
                kl_errors_add(err, f->path, ld->loc.line, ld->loc.col, NULL, "load %s has no power of its own "
                              "and no customer in %s (period %s): give its customers' energy, or its power",
                              ld->name, e->file, e->period);
                st = KL_EINPUT;
            }
            continue;
        }
        /* the customers' diversified peak, shared equally by the load's entries */
        double w = sum[l] / kl_diversity_factor(div, count[l]) / (entries ? entries : 1);
        for (int k = 0; k < 3; k++)
            if ((ld->phases & (1 << k)) && w > 0) {
                basis[3 * l + k] = w;
                (*n)++;
            }
    }
    kl_free(sum);
    kl_free(count);
    return st;
}
