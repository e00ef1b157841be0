/* kilter: unit parsing and printing conversions (units.h).
 *
 * A quantity is a number (or a complex "re + jim") followed by a unit from the
 * quantity's table; the factor takes it to SI.  Factors for US customary units
 * are the exact definitions of NIST SP 811 (2008), appendix B. */
#include <ctype.h>
#include <math.h>
#include <stdio.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include "kilter/units.h"

typedef struct { const char *name; double factor; } unit_def;

#define U_END {NULL, 0}
static const unit_def u_length[] = {
    {"m", 1}, {"km", 1e3}, {"mm", 1e-3}, {"cm", 1e-2}, {"ft", KL_M_PER_FT},
    {"kft", 1e3 * KL_M_PER_FT}, {"mi", KL_M_PER_MI}, {"in", KL_M_PER_IN},
    {"mil", KL_M_PER_MIL}, U_END};
static const unit_def u_area[] = {{"kcmil", KL_M2_PER_KCMIL}, {"mm2", 1e-6}, U_END};
static const unit_def u_ohm_len[] = {
    {"ohm/m", 1}, {"ohm/km", 1e-3}, {"ohm/mi", 1 / KL_M_PER_MI},
    {"ohm/kft", 1 / (1e3 * KL_M_PER_FT)}, {"ohm/ft", 1 / KL_M_PER_FT}, U_END};
static const unit_def u_s_len[] = {
    {"S/m", 1}, {"uS/m", 1e-6}, {"uS/km", 1e-9}, {"uS/mi", 1e-6 / KL_M_PER_MI},
    {"uS/kft", 1e-6 / (1e3 * KL_M_PER_FT)}, {"uS/ft", 1e-6 / KL_M_PER_FT}, U_END};
static const unit_def u_ohm[] = {{"ohm", 1}, U_END};
static const unit_def u_volt[] = {{"V", 1}, {"kV", 1e3}, U_END};
static const unit_def u_power[] = {
    {"W", 1}, {"kW", 1e3}, {"MW", 1e6}, {"var", 1}, {"kvar", 1e3}, {"Mvar", 1e6},
    {"VA", 1}, {"kVA", 1e3}, {"MVA", 1e6}, U_END};
static const unit_def u_current[] = {{"A", 1}, {"kA", 1e3}, U_END};
static const unit_def u_freq[] = {{"Hz", 1}, U_END};
static const unit_def u_rho[] = {{"ohm-m", 1}, U_END};
static const unit_def u_temp[] = {{"degC", 1}, U_END};
static const unit_def u_share[] = {{"%", 0.01}, {"pu", 1}, {"", 1}, U_END};
static const unit_def u_angle[] = {{"deg", 1}, U_END};
static const unit_def u_pu[] = {{"pu", 1}, {"", 1}, U_END};
static const unit_def u_number[] = {{"", 1}, U_END};

static const struct {
    const unit_def *units;
    const char *name;
    const char *expected;
} quantities[KL_Q_COUNT] = {
    [KL_Q_LENGTH] = {u_length, "length", "m, km, mm, cm, ft, kft, mi, in, mil"},
    [KL_Q_AREA] = {u_area, "area", "kcmil, mm2"},
    [KL_Q_OHM_PER_LENGTH] = {u_ohm_len, "impedance per length", "ohm/m, ohm/km, ohm/mi, ohm/kft, ohm/ft"},
    [KL_Q_S_PER_LENGTH] = {u_s_len, "susceptance per length", "S/m, uS/m, uS/km, uS/mi, uS/kft, uS/ft"},
    [KL_Q_IMPEDANCE] = {u_ohm, "impedance", "ohm"},
    [KL_Q_VOLTAGE] = {u_volt, "voltage", "V, kV"},
    [KL_Q_POWER] = {u_power, "power", "W, kW, MW, var, kvar, Mvar, VA, kVA, MVA"},
    [KL_Q_CURRENT] = {u_current, "current", "A, kA"},
    [KL_Q_FREQUENCY] = {u_freq, "frequency", "Hz"},
    [KL_Q_RESISTIVITY] = {u_rho, "resistivity", "ohm-m"},
    [KL_Q_TEMPERATURE] = {u_temp, "temperature", "degC"},
    [KL_Q_SHARE] = {u_share, "share", "%, pu or a plain number"},
    [KL_Q_ANGLE] = {u_angle, "angle", "deg"},
    [KL_Q_PER_UNIT] = {u_pu, "per-unit value", "pu or a plain number"},
    [KL_Q_NUMBER] = {u_number, "number", "a plain number without a unit"},
};

const char *kl_units_expected(kl_quantity q)
{
    return q < KL_Q_COUNT ? quantities[q].expected : "";
}

const char *kl_units_quantity_name(kl_quantity q)
{
    return q < KL_Q_COUNT ? quantities[q].name : "";
}

static const char *skip_ws(const char *p)
{
    while (*p == ' ' || *p == '\t')
        p++;
    return p;
}

/* Exact value of m * 10^e when both factors are exact doubles (m <= 2^53,
 * |e| <= 22): one IEEE multiplication or division then rounds correctly, so
 * the result is the one strtod gives (Clinger, "How to read floating point
 * numbers accurately", PLDI 1990, the fast path).  Returns 0 otherwise. */
static int exact_decimal(uint64_t m, int e, int neg, double *v)
{
    static const double p10[23] = {1e0,  1e1,  1e2,  1e3,  1e4,  1e5,  1e6,  1e7,
                                   1e8,  1e9,  1e10, 1e11, 1e12, 1e13, 1e14, 1e15,
                                   1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22};
    double x;
    if (m > ((uint64_t)1 << 53) || e < -22 || e > 22)
        return 0;
    x = (double)m;
    x = e < 0 ? x / p10[-e] : x * p10[e];
    *v = neg ? -x : x;
    return 1;
}

/* Decimal number: [sign] digits [. digits] [e [sign] digits].  Scanned by hand
 * first so that strtod's extras (hex, "inf", "nan") are refused; plain values
 * of up to 15 significant digits are converted on the way (exact_decimal),
 * strtod does the rest. */
static const char *scan_number(const char *p, double *v)
{
    const char *s = p;
    char *end;
    int digits = 0, neg = 0, e10 = 0, exact = 1;
    uint64_t m = 0;
    if (*p == '+' || *p == '-')
        neg = *p++ == '-';
    for (; isdigit((unsigned char)*p); p++, digits++) {
        exact &= m < 100000000000000000u;
        m = m * 10 + (uint64_t)(*p - '0');
    }
    if (*p == '.')
        for (p++; isdigit((unsigned char)*p); p++, digits++, e10--) {
            exact &= m < 100000000000000000u;
            m = m * 10 + (uint64_t)(*p - '0');
        }
    if (!digits)
        return NULL;
    if ((*p == 'e' || *p == 'E') &&
        (isdigit((unsigned char)p[1]) ||
         ((p[1] == '+' || p[1] == '-') && isdigit((unsigned char)p[2])))) {
        int eneg = p[1] == '-', x = 0;
        p += isdigit((unsigned char)p[1]) ? 1 : 2;
        for (; isdigit((unsigned char)*p); p++)
            if (x < 10000)
                x = x * 10 + (*p - '0');
        e10 += eneg ? -x : x;
    }
    /* "0x..." goes to strtod, which reads it as hex, so that it is refused
     * below as before rather than read as 0 followed by a unit */
    if (exact && *p != 'x' && *p != 'X' && exact_decimal(m, e10, neg, v))
        return p;
    *v = strtod(s, &end);
    if (end != p)
        return NULL;
    return p;
}

/* "[re] [(+|-) j im]" or "[+|-] j im". */
static const char *scan_complex(const char *p, double *re, double *im, int *is_complex)
{
    const char *q;
    int neg = 0;
    *re = *im = 0;
    *is_complex = 0;
    q = p;
    if (*q == '+' || *q == '-')
        neg = *q++ == '-';
    q = skip_ws(q);
    if (*q != 'j') {
        p = scan_number(p, re);
        if (!p)
            return NULL;
        q = skip_ws(p);
        if (*q != '+' && *q != '-')
            return p;
        neg = *q == '-';
        q = skip_ws(q + 1);
        if (*q != 'j')
            return p; /* let the unit check report the stray sign */
    }
    q = skip_ws(q + 1);
    if (*q == '+' || *q == '-')
        return NULL;
    p = scan_number(q, im);
    if (!p)
        return NULL;
    if (neg)
        *im = -*im;
    *is_complex = 1;
    return p;
}

static const unit_def *find_unit(const unit_def *t, const char *u, size_t len)
{
    for (; t->name; t++)
        if (strlen(t->name) == len && memcmp(t->name, u, len) == 0)
            return t;
    return NULL;
}

static int takes_plain(kl_quantity q)
{
    return find_unit(quantities[q].units, "", 0) != NULL;
}

kl_status kl_units_parse(const char *text, kl_quantity q, int allow_complex,
                         kl_complex *value, char *why, size_t n)
{
    double re, im;
    int cplx;
    const char *p, *u, *end;
    const unit_def *d;
    if (q >= KL_Q_COUNT)
        return KL_EARG;
    p = scan_complex(skip_ws(text), &re, &im, &cplx);
    if (!p) {
        snprintf(why, n, "expected a number%s %s %s, got '%s'",
                 allow_complex ? " (or a complex value like '0.3 + j2.1')" : "",
                 takes_plain(q) ? "optionally followed by" : "followed by one of", quantities[q].expected, text);
        return KL_EINPUT;
    }
    if (cplx && !allow_complex) {
        snprintf(why, n, "expected a real %s, got the complex value '%s'",
                 quantities[q].name, text);
        return KL_EINPUT;
    }
    u = skip_ws(p);
    end = u + strlen(u);
    while (end > u && (end[-1] == ' ' || end[-1] == '\t'))
        end--;
    d = find_unit(quantities[q].units, u, (size_t)(end - u));
    if (!d) {
        if (end == u)
            snprintf(why, n, "missing unit (%s): write one of %s after the number",
                     quantities[q].name, quantities[q].expected);
        else if (q == KL_Q_NUMBER)
            snprintf(why, n, "expected a plain number, got '%s'", text);
        else
            snprintf(why, n, "unknown %s unit '%.*s': expected one of %s",
                     quantities[q].name, (int)(end - u), u, quantities[q].expected);
        return KL_EINPUT;
    }
    re *= d->factor;
    im *= d->factor;
    if (!isfinite(re) || !isfinite(im)) {
        snprintf(why, n, "the value '%s' is out of range", text);
        return KL_EINPUT;
    }
    *value = re + I * im;
    return KL_OK;
}

kl_status kl_units_parse_real(const char *text, kl_quantity q, double *value,
                              char *why, size_t n)
{
    kl_complex z;
    kl_status s = kl_units_parse(text, q, 0, &z, why, n);
    if (s == KL_OK)
        *value = creal(z);
    return s;
}

double kl_units_long_length(kl_unit_system u, double m)
{
    return u == KL_UNITS_SI ? m / 1e3 : m / KL_M_PER_MI;
}

const char *kl_units_long_length_name(kl_unit_system u)
{
    return u == KL_UNITS_SI ? "km" : "mi";
}

double kl_units_short_length(kl_unit_system u, double m)
{
    return u == KL_UNITS_SI ? m : m / KL_M_PER_FT;
}

const char *kl_units_short_length_name(kl_unit_system u)
{
    return u == KL_UNITS_SI ? "m" : "ft";
}
