/* kilter: status codes and the caller-owned error record.
 *
 * Library functions return a kl_status; the details of every problem go into a
 * kl_errors record owned by the caller ("file:line:col: element: what").  The
 * library never prints and never exits; the command-line program reads the
 * record out once and chooses the exit code.
 *
 * Threads and global state: the library keeps no mutable state of its own,
 * so threads may work on separate feeders at once (one feeder, network or
 * result is not for two threads at the same time).  It does not touch GSL's
 * process-wide error handler either, whose default aborts the program on any
 * GSL error: every GSL call the library makes has its result checked, and
 * the one GSL error it can meet is an allocation failure of the rebalancing
 * search's random generator (gsl_rng_alloc), reported as KL_ENOMEM.  A
 * program using libkilter should therefore call gsl_set_error_handler_off()
 * once at start-up, as the kilter program does; with GSL's default handler
 * that allocation failure aborts instead. */
#ifndef KILTER_ERROR_H
#define KILTER_ERROR_H

#include <stddef.h>

typedef enum {
    KL_OK = 0,
    KL_EINPUT = 1,   /* bad input file or value: the record says where */
    KL_ENOMEM = 2,   /* allocation failed */
    KL_ENOCONV = 3,  /* an iteration did not converge: the record says where and why */
    KL_EIO = 4,      /* a file could not be read or written */
    KL_ETOPO = 5,    /* the network cannot be solved as given (island, loop for the sweep) */
    KL_EARG = 6      /* a caller passed an invalid argument */
} kl_status;

#define KL_ERRORS_MAX 200 /* items kept; more are counted in `dropped` */

typedef struct {
    char file[256];    /* file name as given, or "" */
    int line, col;     /* 1-based; 0 when unknown */
    char element[128]; /* e.g. "section m01-m02" or "" */
    char message[768]; /* what was expected and how to fix it */
    int warning;       /* 1: a warning (the input was accepted), 0: an error */
} kl_error_item;

typedef struct {
    kl_error_item *items; /* [count], grown up to KL_ERRORS_MAX */
    int count;
    int cap;
    int dropped; /* errors beyond KL_ERRORS_MAX */
} kl_errors;

void kl_errors_init(kl_errors *e);
void kl_errors_free(kl_errors *e);
void kl_errors_clear(kl_errors *e);
/* Appends one item; file/element may be NULL.  Returns KL_ENOMEM only if the
 * record itself cannot grow (the item is then counted in `dropped`). */
kl_status kl_errors_add(kl_errors *e, const char *file, int line, int col,
                        const char *element, const char *fmt, ...)
    __attribute__((format(printf, 6, 7)));
/* A warning: the same record, `warning` set.  A function that only warns
 * still returns KL_OK. */
kl_status kl_errors_warn(kl_errors *e, const char *file, int line, int col,
                         const char *element, const char *fmt, ...)
    __attribute__((format(printf, 6, 7)));
/* "file:line:col: element: message" (parts that are empty are left out);
 * a warning reads "file:line:col: warning: element: message". */
int kl_error_format(const kl_error_item *it, char *buf, size_t n);
const char *kl_status_name(kl_status s);

#endif
