/* kilter: voltage profile plot: each phase's voltage (per unit of the bus's
 * own nominal, which reads the same as volts on a 120 V base divided by 120)
 * against the distance from the source along the lines, for the main and
 * every lateral.  Each section is one segment from its source-side bus to
 * its far bus, so laterals branch off where they leave the main.  The
 * service-voltage ranges of ANSI C84.1 (limits.h) are drawn as bands. */
#include <math.h>
#include "kl_report.h"

#define W 900.0
#define LX 730.0 /* legend column */
#define H 430.0

static const char *const phase_colour[3] = {KL_COLOUR_A, KL_COLOUR_B, KL_COLOUR_C};

typedef struct {
    double dmax, vlo, vhi; /* data extent */
    int worst_bus, worst_ph;
    double worst_v;
} extent;

static int drawn(const kl_report_input *in, const kl_plot_tree *t, int b, int thin)
{
    return kl_feeder_tree_pbus(t->tree, b) >= 0 && (!thin || kl_report_bus_phases(in, b) == KL_PH_ABC);
}

static extent find_extent(const kl_report_input *in, const kl_plot_tree *t, double to_unit)
{
    extent e = {0, in->opt.limits.range_b_low_v / KL_SERVICE_BASE_V, in->opt.limits.range_b_high_v / KL_SERVICE_BASE_V,
                -1, 0, INFINITY};
    for (int k = 0; k < t->nreached; k++) {
        int b = t->order[k];
        if (t->dist_m[b] * to_unit > e.dmax)
            e.dmax = t->dist_m[b] * to_unit;
        for (int p = 0; p < 3; p++) {
            double v = kl_report_v_pu(in, b, p);
            if (!isfinite(v))
                continue;
            e.vlo = v < e.vlo ? v : e.vlo;
            e.vhi = v > e.vhi ? v : e.vhi;
            if (v < e.worst_v) {
                e.worst_v = v;
                e.worst_bus = b;
                e.worst_ph = p;
            }
        }
    }
    if (!(e.dmax > 0))
        e.dmax = 1;
    return e;
}

/* One path per phase: "M parent L child" per section keeps the file small. */
static void phase_path(FILE *out, const kl_report_input *in, const kl_plot_tree *t,
                       const kl_svg_frame *fr, int p, double to_unit, int thin)
{
    int open = 0;
    for (int k = 1; k < t->nreached; k++) {
        int b = t->order[k], a = t->order[t->tree->up[k]];
        if (!drawn(in, t, b, thin))
            continue;
        double va = kl_report_v_pu(in, a, p), vb = kl_report_v_pu(in, b, p);
        if (!isfinite(va) || !isfinite(vb))
            continue;
        if (!open)
            fprintf(out, "<path fill=\"none\" stroke=\"%s\" stroke-width=\"1.6\" "
                    "stroke-linejoin=\"round\" d=\"", phase_colour[p]);
        open = 1;
        fprintf(out, "M%.2f %.2fL%.2f %.2f", kl_svg_fx(fr, t->dist_m[a] * to_unit),
                kl_svg_fy(fr, va), kl_svg_fx(fr, t->dist_m[b] * to_unit), kl_svg_fy(fr, vb));
    }
    if (open)
        fputs("\"/>\n", out);
}

static void legend(FILE *out, const kl_report_input *in)
{
    static const char *const lab[3] = {"phase a (dark red)", "phase b (dark blue)",
                                       "phase c (amber)"};
    const char *attr[3] = {"stroke=\"" KL_COLOUR_A "\" stroke-width=\"3\"",
                           "stroke=\"" KL_COLOUR_B "\" stroke-width=\"3\"",
                           "stroke=\"" KL_COLOUR_C "\" stroke-width=\"3\""};
    kl_svg_legend(out, LX, 40, 3, lab, attr);
    kl_svg_rect(out, LX, 98, 26, 10, "fill=\"#dcefd9\"");
    kl_svg_text(out, LX + 32, 107, "fill=\"#222\"", "Range A");
    kl_svg_rect(out, LX, 116, 26, 10, "fill=\"#f4ecd2\"");
    kl_svg_text(out, LX + 32, 125, "fill=\"#222\"", "Range B only");
    kl_svg_textf(out, LX, 148, "fill=\"#555\" font-size=\"10\"", "ANSI C84.1, 120 V base:");
    kl_svg_textf(out, LX, 161, "fill=\"#555\" font-size=\"10\"", "A %.0f-%.0f V, B %.0f-%.0f V",
                 in->opt.limits.range_a_low_v, in->opt.limits.range_a_high_v,
                 in->opt.limits.range_b_low_v, in->opt.limits.range_b_high_v);
}

static void draw(FILE *out, const kl_report_input *in, const kl_plot_tree *t)
{
    const kl_feeder *f = in->feeder;
    int si = f->units == KL_UNITS_SI;
    double to_unit = si ? 1e-3 : 1.0 / 1609.344; /* km, or statute miles (NIST SP 811) */
    extent e = find_extent(in, t, to_unit);
    double pad = 0.05 * (e.vhi - e.vlo);
    kl_svg_frame fr = {70, 20, 640, 350, 0, e.dmax, e.vlo - pad, e.vhi + pad};
    const kl_limits *l = &in->opt.limits;
    kl_svg_band(out, &fr, l->range_b_low_v / KL_SERVICE_BASE_V, l->range_b_high_v / KL_SERVICE_BASE_V, "#f4ecd2", NULL);
    kl_svg_band(out, &fr, l->range_a_low_v / KL_SERVICE_BASE_V, l->range_a_high_v / KL_SERVICE_BASE_V, "#dcefd9", NULL);
    kl_svg_axes(out, &fr, si ? "distance from the source (km)" : "distance from the source (mi)",
                e.dmax < 2 ? 2 : 1, "voltage (per unit of nominal)", 3);
    int thin = t->nreached - 1 > KL_PLOT_MAX_SECTIONS;
    for (int p = 0; p < 3; p++)
        phase_path(out, in, t, &fr, p, to_unit, thin);
    if (e.worst_bus >= 0) {
        double x = kl_svg_fx(&fr, t->dist_m[e.worst_bus] * to_unit), y = kl_svg_fy(&fr, e.worst_v);
        kl_svg_circle(out, x, y, 4, "fill=\"none\" stroke=\"#111\" stroke-width=\"1.5\"");
        char lab[300];
        snprintf(lab, sizeof lab, "lowest: %s phase %c, " KL_NUM_PU " pu",
                 f->buses[e.worst_bus].name ? f->buses[e.worst_bus].name : "?",
                 "abc"[e.worst_ph], e.worst_v);
        kl_svg_text(out, x - 6, y + 16, "text-anchor=\"end\" fill=\"#111\"", lab);
    }
    legend(out, in);
    if (thin)
        kl_svg_textf(out, LX, 190, "fill=\"#8e1b3c\" font-size=\"10\"",
                     "%d sections: three-phase part only", t->nreached - 1);
}

kl_status kl_plot_profile_write(FILE *out, const kl_report_input *in, kl_errors *err)
{
    kl_plot_tree *t = NULL;
    kl_status st = kl_report_input_check(out, in, err);
    if (st != KL_OK)
        return st;
    st = kl_plot_tree_build(in->feeder, &t, err);
    if (st != KL_OK)
        return st;
    kl_svg_open(out, W, H, "Voltage along the feeder, per phase");
    draw(out, in, t);
    kl_svg_close(out);
    kl_plot_tree_free(t);
    return KL_OK;
}
