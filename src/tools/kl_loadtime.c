/* kl_loadtime: times the feeder loader alone, and dumps what it loaded.
 *
 *   kl_loadtime [--repeat R] [--dump OUT] FILE...
 *
 * For each FILE: loads it R times (default 1) and prints one line
 *   file=F status=S load_s=MIN load_med_s=MEDIAN rss_kib=PEAK nbuses=N
 * (process CPU seconds, peak resident set from getrusage).  With --dump,
 * writes every field of the loaded feeder (doubles in hexadecimal, so that
 * two dumps agree only when every value agrees bit for bit) and every error
 * message of every FILE to OUT: comparing the dumps of two builds of the
 * loader shows whether a change altered anything it reads or reports. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <time.h>
#include "kilter/feeder.h"

static double now(void)
{
    struct timespec t;
    clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

static long peak_kib(void)
{
    struct rusage ru;
    getrusage(RUSAGE_SELF, &ru);
    return ru.ru_maxrss;
}

static void s(FILE *o, const char *k, const char *v) { fprintf(o, " %s=%s", k, v ? v : "(null)"); }
/* long: an enum (unsigned under clang) or an int widens to it without a sign change */
static void i(FILE *o, const char *k, long v) { fprintf(o, " %s=%ld", k, v); }
static void d(FILE *o, const char *k, double v) { fprintf(o, " %s=%a", k, v); }
static void c(FILE *o, const char *k, kl_complex v) { fprintf(o, " %s=%a,%a", k, creal(v), cimag(v)); }
static void loc(FILE *o, kl_loc l) { fprintf(o, " @%d:%d\n", l.line, l.col); }

static void dump_lines(FILE *o, const kl_feeder *f)
{
    int k, p, q;
    for (k = 0; k < f->nconductors; k++) {
        const kl_conductor *x = &f->conductors[k];
        fprintf(o, "cond %d", k);
        s(o, "name", x->name); d(o, "r", x->r_ohm_per_m); d(o, "rt", x->r_temp_c); d(o, "gmr", x->gmr_m);
        d(o, "dia", x->diameter_m); d(o, "amp", x->ampacity_a); loc(o, x->loc);
    }
    for (k = 0; k < f->ncables; k++) {
        const kl_cable *x = &f->cables[k];
        fprintf(o, "cable %d", k);
        s(o, "name", x->name); i(o, "kind", x->kind); i(o, "pc", x->phase_conductor);
        d(o, "eps", x->insulation_permittivity); i(o, "sc", x->strand_conductor); i(o, "k", x->strands);
        d(o, "don", x->diameter_over_neutral_m); d(o, "td", x->tape_diameter_m); d(o, "tt", x->tape_thickness_m);
        d(o, "tr", x->tape_resistivity_ohm_m); d(o, "amp", x->ampacity_a); loc(o, x->loc);
    }
    for (k = 0; k < f->nlayouts; k++) {
        const kl_layout *x = &f->layouts[k];
        fprintf(o, "layout %d", k);
        s(o, "name", x->name); i(o, "ug", x->underground); i(o, "n", x->nwires);
        for (p = 0; p < x->nwires; p++) {
            s(o, "w", x->wire[p]); d(o, "x", x->x_m[p]); d(o, "y", x->y_m[p]);
        }
        loc(o, x->loc);
    }
    for (k = 0; k < f->nconstructions; k++) {
        const kl_construction *x = &f->constructions[k];
        fprintf(o, "cons %d", k);
        s(o, "name", x->name); i(o, "kind", x->kind); i(o, "ph", x->phases); i(o, "lay", x->layout);
        for (p = 0; p < 3; p++)
            i(o, "pw", x->phase_wire[p]);
        i(o, "pc", x->phase_conductor); i(o, "cab", x->cable); i(o, "nn", x->nneutrals);
        for (p = 0; p < KL_MAX_NEUTRALS; p++) {
            i(o, "nw", x->neutral_wire[p]); i(o, "nc", x->neutral_conductor[p]);
        }
        i(o, "ng", x->neutral_grounded); d(o, "rho", x->earth_resistivity_ohm_m);
        for (p = 0; p < 3; p++)
            for (q = 0; q < 3; q++) {
                c(o, "z", x->z_given[p][q]); d(o, "b", x->b_given[p][q]);
            }
        d(o, "amp", x->ampacity_a); d(o, "namp", x->neutral_ampacity_a); i(o, "der", x->derived);
        loc(o, x->loc);
    }
}

static void dump_net(FILE *o, const kl_feeder *f)
{
    int k, p;
    for (k = 0; k < f->nbuses; k++) {
        const kl_bus *x = &f->buses[k];
        fprintf(o, "bus %d", k);
        s(o, "name", x->name); i(o, "ph", x->phases); d(o, "kv", x->base_kv_ll); d(o, "x", x->x);
        d(o, "y", x->y); i(o, "xy", x->has_xy); s(o, "desc", x->description); loc(o, x->loc);
    }
    for (k = 0; k < f->nsections; k++) {
        const kl_section *x = &f->sections[k];
        fprintf(o, "sec %d", k);
        s(o, "name", x->name); i(o, "kind", x->kind); i(o, "from", x->from); i(o, "to", x->to);
        i(o, "ph", x->phases); d(o, "len", x->length_m); i(o, "cons", x->construction);
        i(o, "dev", x->device); i(o, "cl", x->closed); i(o, "rev", x->reversed); loc(o, x->loc);
    }
    for (k = 0; k < f->nloads; k++) {
        const kl_load *x = &f->loads[k];
        fprintf(o, "load %d", k);
        s(o, "name", x->name); i(o, "bus", x->bus); i(o, "sec", x->section); i(o, "conn", x->conn);
        i(o, "model", x->model); i(o, "ph", x->phases);
        for (p = 0; p < 3; p++) {
            c(o, "s", x->s_va[p]); d(o, "zip", x->zip[p]);
        }
        i(o, "mot", x->motor); d(o, "h3", x->third_harmonic); i(o, "pin", x->pinned);
        i(o, "forb", x->forbidden); d(o, "cost", x->move_cost); s(o, "desc", x->description);
        loc(o, x->loc);
    }
    for (k = 0; k < f->ncapacitors; k++) {
        const kl_capacitor *x = &f->capacitors[k];
        fprintf(o, "cap %d", k);
        s(o, "name", x->name); i(o, "bus", x->bus); i(o, "conn", x->conn); i(o, "ph", x->phases);
        for (p = 0; p < 3; p++)
            d(o, "q", x->q_var[p]);
        loc(o, x->loc);
    }
}

static void dump_devices(FILE *o, const kl_feeder *f)
{
    int k, p;
    for (k = 0; k < f->ntransformers; k++) {
        const kl_transformer *x = &f->transformers[k];
        fprintf(o, "xf %d", k);
        s(o, "name", x->name); d(o, "kva", x->kva); d(o, "kvh", x->kv_high); d(o, "kvl", x->kv_low);
        i(o, "h", x->high); i(o, "l", x->low); d(o, "r", x->r_pu); d(o, "x", x->x_pu);
        d(o, "nll", x->no_load_loss_pu); loc(o, x->loc);
    }
    for (k = 0; k < f->nregulators; k++) {
        const kl_regulator *x = &f->regulators[k];
        fprintf(o, "reg %d", k);
        s(o, "name", x->name); i(o, "conn", x->conn); i(o, "mode", x->mode); i(o, "ph", x->phases); i(o, "sh", x->shared);
        for (p = 0; p < 3; p++)
            i(o, "tap", x->tap[p]);
        i(o, "steps", x->steps); d(o, "step", x->step_pu); d(o, "vl", x->voltage_level_v);
        d(o, "bw", x->bandwidth_v); d(o, "pt", x->pt_ratio); d(o, "ct", x->ct_primary_a);
        for (p = 0; p < 3; p++) {
            d(o, "r", x->ldc_r_v[p]); d(o, "x", x->ldc_x_v[p]);
        }
        i(o, "mon", x->monitored); loc(o, x->loc);
    }
}

static void dump(FILE *o, const kl_feeder *f)
{
    const kl_source *x = &f->source;
    fprintf(o, "feeder");
    s(o, "path", f->path); s(o, "name", f->name); s(o, "desc", f->description); i(o, "units", f->units);
    d(o, "rho", f->earth_resistivity_ohm_m); i(o, "radial", f->radial);
    fprintf(o, "\nsource");
    i(o, "bus", x->bus); d(o, "kv", x->kv_ll); d(o, "hz", x->freq_hz); d(o, "vpu", x->v_pu);
    d(o, "ang", x->angle_deg); i(o, "eq", x->has_equivalent); c(o, "z1", x->z1_ohm); c(o, "z0", x->z0_ohm);
    i(o, "bg", x->has_background); c(o, "bgv", x->background);
    d(o, "relay", x->relay_pickup_a); loc(o, x->loc);
    fprintf(o, "counts %d %d %d %d %d %d %d %d %d %d\n", f->nconductors, f->ncables, f->nlayouts,
            f->nconstructions, f->nbuses, f->nsections, f->nloads, f->ncapacitors, f->ntransformers,
            f->nregulators);
    dump_lines(o, f);
    dump_net(o, f);
    dump_devices(o, f);
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

static int run(const char *path, int repeat, FILE *out)
{
    double t[64], best;
    kl_status st = KL_OK;
    kl_feeder *f = NULL;
    int r, nb = 0;
    for (r = 0; r < repeat; r++) {
        kl_errors err;
        double t0;
        kl_errors_init(&err);
        t0 = now();
        st = kl_feeder_load(path, &f, &err);
        t[r] = now() - t0;
        if (out && r == 0) {
            char buf[1400];
            fprintf(out, "== %s status=%d errors=%d dropped=%d\n", path, (int)st, err.count, err.dropped);
            for (int k = 0; k < err.count; k++) {
                kl_error_format(&err.items[k], buf, sizeof buf);
                fprintf(out, "error %s\n", buf);
            }
            if (f)
                dump(out, f);
        }
        nb = f ? f->nbuses : 0;
        kl_feeder_free(f);
        kl_errors_free(&err);
    }
    qsort(t, (size_t)repeat, sizeof t[0], cmp_double);
    best = t[0];
    printf("file=%s status=%d load_s=%.3f load_med_s=%.3f rss_kib=%ld nbuses=%d\n", path, (int)st, best,
           t[repeat / 2], peak_kib(), nb);
    return 0;
}

int main(int argc, char **argv)
{
    int repeat = 1, a = 1;
    FILE *out = NULL;
    for (; a < argc && argv[a][0] == '-' && argv[a][1] == '-'; a++) {
        if (strcmp(argv[a], "--repeat") == 0 && a + 1 < argc)
            repeat = atoi(argv[++a]);
        else if (strcmp(argv[a], "--dump") == 0 && a + 1 < argc) {
            out = fopen(argv[++a], "w");
            if (!out) {
                perror(argv[a]);
                return 1;
            }
        } else
            break;
    }
    if (a >= argc || repeat < 1 || repeat > 64) {
        fprintf(stderr, "usage: kl_loadtime [--repeat R (1..64)] [--dump OUT] FILE...\n");
        return 2;
    }
    for (; a < argc; a++)
        run(argv[a], repeat, out);
    if (out && fclose(out) != 0) {
        perror("dump");
        return 1;
    }
    return 0;
}
