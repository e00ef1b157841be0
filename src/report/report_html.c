/* kilter: the study report as one self-contained HTML file.
 *
 * Inline CSS and SVG only: no script, no font or image fetched from
 * anywhere, so the file reads the same mailed, archived or offline.  Every
 * name from the feeder file goes through kl_xml_escape.  Figures in the
 * tables use the KL_NUM_* formats of report.h, the same the CSV outputs use,
 * so the two never disagree in a digit. */
#include <complex.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include "kl_report.h"
#include "kilter/table.h"
#include "kilter/sequence.h"


/* Summary figures gathered in one pass over buses and sections. */
typedef struct {
    int vmin_bus, vmin_ph, vmax_bus, vmax_ph, vuf_bus, in_sec;
    double vmin, vmax, vuf, in_max;
    int out_a, out_b;        /* bus-phases outside Range A, outside Range B */
    int vuf_over_compat, vuf_over_supply, nthree;
    kl_complex head_i[3];    /* current leaving the source bus, A */
} summary;

static void gather(summary *s, const kl_report_input *in)
{
    const kl_feeder *f = in->feeder;
    const kl_limits *l = &in->opt.limits;
    memset(s, 0, sizeof *s);
    s->vmin_bus = s->vmax_bus = s->vuf_bus = s->in_sec = -1;
    s->vmin = INFINITY;
    s->vmax = s->vuf = s->in_max = -INFINITY;
    for (int b = 0; b < f->nbuses; b++) {
        for (int p = 0; p < 3; p++) {
            double v = kl_report_v_pu(in, b, p);
            if (!isfinite(v))
                continue;
            if (v < s->vmin) { s->vmin = v; s->vmin_bus = b; s->vmin_ph = p; }
            if (v > s->vmax) { s->vmax = v; s->vmax_bus = b; s->vmax_ph = p; }
            kl_service_class c = kl_limits_service(l, v);
            s->out_a += c != KL_SERVICE_A;
            s->out_b += c == KL_SERVICE_BELOW_B || c == KL_SERVICE_ABOVE_B;
        }
        double vuf = kl_report_vuf_pct(in, b);
        if (!isfinite(vuf))
            continue;
        s->nthree++;
        int over = kl_limits_vuf(l, vuf / 100);
        s->vuf_over_compat += over > 0 && (over & KL_VUF_OVER_COMPAT);
        s->vuf_over_supply += over > 0 && (over & KL_VUF_OVER_SUPPLY);
        if (vuf > s->vuf) { s->vuf = vuf; s->vuf_bus = b; }
    }
    for (int k = 0; k < f->nsections; k++) {
        double a = kl_report_neutral_a(in, k);
        if (isfinite(a) && a > s->in_max) { s->in_max = a; s->in_sec = k; }
        const kl_section *sec = &f->sections[k];
        if (sec->from == f->source.bus || sec->to == f->source.bus)
            for (int p = 0; p < 3; p++)
                s->head_i[p] += in->ph.i[3 * k + p];
    }
}


static void css(FILE *out)
{
    /* Our own look: warm paper, slate text, one teal accent; print-friendly. */
    fputs("<style>\n"
          "body{margin:0;background:#fbfaf7;color:#22282e;font:15px/1.45 sans-serif}\n"
          "main{max-width:1180px;margin:0 auto;padding:18px 28px 40px}\n"
          "h1{font-size:26px;margin:10px 0 2px}h2{font-size:19px;margin:34px 0 10px;"
          "padding-left:10px;border-left:5px solid #2b8a8f}\n"
          ".sub{color:#5b636b;margin:0 0 8px}\n"
          ".cards{display:flex;flex-wrap:wrap;gap:12px}\n"
          ".card{background:#fff;border:1px solid #ddd8cc;border-radius:6px;padding:10px 14px;"
          "min-width:220px;flex:1}\n.card b{display:block;font-size:13px;color:#5b636b;"
          "font-weight:normal}\n.card .big{font-size:20px}\n"
          ".bad{color:#8e1b3c;font-weight:bold}.ok{color:#2f7d3a}\n"
          "table{border-collapse:collapse;background:#fff;font-size:13.5px;margin:6px 0}\n"
          "th,td{border:1px solid #ddd8cc;padding:3px 9px;text-align:right}th:first-child{text-align:left}\n"
          "th{background:#efece4}td.n{text-align:left}tr:nth-child(even) td{background:#f7f5f0}\n"
          ".plot{background:#fff;border:1px solid #ddd8cc;border-radius:6px;padding:8px;"
          "overflow-x:auto}\n.caution{background:#fff6e0;border:1px solid #e0c27a;"
          "border-radius:6px;padding:8px 14px}\n.note{color:#5b636b;font-size:13px}\n"
          "</style>\n", out);
}

static void head(FILE *out, const kl_report_input *in)
{
    const kl_feeder *f = in->feeder;
    char title[400];
    if (in->opt.title)
        snprintf(title, sizeof title, "%s", in->opt.title);
    else
        snprintf(title, sizeof title, "Unbalance study of %s", f->name ? f->name : "a feeder");
    fputs("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
          "<meta name=\"generator\" content=\"kilter\">\n<title>", out);
    kl_xml_escape(out, title);
    fputs("</title>\n", out);
    css(out);
    fputs("</head>\n<body>\n<main>\n<h1>", out);
    kl_xml_escape(out, title);
    fputs("</h1>\n<p class=\"sub\">Feeder <b>", out);
    kl_xml_escape(out, f->name ? f->name : "(unnamed)");
    fputs("</b>", out);
    if (f->path) {
        fputs(" from <code>", out);
        kl_xml_escape(out, f->path);
        fputs("</code>", out);
    }
    fprintf(out, " &middot; %d buses, %d sections &middot; load level %.0f %% of the file's loads",
            f->nbuses, f->nsections, 100 * in->opt.load_scale);
    if (f->description) {
        fputs("<br>", out);
        kl_xml_escape(out, f->description);
    }
    fputs("</p>\n", out);
}

static void card_open(FILE *out, const char *label)
{
    fprintf(out, "<div class=\"card\"><b>%s</b><span class=\"big\">", label); /* labels are ours */
}

static void summary_cards(FILE *out, const kl_report_input *in, const summary *s)
{
    const kl_feeder *f = in->feeder;
    card_open(out, "Lowest voltage");
    if (s->vmin_bus >= 0) {
        fprintf(out, KL_NUM_PU " pu</span><br>bus ", s->vmin);
        kl_xml_escape(out, kl_report_bus_name(f, s->vmin_bus));
        fprintf(out, ", phase %c", "abc"[s->vmin_ph]);
    } else
        fputs("&ndash;</span>", out);
    fputs("</div>\n", out);
    card_open(out, "Highest voltage unbalance factor");
    if (s->vuf_bus >= 0) {
        fprintf(out, KL_NUM_PCT " %%</span><br>bus ", s->vuf);
        kl_xml_escape(out, kl_report_bus_name(f, s->vuf_bus));
    } else
        fputs("&ndash;</span><br>no three-phase bus", out);
    fputs("</div>\n", out);
    card_open(out, "Largest neutral current");
    if (s->in_sec >= 0) {
        fprintf(out, KL_NUM_AMP " A</span><br>section ", s->in_max);
        kl_xml_escape(out, f->sections[s->in_sec].name);
    } else
        fputs("&ndash;</span><br>not computed", out);
    fputs("</div>\n", out);
    kl_complex i012[3];
    kl_seq_from_phase(s->head_i, i012);
    card_open(out, "Current at the feeder head");
    fprintf(out, KL_NUM_AMP " / " KL_NUM_AMP " / " KL_NUM_AMP " A</span><br>phases a / b / c; "
            "residual 3I0 = " KL_NUM_AMP " A", cabs(s->head_i[0]), cabs(s->head_i[1]),
            cabs(s->head_i[2]), 3 * cabs(i012[0]));
    double pickup = f->source.relay_pickup_a, ratio;
    if (kl_limits_share(3 * cabs(i012[0]), pickup, in->opt.limits.relay_share, &ratio) >= 0)
        fprintf(out, " (<span class=\"%s\">%.0f %% of the ground relay pickup</span>)",
                ratio > in->opt.limits.relay_share ? "bad" : "ok", 100 * ratio);
    fputs("</div>\n", out);
}

static void limits_list(FILE *out, const kl_report_input *in, const summary *s)
{
    const kl_limits *l = &in->opt.limits;
    fputs("<h3>Limits broken</h3>\n<ul>\n", out);
    fprintf(out, "<li class=\"%s\">%d bus-phase voltages outside ANSI C84.1 Range A "
            "(%.0f&ndash;%.0f V on 120 V), %d outside Range B (%.0f&ndash;%.0f V)</li>\n",
            s->out_a ? "bad" : "ok", s->out_a, l->range_a_low_v, l->range_a_high_v, s->out_b,
            l->range_b_low_v, l->range_b_high_v);
    fprintf(out, "<li class=\"%s\">%d of %d three-phase buses above %.0f %% voltage unbalance "
            "(EN 50160 / IEC 61000-2-2 level), %d above %.0f %% (ANSI C84.1 recommendation)</li>\n",
            s->vuf_over_compat ? "bad" : "ok", s->vuf_over_compat, s->nthree, 100 * l->vuf_compat,
            s->vuf_over_supply, 100 * l->vuf_supply);
    char note[768];
    if (kl_deenergized_note(in->feeder, note, sizeof note) > 0) {
        fputs("<li class=\"bad\">", out);
        kl_xml_escape(out, note);
        fputs("</li>\n", out);
    }
    fputs("</ul>\n", out);
}

static void cautions(FILE *out)
{
    fputs("<div class=\"caution\"><b>Cautions.</b> These are planning estimates from a model "
          "of the feeder, not measurements: loads are as the file states them, scaled to the "
          "load level shown, and every result is only as good as that data. "
          "Unbalance limits in the standards apply to measured 10-minute values at the point of "
          "supply, compared here with one steady-state solution. "
          "Check the figures against field readings before acting on them. Rephasing a lateral "
          "or a load and sizing a neutral are work on energized equipment: field work follows "
          "the utility's switching and safety rules, local codes, and review by a licensed "
          "engineer.</div>\n", out);
}

/* Ranks buses by key(in, b) (NAN = left out), largest first; returns the count. */
static int rank_buses(const kl_report_input *in, double (*key)(const kl_report_input *, int),
                      kl_ranked *r)
{
    int n = 0;
    for (int b = 0; b < in->feeder->nbuses; b++) {
        double k = key(in, b);
        if (isfinite(k))
            r[n++] = (kl_ranked){k, b};
    }
    qsort(r, (size_t)n, sizeof *r, kl_report_rank_cmp);
    return n;
}

static double neg_vmin(const kl_report_input *in, int b)
{
    return -kl_report_vmin_pu(in, b);
}

#define WORST_LISTED 5

static kl_status worst_buses(FILE *out, const kl_report_input *in, kl_errors *err)
{
    const kl_feeder *f = in->feeder;
    kl_ranked *r = kl_malloc(sizeof *r * (size_t)(f->nbuses + 1));
    if (!r) {
        kl_errors_add(err, f->path, 0, 0, NULL, "out of memory ranking buses for the report");
        return KL_ENOMEM;
    }
    fputs("<h3>Worst buses</h3>\n<p>Lowest voltage: ", out);
    int n = rank_buses(in, neg_vmin, r);
    for (int k = 0; k < n && k < WORST_LISTED; k++) {
        fputs(k ? ", " : "", out);
        kl_xml_escape(out, kl_report_bus_name(f, r[k].id));
        fprintf(out, " " KL_NUM_PU " pu", -r[k].key);
    }
    fputs(n ? ".<br>\nLargest voltage unbalance factor: " : "&ndash;<br>\nLargest voltage "
          "unbalance factor: ", out);
    n = rank_buses(in, kl_report_vuf_pct, r);
    for (int k = 0; k < n && k < WORST_LISTED; k++) {
        fputs(k ? ", " : "", out);
        kl_xml_escape(out, kl_report_bus_name(f, r[k].id));
        fprintf(out, " " KL_NUM_PCT " %%", r[k].key);
    }
    fputs(n ? ".</p>\n" : "&ndash; (no three-phase bus)</p>\n", out);
    kl_free(r);
    return KL_OK;
}

static kl_status section_summary(FILE *out, const kl_report_input *in, const summary *s,
                                 kl_errors *err)
{
    fputs("<section id=\"summary\">\n<h2>Summary</h2>\n<div class=\"cards\">\n", out);
    summary_cards(out, in, s);
    fputs("</div>\n", out);
    limits_list(out, in, s);
    kl_status st = worst_buses(out, in, err);
    cautions(out);
    fputs("</section>\n", out);
    return st;
}

static kl_status section_plot(FILE *out, const char *id, const char *heading, const char *note,
                              kl_status (*plot)(FILE *, const kl_report_input *, kl_errors *),
                              const kl_report_input *in, kl_errors *err)
{
    fprintf(out, "<section id=\"%s\">\n<h2>%s</h2>\n<div class=\"plot\">\n", id, heading);
    kl_status st = plot(out, in, err);
    fprintf(out, "</div>\n<p class=\"note\">%s</p>\n</section>\n", note);
    return st;
}

/* The loading map, and with the study the most loaded sections. */
static kl_status section_loading(FILE *out, const kl_report_input *in, kl_errors *err)
{
    fputs("<section id=\"loading\">\n<h2>Loading</h2>\n<div class=\"plot\">\n", out);
    kl_status st = kl_plot_map_loading_write(out, in, err);
    fputs("</div>\n<p class=\"note\">Each section coloured by its loading: its most loaded phase's "
          "current over its continuous rating (lines: ampacity; regulators: rated current; "
          "transformers: rated current of each winding, and the bank's kVA). Grey: no rating in the "
          "feeder file.</p>\n", out);
    if (st == KL_OK && in->study)
        st = kl_report_study_loading(out, in, err);
    fputs("</section>\n", out);
    return st;
}

static int choose_phasor_bus(const kl_report_input *in, const summary *s)
{
    if (in->opt.phasor_bus >= 0)
        return in->opt.phasor_bus;
    if (s->vuf_bus >= 0)
        return s->vuf_bus;
    if (s->vmin_bus >= 0)
        return s->vmin_bus;
    return in->feeder->source.bus;
}

static kl_status section_phasors(FILE *out, const kl_report_input *in, const summary *s,
                                 kl_errors *err)
{
    int b = choose_phasor_bus(in, s);
    fputs("<section id=\"phasors\">\n<h2>Phasors at bus ", out);
    kl_xml_escape(out, kl_report_bus_name(in->feeder, b));
    fputs("</h2>\n<div class=\"plot\">\n", out);
    kl_status st = kl_plot_phasor_write(out, in, b, err);
    fputs("</div>\n<p class=\"note\">Voltages solid, currents of the section feeding the bus "
          "dashed.</p>\n</section>\n", out);
    return st;
}


/* Unbalance, what causes it, and neutral current: from the study when it
 * ran, else from the phase arrays alone. */
static kl_status section_tables(FILE *out, const kl_report_input *in, kl_errors *err)
{
    kl_status st = kl_report_table_unbalance(out, in, err);
    if (st != KL_OK)
        return st;
    if (in->study && (st = kl_report_study_motors(out, in, err)) != KL_OK)
        return st;
    fputs("</section>\n", out);
    if (!in->study)
        return kl_report_table_neutral(out, in, err);
    kl_report_study_contrib(out, in);
    st = kl_report_study_neutral(out, in, err);
    if (st == KL_OK)
        st = kl_report_study_runs(out, in, err);
    return st;
}

/* Regulators: their taps, and any unit held at a limit with its set point
 * not reached (the flow converged, but not to what the regulator is set for). */
static kl_status section_regulators(FILE *out, const kl_report_input *in, kl_errors *err)
{
    kl_flow_rows rows = {in->feeder, in->flow};
    kl_table_shown s;
    int held = 0;
    if (!in->flow || in->feeder->nregulators == 0)
        return KL_OK;
    kl_status st = kl_table_html_select(&kl_table_flow_regulator_units, &rows, 3 * in->feeder->nregulators,
                                        &s, err);
    if (st)
        return st;
    for (int k = 0; k < 3 * in->feeder->nregulators; k++)
        held += in->flow->reg_limit[k] != 0;
    fputs("<section id=\"regulators\">\n<h2>Regulators</h2>\n", out);
    if (held)
        fprintf(out, "<p class=\"note bad\">%d regulator unit%s held at a tap limit with the relay "
                "voltage outside the band: the set point is not reached, and the voltages below "
                "are what the regulator can give. Check the regulator's range, the set point and "
                "the load.</p>\n", held, held > 1 ? "s are" : " is");
    else
        fputs("<p class=\"note\">Final taps; the relay voltage is the compensated voltage the "
              "control sees, on the 120 V base.</p>\n", out);
    kl_table_html(out, &kl_table_flow_regulator_units, &rows, "regulators", &s);
    fputs("</section>\n", out);
    kl_table_shown_free(&s);
    return KL_OK;
}

static kl_status section_moves(FILE *out, const kl_report_input *in, kl_errors *err)
{
    fputs("<section id=\"moves\">\n<h2>Suggested phase moves</h2>\n", out);
    kl_status st = KL_OK;
    if (in->plan)
        st = kl_report_moves(out, in, err);
    else
        fputs("<p>No rebalancing plan was computed for this run (<code>kilter rebalance</code> "
              "computes one).</p>\n", out);
    fputs("</section>\n", out);
    return st;
}

void kl_report_options_default(kl_report_options *o)
{
    memset(o, 0, sizeof *o);
    o->title = NULL;
    o->map_index = KL_MAP_BY_VUF;
    o->phasor_bus = -1;
    kl_limits_default(&o->limits);
    o->load_scale = 1.0;
    o->max_table_rows = 40;
}

kl_status kl_report_html_write(FILE *out, const kl_report_input *in, kl_errors *err)
{
    kl_status st = kl_report_input_check(out, in, err);
    if (st != KL_OK)
        return st;
    summary s;
    gather(&s, in);
    head(out, in);
    st = section_summary(out, in, &s, err);
    kl_progress_step(in->progress, "writing the report", 1, 6);
    if (st == KL_OK)
        st = section_plot(out, "profile", "Voltage along the feeder", "Each section is drawn "
                          "from its source-side bus to its far bus, so every lateral appears "
                          "where it leaves the main.", kl_plot_profile_write, in, err);
    kl_progress_step(in->progress, "writing the report", 2, 6);
    if (st == KL_OK)
        st = section_plot(out, "map", "Feeder map", "Line weight and dash show the phasing; "
                          "colour shows the chosen index.", kl_plot_map_write, in, err);
    if (st == KL_OK)
        st = section_loading(out, in, err);
    kl_progress_step(in->progress, "writing the report", 3, 6);
    if (st == KL_OK)
        st = section_phasors(out, in, &s, err);
    kl_progress_step(in->progress, "writing the report", 4, 6);
    if (st == KL_OK)
        st = section_tables(out, in, err);
    if (st == KL_OK)
        st = section_regulators(out, in, err);
    kl_progress_step(in->progress, "writing the report", 5, 6);
    if (st == KL_OK)
        st = section_moves(out, in, err);
    fputs("<p class=\"note\">Written by kilter. Phase colours: a dark red, b dark blue, "
          "c amber (our own choice, not a wiring code).</p>\n</main>\n</body>\n</html>\n", out);
    kl_progress_step(in->progress, "writing the report", 6, 6);
    if (st == KL_OK && (fflush(out) != 0 || ferror(out))) {
        kl_errors_add(err, NULL, 0, 0, NULL, "report: writing the HTML failed (disk full or "
                      "the output closed?)");
        st = KL_EIO;
    }
    return st;
}
