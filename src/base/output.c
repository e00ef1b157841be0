/* kilter: the output files of one command, all written whole or none
 * (kilter/output.h says what happens to each kind of target and why). */
#define _GNU_SOURCE /* O_TMPFILE, AT_EMPTY_PATH (Linux); without them the hidden name is used */
#include <dirent.h>
#include <errno.h>
#include <fcntl.h>
#include <limits.h>
#include <signal.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>
#include "kilter/output.h"
#include "kl_base.h"

typedef enum {
    OUT_REPLACE = 0, /* a new or a regular file: a temporary renamed over it */
    OUT_THROUGH = 1  /* a character device or a FIFO: staged, then written to it */
} out_kind;

typedef struct {
    char *path;        /* as given, for messages */
    char *target;      /* the file written: path, or where its link leads */
    char *dir;         /* target's directory */
    char tmp[64];      /* the temporary's name in dir once it has one, else "" */
    int fd;            /* the temporary (O_TMPFILE or named) or staging file */
    int unnamed;       /* fd is an O_TMPFILE: it gets its name at commit */
    FILE *f;
    out_kind kind;
    int exists;        /* the target exists: dev/ino are its own */
    dev_t dev;         /* identity: of the target, or of dir when new */
    ino_t ino;
    const char *base;  /* in target: the last component (identity when new) */
} out_file;

typedef struct {
    dev_t dev;
    ino_t ino;
} out_id;

struct kl_output {
    out_file *files; /* [n] */
    int n, cap;
    out_id *inputs;  /* [ninputs] */
    int ninputs, incap;
};

#define ELEM "output file"

/* Records the message against the path; returns st. */
static kl_status refuse(kl_errors *err, const char *path, kl_status st, const char *fmt, ...)
    __attribute__((format(printf, 4, 5)));
static kl_status refuse(kl_errors *err, const char *path, kl_status st, const char *fmt, ...)
{
    char msg[700];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    kl_errors_add(err, path, 0, 0, ELEM, "%s", msg);
    return st;
}

static char *dup_str(const char *s)
{
    size_t n = strlen(s) + 1;
    char *d = kl_malloc(n);
    if (d)
        memcpy(d, s, n);
    return d;
}

kl_status kl_output_create(kl_output **out, kl_errors *err)
{
    if (!out || !err)
        return KL_EARG;
    *out = kl_calloc(1, sizeof **out);
    return *out ? KL_OK : KL_ENOMEM;
}

kl_status kl_output_input(kl_output *o, const char *path, kl_errors *err)
{
    struct stat st;
    if (!o || !path || !err)
        return KL_EARG;
    if (stat(path, &st) != 0)
        return KL_OK; /* nothing there, so no output can be it */
    if (o->ninputs == o->incap) {
        int cap = o->incap ? 2 * o->incap : 4;
        out_id *p = kl_realloc(o->inputs, (size_t)cap * sizeof *p);
        if (!p)
            return KL_ENOMEM;
        o->inputs = p;
        o->incap = cap;
    }
    o->inputs[o->ninputs++] = (out_id){st.st_dev, st.st_ino};
    return KL_OK;
}

/* The directory part of `p` ("." for a bare name). */
static char *dir_of(const char *p)
{
    const char *slash = strrchr(p, '/');
    if (!slash)
        return dup_str(".");
    if (slash == p)
        return dup_str("/");
    size_t n = (size_t)(slash - p);
    char *d = kl_malloc(n + 1);
    if (d) {
        memcpy(d, p, n);
        d[n] = '\0';
    }
    return d;
}

/* Hidden temporaries ".kl<pid>-XXXXXX" of a process that is gone, and an
 * older kilter's "<base>.tmp.<pid>", in dir: removed (regular files of this
 * user only).  A pid reused by a live process keeps its file: the safe side. */
static void clean_stale(const char *dir, const char *base)
{
    DIR *d = opendir(dir);
    struct dirent *de;
    size_t nb = strlen(base);
    if (!d)
        return;
    while ((de = readdir(d))) {
        const char *s = NULL;
        char *end;
        if (strncmp(de->d_name, ".kl", 3) == 0)
            s = de->d_name + 3;
        else if (strncmp(de->d_name, base, nb) == 0 && strncmp(de->d_name + nb, ".tmp.", 5) == 0)
            s = de->d_name + nb + 5;
        if (!s || *s < '1' || *s > '9')
            continue;
        long pid = strtol(s, &end, 10);
        if (s == de->d_name + 3 ? (*end != '-' || strlen(end) != 7) : *end != '\0')
            continue;
        if (pid <= 0 || pid > INT_MAX || pid == (long)getpid() || kill((pid_t)pid, 0) == 0 || errno != ESRCH)
            continue;
        char p[PATH_MAX];
        struct stat st;
        if (snprintf(p, sizeof p, "%s/%s", dir, de->d_name) >= (int)sizeof p)
            continue;
        if (lstat(p, &st) == 0 && S_ISREG(st.st_mode) && st.st_uid == geteuid())
            unlink(p);
    }
    closedir(d);
}

/* A temporary in f->dir: unnamed (O_TMPFILE, named at commit through
 * /proc/self/fd) where the system has it, else ".kl<pid>-XXXXXX".  Mode 0666
 * less the umask, as a new file gets. */
static int open_temp(out_file *f)
{
#ifdef O_TMPFILE
    if (access("/proc/self/fd", X_OK) == 0) {
        f->fd = open(f->dir, O_TMPFILE | O_WRONLY | O_CLOEXEC, 0666);
        if (f->fd >= 0) {
            f->unnamed = 1;
            return 0;
        }
    }
#endif
    static const char alnum[] = "abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ0123456789";
    unsigned long r = (unsigned long)time(NULL) ^ (unsigned long)(uintptr_t)f ^ (unsigned long)clock();
    for (int attempt = 0; attempt < 100; attempt++) {
        char name[PATH_MAX], suffix[7];
        for (int k = 0; k < 6; k++) {
            r = r * 6364136223846793005ul + 1442695040888963407ul; /* Knuth's MMIX LCG */
            suffix[k] = alnum[(r >> 33) % (sizeof alnum - 1)];
        }
        suffix[6] = '\0';
        snprintf(f->tmp, sizeof f->tmp, ".kl%ld-%s", (long)getpid(), suffix);
        if (snprintf(name, sizeof name, "%s/%s", f->dir, f->tmp) >= (int)sizeof name)
            return -1;
        f->fd = open(name, O_CREAT | O_EXCL | O_WRONLY | O_CLOEXEC, 0666);
        if (f->fd >= 0)
            return 0;
        if (errno != EEXIST)
            break;
    }
    f->tmp[0] = '\0';
    return -1;
}

/* The temporary's path, for rename and unlink. */
static void tmp_path(const out_file *f, char *buf, size_t n)
{
    snprintf(buf, n, "%s/%s", f->dir, f->tmp);
}

static void drop(out_file *f)
{
    if (f->f)
        fclose(f->f);
    else if (f->fd >= 0)
        close(f->fd);
    if (f->tmp[0] && f->kind == OUT_REPLACE) {
        char p[PATH_MAX];
        tmp_path(f, p, sizeof p);
        unlink(p);
    }
    kl_free(f->path);
    kl_free(f->target);
    kl_free(f->dir);
    memset(f, 0, sizeof *f);
    f->fd = -1;
}

/* Where `path` leads and what is there: refuses what must not be written. */
static kl_status examine(kl_output *o, out_file *f, kl_errors *err)
{
    struct stat st;
    const char *p = f->path;
    if (lstat(p, &st) != 0) {
        if (errno != ENOENT)
            return refuse(err, p, KL_EIO, "cannot write it: %s", strerror(errno));
        f->target = dup_str(p);
    } else {
        int link = S_ISLNK(st.st_mode);
        char real[PATH_MAX];
        if (link && stat(p, &st) != 0)
            return refuse(err, p, KL_EINPUT, "is a symbolic link that leads to no file: "
                          "kilter writes through a link to the file it names, so make the link "
                          "point to a file or give another name");
        /* a device or FIFO is opened by the name given (through any link); a
         * regular file behind a link is replaced where it is */
        if (link && S_ISREG(st.st_mode)) {
            if (!realpath(p, real))
                return refuse(err, p, KL_EIO, "cannot follow the symbolic link: %s", strerror(errno));
            f->target = dup_str(real);
        } else {
            f->target = dup_str(p);
        }
        f->exists = 1;
    }
    if (!f->target || !(f->dir = dir_of(f->target)))
        return KL_ENOMEM;
    f->base = strrchr(f->target, '/') ? strrchr(f->target, '/') + 1 : f->target;
    if (f->exists) {
        if (S_ISDIR(st.st_mode))
            return refuse(err, p, KL_EINPUT, "is a directory: give a file name");
        if (S_ISCHR(st.st_mode) || S_ISFIFO(st.st_mode)) {
            f->kind = OUT_THROUGH;
        } else if (!S_ISREG(st.st_mode)) {
            return refuse(err, p, KL_EINPUT, "is not a regular file, a character device or a "
                                 "FIFO (a block device or a socket): kilter does not write there");
        } else if ((st.st_mode & 0222) == 0 || access(f->target, W_OK) != 0) {
            return refuse(err, p, KL_EINPUT, "is read-only: kilter does not replace it (make "
                                 "it writable, or give another name)");
        }
        f->dev = st.st_dev;
        f->ino = st.st_ino;
        for (int k = 0; k < o->ninputs; k++)
            if (o->inputs[k].dev == st.st_dev && o->inputs[k].ino == st.st_ino)
                return refuse(err, p, KL_EINPUT, "is a file this command reads (the feeder): "
                                     "write the output to another file");
    } else {
        if (stat(f->dir, &st) != 0 || !S_ISDIR(st.st_mode))
            return refuse(err, p, KL_EIO, "cannot be created: its directory %s does not "
                                 "exist", f->dir);
        f->dev = st.st_dev;
        f->ino = st.st_ino;
    }
    for (int k = 0; k < o->n; k++) {
        const out_file *g = &o->files[k];
        if (g->exists == f->exists && g->dev == f->dev && g->ino == f->ino &&
            (f->exists || strcmp(g->base, f->base) == 0))
            return refuse(err, p, KL_EINPUT, "is named twice as an output (also as %s): give "
                                 "each output a file of its own", g->path);
    }
    return KL_OK;
}

/* The temporary: a staging file for a device or FIFO, else one in the
 * target's directory with the target's mode (and owner, where allowed). */
static kl_status open_file(out_file *f, kl_errors *err)
{
    struct stat st;
    if (f->kind == OUT_THROUGH) {
        FILE *t = tmpfile();
        if (!t)
            return refuse(err, f->path, KL_EIO, "cannot stage the output in a temporary "
                                 "file: %s", strerror(errno));
        f->f = t;
        return KL_OK;
    }
    clean_stale(f->dir, f->base);
    if (open_temp(f) != 0)
        return refuse(err, f->path, KL_EIO, "cannot write in %s: %s (check that the "
                             "directory exists and is writable)", f->dir, strerror(errno));
    if (f->exists && stat(f->target, &st) == 0) {
        if (fchown(f->fd, st.st_uid, st.st_gid) != 0) {
            /* another user's file: it becomes ours, as any editor's save does */
        }
        if (fchmod(f->fd, st.st_mode & 07777) != 0)
            return refuse(err, f->path, KL_EIO, "cannot keep the file's permissions: %s",
                                 strerror(errno));
    }
    f->f = fdopen(f->fd, "w");
    if (!f->f)
        return refuse(err, f->path, KL_EIO, "cannot write: %s", strerror(errno));
    return KL_OK;
}

kl_status kl_output_add(kl_output *o, const char *path, FILE **stream, kl_errors *err)
{
    if (!o || !path || !stream || !err)
        return KL_EARG;
    *stream = NULL;
    if (!path[0])
        return refuse(err, NULL, KL_EINPUT, "an empty file name: give a file name");
    if (o->n == o->cap) {
        int cap = o->cap ? 2 * o->cap : 4;
        out_file *p = kl_realloc(o->files, (size_t)cap * sizeof *p);
        if (!p)
            return KL_ENOMEM;
        o->files = p;
        o->cap = cap;
    }
    out_file *f = &o->files[o->n];
    memset(f, 0, sizeof *f);
    f->fd = -1;
    if (!(f->path = dup_str(path))) {
        drop(f);
        return KL_ENOMEM;
    }
    kl_status st = examine(o, f, err);
    if (!st)
        st = open_file(f, err);
    if (st) {
        drop(f);
        return st;
    }
    o->n++;
    *stream = f->f;
    return KL_OK;
}

/* Every stream flushed and (for files) synced, without error. */
static int finish_writes(kl_output *o, kl_errors *err)
{
    int bad = 0;
    for (int k = 0; k < o->n; k++) {
        out_file *f = &o->files[k];
        errno = 0;
        int ok = fflush(f->f) == 0 && !ferror(f->f);
        if (ok && f->kind == OUT_REPLACE)
            ok = fsync(fileno(f->f)) == 0 || errno == EINVAL;
        if (!ok) {
            kl_errors_add(err, f->path, 0, 0, ELEM, "could not be written whole (%s): no output of "
                          "this command was changed", errno ? strerror(errno) : "write error");
            bad = 1;
        }
    }
    return bad;
}

/* A staged output copied to its device or FIFO. */
static int write_through(out_file *f, kl_errors *err)
{
    char buf[65536];
    size_t n;
    int ok = 1;
    int fd = open(f->target, O_WRONLY | O_NOCTTY | O_CLOEXEC);
    if (fd < 0) {
        kl_errors_add(err, f->path, 0, 0, ELEM, "cannot open it for writing: %s", strerror(errno));
        return -1;
    }
    rewind(f->f);
    while (ok && (n = fread(buf, 1, sizeof buf, f->f)) > 0)
        for (size_t done = 0; ok && done < n;) {
            ssize_t w = write(fd, buf + done, n - done);
            if (w < 0 && errno == EINTR)
                continue;
            ok = w > 0;
            done += ok ? (size_t)w : 0;
        }
    ok = ok && !ferror(f->f);
    if (!ok)
        kl_errors_add(err, f->path, 0, 0, ELEM, "writing to it failed: %s", strerror(errno));
    if (close(fd) != 0 && ok) {
        kl_errors_add(err, f->path, 0, 0, ELEM, "writing to it failed: %s", strerror(errno));
        ok = 0;
    }
    return ok ? 0 : -1;
}

/* An unnamed temporary gets its hidden name (linkat), then every named one
 * is renamed over its target. */
static int put_in_place(out_file *f, kl_errors *err)
{
    char tp[PATH_MAX];
    if (f->unnamed) {
        char proc[64];
        snprintf(proc, sizeof proc, "/proc/self/fd/%d", f->fd);
        for (int attempt = 0; attempt < 100 && !f->tmp[0]; attempt++) {
            snprintf(f->tmp, sizeof f->tmp, ".kl%ld-%06d", (long)getpid(), attempt);
            tmp_path(f, tp, sizeof tp);
            if (linkat(AT_FDCWD, proc, AT_FDCWD, tp, AT_SYMLINK_FOLLOW) != 0) {
                int e = errno;
                f->tmp[0] = '\0';
                if (e != EEXIST) {
                    kl_errors_add(err, f->path, 0, 0, ELEM, "cannot name the written file in %s: %s",
                                  f->dir, strerror(e));
                    return -1;
                }
            }
        }
        if (!f->tmp[0]) {
            refuse(err, f->path, KL_EIO, "cannot name the written file in %s", f->dir);
            return -1;
        }
    }
    tmp_path(f, tp, sizeof tp);
    if (rename(tp, f->target) != 0) {
        kl_errors_add(err, f->path, 0, 0, ELEM, "cannot replace it: %s", strerror(errno));
        return -1;
    }
    f->tmp[0] = '\0';
    return 0;
}

kl_status kl_output_commit(kl_output *o, kl_errors *err)
{
    kl_status st = KL_OK;
    int done = 0;
    if (!o || !err)
        return KL_EARG;
    if (finish_writes(o, err))
        st = KL_EIO;
    /* devices and FIFOs first: nothing is replaced yet if one fails */
    for (int k = 0; !st && k < o->n; k++)
        if (o->files[k].kind == OUT_THROUGH && write_through(&o->files[k], err) != 0)
            st = KL_EIO;
    for (int k = 0; !st && k < o->n; k++)
        if (o->files[k].kind == OUT_REPLACE) {
            if (put_in_place(&o->files[k], err) != 0) {
                st = KL_EIO;
                if (done)
                    kl_errors_add(err, o->files[k].path, 0, 0, ELEM, "%d other output file%s of "
                                  "this command %s already replaced", done, done > 1 ? "s" : "",
                                  done > 1 ? "were" : "was");
            }
            done++;
        }
    for (int k = 0; k < o->n; k++)
        drop(&o->files[k]);
    o->n = 0;
    return st;
}

void kl_output_free(kl_output *o)
{
    if (!o)
        return;
    for (int k = 0; k < o->n; k++)
        drop(&o->files[k]);
    kl_free(o->files);
    kl_free(o->inputs);
    kl_free(o);
}
