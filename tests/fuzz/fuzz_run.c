/* See fuzz_run.h.  Written against the public API only, as a program
 * embedding libkilter would call it. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include "fuzz_run.h"
#include "kilter/feeder.h"
#include "kilter/flow.h"
#include "kilter/lines.h"
#include "kilter/network.h"
#include "kilter/study.h"

static _Noreturn void fuzz_fail(const char *step, const char *what, const kl_errors *e)
{
    char buf[1400];
    fprintf(stderr, "fuzz: %s: %s\n", step, what);
    for (int i = 0; e && i < e->count; i++) {
        kl_error_format(&e->items[i], buf, sizeof buf);
        fprintf(stderr, "  %s\n", buf);
    }
    abort();
}

/* A step's status must be one it documents, and a failure must say where
 * and why (kilter/error.h). */
static int step_ok(const char *step, kl_status st, unsigned allowed, const kl_errors *e)
{
    if (!(allowed >> st & 1u))
        fuzz_fail(step, kl_status_name(st), e);
    if (st != KL_OK && e->count == 0)
        fuzz_fail(step, "failed without a message", e);
    for (int i = 0; i < e->count; i++)
        if (!e->items[i].message[0] || e->items[i].line < 0 || e->items[i].col < 0)
            fuzz_fail(step, "a message without text or with a negative position", e);
    return st == KL_OK;
}

#define ALLOW(s) (1u << (s))

/* A solved flow carries finite voltages and currents on every phase present
 * (never nan or inf in a result). */
static void check_flow(const kl_flow_result *r, const kl_errors *e)
{
    for (int b = 0; b < r->nbuses; b++)
        for (int p = 0; p < 3; p++)
            if ((r->phases[b] >> p & 1) && !isfinite(creal(r->v[3 * b + p]) + cimag(r->v[3 * b + p])))
                fuzz_fail("solve", "converged with a non-finite voltage", e);
    for (int k = 0; k < r->nsections * 3; k++)
        if (!isfinite(creal(r->i[k]) + cimag(r->i[k])))
            fuzz_fail("solve", "converged with a non-finite current", e);
    for (int p = 0; p < 3; p++)
        if (!isfinite(creal(r->s_head[p]) + cimag(r->s_head[p])))
            fuzz_fail("solve", "converged with a non-finite power at the source", e);
}

static void check_study(const kl_study *s, const kl_flow_result *r, const kl_errors *e)
{
    for (int b = 0; b < r->nbuses; b++)
        for (int p = 0; p < 3; p++)
            if ((r->phases[b] >> p & 1) && r->v_base_ln[b] > 0 && !isfinite(s->v_pu[3 * b + p]))
                fuzz_fail("study", "a non-finite per-unit voltage on a phase present", e);
}

int fuzz_run_load(const uint8_t *data, size_t size)
{
    kl_errors e;
    kl_feeder *f = NULL;
    kl_errors_init(&e);
    kl_status st = kl_feeder_load_buffer((const char *)data, size, "fuzz.yaml", &f, &e);
    int ok = step_ok("load", st, ALLOW(KL_OK) | ALLOW(KL_EINPUT), &e);
    if (ok != (f != NULL))
        fuzz_fail("load", "the feeder and the status disagree", &e);
    kl_feeder_free(f);
    kl_errors_free(&e);
    return ok ? FUZZ_LOADED : 0;
}

int fuzz_run_pipeline(const uint8_t *data, size_t size)
{
    kl_errors e;
    kl_feeder *f = NULL;
    kl_network *net = NULL;
    kl_flow_result *res = NULL;
    kl_study_view view;
    kl_study *s = NULL;
    kl_flow_options fo;
    kl_study_options so;
    int reached = 0, has_view = 0;
    kl_errors_init(&e);
    kl_flow_options_default(&fo);
    kl_study_options_default(&so);
    if (!step_ok("load", kl_feeder_load_buffer((const char *)data, size, "fuzz.yaml", &f, &e),
                 ALLOW(KL_OK) | ALLOW(KL_EINPUT), &e))
        goto done;
    reached = FUZZ_LOADED;
    if (!step_ok("derive", kl_lines_derive(f, KL_CARSON_FULL, &e), ALLOW(KL_OK) | ALLOW(KL_EINPUT), &e))
        goto done;
    reached = FUZZ_DERIVED;
    if (!step_ok("build", kl_network_build(f, &net, &e), ALLOW(KL_OK) | ALLOW(KL_EINPUT) | ALLOW(KL_ETOPO), &e))
        goto done;
    reached = FUZZ_BUILT;
    if (!step_ok("result", kl_flow_result_alloc(net, &res, &e), ALLOW(KL_OK), &e))
        goto done;
    if (!step_ok("solve", kl_flow_solve(net, &fo, res, &e),
                 ALLOW(KL_OK) | ALLOW(KL_ENOCONV) | ALLOW(KL_EINPUT) | ALLOW(KL_ETOPO), &e))
        goto done;
    check_flow(res, &e);
    reached = FUZZ_SOLVED;
    if (!step_ok("view", kl_study_view_init(&view, net, res, &e), ALLOW(KL_OK) | ALLOW(KL_EINPUT), &e))
        goto done;
    has_view = 1;
    if (!step_ok("study", kl_study_run(f, &view.ph, &view.paths, &so, &s, &e), ALLOW(KL_OK) | ALLOW(KL_EINPUT), &e))
        goto done;
    check_study(s, res, &e);
    reached = FUZZ_STUDIED;
done:
    kl_study_free(s);
    if (has_view)
        kl_study_view_free(&view);
    kl_flow_result_free(res);
    kl_network_free(net);
    kl_feeder_free(f);
    kl_errors_free(&e);
    return reached;
}
