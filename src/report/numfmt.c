/* kilter: numbers as printf's "%.Nf" and "%.Ng" write them, without
 * printf's multi-precision path.
 *
 * printf rounds the exact binary value of x to N decimals (to nearest, ties to
 * even; C11 7.21.6.1).  With y = |x| 10^N computed in double (10^N exact for
 * N <= 15, one rounding), |y - exact| is at most half an ulp of y, under 2^-13
 * while y < 2^40; k + 1/2 is a double there and rounding is monotonic, so y
 * lies on the same side of every half as the exact value or on the half
 * itself, and the digits of round(y) are printf's whenever the fraction of y
 * is not one half (a margin of 2^-12 is kept all the same).
 * Near a half (a possible tie or a close call), for y of 2^40 or more, N over
 * 15 or a value that is not finite, printf itself writes the number: the
 * output is byte for byte printf's in every case (tests/test_numfmt.c).
 * "%.Pg" is "%.(P-1-X)f" with trailing zeros removed when the exponent X of
 * the value rounded to P digits is in [-4, P) (C11 7.21.6.1), X found from
 * the fixed output itself. */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>
#include "kl_report.h"

static const double P10[16] = { 1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, /* exact */
                                1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15 };

int kl_numfmt_fixed(char *buf, size_t len, double x, int prec)
{
    if (prec < 0 || prec > 15 || !isfinite(x) || len < 64)
        return snprintf(buf, len, "%.*f", prec < 0 ? 0 : prec, x);
    double ax = fabs(x), y = ax * P10[prec];
    if (!(y < 0x1p40))
        return snprintf(buf, len, "%.*f", prec, x);
    double fl = floor(y), frac = y - fl; /* exact: y < 2^40 */
    if (fabs(frac - 0.5) <= 0x1p-12)
        return snprintf(buf, len, "%.*f", prec, x);
    uint64_t n = (uint64_t)fl + (frac > 0.5); /* below 2^40 + 1 */
    char digits[24];
    int nd = 0;
    do {
        digits[nd++] = (char)('0' + n % 10);
        n /= 10;
    } while (n > 0);
    while (nd < prec + 1) /* at least one digit before the point */
        digits[nd++] = '0';
    int o = 0;
    if (signbit(x)) /* printf keeps the sign of a negative value rounded to zero */
        buf[o++] = '-';
    for (int i = nd - 1; i >= prec; i--)
        buf[o++] = digits[i];
    if (prec > 0) {
        buf[o++] = '.';
        for (int i = prec - 1; i >= 0; i--)
            buf[o++] = digits[i];
    }
    buf[o] = 0;
    return o;
}

/* Exponent of the first nonzero digit of a fixed-point string ("-0.0012"
 * gives -3); INT32_MIN when every digit is zero. */
static int lead_exp(const char *s)
{
    const char *p = s + (*s == '-'), *dot = strchr(p, '.');
    int ilen = dot ? (int)(dot - p) : (int)strlen(p);
    for (int i = 0; i < ilen; i++)
        if (p[i] != '0')
            return ilen - 1 - i;
    for (int i = 1; dot && dot[i]; i++)
        if (dot[i] != '0')
            return -i;
    return INT32_MIN;
}

int kl_numfmt_general(char *buf, size_t len, double x, int prec)
{
    int P = prec == 0 ? 1 : prec;
    if (prec < 0 || !isfinite(x) || x == 0 || len < 64)
        return snprintf(buf, len, "%.*g", prec < 0 ? 6 : prec, x);
    int X = (int)floor(log10(fabs(x))); /* a guess: checked on the rounded digits below */
    for (int tries = 0; tries < 3; tries++) {
        if (X < -4 || X >= P || P - 1 - X > 15)
            break;
        int n = kl_numfmt_fixed(buf, len, x, P - 1 - X), e = lead_exp(buf);
        if (e != X) { /* the guess was off, or rounding carried to the next power */
            X = e;
            continue;
        }
        if (strchr(buf, '.')) { /* no '#' flag: trailing zeros and a bare point go */
            while (buf[n - 1] == '0')
                buf[--n] = 0;
            if (buf[n - 1] == '.')
                buf[--n] = 0;
        }
        return n;
    }
    return snprintf(buf, len, "%.*g", prec, x);
}

/* A format printing one double, prefix "%" [width] "." digit (f|g) suffix,
 * no flags and no other conversion; 0 when fmt is not of that form. */
typedef struct { int plen, width, prec, general; const char *suffix; } num_spec;

static int num_spec_parse(const char *fmt, num_spec *sp)
{
    const char *p = strchr(fmt, '%');
    if (!p)
        return 0;
    sp->plen = (int)(p - fmt);
    p++;
    sp->width = 0;
    while (*p >= '0' && *p <= '9') {
        if (*p == '0' && sp->width == 0)
            return 0; /* the 0 flag */
        sp->width = 10 * sp->width + (*p++ - '0');
        if (sp->width > 60)
            return 0;
    }
    if (*p != '.' || !(p[1] >= '0' && p[1] <= '9') || (p[2] != 'f' && p[2] != 'g'))
        return 0;
    sp->prec = p[1] - '0';
    sp->general = p[2] == 'g';
    sp->suffix = p + 3;
    return strchr(sp->suffix, '%') == NULL;
}

void kl_numfmt_put(FILE *o, const char *fmt, double x)
{
    num_spec sp;
    if (!num_spec_parse(fmt, &sp)) {
        fprintf(o, fmt, x);
        return;
    }
    char buf[400]; /* "%.9f" of DBL_MAX takes 320 bytes */
    int n = sp.general ? kl_numfmt_general(buf, sizeof buf, x, sp.prec)
                       : kl_numfmt_fixed(buf, sizeof buf, x, sp.prec);
    if (sp.plen > 0)
        fwrite(fmt, 1, (size_t)sp.plen, o);
    for (int i = n; i < sp.width; i++)
        fputc(' ', o);
    if (n > 0)
        fwrite(buf, 1, (size_t)n, o);
    fputs(sp.suffix, o);
}
