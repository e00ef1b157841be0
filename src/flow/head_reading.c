/* kilter: the demand metered at the feeder head, read from a CSV file as a
 * substation's SCADA exports it: a snapshot, one row per phase
 *     phase,kw,kvar        phase,kw,pf        phase,amps,pf
 * or a series, one row per time step, columns per phase
 *     time,kw_a,kvar_a,kw_b,kvar_b,kw_c,kvar_c   (or pf_p, amps_p)
 * and the head power a reading asks for.  A power factor is positive lagging,
 * negative leading (P and Q of opposite signs). */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include "kilter/allocate.h"
#include "kl_io.h"

enum { Q_KW, Q_KVAR, Q_PF, Q_AMPS, NQ };
static const char *const QNAME[NQ] = {"kw", "kvar", "pf", "amps"};
static const char PHC[3] = {'a', 'b', 'c'};

/* Header names: phase, time, the four quantities (snapshot), then the four
 * of phase a, b, c (series). */
enum { C_PHASE, C_TIME, C_Q0, C_QP = C_Q0 + NQ, NCOL = C_QP + 3 * NQ };
static const char *const COLS[NCOL + 1] = {
    "phase", "time", "kw", "kvar", "pf", "amps", "kw_a", "kvar_a", "pf_a", "amps_a",
    "kw_b", "kvar_b", "pf_b", "amps_b", "kw_c", "kvar_c", "pf_c", "amps_c", NULL};
static const char EXPECTED[] = "phase with kw, kvar, pf or amps (one row per phase), or time with kw_a, "
                               "kvar_a, pf_a, amps_a ... (one row per time step)";
static const char FORMS[] = "kw and kvar, kw and pf, or amps and pf";

typedef struct {
    const kl_csv *t;
    kl_errors *err;
    kl_head_series *out;
    int col[NCOL];
    int series;
    kl_head_form form;
    int phases;          /* series: the phases with columns */
    int bad;
} head_reader;

static void err_at(head_reader *R, kl_loc at, const char *fmt, const char *a, const char *b)
{
    kl_errors_add(R->err, R->t->path, at.line, at.col, NULL, fmt, a, b);
    R->bad = 1;
}

/* The form given by the quantity columns c[Q_*], or 0 when they make none. */
static kl_head_form form_of(const int *c)
{
    if (c[Q_KW] >= 0 && c[Q_KVAR] >= 0 && c[Q_PF] < 0 && c[Q_AMPS] < 0)
        return KL_HEAD_KW_KVAR;
    if (c[Q_KW] >= 0 && c[Q_PF] >= 0 && c[Q_KVAR] < 0 && c[Q_AMPS] < 0)
        return KL_HEAD_KW_PF;
    if (c[Q_AMPS] >= 0 && c[Q_PF] >= 0 && c[Q_KW] < 0 && c[Q_KVAR] < 0)
        return KL_HEAD_AMPS_PF;
    return 0;
}

static int any_of(const int *c)
{
    return c[0] >= 0 || c[1] >= 0 || c[2] >= 0 || c[3] >= 0;
}

static int header(head_reader *R)
{
    kl_loc h = kl_csv_loc(R->t, -1, 0);
    if (kl_csv_columns(R->t, COLS, R->col, EXPECTED, R->err) < 0)
        return -1;
    if ((R->col[C_PHASE] >= 0) == (R->col[C_TIME] >= 0)) {
        err_at(R, h, "the header needs a 'phase' column (one row per phase) or a 'time' column (one row per "
                     "time step)%s%s", "", "");
        return -1;
    }
    R->series = R->col[C_TIME] >= 0;
    if (!R->series) {
        for (int p = 0; p < 3; p++)
            if (any_of(R->col + C_QP + NQ * p))
                err_at(R, h, "a column per phase (kw_%s ...) goes with a 'time' column; with 'phase' name "
                             "the quantity alone (kw, kvar, pf, amps)%s", (char[2]){PHC[p], 0}, "");
        if (!R->bad && !(R->form = form_of(R->col + C_Q0)))
            err_at(R, h, "the columns give no measurement form: give %s%s", FORMS, "");
        return R->bad ? -1 : 0;
    }
    if (any_of(R->col + C_Q0))
        err_at(R, h, "with a 'time' column give a column per phase (kw_a, kvar_a, ...)%s%s", "", "");
    for (int p = 0; p < 3 && !R->bad; p++) {
        const int *c = R->col + C_QP + NQ * p;
        if (!any_of(c))
            continue;
        kl_head_form fm = form_of(c);
        if (!fm || (R->form && fm != R->form)) {
            err_at(R, h, "phase %s's columns give no measurement form, or another than the other phases': "
                         "give every phase %s", (char[2]){PHC[p], 0}, FORMS);
            break;
        }
        R->form = fm;
        R->phases |= 1 << p;
    }
    if (!R->bad && !R->phases)
        err_at(R, h, "no phase has a column: give kw_a, kvar_a ... (or pf_, amps_)%s%s", "", "");
    return R->bad ? -1 : 0;
}

/* The figure of quantity q in column i of row r: 0, or -1 after a message. */
static int number(head_reader *R, int r, int i, int q, double *v)
{
    double x;
    if (kl_csv_number(R->t, r, i, QNAME[q], &x, R->err) < 0) {
        R->bad = 1;
        return -1;
    }
    kl_loc at = kl_csv_loc(R->t, r, i);
    char txt[32];
    snprintf(txt, sizeof txt, "%g", x);
    if ((q == Q_KW || q == Q_AMPS) && !(x > 0)) {
        err_at(R, at, "%s must be above 0, not %s: the head draws power (a feeder exporting power is not "
                      "allocated)", QNAME[q], txt);
        return -1;
    }
    if (q == Q_PF && !(x != 0 && fabs(x) <= 1)) {
        err_at(R, at, "a power factor is between -1 and 1 and not 0 (negative: leading), not %s%s", txt, "");
        return -1;
    }
    *v = q == Q_KW || q == Q_KVAR ? x * 1e3 : x;
    return 0;
}

/* Phase p's figures from row r's columns cols[q]. */
static void phase_values(head_reader *R, int r, kl_head_reading *h, int p, const int *cols)
{
    double v[NQ] = {0, 0, 0, 0};
    for (int q = 0; q < NQ; q++)
        if (cols[q] >= 0 && number(R, r, cols[q], q, &v[q]) < 0)
            return;
    h->p_w[p] = v[Q_KW];
    h->q_var[p] = v[Q_KVAR];
    h->pf[p] = v[Q_PF];
    h->amps[p] = v[Q_AMPS];
    h->phases |= 1 << p;
    h->loc[p] = kl_csv_loc(R->t, r, 0);
}

static void snapshot_row(head_reader *R, int r, kl_head_reading *h)
{
    char ph[8];
    if (kl_csv_text(R->t, r, R->col[C_PHASE], "phase", ph, sizeof ph, R->err) < 0) {
        R->bad = 1;
        return;
    }
    kl_loc at = kl_csv_loc(R->t, r, R->col[C_PHASE]);
    int p = ph[0] && !ph[1] ? (ph[0] | 0x20) - 'a' : -1; /* a letter, either case */
    if (p < 0 || p > 2) {
        err_at(R, at, "unknown phase '%s': expected a, b or c%s", ph, "");
        return;
    }
    if (h->phases & (1 << p)) {
        char prev[24];
        snprintf(prev, sizeof prev, "%d", h->loc[p].line);
        err_at(R, at, "phase %s is given twice (first on line %s): give one row per phase", ph, prev);
        return;
    }
    phase_values(R, r, h, p, R->col + C_Q0);
}

static void series_row(head_reader *R, int r, kl_head_reading *h)
{
    if (kl_csv_text(R->t, r, R->col[C_TIME], "time stamp", h->time, sizeof h->time, R->err) < 0) {
        R->bad = 1;
        return;
    }
    if (!h->time[0]) {
        err_at(R, kl_csv_loc(R->t, r, R->col[C_TIME]), "the row has no time stamp: give one in the 'time' "
                                                      "column%s%s", "", "");
        return;
    }
    h->loc[0] = h->loc[1] = h->loc[2] = kl_csv_loc(R->t, r, 0);
    for (int p = 0; p < 3; p++)
        if (R->phases & (1 << p))
            phase_values(R, r, h, p, R->col + C_QP + NQ * p);
}

static int by_time(const void *a, const void *b)
{
    const kl_head_reading *x = *(const kl_head_reading *const *)a, *y = *(const kl_head_reading *const *)b;
    int c = strcmp(x->time, y->time);
    return c ? c : (x > y) - (x < y);
}

/* A time step given twice (sorted: a long series costs n log n); KL_ENOMEM,
 * else R->bad after the messages. */
static kl_status duplicate_times(head_reader *R)
{
    kl_head_series *s = R->out;
    const kl_head_reading **ix = kl_malloc((size_t)s->n * sizeof *ix + 1);
    if (!ix)
        return KL_ENOMEM;
    for (int k = 0; k < s->n; k++)
        ix[k] = &s->r[k];
    qsort(ix, (size_t)s->n, sizeof *ix, by_time);
    for (int k = 1; k < s->n; k++)
        if (strcmp(ix[k]->time, ix[k - 1]->time) == 0) {
            char prev[24];
            snprintf(prev, sizeof prev, "%d", ix[k - 1]->loc[0].line);
            err_at(R, ix[k]->loc[0], "time %s is given twice (first on line %s): give one row per time step",
                   ix[k]->time, prev);
        }
    kl_free(ix);
    return KL_OK;
}

static kl_status read_table(head_reader *R)
{
    const kl_csv *t = R->t;
    kl_head_series *out = R->out;
    if (header(R) < 0)
        return KL_EINPUT;
    if (t->nrows == 0) {
        kl_loc h = kl_csv_loc(t, -1, 0);
        kl_errors_add(R->err, t->path, h.line + 1, 1, NULL, "no measurement after the header: give a row per %s",
                      R->series ? "time step" : "phase");
        return KL_EINPUT;
    }
    out->n = R->series ? t->nrows : 1;
    if (!(out->r = kl_calloc((size_t)out->n, sizeof *out->r)))
        return KL_ENOMEM;
    for (int k = 0; k < out->n; k++) {
        out->r[k].form = R->form;
        out->r[k].file = out->file;
    }
    for (int r = 0; r < t->nrows; r++) {
        if (R->series)
            series_row(R, r, &out->r[r]);
        else
            snapshot_row(R, r, &out->r[0]);
    }
    out->series = R->series;
    if (!R->bad && R->series && out->n > 1 && duplicate_times(R) == KL_ENOMEM)
        return KL_ENOMEM;
    return R->bad ? KL_EINPUT : KL_OK;
}

void kl_head_series_free(kl_head_series *s)
{
    if (!s)
        return;
    kl_free(s->r);
    kl_free(s->file);
    memset(s, 0, sizeof *s);
}

/* text NULL: read the file `name`. */
static kl_status head_read(const char *text, size_t len, const char *name, kl_head_series *out, kl_errors *err)
{
    kl_csv *t = NULL;
    memset(out, 0, sizeof *out);
    size_t nl = strlen(name);
    if (!(out->file = kl_malloc(nl + 1)))
        return KL_ENOMEM;
    memcpy(out->file, name, nl + 1);
    kl_status st = text ? kl_csv_read_buffer(text, len, out->file, &t, err) : kl_csv_read(out->file, &t, err);
    if (!st) {
        head_reader R;
        memset(&R, 0, sizeof R);
        R.t = t;
        R.err = err;
        R.out = out;
        st = read_table(&R);
    }
    kl_csv_free(t);
    if (st)
        kl_head_series_free(out);
    return st;
}

kl_status kl_head_read_buffer(const char *text, size_t len, const char *name, kl_head_series *out,
                              kl_errors *err)
{
    return head_read(text, len, name, out, err);
}

kl_status kl_head_read(const char *path, kl_head_series *out, kl_errors *err)
{
    return head_read(NULL, 0, path, out, err);
}

void kl_head_target(const kl_head_reading *h, const double v_abs[3], kl_complex s[3])
{
    for (int p = 0; p < 3; p++) {
        s[p] = 0;
        if (!(h->phases & (1 << p)))
            continue;
        if (h->form == KL_HEAD_KW_KVAR) {
            s[p] = CMPLX(h->p_w[p], h->q_var[p]);
            continue;
        }
        /* |S| = P / |pf| or |V| |I|; Q = |S| sin(acos |pf|), negative when leading */
        double pf = fabs(h->pf[p]);
        double mag = h->form == KL_HEAD_KW_PF ? h->p_w[p] / pf : v_abs[p] * h->amps[p];
        double q = mag * sqrt(fmax(0.0, 1.0 - pf * pf));
        s[p] = CMPLX(mag * pf, h->pf[p] < 0 ? -q : q);
    }
}
