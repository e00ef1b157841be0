/* kilter program: the progress indicator for long runs (library side:
 * include/kilter/progress.h).  One line on stderr, rewritten in place, and
 * only when stderr is a terminal: piped or redirected output stays clean. */
#ifndef KILTER_CLI_PROGRESS_H
#define KILTER_CLI_PROGRESS_H

#include "kilter/progress.h"

/* Fills *p with the terminal indicator when stderr is a terminal, with no
 * callback otherwise; pass p to the library's long-running calls. */
void kl_cli_progress_init(kl_progress *p);
/* Clears the indicator line (call before printing results or errors). */
void kl_cli_progress_done(kl_progress *p);

#endif
