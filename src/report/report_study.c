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
#include "kilter/table.h"

static const char *sec_name(const kl_feeder *f, int s)
{
    return s >= 0 && s < f->nsections && f->sections[s].name ? f->sections[s].name : "?";
}

static kl_study_rows rows_of(const kl_report_input *in)
{
    return (kl_study_rows){in->feeder, in->study, NULL, -1, NULL, 0};
}

kl_status kl_report_study_neutral(FILE *out, const kl_report_input *in, kl_errors *err)
{
    kl_study_rows rows = rows_of(in);
    kl_table_shown s;
    kl_status st = kl_table_html_select(&kl_table_study_neutrals, &rows, in->opt.max_table_rows,
                                        &s, err);
    if (st)
        return st;
    fputs("<section id=\"neutral\">\n<h2>Neutral current</h2>\n", out);
    fprintf(out, "<p class=\"note\">Sections with a neutral conductor, largest current first "
            "(%d of %d shown). The triplen part adds the declared third-harmonic currents of "
            "the loads downstream, which are in phase on the three phases and add in the "
            "neutral; RMS combines it with the fundamental.</p>\n", s.shown, s.total);
    kl_table_html(out, &kl_table_study_neutrals, &rows, "neutral", &s);
    kl_table_shown_free(&s);
    return KL_OK;
}

/* Closes the "Neutral current" section opened by kl_report_study_neutral. */
kl_status kl_report_study_runs(FILE *out, const kl_report_input *in, kl_errors *err)
{
    kl_study_rows rows = rows_of(in);
    kl_table_shown s;
    kl_status st = kl_table_html_select(&kl_table_study_runs, &rows, in->opt.max_table_rows,
                                        &s, err);
    if (st)
        return st;
    fprintf(out, "<h3>Neutral sizing</h3>\n<p class=\"note\">Each run is a connected stretch of "
            "one construction. Required = the run's largest neutral current plus the sizing "
            "margin; the suggestion is the smallest conductor in the feeder file that carries "
            "it (%d of %d runs shown).</p>\n", s.shown, s.total);
    kl_table_html(out, &kl_table_study_runs, &rows, "runs", &s);
    fputs("</section>\n", out);
    kl_table_shown_free(&s);
    return KL_OK;
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

kl_status kl_report_study_loading(FILE *out, const kl_report_input *in, kl_errors *err)
{
    kl_study_rows rows = rows_of(in);
    kl_table_shown s;
    kl_status st = kl_table_html_select(&kl_table_study_loading, &rows, in->opt.max_table_rows, &s, err);
    if (st)
        return st;
    if (s.total == 0) {
        fputs("<p class=\"note\">No section has a rating in the feeder file.</p>\n", out);
    } else {
        fprintf(out, "<p class=\"note\">Sections with a rating, most loaded first (%d of %d shown); "
                "over %.0f %% of the rating is noted, over 100 %% is an overload.</p>\n", s.shown, s.total,
                100.0 * in->opt.limits.loading_warning);
        kl_table_html(out, &kl_table_study_loading, &rows, "loading", &s);
    }
    kl_table_shown_free(&s);
    return KL_OK;
}

kl_status kl_report_study_motors(FILE *out, const kl_report_input *in, kl_errors *err)
{
    kl_study_rows rows = rows_of(in);
    kl_table_shown s;
    kl_status st = kl_table_html_select(&kl_table_study_motors, &rows, in->feeder->nbuses, &s,
                                        err);
    if (st || s.total == 0) {
        kl_table_shown_free(&s);
        return st;
    }
    fputs("<h3>Motors on an unbalanced supply</h3>\n<p class=\"note\">NEMA MG 1: no derating up "
          "to 1 % line-voltage unbalance, the derating curve up to 5 %, operation not "
          "recommended above.</p>\n", out);
    kl_table_html(out, &kl_table_study_motors, &rows, "motors", &s);
    kl_table_shown_free(&s);
    return KL_OK;
}
