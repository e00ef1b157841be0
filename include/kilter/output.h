/* kilter: the output files of one command, written whole or not at all, and
 * all of them or none.
 *
 * Each file added to the set is written to a temporary file of its own; only
 * kl_output_commit puts them in place, after every one of them was written
 * without error.  What the set does with each kind of target:
 *   - a new or a regular file: the temporary is an unnamed file in the
 *     target's directory (O_TMPFILE) where the system offers it, else a short
 *     hidden name there (".kl<pid>-<6 characters>", so any length of target
 *     name works); at commit it gets a name and is renamed over the target, so
 *     the target is whole or untouched.  An existing file keeps its permission
 *     bits (and its owner where the process may set it).  A read-only file is
 *     refused, not replaced.  Hidden temporaries left in the directory by a
 *     killed kilter (and an older kilter's FILE.tmp.PID) are removed once their
 *     process is gone;
 *   - a symbolic link is followed: the file it leads to is replaced and the
 *     link kept, as a shell's `>` would do (replacing the link itself would
 *     leave the file it named stale); a link that leads nowhere is refused;
 *   - a character device or a FIFO is written through (opened for writing at
 *     commit, not replaced: `-o /dev/null` stays the device); its content is
 *     staged in an unnamed temporary file until then, so it too is written
 *     only when every output succeeded.  A FIFO blocks at commit until it
 *     has a reader;
 *   - a directory, a block device or a socket is refused;
 *   - a file the command reads (kl_output_input: the feeder) or a file already
 *     in the set (two options naming one file) is refused.
 * Renames are atomic one by one, not together: a rename that fails after an
 * earlier one succeeded (a full disk cannot cause it: the data are written
 * and synced before) is reported with the files already replaced. */
#ifndef KILTER_OUTPUT_H
#define KILTER_OUTPUT_H

#include <stdio.h>
#include "kilter/error.h"

typedef struct kl_output kl_output;

kl_status kl_output_create(kl_output **out, kl_errors *err);
/* A file the command reads: no output may be it. */
kl_status kl_output_input(kl_output *o, const char *path, kl_errors *err);
/* Adds `path` to the set and gives the stream to write it through (owned by
 * the set: do not close it).  KL_EIO, KL_EINPUT (refused target) with a
 * message naming the path and what to do. */
kl_status kl_output_add(kl_output *o, const char *path, FILE **stream, kl_errors *err);
/* Puts every file of the set in place, or none when one was not written
 * whole (a write error on any stream).  The set is empty afterwards. */
kl_status kl_output_commit(kl_output *o, kl_errors *err);
/* Drops every file not committed (their targets untouched) and frees the set;
 * NULL is allowed. */
void kl_output_free(kl_output *o);

#endif
