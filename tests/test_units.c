/* Unit parsing against exact definitions (NIST SP 811, 2008 edition, appendix B). */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "kilter/units.h"

static double parse(const char *text, kl_quantity q)
{
    double v = NAN;
    char why[300];
    ck_assert_msg(kl_units_parse_real(text, q, &v, why, sizeof why) == KL_OK, "%s: %s", text, why);
    return v;
}

static void near(double got, double want, double rel)
{
    ck_assert_msg(fabs(got - want) <= rel * fabs(want), "got %.17g, want %.17g", got, want);
}

START_TEST(lengths_exact)
{
    near(parse("1 ft", KL_Q_LENGTH), 0.3048, 1e-15);       /* NIST SP 811 B.8: 1 ft = 0.3048 m exactly */
    near(parse("1 mi", KL_Q_LENGTH), 1609.344, 1e-15);     /* NIST SP 811 B.8: 1 mi = 1.609344 km exactly */
    near(parse("1 in", KL_Q_LENGTH), 0.0254, 1e-15);       /* NIST SP 811 B.8: 1 in = 2.54 cm exactly */
    near(parse("1 mil", KL_Q_LENGTH), 2.54e-5, 1e-15);     /* NIST SP 811 B.8: 1 mil = 0.001 in */
    near(parse("5280 ft", KL_Q_LENGTH), parse("1 mi", KL_Q_LENGTH), 1e-15); /* 1 mi = 5280 ft (definition) */
    near(parse("2.5 km", KL_Q_LENGTH), 2500, 1e-15);       /* SI prefix k = 1e3 */
    near(parse("12 mm", KL_Q_LENGTH), 0.012, 1e-15);
}
END_TEST

START_TEST(area_kcmil)
{
    /* 1 kcmil = 1000 circular mils = 1000 * pi/4 * (2.54e-5 m)^2 = 0.506707479 mm2
     * (NIST SP 811 B.8, circular mil = 5.067075e-10 m2) */
    near(parse("1 kcmil", KL_Q_AREA), 1000 * 3.14159265358979323846 / 4 * 2.54e-5 * 2.54e-5, 1e-9);
    near(parse("1 kcmil", KL_Q_AREA), 0.506707479e-6, 1e-9);
}
END_TEST

START_TEST(per_length)
{
    /* 0.1859 ohm/mi in ohm/m: divide by 1609.344 (exact mile) */
    near(parse("0.1859 ohm/mi", KL_Q_OHM_PER_LENGTH), 0.1859 / 1609.344, 1e-15);
    near(parse("0.5 ohm/kft", KL_Q_OHM_PER_LENGTH), 0.5 / 304.8, 1e-15);
    near(parse("0.3 ohm/km", KL_Q_OHM_PER_LENGTH), 0.3e-3, 1e-15);
    near(parse("5.6711 uS/mi", KL_Q_S_PER_LENGTH), 5.6711e-6 / 1609.344, 1e-15);
}
END_TEST

START_TEST(complex_values)
{
    kl_complex z;
    char why[300];
    ck_assert_int_eq(kl_units_parse("1.3425 - j0.0143 ohm/mi", KL_Q_OHM_PER_LENGTH, 1, &z, why, sizeof why), KL_OK);
    near(creal(z), 1.3425 / 1609.344, 1e-15);
    near(cimag(z), -0.0143 / 1609.344, 1e-15);
    ck_assert_int_eq(kl_units_parse("160 + j110 kVA", KL_Q_POWER, 1, &z, why, sizeof why), KL_OK);
    near(creal(z), 160e3, 1e-15);
    near(cimag(z), 110e3, 1e-15);
    ck_assert_int_eq(kl_units_parse("j2.1 ohm", KL_Q_IMPEDANCE, 1, &z, why, sizeof why), KL_OK);
    ck_assert(creal(z) == 0 && cimag(z) == 2.1);
    ck_assert_int_eq(kl_units_parse("-j5 kvar", KL_Q_POWER, 1, &z, why, sizeof why), KL_OK);
    near(cimag(z), -5e3, 1e-15);
    /* a complex value where a real one is expected */
    ck_assert_int_eq(kl_units_parse("1 + j1 ohm", KL_Q_IMPEDANCE, 0, &z, why, sizeof why), KL_EINPUT);
    ck_assert_ptr_nonnull(strstr(why, "complex"));
}
END_TEST

START_TEST(share_and_plain)
{
    near(parse("0.625 %", KL_Q_SHARE), 0.00625, 1e-15); /* percent = 1/100 (definition) */
    near(parse("0.5", KL_Q_SHARE), 0.5, 1e-15);
    near(parse("1.02 pu", KL_Q_PER_UNIT), 1.02, 1e-15);
    near(parse("12.47 kV", KL_Q_VOLTAGE), 12470, 1e-15);
    near(parse("2.5 MVA", KL_Q_POWER), 2.5e6, 1e-15);
}
END_TEST

START_TEST(rejected)
{
    static const char *const bad[] = {"", "ft", "12", "12 furlong", "nan ft", "inf ft", "0x10 ft",
                                      "1e999 ft", "1..2 ft", "- 3 ft", "1 + j ohm", "12 ft ft"};
    size_t i;
    for (i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        double v;
        char why[300] = "";
        ck_assert_msg(kl_units_parse_real(bad[i], KL_Q_LENGTH, &v, why, sizeof why) == KL_EINPUT,
                      "'%s' accepted", bad[i]);
        ck_assert_msg(why[0], "no reason for '%s'", bad[i]);
    }
    {
        double v;
        char why[300];
        ck_assert_int_eq(kl_units_parse_real("12", KL_Q_LENGTH, &v, why, sizeof why), KL_EINPUT);
        ck_assert_ptr_nonnull(strstr(why, "missing unit"));
        ck_assert_ptr_nonnull(strstr(why, "ft")); /* names the expected units */
        ck_assert_int_eq(kl_units_parse_real("3 furlong", KL_Q_LENGTH, &v, why, sizeof why), KL_EINPUT);
        ck_assert_ptr_nonnull(strstr(why, "furlong"));
        ck_assert_ptr_nonnull(strstr(why, "mi"));
    }
}
END_TEST

START_TEST(printing)
{
    near(kl_units_long_length(KL_UNITS_US, 1609.344), 1, 1e-15);
    near(kl_units_long_length(KL_UNITS_SI, 1500), 1.5, 1e-15);
    near(kl_units_short_length(KL_UNITS_US, 0.3048), 1, 1e-15);
}
END_TEST

/* Plain numbers must read exactly as the C library's strtod reads them (a
 * correctly rounded conversion, ISO C11 7.22.1.3 with IEEE 754 arithmetic):
 * the loader converts short decimals itself and must not differ from it by a
 * single bit.  Cases: the fast path's edges (2^53, 10^22), leading zeros,
 * zeros, exponents, more digits than the fast path takes, and random
 * decimals of 1 to 19 digits from a fixed seed. */
static void same_as_strtod(const char *text)
{
    double v = NAN, want = strtod(text, NULL);
    char why[300];
    ck_assert_msg(kl_units_parse_real(text, KL_Q_NUMBER, &v, why, sizeof why) == KL_OK, "%s: %s", text, why);
    /* == is bit equality for finite doubles but for the sign of zero, which
     * the complex value the parser builds (re + I im) does not keep */
    ck_assert_msg(v == want, "%s: got %.17g, strtod %.17g", text, v, want);
}

START_TEST(numbers_as_strtod)
{
    static const char *const fixed[] = {
        "0", "-0", "+0.0", "1", "0.1", "0.3", "-2.5", "12.47", "0.306", "0.00814", "1.7241e-8",
        "9007199254740992", "9007199254740993", "9007199254740991.5", "1e22", "1e23", "1e-22",
        "1e-23", "123456789012345678", "0.000000000000000000000000001", "4.9e-324", "2.2250738585072014e-308",
        "1.7976931348623157e308", "3.14159265358979323846264338327950288", "1E5", "1e+05", "100000000000000000000000",
        ".5", "5.", "-.25e2", "0.1e1", "00012.5000"};
    unsigned long long x = 88172645463325252ull; /* xorshift64 (Marsaglia 2003), fixed seed */
    char buf[64];
    size_t i;
    int k;
    for (i = 0; i < sizeof fixed / sizeof fixed[0]; i++)
        same_as_strtod(fixed[i]);
    for (k = 0; k < 20000; k++) {
        int nd, dot, j, n = 0;
        x ^= x << 13, x ^= x >> 7, x ^= x << 17;
        nd = 1 + (int)(x % 19);
        dot = (int)((x >> 8) % (unsigned)(nd + 1));
        if (x >> 20 & 1)
            buf[n++] = '-';
        for (j = 0; j < nd; j++) {
            if (j == dot && j > 0)
                buf[n++] = '.';
            x ^= x << 13, x ^= x >> 7, x ^= x << 17;
            buf[n++] = (char)('0' + x % 10);
        }
        if (x >> 30 & 1)
            n += snprintf(buf + n, sizeof buf - (size_t)n, "e%d", (int)((x >> 32) % 61) - 30);
        buf[n] = '\0';
        same_as_strtod(buf);
    }
    {   /* hex is strtod's extra, refused as not a number (ISO C11 7.22.1.3 reads it) */
        double v;
        char why[300] = "";
        ck_assert_int_eq(kl_units_parse_real("0x10", KL_Q_NUMBER, &v, why, sizeof why), KL_EINPUT);
        ck_assert_ptr_nonnull(strstr(why, "expected a number"));
    }
}
END_TEST

int main(void)
{
    Suite *s = suite_create("units");
    TCase *tc = tcase_create("units");
    SRunner *sr;
    int failed;
    tcase_add_test(tc, lengths_exact);
    tcase_add_test(tc, area_kcmil);
    tcase_add_test(tc, per_length);
    tcase_add_test(tc, complex_values);
    tcase_add_test(tc, share_and_plain);
    tcase_add_test(tc, rejected);
    tcase_add_test(tc, printing);
    tcase_add_test(tc, numbers_as_strtod);
    suite_add_tcase(s, tc);
    sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
