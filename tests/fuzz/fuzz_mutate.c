/* See fuzz_mutate.h.  The file is read as lines of YAML in the subset feeder
 * files use: a scalar value follows "key: " or "- ", and inside a one-line
 * flow mapping or sequence it ends at ',', '}' or ']'.  A list entry is a
 * line starting with "- " and the lines indented deeper below it.
 *
 * One call applies one to three of:
 *   - a number replaced by an extreme, a boundary, a non-finite value or a
 *     power of ten times itself (the unit after it kept, so it still parses);
 *   - a value replaced by another value of the same file (a bus name where a
 *     construction is expected, a section's "to" set to its "from" ...);
 *   - a value replaced by a word of the format (phases, connections, switch
 *     states) or an odd name;
 *   - a list entry (or any line with what is indented below it) duplicated,
 *     deleted or moved after the next one;
 * and one call in eight is libFuzzer's own byte mutation instead. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "fuzz_mutate.h"
#include "fuzz_run.h"

size_t LLVMFuzzerMutate(uint8_t *data, size_t size, size_t max_size);

#define MAX_FIELDS 4096
#define MAX_LINES 8192

typedef struct {
    size_t at, len;
} span;

typedef struct {
    span field[MAX_FIELDS];
    int nfield;
    span line[MAX_LINES]; /* each with its newline, when it has one */
    int nline;
} layout;

static unsigned next(unsigned *s)
{
    *s = *s * 1664525u + 1013904223u; /* Numerical Recipes' LCG */
    return *s >> 8;
}

static void add_field(layout *y, size_t at, size_t len)
{
    if (y->nfield < MAX_FIELDS && len > 0)
        y->field[y->nfield++] = (span){at, len};
}

/* The scalar values of one line [a, b). */
static void scan_line(layout *y, const uint8_t *d, size_t a, size_t b)
{
    int depth = 0;
    size_t i = a;
    while (i < b) {
        int starts = 0;
        if (d[i] == '{' || d[i] == '[') {
            depth++;
            starts = d[i] == '[';
        } else if (d[i] == '}' || d[i] == ']') {
            depth--;
        } else if (d[i] == ',' && depth > 0) {
            starts = 1;
        } else if (d[i] == ':' && i + 1 < b && d[i + 1] == ' ') {
            starts = 1;
        } else if (d[i] == '-' && i + 1 < b && d[i + 1] == ' ') {
            starts = 1;
        } else if (d[i] == '#' && (i == a || d[i - 1] == ' ')) {
            return;
        }
        i++;
        if (!starts)
            continue;
        while (i < b && d[i] == ' ')
            i++;
        if (i >= b || d[i] == '{' || d[i] == '[' || d[i] == '-')
            continue;
        size_t s = i;
        if (d[i] == '"' || d[i] == '\'') {
            uint8_t q = d[i++];
            while (i < b && d[i] != q)
                i++;
            if (i < b)
                i++;
        } else {
            while (i < b && !(depth > 0 && (d[i] == ',' || d[i] == '}' || d[i] == ']')) &&
                   !(d[i] == ':' && i + 1 < b && d[i + 1] == ' ') && !(d[i] == ' ' && i + 1 < b && d[i + 1] == '#'))
                i++;
        }
        if (i < b && d[i] == ':')
            continue; /* a key, not a value */
        size_t e = i;
        while (e > s && d[e - 1] == ' ')
            e--;
        add_field(y, s, e - s);
    }
}

static void scan(layout *y, const uint8_t *d, size_t n)
{
    size_t a = 0;
    y->nfield = y->nline = 0;
    while (a < n && y->nline < MAX_LINES) {
        size_t b = a;
        while (b < n && d[b] != '\n')
            b++;
        scan_line(y, d, a, b);
        y->line[y->nline++] = (span){a, (b < n ? b + 1 : b) - a};
        a = b + 1;
    }
}

static size_t indent(const uint8_t *d, span l)
{
    size_t k = 0;
    while (k < l.len && d[l.at + k] == ' ')
        k++;
    return k;
}

/* The line `i` and the lines indented deeper below it ("- " counts as
 * indentation for what follows a list entry). */
static span block(const layout *y, const uint8_t *d, int i)
{
    size_t ind = indent(d, y->line[i]);
    span s = y->line[i];
    for (int j = i + 1; j < y->nline; j++) {
        span l = y->line[j];
        if (l.len > 1 && indent(d, l) <= ind)
            break;
        s.len = l.at + l.len - s.at;
    }
    return s;
}

/* Replaces [at, at+len) of d (size n) by r[0 .. rlen); 0 when it does not fit. */
static size_t splice(uint8_t *d, size_t n, size_t max, size_t at, size_t len, const void *r, size_t rlen)
{
    if (n - len + rlen > max)
        return 0;
    memmove(d + at + rlen, d + at + len, n - at - len);
    memcpy(d + at, r, rlen);
    return n - len + rlen;
}

static const char *const extremes[] = {
    "0", "-0", "-1", "1", "1e300", "-1e300", "1e-300", "1e308", "1e-320", "nan", "inf", "-inf",
    "1e15", "1e9", "2147483647", "2147483648", "-2147483649", "4294967296", "0.5", "0.0001", "99999",
    "360", "-360", "720", "16", "17", "-16", "-17", "32", "1e-9", "0x10", "1_000", ".5", "5.", "+3",
};
static const char *const words[] = {
    "abc", "a", "b", "c", "ab", "bc", "ca", "ac", "abcn", "n", "", "aa", "cba", "d",
    "open", "closed", "wye", "delta", "grounded-wye", "open-wye", "open-delta", "automatic", "manual",
    "constant-power", "constant-current", "constant-impedance", "overhead", "underground",
    "concentric-neutral", "tape-shielded", "us", "si", "true", "false", "~", "null", "\"\"",
    "x", "sub", "\"a b\"", "\"\\u0007\"", "\"\x1b[2J\"", "\"caf\xc3\xa9\"", "0 + j0 ohm", "1e300 + j1e300 ohm",
    "nan + jnan ohm", "1 kV", "1 V", "1e300 kV", "0 kV", "60 Hz", "0 Hz", "1e12 Hz", "100 ohm-m", "0 ohm-m",
};

/* A number at the front of the field: replaced by an extreme, or scaled. */
static size_t mutate_number(uint8_t *d, size_t n, size_t max, span f, unsigned *s)
{
    size_t k = 0;
    char buf[64];
    while (k < f.len && strchr("+-0123456789.eE", d[f.at + k]))
        k++;
    if (k == 0)
        return 0;
    if (next(s) % 4 != 0) {
        char num[64];
        size_t m = k < sizeof num - 1 ? k : sizeof num - 1;
        memcpy(num, d + f.at, m);
        num[m] = 0;
        /* mostly a plausible change (x 0.5 .. 2, or a power of ten up to
         * 10^3), now and then far out (10^-12 .. 10^12) or of the other sign */
        unsigned r = next(s) % 8;
        double x = strtod(num, NULL);
        if (r < 4)
            x *= 0.5 + 1.5 * (double)(next(s) % 1000) / 1000.0;
        else if (r < 6)
            x *= pow(10.0, (int)(next(s) % 7) - 3);
        else if (r < 7)
            x *= pow(10.0, (int)(next(s) % 25) - 12);
        else
            x = -x;
        snprintf(buf, sizeof buf, "%.6g", x);
    } else {
        snprintf(buf, sizeof buf, "%s", extremes[next(s) % (sizeof extremes / sizeof *extremes)]);
    }
    return splice(d, n, max, f.at, k, buf, strlen(buf));
}

static size_t mutate_once(uint8_t *d, size_t n, size_t max, unsigned *s)
{
    static layout y; /* a fuzz target's own scratch: one thread */
    scan(&y, d, n);
    if (y.nfield == 0 || y.nline == 0)
        return 0;
    span f = y.field[next(s) % (unsigned)y.nfield];
    switch (next(s) % 10) {
    case 0:
    case 1:
    case 2:
    case 3:
    case 4: {
        /* a numeric field: look a little for one */
        for (int tries = 0; tries < 8 && !strchr("+-0123456789.", d[f.at]); tries++)
            f = y.field[next(s) % (unsigned)y.nfield];
        return mutate_number(d, n, max, f, s);
    }
    case 5: {
        span g = y.field[next(s) % (unsigned)y.nfield];
        char tmp[256];
        if (g.len > sizeof tmp)
            return 0;
        memcpy(tmp, d + g.at, g.len);
        return splice(d, n, max, f.at, f.len, tmp, g.len);
    }
    case 6: {
        const char *w = words[next(s) % (sizeof words / sizeof *words)];
        return splice(d, n, max, f.at, f.len, w, strlen(w));
    }
    case 7: { /* duplicate a block */
        span b = block(&y, d, (int)(next(s) % (unsigned)y.nline));
        if (n + b.len > max || b.len == 0 || d[b.at + b.len - 1] != '\n')
            return 0;
        memmove(d + b.at + b.len, d + b.at, n - b.at);
        return n + b.len;
    }
    case 8: { /* delete a block */
        span b = block(&y, d, (int)(next(s) % (unsigned)y.nline));
        memmove(d + b.at, d + b.at + b.len, n - b.at - b.len);
        return n - b.len;
    }
    default: { /* move a block after the one below it */
        int i = (int)(next(s) % (unsigned)y.nline);
        span b = block(&y, d, i), c;
        int j = i;
        while (j < y.nline && y.line[j].at < b.at + b.len)
            j++;
        if (j >= y.nline)
            return 0;
        c = block(&y, d, j);
        uint8_t *tmp = malloc(b.len);
        if (!tmp)
            return 0;
        memcpy(tmp, d + b.at, b.len);
        memmove(d + b.at, d + c.at, c.len);
        memcpy(d + b.at + c.len, tmp, b.len);
        free(tmp);
        return n;
    }
    }
}

static size_t mutate(uint8_t *data, size_t size, size_t max_size, unsigned *s)
{
    unsigned r = next(s) % 10;
    int times = r < 7 ? 1 : r < 9 ? 2 : 3;
    if (next(s) % 8 == 0)
        return LLVMFuzzerMutate(data, size, max_size);
    for (int t = 0; t < times; t++) {
        size_t m = mutate_once(data, size, max_size, s);
        if (m == 0)
            return t ? size : LLVMFuzzerMutate(data, size, max_size);
        size = m;
    }
    return size;
}

/* Most mutants that do not load are tried again (up to eight times) from the
 * same parent, so that the corpus is bred from feeders that load: the
 * loader's own error paths are fuzz_load's to explore.  One mutant in eight is
 * kept whether it loads or not.  (libFuzzer 14 has no way for the target to
 * refuse an input, and the coverage of these trial loads is not counted: the
 * counters are reset before each run.) */
size_t fuzz_mutate_feeder(uint8_t *data, size_t size, size_t max_size, unsigned seed)
{
    unsigned s = seed;
    uint8_t *parent = malloc(size ? size : 1);
    size_t m = size;
    if (!parent)
        return mutate(data, size, max_size, &s);
    memcpy(parent, data, size);
    int check = next(&s) % 8 != 0;
    for (int attempt = 0; attempt < 8; attempt++) {
        if (attempt) {
            memcpy(data, parent, size);
            m = size;
        }
        m = mutate(data, m, max_size, &s);
        if (!check || fuzz_run_load(data, m) == FUZZ_LOADED)
            break;
    }
    free(parent);
    return m;
}
