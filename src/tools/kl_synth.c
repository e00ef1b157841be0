/* kl_synth: writes a synthetic radial feeder of N buses in kilter's feeder format.
 *
 *   kl_synth --buses N --seed S [-o FILE]
 *
 * The feeder is a layered tree, so that voltage drop stays moderate at any size:
 *   - a three-phase trunk of at most TRUNK_MAX buses, about TRUNK_LENGTH_FT long in all;
 *   - three-phase branches (chains of 4..15 buses) hung on trunk buses; the trunk
 *     and branches together hold about 10 % of the buses;
 *   - two-phase laterals (chains of 2..8 buses, about 10 % of the buses) on any
 *     three-phase bus;
 *   - single-phase laterals (chains of 2..10 buses, the rest) on any three- or
 *     two-phase bus, on one of that bus's phases.
 * The depth of the tree is therefore bounded whatever N is; a larger N means more
 * laterals in parallel, not longer paths.  The total load is fixed (TOTAL_KVA, less for
 * tiny feeders), so the load per bus falls as N grows and the head current and the
 * trunk's voltage drop stay those of an ordinary 12.47 kV feeder.
 *
 * Output is streamed; memory is O(N) (a parent, a phase mask and a kind per bus) and
 * time is O(N).  The same N and seed give the same bytes: the generator uses its own
 * splitmix64 (Steele, Lea and Flood, "Fast splittable pseudorandom number generators",
 * OOPSLA 2014), with one stream for the tree, one for section lengths and one for loads.
 *
 * With -o the file is written to a temporary name and renamed when complete. */
#include <errno.h>
#include <inttypes.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#define BUSES_MAX 20000000L   /* keeps the O(N) arrays under ~150 MB */
#define TRUNK_MAX 30
#define TRUNK_LENGTH_FT 15840.0 /* 3 mi of trunk */
#define TOTAL_KVA 4500.0      /* total connected load: a typical 12.47 kV feeder head */
#define BUS_KVA_MAX 60.0      /* small feeders: at most this per bus, so laterals stay within ampacity */
#define SOURCE_PU 1.02        /* substation bus held a little above nominal (common practice) */
#define UG_BRANCHES_MAX 20    /* underground three-phase branches: a few, whatever N is */
#define SHORTEN_FROM 2000.0   /* above this many buses, branch and lateral spans shrink */

enum { K_SOURCE, K_TRUNK, K_BRANCH, K_BRANCH_UG, K_TWO, K_ONE };

typedef struct {
    long n;            /* buses, including the source bus 0 */
    int32_t *parent;   /* [n] parent bus; -1 for the source */
    uint8_t *phases;   /* [n] phase mask a=1 b=2 c=4 */
    uint8_t *kind;     /* [n] K_* */
    long ntrunk;       /* trunk buses are 1..ntrunk */
    long nthree;       /* three-phase buses are 1..nthree (trunk, then branches) */
    long ntwo;         /* two-phase buses are nthree+1 .. nthree+ntwo */
    long nug;          /* underground branches so far */
    double span_scale; /* branch and lateral span multiplier, 0.05..1 */
} synth_tree;

/* ---------------------------------------------------------------- random numbers */

static uint64_t rng_next(uint64_t *s)
{
    uint64_t z = (*s += 0x9e3779b97f4a7c15ULL);
    z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
    z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
    return z ^ (z >> 31);
}

/* Uniform on [0, 1) from the top 53 bits. */
static double rng_unit(uint64_t *s) { return (double)(rng_next(s) >> 11) * 0x1.0p-53; }

/* Uniform integer on [lo, hi]. */
static long rng_range(uint64_t *s, long lo, long hi)
{
    return lo + (long)(rng_next(s) % (uint64_t)(hi - lo + 1));
}

/* ---------------------------------------------------------------- the tree */

static const uint8_t two_phase_masks[3] = {1 | 2, 2 | 4, 4 | 1}; /* ab, bc, ca */

/* One phase of `mask`, chosen uniformly. */
static uint8_t pick_phase(uint64_t *rng, uint8_t mask)
{
    uint8_t opts[3];
    int k = 0;
    for (int p = 0; p < 3; p++)
        if (mask & (1 << p)) opts[k++] = (uint8_t)(1 << p);
    return opts[rng_range(rng, 0, k - 1)];
}

/* Appends chains of `count` buses in total, starting at bus *next, each chain hung on a
 * bus drawn from [attach_lo, attach_hi]. */
static void grow_chains(synth_tree *t, uint64_t *rng, long *next, long count, int kind,
                        long len_lo, long len_hi, long attach_lo, long attach_hi)
{
    long end = *next + count;
    while (*next < end) {
        long len = rng_range(rng, len_lo, len_hi);
        if (len > end - *next) len = end - *next;
        long at = rng_range(rng, attach_lo, attach_hi);
        int k = kind;
        uint8_t ph = 7;
        if (kind == K_BRANCH && rng_unit(rng) < 0.15 && t->nug < UG_BRANCHES_MAX) {
            k = K_BRANCH_UG;
            t->nug++;
        }
        if (kind == K_TWO) ph = two_phase_masks[rng_range(rng, 0, 2)];
        if (kind == K_ONE) ph = pick_phase(rng, t->phases[at]);
        for (long j = 0; j < len; j++, (*next)++) {
            t->parent[*next] = (int32_t)(j == 0 ? at : *next - 1);
            t->phases[*next] = ph;
            t->kind[*next] = (uint8_t)k;
        }
    }
}

static int tree_build(synth_tree *t, long n, uint64_t seed)
{
    uint64_t rng = seed;
    t->n = n;
    t->parent = malloc((size_t)n * sizeof *t->parent);
    t->phases = malloc((size_t)n);
    t->kind = malloc((size_t)n);
    if (!t->parent || !t->phases || !t->kind) return -1;
    long m = n / 10 > 0 ? n / 10 : 1;          /* three-phase buses besides the source */
    if (m > n - 1) m = n - 1;
    long two = n / 10;
    if (two > n - 1 - m) two = n - 1 - m;
    t->ntrunk = m < TRUNK_MAX ? m : TRUNK_MAX;
    /* Total line length, and with it line charging, would grow with N; spans shrink
     * as 1/sqrt(N) past SHORTEN_FROM buses so a million-bus feeder carries about
     * 2,000 mi of line rather than 40,000 (its charging stays well under its load). */
    t->span_scale = (double)n > SHORTEN_FROM ? sqrt(SHORTEN_FROM / (double)n) : 1.0;
    if (t->span_scale < 0.05) t->span_scale = 0.05;
    t->nthree = m;
    t->ntwo = two;
    t->parent[0] = -1; t->phases[0] = 7; t->kind[0] = K_SOURCE;
    for (long i = 1; i <= t->ntrunk; i++) {
        t->parent[i] = (int32_t)(i - 1); t->phases[i] = 7; t->kind[i] = K_TRUNK;
    }
    long next = t->ntrunk + 1;
    grow_chains(t, &rng, &next, m - t->ntrunk, K_BRANCH, 4, 15, 1, t->ntrunk);
    grow_chains(t, &rng, &next, two, K_TWO, 2, 8, 1, m);
    grow_chains(t, &rng, &next, n - 1 - m - two, K_ONE, 2, 10, 1, m + two);
    return 0;
}

static void tree_free(synth_tree *t)
{
    free(t->parent); free(t->phases); free(t->kind);
}

/* ---------------------------------------------------------------- output: fixed part */

/* Connected load of the whole feeder, kVA. */
static double total_kva(long n)
{
    double kva = BUS_KVA_MAX * (double)(n - 1);
    return kva < TOTAL_KVA ? kva : TOTAL_KVA;
}

static void write_header(FILE *f, long n, uint64_t seed)
{
    fprintf(f,
        "# Synthetic radial feeder written by kl_synth --buses %ld --seed %" PRIu64 ".\n"
        "# Invented data for benchmarks and tests: a three-phase trunk and branches, two-phase\n"
        "# and single-phase laterals, %.0f kVA of load in all.\n"
        "kilter-feeder: 1\n"
        "name: synthetic feeder %ld-%" PRIu64 "\n"
        "units: us\n"
        "earth_resistivity: 100 ohm-m\n"
        "source:\n"
        "  bus: src\n"
        "  nominal_voltage: 12.47 kV\n"
        "  frequency: 60 Hz\n"
        "  regulated_voltage: %.2f pu\n"
        "  angle: 0 deg\n",
        n, seed, total_kva(n), n, seed, SOURCE_PU);
}

/* Conductor data: the usual overhead-line handbook values (from memory); the
 * cable, pole tops and trench are the demo feeder's (scripts/make_demo.py), our
 * own dimensions rather than a published test feeder's. */
static void write_equipment(FILE *f)
{
    fputs("# Conductor data: usual handbook values (from memory).\n"
          "conductors:\n"
          "  - {name: 336ACSR, resistance: 0.306 ohm/mi, gmr: 0.0244 ft, diameter: 0.721 in, ampacity: 530 A}\n"
          "  - {name: 4/0ACSR, resistance: 0.592 ohm/mi, gmr: 0.00814 ft, diameter: 0.563 in, ampacity: 340 A}\n"
          "  - {name: 1/0ACSR, resistance: 1.12 ohm/mi, gmr: 0.00446 ft, diameter: 0.398 in, ampacity: 230 A}\n"
          "  - {name: 350AA, resistance: 0.29 ohm/mi, gmr: 0.0218 ft, diameter: 0.681 in, ampacity: 330 A}\n"
          "  - {name: 14CU, resistance: 14.8722 ohm/mi, gmr: 0.00208 ft, diameter: 0.0641 in}\n"
          "cables:\n"
          "  - {name: cn350, kind: concentric-neutral, conductor: 350AA, neutral_strand: 14CU, strands: 18,"
          " diameter_over_neutral: 1.46 in}\n"
          "layouts:\n"
          "  - name: crossarm\n"
          "    kind: overhead\n"
          "    positions:\n"
          "      - {id: \"1\", x: 0 ft, height: 32 ft}\n"
          "      - {id: \"2\", x: 3.5 ft, height: 32 ft}\n"
          "      - {id: \"3\", x: 9.5 ft, height: 32 ft}\n"
          "      - {id: n, x: 5.5 ft, height: 27.5 ft}\n"
          "  - name: two-phase-arm\n"
          "    kind: overhead\n"
          "    positions:\n"
          "      - {id: \"1\", x: 0 ft, height: 29 ft}\n"
          "      - {id: \"2\", x: 5 ft, height: 29 ft}\n"
          "      - {id: n, x: 2.5 ft, height: 25 ft}\n"
          "  - name: pole-top-pin\n"
          "    kind: overhead\n"
          "    positions:\n"
          "      - {id: \"1\", x: 0 ft, height: 33 ft}\n"
          "      - {id: n, x: 0.7 ft, height: 28.5 ft}\n"
          "  - name: trench\n"
          "    kind: underground\n"
          "    positions:\n"
          "      - {id: \"1\", x: 0 in, depth: 3.5 ft}\n"
          "      - {id: \"2\", x: 7.5 in, depth: 3.5 ft}\n"
          "      - {id: \"3\", x: 15 in, depth: 3.5 ft}\n", f);
}

static const char *const two_names[3] = {"oh2-ab", "oh2-bc", "oh2-ca"};
static const char *const one_names[3] = {"oh1-a", "oh1-b", "oh1-c"};

static void write_constructions(FILE *f)
{
    static const char *const ph[3] = {"a", "b", "c"};
    fputs("constructions:\n"
          "  - {name: oh3, layout: crossarm, phase_conductor: 336ACSR, phases: {a: \"1\", b: \"2\", c: \"3\"},"
          " neutrals: [{position: n, conductor: 4/0ACSR}]}\n"
          "  - {name: ug3, layout: trench, cable: cn350, phases: {a: \"1\", b: \"2\", c: \"3\"}}\n", f);
    for (int k = 0; k < 3; k++)
        fprintf(f, "  - {name: %s, layout: two-phase-arm, phase_conductor: 1/0ACSR,"
                " phases: {%s: \"1\", %s: \"2\"}, neutrals: [{position: n, conductor: 1/0ACSR}]}\n",
                two_names[k], ph[k], ph[(k + 1) % 3]);
    for (int k = 0; k < 3; k++)
        fprintf(f, "  - {name: %s, layout: pole-top-pin, phase_conductor: 1/0ACSR,"
                " phases: {%s: \"1\"}, neutrals: [{position: n, conductor: 1/0ACSR}]}\n",
                one_names[k], ph[k]);
}

/* ---------------------------------------------------------------- output: sections */

static const char *bus_name(long i, char buf[24])
{
    if (i == 0) return "src";
    snprintf(buf, 24, "b%ld", i);
    return buf;
}

static int phase_index(uint8_t single) { return single == 1 ? 0 : single == 2 ? 1 : 2; }

static const char *construction_of(const synth_tree *t, long i)
{
    switch (t->kind[i]) {
    case K_TRUNK: return i == 1 && t->ntrunk > 1 ? "ug3" : "oh3"; /* cable get-away */
    case K_BRANCH: return "oh3";
    case K_BRANCH_UG: return "ug3";
    case K_TWO:
        return t->phases[i] == 3 ? two_names[0] : t->phases[i] == 6 ? two_names[1] : two_names[2];
    default: return one_names[phase_index(t->phases[i])];
    }
}

static long section_length_ft(const synth_tree *t, long i, uint64_t *rng)
{
    double u = rng_unit(rng);
    switch (t->kind[i]) {
    case K_TRUNK: {
        double each = TRUNK_LENGTH_FT / (double)t->ntrunk;
        if (each > 2500.0) each = 2500.0;
        return lround(each * (0.8 + 0.4 * u));
    }
    case K_BRANCH: case K_BRANCH_UG: return 3 + lround((150.0 + 350.0 * u) * t->span_scale);
    default: return 3 + lround((80.0 + 220.0 * u) * t->span_scale);
    }
}

static void write_sections(FILE *f, const synth_tree *t, uint64_t seed)
{
    uint64_t rng = seed ^ 0x5ec710a5ULL;
    char b1[24], b2[24];
    fputs("sections:\n", f);
    for (long i = 1; i < t->n; i++) {
        long len = section_length_ft(t, i, &rng);
        fprintf(f, "  - {name: s%ld, from: %s, to: %s, length: %ld ft, construction: %s}\n", i,
                bus_name(t->parent[i], b1), bus_name(i, b2), len, construction_of(t, i));
    }
}

/* ---------------------------------------------------------------- output: loads */

typedef struct {
    int has;          /* 0: no load at this bus */
    int delta;
    int model;        /* 0 PQ, 1 I, 2 Z, 3 ZIP */
    uint8_t phases;   /* wye: phases loaded; delta: all three */
    double size;      /* relative size per loaded phase */
    double pf;
} synth_load;

/* Draws bus i's load.  The same calls in the same order give the same loads, which is
 * how the writer makes two passes (total, then scaled output) without storing them. */
static synth_load load_draw(const synth_tree *t, long i, uint64_t *rng)
{
    synth_load L = {0};
    double u = rng_unit(rng), m = rng_unit(rng);
    L.size = 0.4 + 1.2 * rng_unit(rng);
    L.pf = 0.85 + 0.12 * rng_unit(rng);
    int three = t->kind[i] == K_TRUNK || t->kind[i] == K_BRANCH || t->kind[i] == K_BRANCH_UG;
    L.has = u < (three ? 0.8 : 0.9);
    if (three) {
        L.phases = 7;
        L.delta = m < 0.13; /* delta loads are constant power */
        L.model = m < 0.78 ? 0 : m < 0.86 ? 2 : m < 0.93 ? 1 : 3;
    } else {
        L.phases = t->kind[i] == K_TWO && m < 0.3 ? t->phases[i] : pick_phase(rng, t->phases[i]);
        L.model = m < 0.8 ? 0 : m < 0.87 ? 2 : m < 0.94 ? 1 : 3;
    }
    return L;
}

static int popcount3(uint8_t m) { return (m & 1) + ((m >> 1) & 1) + ((m >> 2) & 1); }

static void format_power(char *buf, size_t n, double kva, double pf)
{
    double p = kva * pf, q = kva * sqrt(1.0 - pf * pf);
    if (kva >= 1.0) snprintf(buf, n, "%.3f + j%.3f kVA", p, q);
    else snprintf(buf, n, "%.2f + j%.2f VA", p * 1000.0, q * 1000.0);
}

static void write_one_load(FILE *f, long i, const synth_load *L, double kva)
{
    static const char *const models[4] = {"constant-power", "constant-current",
                                          "constant-impedance", "zip"};
    static const char *const wye[3] = {"a", "b", "c"}, *const del[3] = {"ab", "bc", "ca"};
    char b[24], pw[64];
    format_power(pw, sizeof pw, kva, L->pf);
    fprintf(f, "  - {name: l%ld, bus: %s, connection: %s, model: %s, power: {", i,
            bus_name(i, b), L->delta ? "delta" : "wye", models[L->model]);
    int first = 1;
    for (int p = 0; p < 3; p++) {
        if (!(L->phases & (1 << p))) continue;
        fprintf(f, "%s%s: %s", first ? "" : ", ", L->delta ? del[p] : wye[p], pw);
        first = 0;
    }
    fputs(L->model == 3 ? "}, zip: {impedance: 30 %, current: 20 %, power: 50 %}}\n" : "}}\n", f);
}

/* Returns the total reactive power written, kvar. */
static double write_loads(FILE *f, const synth_tree *t, uint64_t seed)
{
    uint64_t rng = seed ^ 0x10adULL;
    double total = 0.0, q = 0.0;
    for (long i = 1; i < t->n; i++) {
        synth_load L = load_draw(t, i, &rng);
        if (L.has) total += L.size * popcount3(L.phases);
    }
    double per_unit_kva = total > 0 ? total_kva(t->n) / total : 0.0;
    rng = seed ^ 0x10adULL;
    fputs("loads:\n", f);
    for (long i = 1; i < t->n; i++) {
        synth_load L = load_draw(t, i, &rng);
        if (!L.has) continue;
        double kva = L.size * per_unit_kva;
        write_one_load(f, i, &L, kva);
        q += kva * sqrt(1.0 - L.pf * L.pf) * popcount3(L.phases);
    }
    return q;
}

/* A few wye banks on the trunk, together about a third of the load's kvar (a usual
 * planning share for fixed banks: common practice), in 50 kvar steps per phase. */
static void write_capacitors(FILE *f, const synth_tree *t, double q_kvar)
{
    if (t->ntrunk < 3) return;
    int ncap = 1 + (t->n >= 300) + (t->n >= 3000) + (t->n >= 30000);
    double per_phase = floor(q_kvar / 3.0 / ncap / 3.0 / 50.0) * 50.0;
    if (per_phase < 50.0) return;
    char b[24];
    fputs("capacitors:\n", f);
    for (int k = 0; k < ncap; k++) {
        long at = (long)((k + 1) * t->ntrunk / (ncap + 1)) + 1;
        fprintf(f, "  - {name: cap%d, bus: %s, connection: wye, reactive_power:"
                " {a: %.0f kvar, b: %.0f kvar, c: %.0f kvar}}\n",
                k + 1, bus_name(at, b), per_phase, per_phase, per_phase);
    }
}

/* ---------------------------------------------------------------- program */

static void usage(FILE *f)
{
    fputs("usage: kl_synth --buses N --seed S [-o FILE]\n"
          "  writes a synthetic radial 12.47 kV feeder of N buses (2 <= N <= 20000000)\n"
          "  in kilter's feeder format; the same N and S give the same file.\n", f);
}

static int parse_long(const char *s, long lo, long hi, long *out)
{
    char *end;
    errno = 0;
    long v = strtol(s, &end, 10);
    if (errno || end == s || *end || v < lo || v > hi) return -1;
    *out = v;
    return 0;
}

static int write_feeder(FILE *f, const synth_tree *t, long n, uint64_t seed)
{
    write_header(f, n, seed);
    write_equipment(f);
    write_constructions(f);
    write_sections(f, t, seed);
    double q = write_loads(f, t, seed);
    write_capacitors(f, t, q);
    return ferror(f) ? -1 : 0;
}

/* Writes to `path` whole or not at all: temporary name, then rename. */
static int write_to_path(const char *path, const synth_tree *t, long n, uint64_t seed)
{
    char tmp[4096];
    if (snprintf(tmp, sizeof tmp, "%s.tmp%ld", path, (long)getpid()) >= (int)sizeof tmp) {
        fprintf(stderr, "kl_synth: %s: output path too long\n", path);
        return -1;
    }
    FILE *f = fopen(tmp, "w");
    if (!f) {
        fprintf(stderr, "kl_synth: cannot create %s: %s\n", tmp, strerror(errno));
        return -1;
    }
    int bad = write_feeder(f, t, n, seed);
    if (fclose(f) != 0) bad = -1;
    if (bad || rename(tmp, path) != 0) {
        fprintf(stderr, "kl_synth: cannot write %s: %s\n", path, strerror(errno));
        remove(tmp);
        return -1;
    }
    return 0;
}

int main(int argc, char **argv)
{
    long n = -1, seed = -1;
    const char *out = NULL;
    for (int i = 1; i < argc; i += 2) { /* options come in pairs: name, value */
        const char *a = argv[i], *v = i + 1 < argc ? argv[i + 1] : NULL;
        if (!strcmp(a, "-h") || !strcmp(a, "--help")) { usage(stdout); return 0; }
        if (!v) { fprintf(stderr, "kl_synth: %s: missing value or unknown option\n", a); usage(stderr); return 2; }
        if (!strcmp(a, "--buses")) {
            if (parse_long(v, 2, BUSES_MAX, &n)) {
                fprintf(stderr, "kl_synth: --buses %s: expected a whole number from 2 to %ld\n", v, BUSES_MAX);
                return 2;
            }
        } else if (!strcmp(a, "--seed")) {
            if (parse_long(v, 0, 0x7fffffffL, &seed)) {
                fprintf(stderr, "kl_synth: --seed %s: expected a whole number from 0 to 2147483647\n", v);
                return 2;
            }
        } else if (!strcmp(a, "-o")) {
            out = v;
        } else {
            fprintf(stderr, "kl_synth: %s: unknown option\n", a);
            usage(stderr);
            return 2;
        }
    }
    if (n < 0 || seed < 0) { fputs("kl_synth: --buses and --seed are required\n", stderr); usage(stderr); return 2; }

    synth_tree t = {0};
    int rc = 0;
    if (tree_build(&t, n, (uint64_t)seed) != 0) {
        fprintf(stderr, "kl_synth: out of memory for %ld buses\n", n);
        rc = 1;
    } else if (out) {
        rc = write_to_path(out, &t, n, (uint64_t)seed) ? 1 : 0;
    } else {
        static char buf[1 << 20];
        setvbuf(stdout, buf, _IOFBF, sizeof buf);
        if (write_feeder(stdout, &t, n, (uint64_t)seed) || fflush(stdout)) {
            fprintf(stderr, "kl_synth: error writing standard output\n");
            rc = 1;
        }
    }
    tree_free(&t);
    return rc;
}
