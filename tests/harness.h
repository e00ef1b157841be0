/* The chain the feeder tests run: load a feeder (file or text) -> derive the
 * line constants -> build the network -> solve the load flow -> study it.
 *
 * One record owns everything the chain builds (the feeder when it was loaded
 * here, the network, the flow result, the study view and the study) and one
 * call frees it all (harness_free, safe on a record that failed half way).
 * Each step returns the library's status and appends the library's located
 * messages to h->err; a step after a failed one returns KL_EARG and builds
 * nothing.  HARNESS_OK asserts a step: on failure it prints every message as
 * "file:line:col: element: message" to the test log and fails the test with
 * the test's own file and line, the step, the status and the first message,
 * so a broken fixture names its position in the log.
 *
 * Linked into every test program (CMakeLists.txt, kilter_testkit). */
#ifndef KILTER_TEST_HARNESS_H
#define KILTER_TEST_HARNESS_H

#include "kilter/error.h"
#include "kilter/feeder.h"
#include "kilter/flow.h"
#include "kilter/lines.h"
#include "kilter/network.h"
#include "kilter/study.h"

typedef struct {
    kl_feeder *f;           /* loaded here (owned) or given to harness_use (borrowed) */
    kl_network *net;        /* owned, from harness_build */
    kl_flow_result *res;    /* owned, allocated by the first harness_solve */
    kl_study_view view;     /* owned when has_view, from harness_study */
    kl_study *study;        /* owned, from harness_study */
    kl_errors err;          /* messages of every step */
    int owns_feeder, has_view;
} harness;

void harness_init(harness *h);
/* path: absolute, or relative to the source tree (KILTER_SOURCE_DIR). */
kl_status harness_load(harness *h, const char *path);
kl_status harness_load_text(harness *h, const char *text, const char *name);
/* A feeder built by hand in the test: borrowed, never freed here. */
void harness_use(harness *h, kl_feeder *f);
kl_status harness_derive(harness *h, kl_carson_form form);
kl_status harness_build(harness *h);
/* Allocates the flow result for the network (once; later calls keep it). */
kl_status harness_result(harness *h);
/* opt NULL: kl_flow_options_default.  The result is allocated once
 * (harness_result) and reused by later solves of the same network. */
kl_status harness_solve(harness *h, const kl_flow_options *opt);
/* The study view over the solved flow and kl_study_run on it; opt NULL:
 * kl_study_options_default. */
kl_status harness_study(harness *h, const kl_study_options *opt);
void harness_free(harness *h);

/* The first message, formatted with its position, or "(no message)". */
const char *harness_first_error(const harness *h);
/* Every message, formatted with its position, one a line on stderr. */
void harness_print_errors(const harness *h);

/* Fails the running test unless st is KL_OK (see above). */
void harness_require(const harness *h, kl_status st, const char *step, const char *file, int line);
#define HARNESS_OK(h, call) harness_require((h), (call), #call, __FILE__, __LINE__)

/* Asserted chains: a feeder file or text loaded, derived with `form`, built
 * and solved with default options; a hand-built feeder built and solved. */
#define harness_solve_file(h, path, form) harness_chain_file((h), (path), (form), __FILE__, __LINE__)
#define harness_solve_text(h, text, name, form) \
    harness_chain_text((h), (text), (name), (form), __FILE__, __LINE__)
#define harness_solve_feeder(h, f) harness_chain_feeder((h), (f), __FILE__, __LINE__)
void harness_chain_file(harness *h, const char *path, kl_carson_form form, const char *file, int line);
void harness_chain_text(harness *h, const char *text, const char *name, kl_carson_form form,
                        const char *file, int line);
void harness_chain_feeder(harness *h, kl_feeder *f, const char *file, int line);

#endif
