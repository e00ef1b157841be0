/* kl_numfmt_fixed and kl_numfmt_general write numbers exactly as the C
 * library's printf "%.Nf" and "%.Ng" (C11 7.21.6.1, glibc's exact
 * binary-to-decimal conversion as the reference), and kl_numfmt_put as
 * fprintf with the table formats (a prefix, a width, a suffix): every output file's figures go through it, and the golden
 * files compare them byte for byte.  Checked on values of every magnitude,
 * both signs, both zeros, values a hair either side of a rounding half, exact
 * halves (ties), the edges of the fast path (2^40 after scaling), subnormals,
 * huge values and non-finite ones. */
#define _GNU_SOURCE /* open_memstream */
#include <check.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "kl_report.h"

static uint64_t rng = 0x9e3779b97f4a7c15ULL;

static uint64_t next(void)
{
    rng ^= rng << 13; /* xorshift64 (Marsaglia 2003) */
    rng ^= rng >> 7;
    rng ^= rng << 17;
    return rng;
}

static void same(double x, int prec)
{
    char want[400], got[400];
    int nw = snprintf(want, sizeof want, "%.*f", prec, x);
    int ng = kl_numfmt_fixed(got, sizeof got, x, prec);
    ck_assert_msg(nw == ng && strcmp(want, got) == 0, "%%.%df of %a: printf \"%s\", ours \"%s\"",
                  prec, x, want, got);
    nw = snprintf(want, sizeof want, "%.*g", prec, x);
    ng = kl_numfmt_general(got, sizeof got, x, prec);
    ck_assert_msg(nw == ng && strcmp(want, got) == 0, "%%.%dg of %a: printf \"%s\", ours \"%s\"",
                  prec, x, want, got);
}

/* kl_numfmt_put against fprintf, through a memory stream. */
static void same_put(const char *fmt, double x)
{
    char want[512], *got = NULL;
    size_t len = 0;
    snprintf(want, sizeof want, fmt, x);
    FILE *o = open_memstream(&got, &len);
    ck_assert_ptr_nonnull(o);
    kl_numfmt_put(o, fmt, x);
    fclose(o);
    ck_assert_msg(strcmp(want, got) == 0, "format \"%s\" of %a: printf \"%s\", ours \"%s\"", fmt,
                  x, want, got);
    free(got);
}

START_TEST(test_put)
{
    static const char *F[] = { "%.6f", "%.8g", " %8.4f", " %9.2f", "  %7.1f %%", "%12.3g|",
                               "%-8.2f", "%08.3f", "%+.2f", "%.10f", "%.2e", "x%5.0f" };
    for (size_t f = 0; f < sizeof F / sizeof F[0]; f++)
        for (int i = 0; i < 2000; i++) {
            double m = (double)(next() >> 11) * 0x1p-53, e = (double)(next() % 16) - 7.0;
            same_put(F[f], (next() & 1 ? -1.0 : 1.0) * m * pow(10.0, e));
        }
}
END_TEST

START_TEST(test_special)
{
    static const double v[] = { 0.0, -0.0, 0.5, 1.5, 2.5, -0.5, -2.5, 0.125, 0.375, 1e-7,
                                -1e-7, 4.9999995e-7, 5e-7, 0.0000005, 123456.0000005,
                                0x1p40, 0x1p40 / 1e6, 0x1p40 / 1e6 - 0x1p-20, 1099511.627776,
                                9007199254740993.0, 1e300, -1e300, 5e-324, 2.2250738585072014e-308,
                                1.0 / 3.0, 2.0 / 3.0, 0.999999999, 9.9999995, 99.9999995,
                                INFINITY, -INFINITY, NAN };
    for (size_t i = 0; i < sizeof v / sizeof v[0]; i++)
        for (int p = 0; p <= 9; p++)
            same(v[i], p);
}
END_TEST

/* Random bit patterns (every exponent) and random values of the sizes
 * feeders carry (1e-6 to 1e7), each at every precision. */
START_TEST(test_random)
{
    for (int i = 0; i < 50000; i++) {
        double x;
        uint64_t b = next();
        memcpy(&x, &b, sizeof x);
        same(x, (int)(next() % 10));
        double m = (double)(next() >> 11) * 0x1p-53, e = (double)(next() % 14) - 6.0;
        x = (next() & 1 ? -1.0 : 1.0) * m * pow(10.0, e);
        same(x, (int)(next() % 10));
    }
}
END_TEST

/* Values next to a rounding half at the printed precision: k + 1/2 for
 * decimals, nudged by a few ulps up and down, where a careless fast path
 * rounds the wrong way. */
START_TEST(test_near_half)
{
    for (int i = 0; i < 20000; i++) {
        int p = (int)(next() % 10);
        double k = (double)(next() % 100000000), scale = pow(10.0, -p);
        same(k * pow(10.0, (double)(next() % 8)), p); /* round numbers: zeros to strip */
        double x = (k + 0.5) * scale;
        for (int u = -4; u <= 4; u++) {
            double y = x;
            for (int s = 0; s < abs(u); s++)
                y = nextafter(y, u > 0 ? INFINITY : -INFINITY);
            same(y, p);
            same(-y, p);
        }
    }
}
END_TEST

int main(void)
{
    Suite *s = suite_create("numfmt");
    TCase *tc = tcase_create("as printf");
    tcase_set_timeout(tc, 600); /* the sanitizer builds are slow */
    tcase_add_test(tc, test_special);
    tcase_add_test(tc, test_random);
    tcase_add_test(tc, test_near_half);
    tcase_add_test(tc, test_put);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
