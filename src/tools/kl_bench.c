/* kl_bench: times each stage of a load flow on one feeder file.
 *
 *   kl_bench [--no-nodal] [--repeat R] [--tol PU] FILE
 *
 * Stages: load (kl_feeder_load), derive (kl_lines_derive), build
 * (kl_network_build), result (kl_flow_result_alloc), sweep solve (kl_sweep_solve at the file's taps, from
 * a flat start), first nodal solve (kl_nodal_solve: numbering, assembly,
 * ordering, factorisation and iterations, from a flat start) and later nodal
 * solves (flat start again, the factors kept: iterations only).  With --repeat R the
 * solves run R times and the fastest is printed (the first run pays for
 * page faults; sweep_first_s is that first run's time, what a user waits
 * for after the build).  Prints one line of key=value pairs for scripts/bench.sh,
 * with peak resident memory from getrusage (ru_maxrss, KiB on Linux), the
 * minor page faults of the build and the sweeps, and
 * the largest difference between the two solvers' voltages, and the memory
 * bandwidth of a STREAM triad run at the end (triad_gbs).  --tol sets both
 * solvers' convergence tolerance (default kilter's, 1e-6 pu): the solvers'
 * difference is then their accuracy rather than where each stopped (the
 * deep-chain figure of scripts/bench.sh runs at 1e-12).
 *
 * Stage times are process CPU seconds (single-threaded: kilter and KLU use
 * one core), so that other work on a shared machine does not inflate them;
 * wall_s is the wall-clock time of the whole run for comparison. */
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <sys/stat.h>
#include <time.h>
#include "kilter/feeder.h"
#include "kilter/flow.h"
#include "kilter/lines.h"
#include "kilter/network.h"

/* Process CPU time: the machine is shared, and wall time would count the
 * time other processes hold the cores; the program is single-threaded, so
 * on an idle machine the two agree.  Wall time is printed for the whole run. */
static double now(void)
{
    struct timespec t;
    clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

static double wall(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

static long peak_kib(void)
{
    struct rusage ru;
    getrusage(RUSAGE_SELF, &ru);
    return ru.ru_maxrss;
}

/* Minor page faults so far: first touches of fresh memory, a cost that
 * does not depend on how busy the machine is (unlike the times). */
static long minor_faults(void)
{
    struct rusage ru;
    getrusage(RUSAGE_SELF, &ru);
    return ru.ru_minflt;
}

static void print_errors(const char *stage, const kl_errors *err)
{
    char buf[1200];
    for (int k = 0; k < err->count && k < 10; k++) {
        kl_error_format(&err->items[k], buf, sizeof buf);
        fprintf(stderr, "kl_bench: %s: %s\n", stage, buf);
    }
}

typedef kl_status (*solver_fn)(kl_network *, const kl_flow_options *, kl_flow_result *,
                               kl_errors *);

/* Fastest of `repeat` flat-start solves (the first one's time in *first,
 * which may be NULL); -1 on failure. */
static double time_solve(solver_fn fn, kl_network *net, kl_flow_result *res, int repeat,
                         double tol, const char *stage, kl_errors *err, double *first)
{
    kl_flow_options opt;
    kl_flow_options_default(&opt);
    if (tol > 0)
        opt.tol_pu = tol;
    double best = INFINITY;
    for (int r = 0; r < repeat; r++) {
        net->v_valid = 0;
        res->total_iterations = 0;
        double t0 = now();
        kl_status st = fn(net, &opt, res, err);
        double t = now() - t0;
        if (st) {
            print_errors(stage, err);
            return -1;
        }
        best = t < best ? t : best;
        if (r == 0 && first)
            *first = t;
    }
    return best;
}

/* Memory bandwidth of one core measured now, in the same process and under
 * the same load as the solves: the STREAM triad a[i] = b[i] + s c[i]
 * (McCalpin, STREAM benchmark) over three arrays of 32 MiB, far beyond the
 * caches, best of 5; 24 bytes counted per element as STREAM does (with the
 * write-allocate read of a the bus moves 32).  GB/s (1e9 bytes); 0 when the
 * arrays cannot be had. */
static double triad_gbs(void)
{
    size_t n = (size_t)4 << 20;
    double *a = malloc(n * sizeof *a), *b = malloc(n * sizeof *b), *c = malloc(n * sizeof *c);
    double best = INFINITY, s = 3.0;
    if (!a || !b || !c) {
        free(a);
        free(b);
        free(c);
        return 0;
    }
    for (size_t i = 0; i < n; i++) {
        a[i] = 0;
        b[i] = (double)i;
        c[i] = 0.5;
    }
    for (int r = 0; r < 5; r++) {
        double t0 = wall();
        for (size_t i = 0; i < n; i++)
            a[i] = b[i] + s * c[i];
        double t = wall() - t0;
        best = t < best ? t : best;
        s = a[r] > 0 ? 3.0 : 2.0; /* the result is used: the loop is not dropped */
    }
    free(a);
    free(b);
    free(c);
    return best > 0 ? 24.0 * (double)n / best / 1e9 : 0;
}

static void usage(void)
{
    fprintf(stderr, "usage: kl_bench [--no-nodal] [--repeat R] [--tol PU] FILE\n");
}

int main(int argc, char **argv)
{
    const char *path = NULL;
    int nodal = 1, repeat = 1;
    double tol = 0;
    for (int k = 1; k < argc; k++) {
        if (strcmp(argv[k], "--no-nodal") == 0)
            nodal = 0;
        else if (strcmp(argv[k], "--repeat") == 0 && k + 1 < argc)
            repeat = atoi(argv[++k]);
        else if (strcmp(argv[k], "--tol") == 0 && k + 1 < argc)
            tol = atof(argv[++k]);
        else if (argv[k][0] != '-' && !path)
            path = argv[k];
        else {
            usage();
            return 2;
        }
    }
    if (!path || repeat < 1 || tol < 0 || !(tol < 1)) {
        usage();
        return 2;
    }
    struct stat sb;
    if (stat(path, &sb) != 0) {
        fprintf(stderr, "kl_bench: %s: cannot read the file\n", path);
        return 1;
    }
    kl_errors err;
    kl_errors_init(&err);
    kl_feeder *f = NULL;
    kl_network *net = NULL;
    kl_flow_result *res = NULL;
    kl_complex *vs = NULL;
    int rc = 1;
    double w0 = wall(), t0 = now();
    if (kl_feeder_load(path, &f, &err)) {
        print_errors("load", &err);
        goto done;
    }
    double t_load = now() - t0;
    long rss_load = peak_kib();
    t0 = now();
    if (kl_lines_derive(f, KL_CARSON_APPROX, &err)) {
        print_errors("derive", &err);
        goto done;
    }
    double t_derive = now() - t0;
    t0 = now();
    long flt_load = minor_faults();
    if (kl_network_build(f, &net, &err)) {
        print_errors("network", &err);
        goto done;
    }
    double t_build = now() - t0;
    t0 = now();
    if (kl_flow_result_alloc(net, &res, &err)) {
        print_errors("result", &err);
        goto done;
    }
    double t_result = now() - t0;
    long rss_build = peak_kib();
    long flt_build = minor_faults();
    double t_sweep_first = 0;
    double t_sweep = time_solve(kl_sweep_solve, net, res, repeat, tol, "sweep", &err, &t_sweep_first);
    long flt_sweep = minor_faults() - flt_build;
    if (t_sweep < 0)
        goto done;
    int it_sweep = res->iterations;
    long rss_sweep = peak_kib();
    double t_nodal = 0, t_nodal_first = 0, dv = 0;
    long rss_nodal = 0;
    int it_nodal = 0;
    if (nodal) {
        size_t nv = 3 * (size_t)net->nbuses;
        vs = malloc(nv * sizeof *vs);
        if (!vs)
            goto done;
        memcpy(vs, net->vs, nv * sizeof *vs);
        /* first solve: numbering, assembly, ordering, factorisation, iterations;
         * later ones reuse the factors kept in the network (iterations only) */
        if ((t_nodal_first = time_solve(kl_nodal_solve, net, res, 1, tol, "nodal", &err, NULL)) < 0)
            goto done;
        rss_nodal = peak_kib();
        if ((t_nodal = time_solve(kl_nodal_solve, net, res, repeat, tol, "nodal", &err, NULL)) < 0)
            goto done;
        it_nodal = res->iterations;
        for (size_t k = 0; k < nv; k++) {
            double d = cabs(vs[k] - net->vs[k]) * net->pos_inv_base[k / 3]; /* by position */
            dv = d > dv ? d : dv;
        }
    }
    long rss = peak_kib();
    double gbs = triad_gbs(); /* after the memory figures: its arrays are not the solver's */
    printf("triad_gbs=%.2f ", gbs);
    printf("buses=%d sections=%d file_bytes=%lld load_s=%.4f derive_s=%.4f build_s=%.4f result_s=%.4f "
           "sweep_s=%.4f sweep_first_s=%.4f sweep_iter=%d nodal_first_s=%.4f nodal_s=%.4f nodal_iter=%d "
           "nodal_dv_pu=%.2e rss_load_kib=%ld rss_build_kib=%ld rss_sweep_kib=%ld "
           "rss_nodal_kib=%ld rss_peak_kib=%ld "
           "bytes_per_bus=%.0f faults_build=%ld faults_sweep=%ld wall_s=%.3f cpu_s=%.3f\n",
           f->nbuses, f->nsections, (long long)sb.st_size, t_load, t_derive, t_build, t_result, t_sweep,
           t_sweep_first, it_sweep, t_nodal_first, t_nodal, it_nodal, dv, rss_load, rss_build, rss_sweep,
           rss_nodal, rss,
           1024.0 * (double)rss / f->nbuses, flt_build - flt_load, flt_sweep, wall() - w0,
           now());
    rc = 0;
done:
    free(vs);
    kl_flow_result_free(res);
    kl_network_free(net);
    kl_feeder_free(f);
    kl_errors_free(&err);
    return rc;
}
