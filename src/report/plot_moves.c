/* kilter: the rebalancing plan in the report (rebalance.h): the ordered
 * moves as a table, and a picture of the feeder head before and after them:
 * phase currents and the residual (3I0 = Ia + Ib + Ic) as paired bars, and
 * the residual after each move.  The figures are the plan's own, from the
 * full load flows the advisor ran at the first load level. */
#include <math.h>
#include "kl_report.h"
#include "kilter/rebalance.h"
#include "kilter/table.h"

#define W 900.0
#define H 300.0

static const char *const bar_colour[4] = {KL_COLOUR_A, KL_COLOUR_B, KL_COLOUR_C, "#5a5a5a"};

static void bars(FILE *out, const kl_rebalance_summary *b, const kl_rebalance_summary *a)
{
    double vb[4] = {b->i_head[0], b->i_head[1], b->i_head[2], b->i_residual};
    double va[4] = {a->i_head[0], a->i_head[1], a->i_head[2], a->i_residual};
    double top = 0;
    for (int k = 0; k < 4; k++)
        top = fmax(top, fmax(vb[k], va[k]));
    double t[32];
    int nt = kl_svg_ticks(0, top > 0 ? top : 1, 6, t, 32);
    kl_svg_frame fr = {70, 30, 380, 230, 0, 4, 0, nt > 1 ? t[nt - 1] : 1};
    kl_svg_axes(out, &fr, "", -1, "current at the feeder head (A)", 0);
    static const char *const lab[4] = {"phase a", "phase b", "phase c", "residual 3I0"};
    for (int k = 0; k < 4; k++) {
        char attr[96];
        double x = kl_svg_fx(&fr, k + 0.18), w = kl_svg_fx(&fr, 0.3) - kl_svg_fx(&fr, 0);
        snprintf(attr, sizeof attr, "fill=\"%s\" fill-opacity=\"0.35\"", bar_colour[k]);
        kl_svg_rect(out, x, kl_svg_fy(&fr, vb[k]), w, kl_svg_fy(&fr, 0) - kl_svg_fy(&fr, vb[k]), attr);
        snprintf(attr, sizeof attr, "fill=\"%s\"", bar_colour[k]);
        kl_svg_rect(out, x + w + 2, kl_svg_fy(&fr, va[k]), w,
                    kl_svg_fy(&fr, 0) - kl_svg_fy(&fr, va[k]), attr);
        kl_svg_textf(out, x + w / 2, kl_svg_fy(&fr, vb[k]) - 4, "text-anchor=\"middle\" "
                     "font-size=\"10\" fill=\"#333\"", "%.0f", vb[k]);
        kl_svg_textf(out, x + 1.5 * w + 2, kl_svg_fy(&fr, va[k]) - 4, "text-anchor=\"middle\" "
                     "font-size=\"10\" fill=\"#111\"", "%.0f", va[k]);
        kl_svg_text(out, kl_svg_fx(&fr, k + 0.5), fr.py + fr.ph + 16,
                    "text-anchor=\"middle\" fill=\"#222\"", lab[k]);
    }
    kl_svg_rect(out, 90, 8, 14, 10, "fill=\"#555\" fill-opacity=\"0.35\"");
    kl_svg_text(out, 108, 17, "fill=\"#222\"", "before (pale)");
    kl_svg_rect(out, 200, 8, 14, 10, "fill=\"#555\"");
    kl_svg_text(out, 218, 17, "fill=\"#222\"", "after the moves (solid)");
}

static void progression(FILE *out, const kl_rebalance_plan *p)
{
    int n = p->nsteps;
    double top = p->before[0].i_residual;
    for (int k = 0; k < n; k++)
        top = fmax(top, p->steps[k].after[0].i_residual);
    double t[32];
    int nt = kl_svg_ticks(0, top > 0 ? top : 1, 6, t, 32);
    kl_svg_frame fr = {540, 30, 330, 230, 0, n > 0 ? n : 1, 0, nt > 1 ? t[nt - 1] : 1};
    kl_svg_axes(out, &fr, "moves made", 0, "residual 3I0 at the head (A)", 0);
    fputs("<polyline fill=\"none\" stroke=\"#5a5a5a\" stroke-width=\"2\" points=\"", out);
    fprintf(out, "%.2f,%.2f", kl_svg_fx(&fr, 0), kl_svg_fy(&fr, p->before[0].i_residual));
    for (int k = 0; k < n; k++)
        if (isfinite(p->steps[k].after[0].i_residual))
            fprintf(out, " %.2f,%.2f", kl_svg_fx(&fr, k + 1),
                    kl_svg_fy(&fr, p->steps[k].after[0].i_residual));
    fputs("\"/>\n", out);
    for (int k = 0; k < n; k++)
        kl_svg_circle(out, kl_svg_fx(&fr, k + 1), kl_svg_fy(&fr, p->steps[k].after[0].i_residual),
                      3, "fill=\"#5a5a5a\"");
}

kl_status kl_plot_moves_write(FILE *out, const kl_report_input *in, kl_errors *err)
{
    const kl_rebalance_plan *p = in->plan;
    if (!p || p->nlevels < 1 || p->nsteps < 0 || (p->nsteps > 0 && !p->steps)) {
        kl_errors_add(err, NULL, 0, 0, NULL, "report: the rebalancing plan is empty or "
                      "incomplete (no load level or no steps array)");
        return KL_EARG;
    }
    kl_svg_open(out, W, H, "Feeder head before and after the suggested moves");
    bars(out, &p->before[0], &p->after[0]);
    progression(out, p);
    kl_svg_close(out);
    return KL_OK;
}

/* The body of "Suggested phase moves" when a plan was computed. */
kl_status kl_report_moves(FILE *out, const kl_report_input *in, kl_errors *err)
{
    const kl_rebalance_plan *p = in->plan;
    fputs("<div class=\"plot\">\n", out);
    kl_status st = kl_plot_moves_write(out, in, err);
    fputs("</div>\n", out);
    if (st != KL_OK)
        return st;
    const kl_rebalance_summary *b = &p->before[0], *a = &p->after[0];
    fprintf(out, "<p>%d move%s suggested. At the head: residual " KL_NUM_AMP " A before, "
            KL_NUM_AMP " A after; worst voltage unbalance " KL_NUM_PCT " %% before, "
            KL_NUM_PCT " %% after; lowest voltage " KL_NUM_PU " pu before, " KL_NUM_PU
            " pu after.</p>\n", p->nsteps, p->nsteps == 1 ? "" : "s", b->i_residual,
            a->i_residual, 100 * b->vuf_max, 100 * a->vuf_max, b->v_min_pu, a->v_min_pu);
    if (p->nsteps == 0)
        return KL_OK;
    kl_plan_rows rows = {in->feeder, in->rephaser, p, 0, NULL}; /* the first load level */
    kl_table_shown s;
    if ((st = kl_table_html_select(&kl_table_plan_steps, &rows, p->nsteps, &s, err)) != KL_OK)
        return st;
    kl_table_html(out, &kl_table_plan_steps, &rows, "moves", &s);
    kl_table_shown_free(&s);
    fputs("<p class=\"caution\">Moving a lateral or a load to another phase is field "
          "work on energized equipment: it follows the utility's switching and safety rules, "
          "local codes and a licensed engineer's review. These are planning estimates.</p>\n",
          out);
    return KL_OK;
}
