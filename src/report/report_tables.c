/* kilter: the report's tables (unbalance by bus, neutral current by
 * section) and the cell helpers every table uses.
 *
 * Figures use the KL_NUM_* formats of report.h, the same the CSV outputs
 * use; a value that is not defined prints as a dash, never as 0 or "nan".
 * Long tables keep the worst rows first and say how many were left out. */
#include <complex.h>
#include <math.h>
#include <stdlib.h>
#include "kl_report.h"

int kl_report_rank_cmp(const void *a, const void *b)
{
    double x = ((const kl_ranked *)a)->key, y = ((const kl_ranked *)b)->key;
    if (x != y)
        return x < y ? 1 : -1;
    return ((const kl_ranked *)a)->id - ((const kl_ranked *)b)->id; /* ties: file order */
}

const char *kl_report_bus_name(const kl_feeder *f, int b)
{
    return b >= 0 && f->buses[b].name ? f->buses[b].name : "?";
}

void kl_html_td_num(FILE *out, const char *fmt, double v)
{
    if (!isfinite(v)) {
        fputs("<td>&ndash;</td>", out);
        return;
    }
    /* data-v: the full figure as the CSV outputs print it, for machines;
     * the cell text: rounded for people */
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

static void unbalance_row(FILE *out, const kl_report_input *in, int b)
{
    double v012[3];
    kl_unb_voltage u;
    kl_report_bus_unbalance(in, b, v012, &u);
    int over = kl_limits_vuf(&in->opt.limits, u.vuf);
    fputs("<tr>", out);
    kl_html_td_name(out, kl_report_bus_name(in->feeder, b));
    for (int p = 0; p < 3; p++)
        kl_html_td_num(out, KL_NUM_PU, kl_report_v_pu(in, b, p));
    for (int q = 0; q < 3; q++)
        kl_html_td_num(out, KL_NUM_PU, v012[q]);
    kl_html_td_num(out, KL_NUM_PCT, 100 * u.vuf);
    kl_html_td_num(out, KL_NUM_PCT, 100 * u.lvur);
    const kl_limits *l = &in->opt.limits;
    if (over < 0)
        fputs("<td class=\"n\">&ndash;</td></tr>\n", out);
    else if (over & KL_VUF_OVER_SUPPLY)
        fprintf(out, "<td class=\"n bad\">over %g %%</td></tr>\n", 100 * l->vuf_supply);
    else if (over & KL_VUF_OVER_COMPAT)
        fprintf(out, "<td class=\"n bad\">over %g %%</td></tr>\n", 100 * l->vuf_compat);
    else
        fprintf(out, "<td class=\"n ok\">within %g %%</td></tr>\n", 100 * l->vuf_compat);
}

kl_status kl_report_table_unbalance(FILE *out, const kl_report_input *in, kl_errors *err)
{
    const kl_feeder *f = in->feeder;
    kl_ranked *r = kl_malloc(sizeof *r * (size_t)(f->nbuses + 1));
    if (!r) {
        kl_errors_add(err, f->path, 0, 0, NULL, "out of memory ranking buses for the report");
        return KL_ENOMEM;
    }
    int n = 0;
    for (int b = 0; b < f->nbuses; b++) {
        double v = kl_report_vuf_pct(in, b);
        if (isfinite(v))
            r[n++] = (kl_ranked){v, b};
    }
    qsort(r, (size_t)n, sizeof *r, kl_report_rank_cmp);
    int rows = n < in->opt.max_table_rows ? n : in->opt.max_table_rows;
    fputs("<section id=\"unbalance\">\n<h2>Unbalance</h2>\n", out);
    fprintf(out, "<p class=\"note\">Three-phase buses, largest voltage unbalance factor first "
            "(%d of %d shown; the CSV output lists all). VUF = |V2|/|V1| (IEC 61000-4-30); "
            "LVUR = largest deviation of a line voltage from their average, over the average "
            "(NEMA MG 1).</p>\n", rows, n);
    fputs("<table class=\"unbalance\">\n<tr><th>bus</th><th>Va pu</th><th>Vb pu</th><th>Vc pu</th>"
          "<th>V0 pu</th><th>V1 pu</th><th>V2 pu</th><th>VUF %</th><th>LVUR %</th>"
          "<th>against the limits</th></tr>\n", out);
    for (int k = 0; k < rows; k++)
        unbalance_row(out, in, r[k].id);
    fputs("</table>\n", out); /* the caller closes the section */
    kl_free(r);
    return KL_OK;
}

static void neutral_row(FILE *out, const kl_report_input *in, int s)
{
    const kl_feeder *f = in->feeder;
    const kl_section *sec = &f->sections[s];
    char ph[4];
    fputs("<tr>", out);
    kl_html_td_name(out, sec->name);
    kl_html_td_name(out, kl_report_bus_name(f, sec->from));
    kl_html_td_name(out, kl_report_bus_name(f, sec->to));
    kl_html_td_name(out, kl_phases_str(sec->phases, ph));
    for (int p = 0; p < 3; p++)
        kl_html_td_num(out, KL_NUM_AMP, (sec->phases >> p) & 1 ? cabs(in->ph.i[3 * s + p]) : NAN);
    double a = kl_report_neutral_a(in, s), amp = NAN, ratio = NAN;
    if (sec->kind == KL_SEC_LINE && sec->construction >= 0
        && sec->construction < f->nconstructions)
        amp = f->constructions[sec->construction].neutral_ampacity_a;
    int over = kl_limits_share(a, amp, in->opt.limits.neutral_share, &ratio);
    kl_html_td_num(out, KL_NUM_AMP, a);
    kl_html_td_num(out, "%.0f", amp > 0 ? amp : NAN);
    kl_html_td_num(out, "%.0f", 100 * ratio);
    fprintf(out, "<td class=\"n %s\">%s</td></tr>\n", over > 0 ? "bad" : "ok",
            over < 0 ? "rating not known" : over ? "over" : "within");
}

kl_status kl_report_table_neutral(FILE *out, const kl_report_input *in, kl_errors *err)
{
    const kl_feeder *f = in->feeder;
    fputs("<section id=\"neutral\">\n<h2>Neutral current</h2>\n", out);
    if (!in->ph.i_neutral) {
        fputs("<p>The load flow gave no neutral currents for this run.</p>\n</section>\n", out);
        return KL_OK;
    }
    kl_ranked *r = kl_malloc(sizeof *r * (size_t)(f->nsections + 1));
    if (!r) {
        kl_errors_add(err, f->path, 0, 0, NULL, "out of memory ranking sections for the report");
        return KL_ENOMEM;
    }
    int n = 0;
    for (int s = 0; s < f->nsections; s++) {
        double a = kl_report_neutral_a(in, s);
        if (isfinite(a) && f->sections[s].kind == KL_SEC_LINE)
            r[n++] = (kl_ranked){a, s};
    }
    qsort(r, (size_t)n, sizeof *r, kl_report_rank_cmp);
    int rows = n < in->opt.max_table_rows ? n : in->opt.max_table_rows;
    fprintf(out, "<p class=\"note\">Line sections, largest neutral current first (%d of %d "
            "shown). Loading is the neutral current over the neutral conductor's ampacity.</p>\n",
            rows, n);
    fputs("<table class=\"neutral\">\n<tr><th>section</th><th>from</th><th>to</th><th>phases</th>"
          "<th>Ia A</th><th>Ib A</th><th>Ic A</th><th>In A</th><th>neutral rating A</th>"
          "<th>loading %</th><th>against the rating</th></tr>\n", out);
    for (int k = 0; k < rows; k++)
        neutral_row(out, in, r[k].id);
    fputs("</table>\n</section>\n", out);
    kl_free(r);
    return KL_OK;
}
