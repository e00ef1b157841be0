/* kilter: phasor diagram for one bus.  Left: the phase-to-neutral voltages
 * (per unit, solid) and the phase currents of the section feeding the bus
 * (scaled to fit, dashed).  Right: their symmetrical components by Fortescue
 * (sequence.h), defined only where all three phases are present.  Angles
 * are drawn counter-clockwise from the positive x axis, as phasors are
 * conventionally drawn (common practice); the figures are printed beside
 * each diagram because a small negative-sequence arrow is hard to read. */
#include <complex.h>
#include <math.h>
#include "kl_report.h"
#include "kilter/sequence.h"
#include "kilter/units.h"

#define PANEL 440.0
#define R 150.0 /* pixels for the reference length of a panel */

static const char *const phase_colour[3] = {KL_COLOUR_A, KL_COLOUR_B, KL_COLOUR_C};
/* sequence colours of our own: zero grey, positive green, negative purple */
static const char *const seq_colour[3] = {"#5a5a5a", "#2f7d3a", "#6a3d9a"};

/* Angle in degrees; an angle that would print as "-0.00" prints as 0.00. */
static double deg(kl_complex z)
{
    double d = carg(z) * KL_DEG_PER_RAD;
    return fabs(d) < 0.005 ? 0.0 : d;
}

static void arrow(FILE *out, double cx, double cy, kl_complex z, double scale,
                  const char *colour, int dashed, const char *label)
{
    double x = cx + scale * creal(z), y = cy - scale * cimag(z);
    kl_svg_arrow(out, cx, cy, x, y, 9, colour, dashed ? 1.6 : 2.4, dashed ? "6 3" : NULL);
    double len = hypot(x - cx, y - cy);
    if (len > 1) {
        char attr[96];
        snprintf(attr, sizeof attr, "fill=\"%s\" text-anchor=\"middle\" font-size=\"11\"", colour);
        kl_svg_text(out, x + (x - cx) / len * 12, y + (y - cy) / len * 12 + 4, attr, label);
    }
}

static void panel_frame(FILE *out, double cx, double cy, const char *title)
{
    kl_svg_circle(out, cx, cy, R, "fill=\"none\" stroke=\"#d6d2c8\"");
    kl_svg_line(out, cx - R - 10, cy, cx + R + 10, cy, "stroke=\"#d6d2c8\"");
    kl_svg_line(out, cx, cy - R - 10, cx, cy + R + 10, "stroke=\"#d6d2c8\"");
    kl_svg_text(out, cx, 18, "text-anchor=\"middle\" fill=\"#222\" font-weight=\"bold\"", title);
}

/* The current flowing into bus b: through its feeding section, or for the
 * source bus the sum over the sections leaving it.  0 = no current known. */
static int bus_current(const kl_report_input *in, const kl_plot_tree *t, int b, kl_complex i[3])
{
    i[0] = i[1] = i[2] = 0;
    int k = kl_feeder_tree_psec(t->tree, b);
    if (k >= 0) {
        for (int p = 0; p < 3; p++)
            i[p] = in->ph.i[3 * k + p];
        return 1;
    }
    const kl_feeder *f = in->feeder;
    int any = 0;
    for (int s = 0; s < f->nsections; s++) { /* the closed sections at b, each end counted */
        const kl_section *sc = &f->sections[s];
        if (!sc->closed || sc->from < 0 || sc->to < 0 || sc->from >= f->nbuses || sc->to >= f->nbuses)
            continue;
        for (int end = (sc->from == b) + (sc->to == b); end > 0; end--) {
            for (int p = 0; p < 3; p++)
                i[p] += in->ph.i[3 * s + p];
            any = 1;
        }
    }
    return any;
}

static double max_abs(const kl_complex *z, int n, int mask)
{
    double m = 0;
    for (int k = 0; k < n; k++)
        if ((mask >> k) & 1)
            m = fmax(m, cabs(z[k]));
    return m;
}

static void phase_panel(FILE *out, const kl_report_input *in, int b, const kl_complex i[3],
                        int have_i, int ph)
{
    double cx = PANEL / 2, cy = 40 + R + 10, vbase = in->ph.v_base_ln[b];
    panel_frame(out, cx, cy, "Phase voltages and currents");
    double imax = max_abs(i, 3, ph), iscale = imax > 0 ? 0.8 * R / imax : 0;
    static const char *const vl[3] = {"Va", "Vb", "Vc"}, *const il[3] = {"Ia", "Ib", "Ic"};
    for (int p = 0; p < 3; p++) {
        if (!((ph >> p) & 1))
            continue;
        arrow(out, cx, cy, in->ph.v[3 * b + p] / vbase, R / 1.1, phase_colour[p], 0, vl[p]);
        if (have_i && iscale > 0)
            arrow(out, cx, cy, i[p], iscale, phase_colour[p], 1, il[p]);
    }
    double y = cy + R + 36;
    for (int p = 0; p < 3; p++) {
        if (!((ph >> p) & 1))
            continue;
        kl_complex v = in->ph.v[3 * b + p];
        kl_svg_textf(out, 20, y, "fill=\"#222\"", "%s " KL_NUM_PU " pu at " KL_NUM_DEG " deg",
                     vl[p], cabs(v) / vbase, deg(v));
        if (have_i)
            kl_svg_textf(out, 230, y, "fill=\"#222\"", "%s " KL_NUM_AMP " A at " KL_NUM_DEG " deg",
                         il[p], cabs(i[p]), deg(i[p]));
        y += 16;
    }
    kl_svg_text(out, 20, y + 4, "fill=\"#666\" font-size=\"10\"",
                "circle = 1.1 pu; currents (dashed) scaled to the largest");
}

/* Zero and negative sequence are small beside the positive: they are drawn
 * magnified by a power of ten, which the label states. */
static double magnify(const kl_complex s[3])
{
    double big = cabs(s[1]), small = fmax(cabs(s[0]), cabs(s[2]));
    double k = 1;
    while (small > 0 && small * k * 10 <= 0.6 * big && k < 1e4)
        k *= 10;
    return k;
}

static void seq_arrows(FILE *out, double cx, double cy, const kl_complex s[3], double scale,
                       const char *sym, int dashed)
{
    double k = magnify(s);
    for (int q = 0; q < 3; q++) {
        char lab[32];
        double mk = q == 1 ? 1 : k;
        if (mk > 1)
            snprintf(lab, sizeof lab, "%s%d (x%.0f)", sym, q, mk);
        else
            snprintf(lab, sizeof lab, "%s%d", sym, q);
        arrow(out, cx, cy, s[q] * mk, scale, seq_colour[q], dashed, lab);
    }
}

static void seq_panel(FILE *out, const kl_report_input *in, int b, const kl_complex i[3],
                      int have_i, int ph)
{
    double cx = PANEL + PANEL / 2, cy = 40 + R + 10, vbase = in->ph.v_base_ln[b];
    panel_frame(out, cx, cy, "Sequence components");
    if (ph != KL_PH_ABC) {
        kl_svg_text(out, cx, cy + R + 36, "text-anchor=\"middle\" fill=\"#444\"",
                    "defined only where all three phases are present");
        return;
    }
    kl_complex v012[3], i012[3], vpu[3];
    for (int p = 0; p < 3; p++)
        vpu[p] = in->ph.v[3 * b + p] / vbase;
    kl_seq_from_phase(vpu, v012);
    kl_seq_from_phase(i, i012);
    seq_arrows(out, cx, cy, v012, R / 1.1, "V", 0);
    double iref = cabs(i012[1]) > 0 ? cabs(i012[1]) : max_abs(i012, 3, 7);
    if (have_i && iref > 0)
        seq_arrows(out, cx, cy, i012, 0.8 * R / iref, "I", 1);
    double y = cy + R + 36;
    for (int q = 0; q < 3; q++, y += 16) {
        kl_svg_textf(out, PANEL + 20, y, "fill=\"#222\"", "V%d " KL_NUM_PU " pu at " KL_NUM_DEG " deg",
                     q, cabs(v012[q]), deg(v012[q]));
        if (have_i)
            kl_svg_textf(out, PANEL + 230, y, "fill=\"#222\"", "I%d " KL_NUM_AMP " A at " KL_NUM_DEG
                         " deg", q, cabs(i012[q]), deg(i012[q]));
    }
    kl_svg_text(out, PANEL + 20, y + 4, "fill=\"#666\" font-size=\"10\"",
                "zero grey, positive green, negative purple");
}

kl_status kl_plot_phasor_write(FILE *out, const kl_report_input *in, int bus, kl_errors *err)
{
    kl_status st = kl_report_input_check(out, in, err);
    if (st != KL_OK)
        return st;
    const kl_feeder *f = in->feeder;
    if (bus < 0 || bus >= f->nbuses) {
        kl_errors_add(err, f->path, 0, 0, NULL, "phasor bus id %d is not a bus of this feeder "
                      "(0..%d): name a bus that exists", bus, f->nbuses - 1);
        return KL_EARG;
    }
    kl_plot_tree *t = NULL;
    st = kl_plot_tree_build(f, &t, err);
    if (st != KL_OK)
        return st;
    kl_complex i[3];
    int ph = kl_report_bus_phases(in, bus), have_i = bus_current(in, t, bus, i);
    char title[300];
    snprintf(title, sizeof title, "Phasors at bus %s", f->buses[bus].name ? f->buses[bus].name : "?");
    kl_svg_open(out, 2 * PANEL, 470, title);
    if (!(in->ph.v_base_ln[bus] > 0) || ph == 0)
        kl_svg_text(out, PANEL, 200, "text-anchor=\"middle\" fill=\"#444\"",
                    "this bus has no voltage in the solution (de-energised)");
    else {
        phase_panel(out, in, bus, i, have_i, ph);
        seq_panel(out, in, bus, i, have_i, ph);
    }
    kl_svg_close(out);
    kl_plot_tree_free(t);
    return KL_OK;
}
