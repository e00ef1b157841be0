/* kilter: the HTML writer of a table described by its columns
 * (kilter/table.h), and the cells every report table is made of.
 *
 * Figures use the column's KL_NUM_* format for people and carry the full
 * figure as the CSV outputs print it (data-v, KL_NUM_CSV) for machines; a
 * value that is not defined prints as a dash, never as 0 or "nan".  Long
 * tables keep the worst rows first (the table's rank) and say how many were
 * left out: one ranking, here, for every table of the report. */
#include <math.h>
#include <stdlib.h>
#include "kl_report.h"
#include "kilter/table.h"

int kl_report_rank_cmp(const void *a, const void *b)
{
    double x = ((const kl_ranked *)a)->key, y = ((const kl_ranked *)b)->key;
    if (x != y)
        return x < y ? 1 : -1;
    return ((const kl_ranked *)a)->id - ((const kl_ranked *)b)->id; /* ties: file order */
}

static int rank_cmp(const void *a, const void *b)
{
    double x = ((const kl_table_rank *)a)->key, y = ((const kl_table_rank *)b)->key;
    if (x != y)
        return x < y ? 1 : -1;
    return ((const kl_table_rank *)a)->row - ((const kl_table_rank *)b)->row; /* ties: file order */
}

void kl_html_td_num(FILE *out, const char *fmt, double v)
{
    if (!isfinite(v)) {
        fputs("<td>&ndash;</td>", out);
        return;
    }
    fprintf(out, "<td data-v=\"" KL_NUM_CSV "\">", v);
    fprintf(out, fmt, v);
    fputs("</td>", out);
}

void kl_html_td_name(FILE *out, const char *name)
{
    fputs("<td class=\"n\">", out);
    kl_xml_escape(out, name);
    fputs("</td>", out);
}

static int shows_html(const kl_column *c)
{
    return (c->in & KL_IN_HTML) != 0;
}

kl_status kl_table_html_select(const kl_table *t, const void *ctx, int max_rows,
                               kl_table_shown *out, kl_errors *err)
{
    int n = t->rows(ctx), k = 0;
    out->r = kl_malloc(sizeof *out->r * (size_t)(n + 1));
    out->shown = out->total = 0;
    if (!out->r) {
        kl_errors_add(err, NULL, 0, 0, NULL, "out of memory ranking the rows of the report's "
                      "%s table", t->name);
        return KL_ENOMEM;
    }
    for (int r = 0; r < n; r++) {
        double key = 0;
        if (t->keep && !t->keep(ctx, r, KL_TABLE_HTML))
            continue;
        if (t->rank && !isfinite(key = t->rank(ctx, r)))
            continue;
        out->r[k++] = (kl_table_rank){key, r};
    }
    if (t->rank)
        qsort(out->r, (size_t)k, sizeof *out->r, rank_cmp);
    out->total = k;
    out->shown = k < max_rows ? k : max_rows;
    return KL_OK;
}

void kl_table_shown_free(kl_table_shown *s)
{
    if (!s)
        return;
    kl_free(s->r);
    s->r = NULL;
}

void kl_table_html_head(FILE *o, const kl_table *t)
{
    fputs("<tr>", o);
    for (int k = 0; k < t->ncol; k++)
        if (shows_html(&t->col[k]))
            fprintf(o, "<th>%s</th>", t->col[k].html_head);
    fputs("</tr>\n", o);
}

static void html_str(FILE *o, const kl_column *c, const kl_cell *v)
{
    fputs(v->cls ? "<td class=\"n " : "<td class=\"n", o);
    if (v->cls)
        fputs(v->cls, o);
    fputs("\">", o);
    if (c->html)
        fputs(v->str ? v->str : "", o); /* markup of ours (table.h) */
    else
        kl_xml_escape(o, v->str ? v->str : "?");
    fputs("</td>", o);
}

void kl_table_html_row(FILE *o, const kl_table *t, const void *ctx, int row)
{
    kl_cell v;
    fputs("<tr>", o);
    for (int k = 0; k < t->ncol; k++) {
        const kl_column *c = &t->col[k];
        if (!shows_html(c))
            continue;
        v.num = NAN;
        v.i = 0;
        v.str = NULL;
        v.cls = NULL;
        c->get(ctx, row, -1, &v);
        switch (c->type) {
        case KL_CELL_NUM: kl_html_td_num(o, c->html ? c->html : KL_NUM_CSV, v.num); break;
        case KL_CELL_STR: html_str(o, c, &v); break;
        case KL_CELL_CHAR: fprintf(o, "<td class=\"n\">%c</td>", v.i); break;
        case KL_CELL_BOOL: fprintf(o, "<td class=\"n\">%s</td>", v.i ? "yes" : "no"); break;
        case KL_CELL_INT: fprintf(o, "<td>%d</td>", v.i); break;
        }
    }
    fputs("</tr>\n", o);
}

void kl_table_html(FILE *o, const kl_table *t, const void *ctx, const char *cls,
                   const kl_table_shown *s)
{
    fprintf(o, "<table class=\"%s\">\n", cls);
    kl_table_html_head(o, t);
    for (int k = 0; k < s->shown; k++)
        kl_table_html_row(o, t, ctx, s->r[k].row);
    fputs("</table>\n", o);
}
