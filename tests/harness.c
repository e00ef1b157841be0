/* The tests' load -> derive -> build -> solve -> study chain (harness.h). */
#include "harness.h"

#include <check.h>
#include <stdio.h>
#include <string.h>

void harness_init(harness *h)
{
    memset(h, 0, sizeof *h);
    kl_errors_init(&h->err);
}

/* A step that needs what an earlier step should have made. */
static kl_status missing(harness *h, const char *step, const char *needs)
{
    kl_errors_add(&h->err, NULL, 0, 0, "test harness", "%s: no %s (an earlier step failed or was skipped)",
                  step, needs);
    return KL_EARG;
}

kl_status harness_load(harness *h, const char *path)
{
    char full[1024];
    if (path[0] == '/')
        snprintf(full, sizeof full, "%s", path);
    else
        snprintf(full, sizeof full, "%s/%s", KILTER_SOURCE_DIR, path);
    kl_status st = kl_feeder_load(full, &h->f, &h->err);
    h->owns_feeder = h->f != NULL;
    return st;
}

kl_status harness_load_text(harness *h, const char *text, const char *name)
{
    kl_status st = kl_feeder_load_buffer(text, strlen(text), name, &h->f, &h->err);
    h->owns_feeder = h->f != NULL;
    return st;
}

void harness_use(harness *h, kl_feeder *f)
{
    h->f = f;
    h->owns_feeder = 0;
}

kl_status harness_derive(harness *h, kl_carson_form form)
{
    if (!h->f)
        return missing(h, "derive", "feeder");
    return kl_lines_derive(h->f, form, &h->err);
}

kl_status harness_build(harness *h)
{
    if (!h->f)
        return missing(h, "build", "feeder");
    return kl_network_build(h->f, &h->net, &h->err);
}

kl_status harness_result(harness *h)
{
    if (!h->net)
        return missing(h, "result", "network");
    if (h->res)
        return KL_OK;
    return kl_flow_result_alloc(h->net, &h->res, &h->err);
}

kl_status harness_solve(harness *h, const kl_flow_options *opt)
{
    kl_flow_options d;
    kl_status st = harness_result(h);
    if (st)
        return st;
    kl_flow_options_default(&d);
    return kl_flow_solve(h->net, opt ? opt : &d, h->res, &h->err);
}

kl_status harness_study(harness *h, const kl_study_options *opt)
{
    kl_study_options d;
    if (!h->res)
        return missing(h, "study", "flow result");
    if (!h->has_view) {
        kl_status st = kl_study_view_init(&h->view, h->net, h->res, &h->err);
        if (st)
            return st;
        h->has_view = 1;
    }
    kl_study_free(h->study);
    h->study = NULL;
    kl_study_options_default(&d);
    return kl_study_run(h->f, &h->view.ph, &h->view.paths, opt ? opt : &d, &h->study, &h->err);
}

/* The one free path: everything in the reverse order of building. */
void harness_free(harness *h)
{
    kl_study_free(h->study);
    if (h->has_view)
        kl_study_view_free(&h->view);
    kl_flow_result_free(h->res);
    kl_network_free(h->net);
    if (h->owns_feeder)
        kl_feeder_free(h->f);
    kl_errors_free(&h->err);
    memset(h, 0, sizeof *h);
}

const char *harness_first_error(const harness *h)
{
    static char buf[1200]; /* tests run one at a time in their own process */
    if (h->err.count == 0)
        return "(no message)";
    kl_error_format(&h->err.items[0], buf, sizeof buf);
    return buf;
}

void harness_print_errors(const harness *h)
{
    char buf[1200];
    for (int k = 0; k < h->err.count; k++) {
        kl_error_format(&h->err.items[k], buf, sizeof buf);
        fprintf(stderr, "%s\n", buf);
    }
    if (h->err.dropped)
        fprintf(stderr, "(%d more messages)\n", h->err.dropped);
}

void harness_require(const harness *h, kl_status st, const char *step, const char *file, int line)
{
    if (st == KL_OK)
        return;
    harness_print_errors(h);
    ck_abort_msg("%s:%d: %s: %s: %s", file, line, step, kl_status_name(st), harness_first_error(h));
}

static void chain_rest(harness *h, kl_status st, kl_carson_form form, const char *file, int line)
{
    harness_require(h, st, "load", file, line);
    harness_require(h, harness_derive(h, form), "derive", file, line);
    harness_require(h, harness_build(h), "build", file, line);
    harness_require(h, harness_solve(h, NULL), "solve", file, line);
}

void harness_chain_file(harness *h, const char *path, kl_carson_form form, const char *file, int line)
{
    chain_rest(h, harness_load(h, path), form, file, line);
}

void harness_chain_text(harness *h, const char *text, const char *name, kl_carson_form form,
                        const char *file, int line)
{
    chain_rest(h, harness_load_text(h, text, name), form, file, line);
}

void harness_chain_feeder(harness *h, kl_feeder *f, const char *file, int line)
{
    harness_use(h, f);
    harness_require(h, harness_build(h), "build", file, line);
    harness_require(h, harness_solve(h, NULL), "solve", file, line);
}
