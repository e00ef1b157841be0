/* kilter: the study's own tables in the report (study.h): neutral current
 * with its triplen part, neutral sizing by run, the loads behind the
 * unbalance, and motors on an unbalanced supply.  The figures are read from
 * the kl_study record as the study computed them, so the page shows exactly
 * what the study's CSV prints (same KL_NUM_* formats). */
#include <complex.h>
#include <math.h>
#include <stdlib.h>
#include "kl_report.h"
#include "kilter/study.h"

static const char *sec_name(const kl_feeder *f, int s)
{
    return s >= 0 && s < f->nsections && f->sections[s].name ? f->sections[s].name : "?";
}

static void neutral_row(FILE *out, const kl_report_input *in, int k)
{
    const kl_feeder *f = in->feeder;
    const kl_study *s = in->study;
    const kl_section *sec = &f->sections[k];
    char ph[4];
    fputs("<tr>", out);
    kl_html_td_name(out, sec->name);
    kl_html_td_name(out, kl_report_bus_name(f, sec->from));
    kl_html_td_name(out, kl_report_bus_name(f, sec->to));
    kl_html_td_name(out, kl_phases_str(sec->phases, ph));
    kl_html_td_num(out, KL_NUM_AMP, cabs(s->i_n1[k]));
    kl_html_td_num(out, KL_NUM_AMP, s->i_n3[k]);
    kl_html_td_num(out, KL_NUM_AMP, s->i_n_rms[k]);
    double amp = sec->construction >= 0 && sec->construction < f->nconstructions
        ? f->constructions[sec->construction].neutral_ampacity_a : NAN;
    kl_html_td_num(out, "%.0f", amp > 0 ? amp : NAN);
    kl_html_td_num(out, "%.0f", 100 * s->neutral_ratio[k]);
    int fl = s->neutral_flag[k];
    fprintf(out, "<td class=\"n %s\">%s</td></tr>\n", fl > 0 ? "bad" : "ok",
            fl < 0 ? "rating not known" : fl ? "over" : "within");
}

kl_status kl_report_study_neutral(FILE *out, const kl_report_input *in, kl_errors *err)
{
    const kl_feeder *f = in->feeder;
    const kl_study *s = in->study;
    kl_ranked *r = kl_malloc(sizeof *r * (size_t)(f->nsections + 1));
    if (!r) {
        kl_errors_add(err, f->path, 0, 0, NULL, "out of memory ranking sections for the report");
        return KL_ENOMEM;
    }
    int n = 0;
    for (int k = 0; k < f->nsections; k++)
        if (isfinite(s->i_n_rms[k]))
            r[n++] = (kl_ranked){s->i_n_rms[k], k};
    qsort(r, (size_t)n, sizeof *r, kl_report_rank_cmp);
    int rows = n < in->opt.max_table_rows ? n : in->opt.max_table_rows;
    fputs("<section id=\"neutral\">\n<h2>Neutral current</h2>\n", out);
    fprintf(out, "<p class=\"note\">Sections with a neutral conductor, largest current first "
            "(%d of %d shown). The triplen part adds the declared third-harmonic currents of "
            "the loads downstream, which are in phase on the three phases and add in the "
            "neutral; RMS combines it with the fundamental.</p>\n", rows, n);
    fputs("<table class=\"neutral\">\n<tr><th>section</th><th>from</th><th>to</th><th>phases</th>"
          "<th>In fundamental A</th><th>In triplen A</th><th>In RMS A</th>"
          "<th>neutral rating A</th><th>loading %</th><th>against the rating</th></tr>\n", out);
    for (int k = 0; k < rows; k++)
        neutral_row(out, in, r[k].id);
    fputs("</table>\n", out);
    kl_free(r);
    return KL_OK;
}

/* Closes the "Neutral current" section opened by kl_report_study_neutral. */
void kl_report_study_runs(FILE *out, const kl_report_input *in)
{
    const kl_feeder *f = in->feeder;
    const kl_study *s = in->study;
    int rows = s->nruns < in->opt.max_table_rows ? s->nruns : in->opt.max_table_rows;
    fprintf(out, "<h3>Neutral sizing</h3>\n<p class=\"note\">Each run is a connected stretch of "
            "one construction. Required = the run's largest neutral current plus the sizing "
            "margin; the suggestion is the smallest conductor in the feeder file that carries "
            "it (%d of %d runs shown).</p>\n", rows, s->nruns);
    fputs("<table class=\"runs\">\n<tr><th>first section</th><th>construction</th><th>sections</th>"
          "<th>worst section</th><th>largest In A</th><th>required A</th><th>installed A</th>"
          "<th>smallest that carries it</th></tr>\n", out);
    for (int k = 0; k < rows; k++) {
        int c = s->run_construction[k], cond = s->run_conductor[k];
        fputs("<tr>", out);
        kl_html_td_name(out, sec_name(f, s->run_first[k]));
        kl_html_td_name(out, c >= 0 && c < f->nconstructions ? f->constructions[c].name : "?");
        fprintf(out, "<td>%d</td>", s->run_sections[k]);
        kl_html_td_name(out, sec_name(f, s->run_worst[k]));
        kl_html_td_num(out, KL_NUM_AMP, s->run_current[k]);
        kl_html_td_num(out, KL_NUM_AMP, s->run_required[k]);
        kl_html_td_num(out, "%.0f", s->run_installed[k]);
        kl_html_td_name(out, cond >= 0 && cond < f->nconductors ? f->conductors[cond].name
                        : "none in the file");
        fputs("</tr>\n", out);
    }
    fputs("</table>\n</section>\n", out);
}

static const char *contrib_name(const kl_feeder *f, int kind, int id)
{
    if (kind == KL_CONTRIB_LOAD)
        return id >= 0 && id < f->nloads && f->loads[id].name ? f->loads[id].name : "?";
    return sec_name(f, id);
}

#define CONTRIB_BUSES 3 /* buses shown; the CSV lists every one */

void kl_report_study_contrib(FILE *out, const kl_report_input *in)
{
    const kl_feeder *f = in->feeder;
    const kl_study *s = in->study;
    fputs("<section id=\"contributors\">\n<h2>What causes the unbalance</h2>\n", out);
    if (!s->contrib_done || s->ncbus == 0) {
        fputs(s->contrib_done ? "<p>No bus is over an unbalance level.</p>\n</section>\n"
              : "<p>Not computed for this run.</p>\n</section>\n", out);
        return;
    }
    fputs("<p class=\"note\">At each bus over an unbalance level, the share of its "
          "negative-sequence voltage that each single- or two-phase load (or lateral) causes, "
          "from the sensitivities of the solved network.</p>\n", out);
    for (int k = 0; k < s->ncbus && k < CONTRIB_BUSES; k++) {
        int b = s->cbus[k];
        fputs("<h3>Bus ", out);
        kl_xml_escape(out, kl_report_bus_name(f, b));
        fprintf(out, " (VUF " KL_NUM_PCT " %%)</h3>\n<table class=\"contrib\">\n<tr><th>rank</th>"
                "<th>kind</th><th>name</th><th>share %%</th></tr>\n", 100 * s->unb[b].vuf);
        for (int j = s->cstart[k]; j < s->cstart[k + 1]; j++) {
            fprintf(out, "<tr><td>%d</td><td class=\"n\">%s</td>", j - s->cstart[k] + 1,
                    s->ckind[j] == KL_CONTRIB_LOAD ? "load" : "lateral");
            kl_html_td_name(out, contrib_name(f, s->ckind[j], s->cid[j]));
            kl_html_td_num(out, KL_NUM_PCT, 100 * s->cshare[j]);
            fputs("</tr>\n", out);
        }
        fprintf(out, "<tr><td></td><td class=\"n\" colspan=\"2\">three-phase loads together</td>");
        kl_html_td_num(out, KL_NUM_PCT, 100 * s->c_three_phase[k]);
        fputs("</tr>\n<tr><td></td><td class=\"n\" colspan=\"2\">the rest (capacitors, regulators, "
              "line asymmetry)</td>", out);
        kl_html_td_num(out, KL_NUM_PCT, 100 * s->c_remainder[k]);
        fputs("</tr>\n</table>\n", out);
    }
    if (s->ncbus > CONTRIB_BUSES)
        fprintf(out, "<p class=\"note\">%d more buses in the CSV output.</p>\n",
                s->ncbus - CONTRIB_BUSES);
    fputs("</section>\n", out);
}

void kl_report_study_motors(FILE *out, const kl_report_input *in)
{
    const kl_feeder *f = in->feeder;
    const kl_study *s = in->study;
    int n = 0;
    for (int b = 0; b < f->nbuses; b++)
        n += s->derate_zone[b] >= 0;
    if (n == 0)
        return;
    fputs("<h3>Motors on an unbalanced supply</h3>\n<p class=\"note\">NEMA MG 1: no derating up "
          "to 1 % line-voltage unbalance, the derating curve up to 5 %, operation not "
          "recommended above.</p>\n<table class=\"motors\">\n<tr><th>bus</th><th>LVUR %</th>"
          "<th>derating factor</th><th>verdict</th></tr>\n", out);
    for (int b = 0; b < f->nbuses; b++) {
        int z = s->derate_zone[b];
        if (z < 0)
            continue;
        fputs("<tr>", out);
        kl_html_td_name(out, kl_report_bus_name(f, b));
        kl_html_td_num(out, KL_NUM_PCT, 100 * s->unb[b].lvur);
        kl_html_td_num(out, "%.2f", s->derate_factor[b]);
        fprintf(out, "<td class=\"n %s\">%s</td></tr>\n", z == KL_DERATE_NONE ? "ok" : "bad",
                z == KL_DERATE_NONE ? "no derating needed" : z == KL_DERATE_CURVE
                ? "derate the motor" : "operation not recommended");
    }
    fputs("</table>\n", out);
}
