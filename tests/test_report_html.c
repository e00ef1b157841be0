/* Tests of the HTML study report (src/report_html.c and the plots): escaping
 * of hostile names, the structure of the page, figures in the tables against
 * published examples, bad arguments, write failure and allocation failure.
 * The feeder and its load-flow arrays are built by hand here. */
#include <check.h>
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "kl_report.h"
#include "kilter/report.h"
#include "kilter/study.h"
#include "kilter/rebalance.h"
#include "ref_unbalance.h"

#define NB 5
#define NS 4

typedef struct {
    kl_feeder f;
    kl_bus bus[NB];
    kl_section sec[NS];
    kl_construction cons[1];
    kl_complex v[3 * NB], i[3 * NS], in[NS];
    double vbase[NB];
    kl_report_input rin;
} fixture;

static kl_complex polar(double m, double deg)
{
    return m * cexp(I * deg * 3.14159265358979323846 / 180.0);
}

/* Phase voltages whose line-to-line magnitudes are ab, bc, ca: the triangle
 * with those sides, centred on its centroid (no zero sequence). */
static void from_line_mags(double ab, double bc, double ca, kl_complex v[3])
{
    kl_complex A = 0, B = ab;
    double x = (ab * ab + ca * ca - bc * bc) / (2 * ab); /* law of cosines */
    kl_complex C = x - I * sqrt(ca * ca - x * x);
    kl_complex g = (A + B + C) / 3;
    v[0] = A - g;
    v[1] = B - g;
    v[2] = C - g;
}

static void add_bus(fixture *x, int b, const char *name, int phases, double base, int with_xy)
{
    x->bus[b] = (kl_bus){.name = name, .phases = (uint8_t)phases, .base_kv_ll = base * sqrt(3) / 1000,
                         .x = 100.0 * b, .y = b == 4 ? -50 : 0, .has_xy = with_xy != 0};
    x->vbase[b] = base;
}

static void add_sec(fixture *x, int s, const char *name, int from, int to, int phases, double len)
{
    x->sec[s] = (kl_section){.name = name, .kind = KL_SEC_LINE, .from = from, .to = to,
                             .phases = (uint8_t)phases, .length_m = len, .construction = 0,
                             .device = -1, .closed = 1};
}

/* Buses and sections carry hostile names; voltages are set per bus. */
static void build(fixture *x, int with_xy)
{
    memset(x, 0, sizeof *x);
    double b12 = 12470 / sqrt(3), b480 = 480 / sqrt(3);
    add_bus(x, 0, "<script>alert(1)</script>", KL_PH_ABC, b12, with_xy);
    add_bus(x, 1, "a&b", KL_PH_ABC, b12, with_xy);
    add_bus(x, 2, "x\"y'z", KL_PH_ABC, b480, with_xy);
    add_bus(x, 3, "lat<1>", KL_PH_A, b12, with_xy);
    add_bus(x, 4, "two<ph>", KL_PH_A | KL_PH_C, b12, with_xy);
    add_sec(x, 0, "s<1>", 0, 1, KL_PH_ABC, 1609.344);
    add_sec(x, 1, "s&2", 1, 2, KL_PH_ABC, 300);
    add_sec(x, 2, "tap'3", 3, 1, KL_PH_A, 200); /* written far end first: allowed */
    add_sec(x, 3, "<img src=x onerror=alert(2)>", 1, 4, KL_PH_A | KL_PH_C, 250);
    x->cons[0] = (kl_construction){.name = "c<1>", .kind = KL_CONS_MATRIX, .phases = KL_PH_ABC,
                                   .neutral_ampacity_a = 120};
    for (int p = 0; p < 3; p++)
        x->v[p] = polar(b12, -120.0 * p);
    x->v[3] = polar(0.980 * b12, -1);
    x->v[4] = polar(0.965 * b12, -122);
    x->v[5] = polar(0.975 * b12, 118.5);
    const double *mg1 = ref_unbalance_mg1[0].v; /* NEMA MG 1 worked figures */
    from_line_mags(mg1[0], mg1[1], mg1[2], &x->v[6]);
    x->v[9] = polar(0.955 * b12, -1.5);
    x->v[12] = polar(0.970 * b12, -1.2);
    x->v[14] = polar(0.972 * b12, 118.8);
    kl_complex ih[3] = {polar(100, -30), polar(80, -150), polar(90, 90)};
    for (int p = 0; p < 3; p++) {
        x->i[p] = ih[p];
        x->i[3 + p] = 0.5 * ih[p];
    }
    x->i[6] = polar(25, -32);
    x->i[9] = polar(12, -31);
    x->i[11] = polar(10, 88);
    for (int s = 0; s < NS; s++) /* isolated neutral: I_n = -(Ia + Ib + Ic) */
        x->in[s] = -(x->i[3 * s] + x->i[3 * s + 1] + x->i[3 * s + 2]);
    x->f = (kl_feeder){.path = "feeders/<odd>.yaml", .name = "Feeder <b>&", .units = KL_UNITS_US,
                       .radial = 1, .buses = x->bus, .nbuses = NB, .sections = x->sec,
                       .nsections = NS, .constructions = x->cons, .nconstructions = 1};
    x->f.source = (kl_source){.bus = 0, .kv_ll = 12.47, .freq_hz = 60, .v_pu = 1,
                              .relay_pickup_a = 240};
    x->rin.feeder = &x->f;
    x->rin.ph = (kl_report_phases){x->v, x->vbase, x->i, x->in};
    kl_report_options_default(&x->rin.opt);
}

/* The report into a memory stream (caller frees).  Not inlined, as in
 * test_svg.c: GCC 12 at -O3 takes the returned text for a pointer into the
 * local `buf` (whose address open_memstream keeps) and warns -Wdangling-pointer. */
__attribute__((noinline)) static char *render(const kl_report_input *in, kl_status *st,
                                              kl_errors *err)
{
    char *buf = NULL;
    size_t len = 0;
    FILE *m = open_memstream(&buf, &len);
    ck_assert_ptr_nonnull(m);
    *st = kl_report_html_write(m, in, err);
    fclose(m);
    return buf;
}

static int count(const char *hay, const char *needle)
{
    int n = 0;
    for (const char *p = strstr(hay, needle); p; p = strstr(p + 1, needle))
        n++;
    return n;
}

START_TEST(hostile_names_render_as_text)
{
    fixture x;
    kl_errors err;
    kl_status st;
    build(&x, _i);
    kl_errors_init(&err);
    x.rin.opt.phasor_bus = 0; /* the bus named <script>... gets a heading */
    char *h = render(&x.rin, &st, &err);
    ck_assert_int_eq(st, KL_OK);
    /* the report has no script of its own, so any "<script" came from data */
    ck_assert_ptr_null(strstr(h, "<script"));
    ck_assert_ptr_null(strstr(h, "<img"));
    ck_assert_ptr_null(strstr(h, "<b>&"));
    ck_assert_ptr_null(strstr(h, "lat<1>"));
    ck_assert_ptr_nonnull(strstr(h, "&lt;script&gt;alert(1)&lt;/script&gt;"));
    ck_assert_ptr_nonnull(strstr(h, "<h2>Phasors at bus &lt;script&gt;alert(1)&lt;/script&gt;</h2>"));
    ck_assert_ptr_nonnull(strstr(h, "a&amp;b"));
    ck_assert_ptr_nonnull(strstr(h, "x&quot;y&#39;z"));
    ck_assert_ptr_nonnull(strstr(h, "&lt;img src=x onerror=alert(2)&gt;"));
    ck_assert_ptr_nonnull(strstr(h, "Feeder &lt;b&gt;&amp;"));
    /* every report carries the field-work caution (project rule, common practice) */
    ck_assert_ptr_nonnull(strstr(h, "switching and safety rules, local codes, and review by a licensed engineer"));
    free(h);
    kl_errors_free(&err);
}
END_TEST

START_TEST(every_part_present)
{
    fixture x;
    kl_errors err;
    kl_status st;
    build(&x, _i);
    kl_errors_init(&err);
    char *h = render(&x.rin, &st, &err);
    ck_assert_int_eq(st, KL_OK);
    ck_assert_ptr_nonnull(strstr(h, "<!DOCTYPE html>"));
    ck_assert_ptr_nonnull(strstr(h, "</html>"));
    static const char *const heads[] = {"<h2>Summary</h2>", "<h2>Voltage along the feeder</h2>",
        "<h2>Feeder map</h2>", "<h2>Loading</h2>", "<h2>Phasors at bus ", "<h2>Unbalance</h2>",
        "<h2>Neutral current</h2>", "<h2>Suggested phase moves</h2>"};
    for (size_t k = 0; k < sizeof heads / sizeof *heads; k++)
        ck_assert_msg(strstr(h, heads[k]), "missing %s", heads[k]);
    ck_assert_int_eq(count(h, "<svg "), 4);
    ck_assert_int_eq(count(h, "</svg>"), 4);
    /* the loading map's legend: its bands at the limits' warning level */
    ck_assert_ptr_nonnull(strstr(h, "loading (% of rating)"));
    ck_assert_ptr_nonnull(strstr(h, "80 to 100 % (note)"));
    ck_assert_ptr_nonnull(strstr(h, "over 100 % (overloaded)"));
    /* self-contained: nothing fetched from elsewhere */
    ck_assert_ptr_null(strstr(h, "src=\""));
    ck_assert_ptr_null(strstr(h, "href="));
    ck_assert_ptr_null(strstr(h, "url("));
    ck_assert_ptr_null(strstr(h, "nan"));
    ck_assert_ptr_null(strstr(h, "inf"));
    /* the profile draws one path per phase present */
    ck_assert_int_eq(count(h, "<path "), 3);
    free(h);
    kl_errors_free(&err);
}
END_TEST

/* The text of cell `col` (0-based) in the table row that starts with `first`. */
static double cell(const char *h, const char *table, const char *first, int col)
{
    const char *t = strstr(h, table);
    ck_assert_ptr_nonnull(t);
    char key[128];
    snprintf(key, sizeof key, "<tr><td class=\"n\">%s</td>", first);
    const char *r = strstr(t, key);
    ck_assert_msg(r != NULL, "row %s not found", first);
    const char *c = r + 4;
    for (int k = 0; k < col; k++)
        c = strstr(c + 1, "<td");
    c = strchr(c, '>') + 1;
    if (!strncmp(c, "&ndash;", 7))
        return NAN;
    return strtod(c, NULL);
}

START_TEST(unbalance_table_figures)
{
    fixture x;
    kl_errors err;
    kl_status st;
    build(&x, 1);
    kl_errors_init(&err);
    char *h = render(&x.rin, &st, &err);
    ck_assert_int_eq(st, KL_OK);
    /* NEMA MG 1 worked figures (secondary sources citing MG 1, tests/ref_unbalance.c):
     * line voltages 462, 463, 455 V -> line-voltage unbalance 1.1 % (5/460 = 1.087 %). */
    double lvur = cell(h, "<table class=\"unbalance\">", "x&quot;y&#39;z", 8);
    ck_assert_double_eq_tol(lvur, ref_unbalance_mg1[0].pct, ref_unbalance_mg1[0].tol_pct);
    ck_assert_double_eq_tol(lvur, 100 * 5.0 / 460.0, 0.005);
    /* VUF by its definition |V2|/|V1| (Fortescue 1918), computed here
     * independently with a = 1 at 120 deg: V1 = (Va + a Vb + a^2 Vc)/3. */
    kl_complex a = polar(1, 120), *v = &x.v[6];
    kl_complex v1 = (v[0] + a * v[1] + a * a * v[2]) / 3, v2 = (v[0] + a * a * v[1] + a * v[2]) / 3;
    double vuf = cell(h, "<table class=\"unbalance\">", "x&quot;y&#39;z", 7);
    ck_assert_double_eq_tol(vuf, 100 * cabs(v2) / cabs(v1), 0.005);
    double v1pu = cell(h, "<table class=\"unbalance\">", "x&quot;y&#39;z", 5);
    ck_assert_double_eq_tol(v1pu, cabs(v1) / (480 / sqrt(3)), 0.00005);
    /* the same figures in the CSV number format (report.h KL_NUM_PCT) */
    char want[96];
    snprintf(want, sizeof want, ">" KL_NUM_PCT "</td>", 100 * cabs(v2) / cabs(v1));
    ck_assert_ptr_nonnull(strstr(h, want));
    /* one- and two-phase buses have no sequence values: not in the table */
    const char *t0 = strstr(h, "<table class=\"unbalance\">"), *t1 = strstr(t0, "</table>");
    const char *lat = strstr(t0, "lat&lt;1&gt;</td>");
    ck_assert(lat == NULL || lat > t1);
    /* the source bus is balanced: VUF 0.00 (common practice: a balanced set
     * has only a positive-sequence component) */
    double v0 = cell(h, "<table class=\"unbalance\">", "&lt;script&gt;alert(1)&lt;/script&gt;", 7);
    ck_assert_double_eq_tol(v0, 0, 0.005);
    free(h);
    kl_errors_free(&err);
}
END_TEST

START_TEST(neutral_table_figures)
{
    fixture x;
    kl_errors err;
    kl_status st;
    build(&x, 1);
    kl_errors_init(&err);
    char *h = render(&x.rin, &st, &err);
    ck_assert_int_eq(st, KL_OK);
    /* With an isolated neutral, I_n = -(Ia + Ib + Ic) (Kirchhoff's current
     * law); 100/-30 + 80/-150 + 90/90 A, worked by hand: 17.32 A. */
    double in = cell(h, "<table class=\"neutral\">", "s&lt;1&gt;", 7);
    ck_assert_double_eq_tol(in, cabs(x.in[0]), 0.05);
    ck_assert_double_eq_tol(in, 17.3, 0.05);
    double loading = cell(h, "<table class=\"neutral\">", "s&lt;1&gt;", 9);
    ck_assert_double_eq_tol(loading, 100 * cabs(x.in[0]) / 120, 0.5);
    free(h);
    kl_errors_free(&err);
}
END_TEST

START_TEST(map_by_each_index)
{
    fixture x;
    kl_errors err;
    kl_status st;
    build(&x, _i % 2);
    kl_errors_init(&err);
    x.rin.opt.map_index = (kl_map_index)(_i / 2);
    char *h = render(&x.rin, &st, &err);
    ck_assert_int_eq(st, KL_OK);
    const char *names[] = {"lowest phase voltage", "voltage unbalance factor", "neutral current (A)"};
    ck_assert_ptr_nonnull(strstr(h, names[_i / 2]));
    /* phasing legend and one line per drawn section (4) plus 3 legend samples */
    const char *map = strstr(h, "<h2>Feeder map</h2>");
    ck_assert_ptr_nonnull(map);
    const char *end = strstr(map, "</svg>");
    int lines = 0, elbows = 0;
    for (const char *p = strstr(map, "<line "); p && p < end; p = strstr(p + 1, "<line "))
        lines++;
    for (const char *p = strstr(map, "<polyline "); p && p < end; p = strstr(p + 1, "<polyline "))
        elbows++;
    /* with coordinates straight lines; in the tree layout elbows (down, then across) */
    ck_assert_int_eq(lines, (_i % 2 ? NS : 0) + 3);
    ck_assert_int_eq(elbows, _i % 2 ? 0 : NS);
    free(h);
    kl_errors_free(&err);
}
END_TEST

START_TEST(bad_arguments)
{
    fixture x;
    kl_errors err;
    kl_status st;
    build(&x, 1);
    kl_errors_init(&err);
    x.rin.opt.phasor_bus = NB;
    char *h = render(&x.rin, &st, &err);
    ck_assert_int_eq(st, KL_EARG);
    ck_assert_int_eq(err.count, 1);
    ck_assert_ptr_nonnull(strstr(err.items[0].message, "phasor bus"));
    free(h);
    build(&x, 1);
    x.rin.ph.v = NULL;
    kl_errors_clear(&err);
    h = render(&x.rin, &st, &err);
    ck_assert_int_eq(st, KL_EARG);
    ck_assert_int_eq(err.count, 1);
    free(h);
    build(&x, 1);
    x.rin.opt.map_index = (kl_map_index)7;
    kl_errors_clear(&err);
    h = render(&x.rin, &st, &err);
    ck_assert_int_eq(st, KL_EARG);
    free(h);
    kl_errors_free(&err);
}
END_TEST

START_TEST(write_failure_reported)
{
    fixture x;
    kl_errors err;
    build(&x, 1);
    kl_errors_init(&err);
    FILE *full = fopen("/dev/full", "w"); /* every write fails with ENOSPC (Linux) */
    if (!full) {
        kl_errors_free(&err);
        return;
    }
    ck_assert_int_eq(kl_report_html_write(full, &x.rin, &err), KL_EIO);
    ck_assert_int_ge(err.count, 1);
    fclose(full);
    kl_errors_free(&err);
}
END_TEST

START_TEST(allocation_failures)
{
    /* Every allocation in turn fails: the report returns KL_ENOMEM and frees
     * what it holds (leaks show under the sanitizer build). */
    fixture x;
    build(&x, _i);
    int saw_ok = 0;
    for (long n = 0; n < 200 && !saw_ok; n++) {
        kl_errors err;
        kl_errors_init(&err);
        kl_status st;
        kl_alloc_fail_after(n);
        char *h = render(&x.rin, &st, &err);
        kl_alloc_fail_after(-1);
        ck_assert_msg(st == KL_OK || st == KL_ENOMEM, "status %d at allocation %ld", st, n);
        saw_ok = st == KL_OK;
        free(h);
        kl_errors_free(&err);
    }
    ck_assert(saw_ok);
}
END_TEST

static int progress_calls;
static void on_progress(void *ctx, const char *stage, long done, long total)
{
    (void)ctx;
    ck_assert_ptr_nonnull(stage);
    ck_assert_int_le(done, total);
    progress_calls++;
}

START_TEST(progress_reported)
{
    fixture x;
    kl_errors err;
    kl_status st;
    kl_progress p;
    build(&x, 1);
    kl_errors_init(&err);
    kl_progress_init(&p, on_progress, NULL, 0);
    x.rin.progress = &p;
    progress_calls = 0;
    char *h = render(&x.rin, &st, &err);
    ck_assert_int_eq(st, KL_OK);
    ck_assert_int_eq(progress_calls, 6);
    free(h);
    kl_errors_free(&err);
}
END_TEST

START_TEST(tree_layout_layered)
{
    /* A main 0-1-2-3 with laterals 1-4-5 and 2-6, one written far end first.
     * Layered layout: x is the depth; the largest subtree stays on the
     * parent's row, so the main runs straight along row 0; leaves get rows
     * of their own; distances add the line lengths along the path. */
    static const int from[6] = {0, 1, 2, 4, 5, 2}, to[6] = {1, 2, 3, 1, 4, 6};
    kl_bus bus[7] = {{0}};
    kl_section sec[6];
    for (int s = 0; s < 6; s++)
        sec[s] = (kl_section){.name = "s", .kind = KL_SEC_LINE, .from = from[s], .to = to[s],
                              .phases = KL_PH_ABC, .length_m = 100.0 * (s + 1), .closed = 1,
                              .device = -1};
    kl_feeder f = {.buses = bus, .nbuses = 7, .sections = sec, .nsections = 6};
    f.source.bus = 0;
    kl_errors err;
    kl_errors_init(&err);
    kl_plot_tree *t = NULL;
    ck_assert_int_eq(kl_plot_tree_build(&f, &t, &err), KL_OK);
    ck_assert_int_eq(t->nreached, 7);
    double x[7], y[7];
    int rows = 0;
    ck_assert_int_eq(kl_plot_tree_layout(&f, t, x, y, &rows, &err), KL_OK);
    static const int depth[7] = {0, 1, 2, 3, 2, 3, 3};
    for (int b = 0; b < 7; b++) {
        ck_assert_double_eq(x[b], depth[b]);
        if (kl_feeder_tree_pbus(t->tree, b) >= 0)
            ck_assert(y[b] >= y[kl_feeder_tree_pbus(t->tree, b)]);
    }
    ck_assert_int_eq(rows, 3); /* three leaves: 3, 5, 6 */
    ck_assert(y[3] != y[5] && y[3] != y[6] && y[5] != y[6]);
    ck_assert_double_eq(y[0], y[3]); /* bus 1 carries 5 buses below it: the main */
    ck_assert_double_eq(y[1], y[3]);
    ck_assert_double_eq_tol(t->dist_m[5], 100 + 400 + 500, 1e-9);
    ck_assert_double_eq_tol(t->dist_m[6], 100 + 200 + 600, 1e-9);
    /* an open switch cuts off what lies beyond it */
    sec[5].closed = 0;
    kl_plot_tree_free(t);
    ck_assert_int_eq(kl_plot_tree_build(&f, &t, &err), KL_OK);
    ck_assert_int_eq(t->nreached, 6);
    ck_assert_int_eq(t->depth[6], -1);
    ck_assert(isnan(t->dist_m[6]));
    kl_plot_tree_free(t);
    kl_errors_free(&err);
}
END_TEST

START_TEST(with_the_study)
{
    /* The study's record (study.h) drives the neutral and sizing tables; its
     * figures appear exactly as KL_NUM_* prints them (the CSV's formats). */
    fixture x;
    kl_errors err;
    kl_status st;
    build(&x, 1);
    kl_errors_init(&err);
    kl_study_phases ph = {.v = x.v, .v_base_ln = x.vbase, .i = x.i, .i_neutral = x.in};
    kl_study_options so;
    kl_study_options_default(&so);
    kl_study *study = NULL;
    ck_assert_int_eq(kl_study_run(&x.f, &ph, NULL, &so, &study, &err), KL_OK);
    x.rin.study = study;
    x.f.nbuses--; /* a study of another feeder is refused */
    char *h = render(&x.rin, &st, &err);
    ck_assert_int_eq(st, KL_EARG);
    free(h);
    x.f.nbuses++;
    h = render(&x.rin, &st, &err);
    ck_assert_int_eq(st, KL_OK);
    ck_assert_ptr_nonnull(strstr(h, "<h3>Neutral sizing</h3>"));
    ck_assert_ptr_nonnull(strstr(h, "<h2>What causes the unbalance</h2>"));
    ck_assert_ptr_null(strstr(h, "<script"));
    /* In RMS of section s<1>: isolated neutral, no triplens declared, so it is
     * |Ia + Ib + Ic| = 17.32 A (Kirchhoff, worked by hand above) */
    double rms = cell(h, "<table class=\"neutral\">", "s&lt;1&gt;", 6);
    ck_assert_double_eq_tol(rms, 17.32, 0.05);
    char want[96];
    snprintf(want, sizeof want, "<td data-v=\"" KL_NUM_CSV "\">" KL_NUM_AMP "</td>",
             study->i_n_rms[0], study->i_n_rms[0]);
    ck_assert_ptr_nonnull(strstr(strstr(h, "<table class=\"neutral\">"), want));
    /* the unbalance table's VUF is the study's, in the same format */
    snprintf(want, sizeof want, "<td data-v=\"" KL_NUM_CSV "\">" KL_NUM_PCT "</td>",
             100 * study->unb[2].vuf, 100 * study->unb[2].vuf);
    ck_assert_ptr_nonnull(strstr(strstr(h, "<table class=\"unbalance\">"), want));
    free(h);
    kl_study_free(study);
    kl_errors_free(&err);
}
END_TEST

START_TEST(with_a_plan)
{
    /* A plan of two moves, built by hand: the moves table names the items
     * (escaped), shows the plan's figures, and the before/after plot joins
     * the page as a fourth SVG. */
    fixture x;
    kl_errors err;
    kl_status st;
    build(&x, 1);
    kl_errors_init(&err);
    kl_rebalance_plan *plan = NULL;
    ck_assert_int_eq(kl_rebalance_plan_alloc(2, 2, &plan), KL_OK);
    kl_rephase_item items[2] = {{.kind = KL_ITEM_LATERAL, .name = "tap<'3'>", .section = 2},
                                {.kind = KL_ITEM_LOAD, .name = "shop&co", .load = 0}};
    kl_rephaser rp = {.nitems = 2, .items = items};
    plan->nlevels = 1;
    plan->level[0] = (kl_load_level){1, 1};
    kl_rebalance_summary before = {.converged = 1, .i_head = {100, 80, 90}, .i_residual = 17.32,
                                   .vuf_max = 0.0280, .v_min_pu = 0.955};
    plan->before[0] = before;
    plan->nsteps = 2;
    plan->steps[0] = (kl_plan_step){.item = 0, .from_phases = KL_PH_A, .to_phases = KL_PH_B,
                                    .voltage_ok = 1};
    plan->steps[0].after[0] = before;
    plan->steps[0].after[0].i_residual = 9.5;
    plan->steps[1] = (kl_plan_step){.item = 1, .from_phases = KL_PH_A, .to_phases = KL_PH_C,
                                    .voltage_ok = 1};
    plan->steps[1].after[0] = before;
    plan->steps[1].after[0].i_residual = 3.25;
    plan->steps[1].after[0].vuf_max = 0.0150;
    plan->after[0] = plan->steps[1].after[0];
    x.rin.plan = plan;
    x.rin.rephaser = &rp;
    char *h = render(&x.rin, &st, &err);
    ck_assert_int_eq(st, KL_OK);
    ck_assert_int_eq(count(h, "<svg "), 5);
    ck_assert_ptr_nonnull(strstr(h, "<table class=\"moves\">"));
    ck_assert_ptr_nonnull(strstr(h, "<td class=\"n\">tap&lt;&#39;3&#39;&gt;</td><td class=\"n\">lateral"
                                    "</td><td class=\"n\">a &rarr; b</td>"));
    ck_assert_ptr_nonnull(strstr(h, "<td class=\"n\">shop&amp;co</td>"));
    ck_assert_ptr_nonnull(strstr(h, "residual 17.3 A before, 3.2 A after"));
    ck_assert_ptr_nonnull(strstr(h, "worst voltage unbalance 2.80 % before, 1.50 % after"));
    ck_assert_ptr_null(strstr(h, "No rebalancing plan"));
    free(h);
    /* a plan without its rephaser, or without levels, is refused, not drawn from garbage */
    x.rin.rephaser = NULL;
    kl_errors_clear(&err);
    h = render(&x.rin, &st, &err);
    ck_assert_int_eq(st, KL_EARG);
    free(h);
    x.rin.rephaser = &rp;
    plan->nlevels = 0;
    kl_errors_clear(&err);
    h = render(&x.rin, &st, &err);
    ck_assert_int_eq(st, KL_EARG);
    free(h);
    kl_rebalance_plan_free(plan);
    kl_errors_free(&err);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("report_html");
    TCase *tc = tcase_create("core");
    tcase_add_loop_test(tc, hostile_names_render_as_text, 0, 2);
    tcase_add_loop_test(tc, every_part_present, 0, 2);
    tcase_add_test(tc, unbalance_table_figures);
    tcase_add_test(tc, neutral_table_figures);
    tcase_add_loop_test(tc, map_by_each_index, 0, 6);
    tcase_add_test(tc, bad_arguments);
    tcase_add_test(tc, write_failure_reported);
    tcase_add_loop_test(tc, allocation_failures, 0, 2);
    tcase_add_test(tc, progress_reported);
    tcase_add_test(tc, tree_layout_layered);
    tcase_add_test(tc, with_the_study);
    tcase_add_test(tc, with_a_plan);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
