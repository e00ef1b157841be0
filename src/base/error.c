/* kilter: the caller-owned error record (error.h).
 *
 * Items are appended up to KL_ERRORS_MAX; later ones are only counted, so a
 * file with a million bad lines cannot exhaust memory through its messages. */
#include <stdarg.h>
#include <stdio.h>
#include <string.h>
#include "kl_base.h"

void kl_errors_init(kl_errors *e)
{
    memset(e, 0, sizeof *e);
}

void kl_errors_free(kl_errors *e)
{
    if (!e)
        return;
    kl_free(e->items);
    memset(e, 0, sizeof *e);
}

void kl_errors_clear(kl_errors *e)
{
    e->count = 0;
    e->dropped = 0;
}

/* Copies at most n-1 bytes and always terminates (strncpy does neither well). */
static void copy_str(char *dst, size_t n, const char *src)
{
    size_t len = src ? strlen(src) : 0;
    if (len >= n)
        len = n - 1;
    if (len)
        memcpy(dst, src, len);
    dst[len] = '\0';
}

static kl_status grow(kl_errors *e)
{
    int cap = e->cap ? e->cap * 2 : 8;
    kl_error_item *p;
    if (cap > KL_ERRORS_MAX)
        cap = KL_ERRORS_MAX;
    p = kl_realloc(e->items, (size_t)cap * sizeof *p);
    if (!p)
        return KL_ENOMEM;
    e->items = p;
    e->cap = cap;
    return KL_OK;
}

kl_status kl_errors_add(kl_errors *e, const char *file, int line, int col,
                        const char *element, const char *fmt, ...)
{
    kl_error_item *it;
    va_list ap;
    if (e->count >= KL_ERRORS_MAX) {
        e->dropped++;
        return KL_OK;
    }
    if (e->count == e->cap && grow(e) != KL_OK) {
        e->dropped++;
        return KL_ENOMEM;
    }
    it = &e->items[e->count++];
    copy_str(it->file, sizeof it->file, file);
    copy_str(it->element, sizeof it->element, element);
    it->line = line;
    it->col = col;
    va_start(ap, fmt);
    vsnprintf(it->message, sizeof it->message, fmt, ap);
    va_end(ap);
    return KL_OK;
}

int kl_error_format(const kl_error_item *it, char *buf, size_t n)
{
    char where[300] = "";
    if (it->file[0] && it->line > 0)
        snprintf(where, sizeof where, "%s:%d:%d: ", it->file, it->line, it->col);
    else if (it->file[0])
        snprintf(where, sizeof where, "%s: ", it->file);
    if (it->element[0])
        return snprintf(buf, n, "%s%s: %s", where, it->element, it->message);
    return snprintf(buf, n, "%s%s", where, it->message);
}

const char *kl_status_name(kl_status s)
{
    switch (s) {
    case KL_OK: return "ok";
    case KL_EINPUT: return "bad input";
    case KL_ENOMEM: return "out of memory";
    case KL_ENOCONV: return "did not converge";
    case KL_EIO: return "cannot read or write a file";
    case KL_ETOPO: return "network cannot be solved as given";
    case KL_EARG: return "invalid argument";
    }
    return "unknown status";
}
