/* kilter program: where the bundled demo feeder is.
 *
 * The program finds its data from its own location, never from a path fixed
 * when it was built, so that it works from the build tree, installed under
 * any prefix, and after the installed tree is moved or staged (DESTDIR,
 * cmake --install --prefix):
 *   installed as PREFIX/bin/kilter: PREFIX/share/kilter/demo/...
 *     (KILTER_BIN_TO_DATA, the bin-to-data path CMakeLists.txt takes from
 *     GNUInstallDirs, usually "../share/kilter");
 *   in the build tree as BUILD/kilter: BUILD/share/kilter/demo/..., the copy
 *     of feeders/ the build makes (the source tree may be gone or elsewhere).
 * The program's own path is read from /proc/self/exe (Linux).  Only when it
 * cannot be read does the path fall back to the configured install
 * directory (KILTER_DATA_DIR). */
#define _XOPEN_SOURCE 700 /* realpath() is an XSI part of POSIX */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include "cli.h"

#ifndef KILTER_BIN_TO_DATA
#define KILTER_BIN_TO_DATA "../share/kilter"
#endif
#ifndef KILTER_DATA_DIR
#define KILTER_DATA_DIR "/usr/local/share/kilter"
#endif
#define DEMO_FILE "demo/quillmere-f3.yaml"
enum { PATH_BYTES = 4096 }; /* PATH_MAX on Linux, what realpath() writes at most */

/* The directory of the running program into dir; 0 when unknown. */
static int own_dir(char *dir, size_t n)
{
    ssize_t len = readlink("/proc/self/exe", dir, n - 1);
    if (len <= 0 || (size_t)len >= n - 1)
        return 0;
    dir[len] = '\0';
    char *slash = strrchr(dir, '/');
    if (!slash || slash == dir)
        return 0;
    *slash = '\0';
    return 1;
}

/* DIR/DATA/demo/... into out, made absolute and free of "..", when it can be
 * read; 1 when it can. */
static int readable(char *out, const char *dir, const char *data)
{
    char path[PATH_BYTES];
    int k = snprintf(path, sizeof path, "%s/%s/" DEMO_FILE, dir, data);
    if (k < 0 || (size_t)k >= sizeof path || access(path, R_OK) != 0)
        return 0;
    if (!realpath(path, out))
        memcpy(out, path, (size_t)k + 1);
    return 1;
}

const char *kl_cli_demo_path(void)
{
    static char path[PATH_BYTES]; /* the program's, found once */
    char dir[PATH_BYTES];
    if (path[0])
        return path;
    if (own_dir(dir, sizeof dir)) {
        if (readable(path, dir, KILTER_BIN_TO_DATA) || readable(path, dir, "share/kilter"))
            return path;
        /* Neither is there: name the installed place, which the error will show. */
        int k = snprintf(path, sizeof path, "%s/%s/" DEMO_FILE, dir, KILTER_BIN_TO_DATA);
        if (k > 0 && (size_t)k < sizeof path)
            return path;
    }
    snprintf(path, sizeof path, "%s/" DEMO_FILE, KILTER_DATA_DIR);
    return path;
}
