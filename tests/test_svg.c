/* Tests of the SVG writer (src/svg.c) and the progress callback (src/progress.c). */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "kl_report.h"
#include "kilter/progress.h"

/* Runs fn into a memory stream and returns the text (caller frees).  Not
 * inlined: GCC 12 then takes the returned text for a pointer into the local
 * `buf` itself (whose address open_memstream keeps) and warns
 * -Wdangling-pointer at every use. */
__attribute__((noinline)) static char *capture(void (*fn)(FILE *, const void *), const void *arg)
{
    char *buf = NULL;
    size_t len = 0;
    FILE *m = open_memstream(&buf, &len);
    ck_assert_ptr_nonnull(m);
    fn(m, arg);
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

static void do_escape(FILE *m, const void *s)
{
    kl_xml_escape(m, s);
}

START_TEST(escape_five_characters)
{
    /* XML 1.0 (5th ed.) section 4.6 predefined entities; the HTML standard's
     * "escaping a string" uses the same for text and attribute values. */
    char *s = capture(do_escape, "a&b<c>d\"e'f");
    ck_assert_str_eq(s, "a&amp;b&lt;c&gt;d&quot;e&#39;f");
    free(s);
}
END_TEST

START_TEST(escape_hostile_name)
{
    char *s = capture(do_escape, "<script>alert(1)</script>");
    ck_assert_str_eq(s, "&lt;script&gt;alert(1)&lt;/script&gt;");
    ck_assert_ptr_null(strchr(s, '<'));
    free(s);
}
END_TEST

START_TEST(escape_control_characters)
{
    /* XML 1.0 section 2.2: C0 controls except tab, LF, CR are not characters
     * of a document; shown as U+FFFD (UTF-8 EF BF BD). Tab is kept. */
    char *s = capture(do_escape, "a\x01" "b\tc");
    ck_assert_str_eq(s, "a\xEF\xBF\xBD" "b\tc");
    free(s);
    s = capture(do_escape, "caf\xC3\xA9"); /* UTF-8 passes through unchanged */
    ck_assert_str_eq(s, "caf\xC3\xA9");
    free(s);
}
END_TEST

static void do_text(FILE *m, const void *s)
{
    kl_svg_text(m, 10, 20, "fill=\"#000\"", s);
    kl_svg_text(m, NAN, 20, "", "never");
}

START_TEST(text_escaped_and_nonfinite_dropped)
{
    char *s = capture(do_text, "x<y");
    ck_assert_int_eq(count(s, "<text"), 1);
    ck_assert_ptr_nonnull(strstr(s, ">x&lt;y</text>"));
    ck_assert_ptr_null(strstr(s, "never"));
    ck_assert_ptr_null(strstr(s, "nan"));
    free(s);
}
END_TEST

static void do_poly(FILE *m, const void *arg)
{
    (void)arg;
    double x[5] = {0, 1, NAN, 3, 4}, y[5] = {0, 1, 2, 3, 4};
    kl_svg_polyline(m, x, y, 5, "stroke=\"#000\"");
}

START_TEST(polyline_breaks_at_missing_points)
{
    char *s = capture(do_poly, NULL);
    ck_assert_int_eq(count(s, "<polyline"), 2);
    ck_assert_ptr_nonnull(strstr(s, "points=\"0.00,0.00 1.00,1.00\""));
    ck_assert_ptr_nonnull(strstr(s, "points=\"3.00,3.00 4.00,4.00\""));
    ck_assert_ptr_null(strstr(s, "nan"));
    free(s);
}
END_TEST

START_TEST(ticks_heckbert)
{
    /* P. S. Heckbert, "Nice numbers for graph labels", Graphics Gems (1990),
     * loose labelling, worked by hand from the published algorithm:
     * [0.93, 1.06], 5 ticks: range nice(0.13) = 0.2, step nice(0.05) = 0.05,
     * graph from floor(0.93/0.05)*0.05 = 0.90 to ceil(1.06/0.05)*0.05 = 1.10. */
    double t[32];
    int n = kl_svg_ticks(0.93, 1.06, 5, t, 32);
    ck_assert_int_eq(n, 5);
    for (int k = 0; k < n; k++)
        ck_assert_double_eq_tol(t[k], 0.90 + 0.05 * k, 1e-12);
    /* [0, 3.7], 8 ticks: range nice(3.7) = 5, step nice(5/7 = 0.714) = 1 -> 0..4. */
    n = kl_svg_ticks(0, 3.7, 8, t, 32);
    ck_assert_int_eq(n, 5);
    ck_assert_double_eq_tol(t[0], 0, 1e-12);
    ck_assert_double_eq_tol(t[4], 4, 1e-12);
    /* [-12, 87], 6 ticks: range nice(99) = 100, step nice(20) = 20 -> -20..100. */
    n = kl_svg_ticks(-12, 87, 6, t, 32);
    ck_assert_int_eq(n, 7);
    ck_assert_double_eq_tol(t[0], -20, 1e-12);
    ck_assert_double_eq_tol(t[6], 100, 1e-12);
    /* an empty or invalid range gives no ticks rather than a loop */
    ck_assert_int_eq(kl_svg_ticks(1, 1, 5, t, 32), 0);
    ck_assert_int_eq(kl_svg_ticks(NAN, 1, 5, t, 32), 0);
    ck_assert_int_eq(kl_svg_ticks(0, INFINITY, 5, t, 32), 0);
}
END_TEST

START_TEST(frame_maps_corners)
{
    kl_svg_frame f = {70, 20, 600, 300, 0, 10, 0.9, 1.1};
    ck_assert_double_eq_tol(kl_svg_fx(&f, 0), 70, 1e-9);
    ck_assert_double_eq_tol(kl_svg_fx(&f, 10), 670, 1e-9);
    /* screen y grows downwards: the data minimum sits at the bottom */
    ck_assert_double_eq_tol(kl_svg_fy(&f, 0.9), 320, 1e-9);
    ck_assert_double_eq_tol(kl_svg_fy(&f, 1.1), 20, 1e-9);
}
END_TEST

static void do_open(FILE *m, const void *s)
{
    kl_svg_open(m, 100, 50, s);
    kl_svg_close(m);
}

START_TEST(svg_title_escaped)
{
    char *s = capture(do_open, "Phasors at bus \"<b>\"");
    ck_assert_ptr_nonnull(strstr(s, "<title>Phasors at bus &quot;&lt;b&gt;&quot;</title>"));
    ck_assert_ptr_nonnull(strstr(s, "aria-label=\"Phasors at bus &quot;&lt;b&gt;&quot;\""));
    ck_assert_int_eq(count(s, "<svg"), 1);
    ck_assert_int_eq(count(s, "</svg>"), 1);
    free(s);
}
END_TEST

static int ncalls;
static long last_done;
static void on_progress(void *ctx, const char *stage, long done, long total)
{
    (void)ctx;
    (void)stage;
    (void)total;
    ncalls++;
    last_done = done;
}

START_TEST(progress_rate_limited)
{
    kl_progress p;
    kl_progress_init(&p, on_progress, NULL, 10);
    ncalls = 0;
    for (long k = 0; k <= 95; k++)
        kl_progress_step(&p, "x", k, 95);
    /* at 0, 10, 20, ..., 90 and the final 95 */
    ck_assert_int_eq(ncalls, 11);
    ck_assert_int_eq(last_done, 95);
    kl_progress_step(NULL, "x", 1, 2); /* no progress record: nothing happens */
    kl_progress_init(&p, NULL, NULL, 0);
    kl_progress_step(&p, "x", 1, 2);
    ck_assert_int_eq(ncalls, 11);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("svg");
    TCase *tc = tcase_create("core");
    tcase_add_test(tc, escape_five_characters);
    tcase_add_test(tc, escape_hostile_name);
    tcase_add_test(tc, escape_control_characters);
    tcase_add_test(tc, text_escaped_and_nonfinite_dropped);
    tcase_add_test(tc, polyline_breaks_at_missing_points);
    tcase_add_test(tc, ticks_heckbert);
    tcase_add_test(tc, frame_maps_corners);
    tcase_add_test(tc, svg_title_escaped);
    tcase_add_test(tc, progress_rate_limited);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
