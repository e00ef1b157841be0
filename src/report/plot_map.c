/* kilter: feeder map.  Buses sit at their coordinates from the feeder file
 * when every drawn bus has them (the file's y axis points up, the screen's
 * down), otherwise at the layered tree layout of plot_tree.c, each section
 * then drawn as an elbow (down from its parent, then across).  A section's
 * phasing shows in its line (three-phase thick and solid, two-phase medium
 * and dashed, single-phase thin and dotted), its colour in the chosen index
 * (report.h kl_map_index) on a sequential scale with a legend; sections with
 * no value for the index (VUF at a one- or two-phase bus) are grey. */
#include <math.h>
#include "kl_report.h"

#define W 900.0
#define BOX_X 20.0
#define BOX_Y 20.0
#define BOX_W 640.0
#define LEGEND_X 690.0

typedef struct {
    double *x, *y;   /* [nbuses] screen position, NAN when not drawn */
    double lo, hi;   /* index range over drawn sections */
    int worst_bus;   /* far bus of the worst section */
    double h;        /* picture height */
    int thin;        /* too many sections: three-phase part only */
    int tree;        /* automatic layout: sections drawn as elbows */
    kl_map_index ix; /* what colours the sections */
} map;

static int draw_bus(const kl_report_input *in, const kl_plot_tree *t, int b, int thin)
{
    int k = kl_feeder_tree_psec(t->tree, b);
    return k >= 0 && (!thin || kl_phases_count(in->feeder->sections[k].phases) == 3);
}

static int all_have_xy(const kl_feeder *f, const kl_plot_tree *t)
{
    for (int k = 0; k < t->nreached; k++) {
        const kl_bus *b = &f->buses[t->order[k]];
        if (!b->has_xy || !isfinite(b->x) || !isfinite(b->y))
            return 0;
    }
    return t->nreached > 0;
}

/* Scales raw positions into the drawing box; keeps the aspect ratio for
 * coordinates, stretches the tree layout (its axes are counts, not lengths). */
static void fit(map *m, const kl_plot_tree *t, double *rx, double *ry, int keep_aspect, int flip)
{
    double x0 = INFINITY, x1 = -INFINITY, y0 = INFINITY, y1 = -INFINITY;
    for (int k = 0; k < t->nreached; k++) {
        int b = t->order[k];
        x0 = fmin(x0, rx[b]); x1 = fmax(x1, rx[b]);
        y0 = fmin(y0, ry[b]); y1 = fmax(y1, ry[b]);
    }
    double sx = x1 > x0 ? BOX_W / (x1 - x0) : 1, sy;
    if (keep_aspect) {
        sy = sx;
        m->h = (y1 - y0) * sy;
        if (m->h > 620) { /* tall feeder: fit the height instead */
            sy = sx = 620 / (y1 - y0);
            m->h = 620;
        }
    } else {
        m->h = fmin(620, fmax(160, (y1 - y0) * 16));
        sy = y1 > y0 ? m->h / (y1 - y0) : 1;
    }
    for (int k = 0; k < t->nreached; k++) {
        int b = t->order[k];
        m->x[b] = BOX_X + (rx[b] - x0) * sx;
        m->y[b] = BOX_Y + (flip ? (y1 - ry[b]) : (ry[b] - y0)) * sy;
    }
    m->h = fmax(m->h + 2 * BOX_Y + 20, 300);
}

static kl_status place(map *m, const kl_report_input *in, const kl_plot_tree *t, kl_errors *err)
{
    const kl_feeder *f = in->feeder;
    int nb = f->nbuses, rows = 0;
    double *rx = kl_malloc(sizeof(double) * (size_t)nb), *ry = kl_malloc(sizeof(double) * (size_t)nb);
    kl_status st = KL_OK;
    if (!rx || !ry) {
        kl_errors_add(err, f->path, 0, 0, NULL, "out of memory placing the feeder map");
        st = KL_ENOMEM;
        goto done;
    }
    for (int b = 0; b < nb; b++)
        m->x[b] = m->y[b] = NAN;
    if (all_have_xy(f, t)) {
        for (int b = 0; b < nb; b++) {
            rx[b] = f->buses[b].x;
            ry[b] = f->buses[b].y;
        }
        fit(m, t, rx, ry, 1, 1);
    } else {
        st = kl_plot_tree_layout(f, t, rx, ry, &rows, err);
        m->tree = 1;
        if (st == KL_OK)
            fit(m, t, rx, ry, 0, 0);
    }
done:
    kl_free(rx);
    kl_free(ry);
    return st;
}

static void value_range(map *m, const kl_report_input *in, const kl_plot_tree *t)
{
    m->lo = INFINITY;
    m->hi = -INFINITY;
    m->worst_bus = -1;
    int lower_worse = m->ix == KL_MAP_BY_VOLTAGE;
    double worst = NAN;
    for (int k = 1; k < t->nreached; k++) {
        int b = t->order[k];
        if (!draw_bus(in, t, b, m->thin))
            continue;
        double v = kl_report_map_value(in, m->ix, kl_feeder_tree_psec(t->tree, b), b);
        if (!isfinite(v))
            continue;
        m->lo = fmin(m->lo, v);
        m->hi = fmax(m->hi, v);
        if (!isfinite(worst) || (lower_worse ? v < worst : v > worst)) {
            worst = v;
            m->worst_bus = b;
        }
    }
}

/* Position on the colour scale, 1 = worst.  Loading is shown in three
 * bands of the same scale, fixed by the limits rather than the range: within
 * (0), over the warning level (0.5), over the rating (1). */
static double scale_t(const map *m, const kl_report_input *in, double v)
{
    if (m->ix == KL_MAP_BY_LOADING)
        return v > 100.0 ? 1.0 : v > 100.0 * in->opt.limits.loading_warning ? 0.5 : 0.0;
    if (!(m->hi > m->lo))
        return 0.5;
    double t = (v - m->lo) / (m->hi - m->lo);
    return m->ix == KL_MAP_BY_VOLTAGE ? 1 - t : t;
}

static void draw_sections(FILE *out, const map *m, const kl_report_input *in, const kl_plot_tree *t)
{
    static const char *const style[4] = {"", " stroke-width=\"1.4\" stroke-dasharray=\"1.5 2.5\"",
        " stroke-width=\"2.4\" stroke-dasharray=\"7 3\"", " stroke-width=\"4\""};
    fputs("<g stroke-linecap=\"round\">\n", out);
    for (int k = 1; k < t->nreached; k++) {
        int b = t->order[k], a = t->order[t->tree->up[k]], s = t->tree->sec[k];
        if (!draw_bus(in, t, b, m->thin))
            continue;
        double v = kl_report_map_value(in, m->ix, s, b);
        char col[8], attr[128];
        if (isfinite(v))
            kl_svg_colour_scale(scale_t(m, in, v), col);
        else
            snprintf(col, sizeof col, "#9a9a9a");
        int np = kl_phases_count(in->feeder->sections[s].phases);
        snprintf(attr, sizeof attr, "stroke=\"%s\"%s", col, style[np < 1 ? 1 : np]);
        if (m->tree) { /* down from the parent's column, then across: no diagonals */
            double px[3] = {m->x[a], m->x[a], m->x[b]}, py[3] = {m->y[a], m->y[b], m->y[b]};
            kl_svg_polyline(out, px, py, 3, attr);
        } else {
            kl_svg_line(out, m->x[a], m->y[a], m->x[b], m->y[b], attr);
        }
        kl_section_kind kind = in->feeder->sections[s].kind;
        if (kind != KL_SEC_LINE) { /* devices: a small open marker at mid-section */
            double cx = (m->x[a] + m->x[b]) / 2, cy = m->tree ? m->y[b] : (m->y[a] + m->y[b]) / 2;
            if (kind == KL_SEC_TRANSFORMER)
                kl_svg_circle(out, cx, cy, 4, "fill=\"#fff\" stroke=\"#222\" stroke-width=\"1.2\"");
            else if (kind == KL_SEC_REGULATOR)
                kl_svg_rect(out, cx - 4, cy - 4, 8, 8, "fill=\"#fff\" stroke=\"#222\" stroke-width=\"1.2\"");
        }
    }
    fputs("</g>\n", out);
}

static void label_bus(FILE *out, const map *m, const kl_feeder *f, int b, const char *prefix)
{
    char lab[300];
    snprintf(lab, sizeof lab, "%s%s", prefix, f->buses[b].name ? f->buses[b].name : "?");
    kl_svg_circle(out, m->x[b], m->y[b], 3.5, "fill=\"#111\"");
    kl_svg_text(out, m->x[b] + 6, m->y[b] - 6, "fill=\"#111\" font-size=\"11\"", lab);
}

static void draw_labels(FILE *out, const map *m, const kl_report_input *in, const kl_plot_tree *t)
{
    const kl_feeder *f = in->feeder;
    if (t->nreached <= 40) {
        for (int k = 1; k < t->nreached; k++)
            if (draw_bus(in, t, t->order[k], m->thin))
                kl_svg_text(out, m->x[t->order[k]] + 4, m->y[t->order[k]] - 4,
                            "fill=\"#444\" font-size=\"9\"", f->buses[t->order[k]].name);
    }
    if (t->nreached > 0)
        label_bus(out, m, f, t->order[0], "source ");
    if (m->worst_bus >= 0)
        label_bus(out, m, f, m->worst_bus, "worst: ");
}

/* The loading bands, with their limits and how many sections fall in each. */
static void legend_loading(FILE *out, const map *m, const kl_report_input *in, double x, double y)
{
    double warn = 100.0 * in->opt.limits.loading_warning;
    static const double t[3] = {0.0, 0.5, 1.0};
    for (int k = 0; k < 3; k++) {
        char col[8], attr[32];
        snprintf(attr, sizeof attr, "fill=\"%s\"", kl_svg_colour_scale(t[k], col));
        kl_svg_rect(out, x, y + 24 + 14 * k, 26, 8, attr);
        if (k == 0)
            kl_svg_textf(out, x + 32, y + 32, "fill=\"#222\"", "up to %.0f %%", warn);
        else if (k == 1)
            kl_svg_textf(out, x + 32, y + 46, "fill=\"#222\"", "%.0f to 100 %% (note)", warn);
        else
            kl_svg_text(out, x + 32, y + 60, "fill=\"#222\"", "over 100 % (overloaded)");
    }
    (void)m;
}

static void draw_legend(FILE *out, const map *m, const kl_report_input *in)
{
    double x = LEGEND_X, y = BOX_Y + 10;
    kl_svg_text(out, x, y, "fill=\"#222\" font-weight=\"bold\"", "Colour:");
    kl_svg_text(out, x, y + 15, "fill=\"#222\"", kl_report_map_index_name(m->ix));
    if (m->ix == KL_MAP_BY_LOADING)
        legend_loading(out, m, in, x, y);
    for (int k = 0; k < 40 && m->ix != KL_MAP_BY_LOADING; k++) { /* the scale as 40 steps: no gradient ids needed */
        char col[8], attr[32];
        double v = m->lo + (m->hi - m->lo) * k / 39.0;
        snprintf(attr, sizeof attr, "fill=\"%s\"", kl_svg_colour_scale(scale_t(m, in, v), col));
        kl_svg_rect(out, x + 4.5 * k, y + 24, 4.6, 14, attr);
    }
    int dec = m->ix == KL_MAP_BY_VOLTAGE ? 3 : m->ix == KL_MAP_BY_VUF ? 2 : 1;
    if (m->ix == KL_MAP_BY_LOADING) {
        if (isfinite(m->hi))
            kl_svg_textf(out, x, y + 80, "fill=\"#222\"", "highest %.0f %%", m->hi);
    } else if (isfinite(m->lo)) {
        kl_svg_textf(out, x, y + 52, "fill=\"#222\"", "%.*f", dec, m->lo);
        kl_svg_textf(out, x + 180, y + 52, "fill=\"#222\" text-anchor=\"end\"", "%.*f", dec, m->hi);
    } else {
        kl_svg_text(out, x, y + 52, "fill=\"#222\"", "no values for this index");
    }
    double gy = m->ix == KL_MAP_BY_LOADING ? 28 : 0; /* the bands take more room */
    kl_svg_rect(out, x, y + 62 + gy, 26, 6, "fill=\"#9a9a9a\"");
    kl_svg_text(out, x + 32, y + 69 + gy, "fill=\"#222\"",
                m->ix == KL_MAP_BY_LOADING ? "no rating (grey)" : "no value (grey)");
    y += gy;
    static const char *const lab[3] = {"three-phase", "two-phase", "single-phase"};
    static const char *const attr[3] = {"stroke=\"#444\" stroke-width=\"4\"",
        "stroke=\"#444\" stroke-width=\"2.4\" stroke-dasharray=\"7 3\"",
        "stroke=\"#444\" stroke-width=\"1.4\" stroke-dasharray=\"1.5 2.5\""};
    kl_svg_text(out, x, y + 96, "fill=\"#222\" font-weight=\"bold\"", "Line:");
    kl_svg_legend(out, x, y + 114, 3, lab, attr);
    kl_svg_circle(out, x + 13, y + 160, 4, "fill=\"#fff\" stroke=\"#222\"");
    kl_svg_text(out, x + 32, y + 164, "fill=\"#222\"", "transformer");
    kl_svg_rect(out, x + 9, y + 172, 8, 8, "fill=\"#fff\" stroke=\"#222\"");
    kl_svg_text(out, x + 32, y + 180, "fill=\"#222\"", "regulator");
    if (m->thin)
        kl_svg_text(out, x, y + 204, "fill=\"#8e1b3c\" font-size=\"10\"",
                    "large feeder: three-phase part only");
}

static kl_status map_write(FILE *out, const kl_report_input *in, kl_map_index ix, kl_errors *err)
{
    kl_plot_tree *t = NULL;
    map m = {0};
    m.ix = ix;
    kl_status st = kl_report_input_check(out, in, err);
    if (st != KL_OK)
        return st;
    const kl_feeder *f = in->feeder;
    if ((st = kl_plot_tree_build(f, &t, err)) != KL_OK)
        return st;
    m.x = kl_malloc(sizeof(double) * (size_t)f->nbuses);
    m.y = kl_malloc(sizeof(double) * (size_t)f->nbuses);
    if (!m.x || !m.y) {
        kl_errors_add(err, f->path, 0, 0, NULL, "out of memory drawing the feeder map");
        st = KL_ENOMEM;
        goto done;
    }
    m.thin = t->nreached - 1 > KL_PLOT_MAX_SECTIONS;
    if ((st = place(&m, in, t, err)) != KL_OK)
        goto done;
    value_range(&m, in, t);
    kl_svg_open(out, W, fmax(m.h, 260), "Feeder map");
    draw_sections(out, &m, in, t);
    draw_labels(out, &m, in, t);
    draw_legend(out, &m, in);
    kl_svg_close(out);
done:
    kl_free(m.x);
    kl_free(m.y);
    kl_plot_tree_free(t);
    return st;
}

kl_status kl_plot_map_write(FILE *out, const kl_report_input *in, kl_errors *err)
{
    return map_write(out, in, in ? in->opt.map_index : KL_MAP_BY_VUF, err);
}

kl_status kl_plot_map_loading_write(FILE *out, const kl_report_input *in, kl_errors *err)
{
    return map_write(out, in, KL_MAP_BY_LOADING, err);
}
