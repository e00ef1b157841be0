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

/* Copies at most n-1 bytes and always terminates (strncpy does neither
 * well), with every byte a terminal could act on written as an escape: C0
 * controls, DEL and the C1 controls U+0080-U+009F (ECMA-48 5.2: ESC, CSI
 * and the like, which let a text rewrite the screen it is printed on) become
 * \xHH or \u00HH, and so does any byte that is not part of well-formed UTF-8
 * (a lone 0x9B is CSI to an 8-bit terminal).  Names and values quoted in
 * messages come from the user's file, so every message is kept printable. */
static void copy_printable(char *dst, size_t n, const char *src)
{
    const unsigned char *s = (const unsigned char *)(src ? src : "");
    size_t o = 0;
    while (*s) {
        unsigned char c = *s;
        int len = c < 0x80 ? 1 : c >= 0xC2 && c <= 0xDF ? 2 : c >= 0xE0 && c <= 0xEF ? 3
                : c >= 0xF0 && c <= 0xF4 ? 4 : 0, k;
        char esc[8];
        for (k = 1; k < len; k++)
            if ((s[k] & 0xC0) != 0x80)
                len = 0; /* ill-formed (and stops at the terminating NUL) */
        if (len == 1 && c >= 0x20 && c != 0x7F) {
            if (o + 1 >= n)
                break;
            dst[o++] = (char)c;
        } else if (len > 1 && !(c == 0xC2 && s[1] < 0xA0)) {
            if (o + (size_t)len >= n)
                break;
            memcpy(dst + o, s, (size_t)len);
            o += (size_t)len;
        } else {
            if (len == 2) /* a C1 control, U+0080-U+009F */
                snprintf(esc, sizeof esc, "\\u%04X", (unsigned)s[1]);
            else
                snprintf(esc, sizeof esc, "\\x%02X", (unsigned)c);
            if (len == 0)
                len = 1;
            if (o + strlen(esc) >= n)
                break;
            memcpy(dst + o, esc, strlen(esc));
            o += strlen(esc);
        }
        s += len;
    }
    dst[o] = '\0';
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

static kl_status vadd(kl_errors *e, int warning, const char *file, int line, int col,
                      const char *element, const char *fmt, va_list ap)
{
    kl_error_item *it;
    char msg[sizeof it->message];
    if (e->count >= KL_ERRORS_MAX) {
        e->dropped++;
        return KL_OK;
    }
    if (e->count == e->cap && grow(e) != KL_OK) {
        e->dropped++;
        return KL_ENOMEM;
    }
    it = &e->items[e->count++];
    copy_printable(it->file, sizeof it->file, file);
    copy_printable(it->element, sizeof it->element, element);
    it->line = line;
    it->col = col;
    it->warning = warning;
    vsnprintf(msg, sizeof msg, fmt, ap);
    copy_printable(it->message, sizeof it->message, msg);
    return KL_OK;
}

kl_status kl_errors_add(kl_errors *e, const char *file, int line, int col,
                        const char *element, const char *fmt, ...)
{
    va_list ap;
    kl_status st;
    va_start(ap, fmt);
    st = vadd(e, 0, file, line, col, element, fmt, ap);
    va_end(ap);
    return st;
}

kl_status kl_errors_warn(kl_errors *e, const char *file, int line, int col,
                         const char *element, const char *fmt, ...)
{
    va_list ap;
    kl_status st;
    va_start(ap, fmt);
    st = vadd(e, 1, file, line, col, element, fmt, ap);
    va_end(ap);
    return st;
}

int kl_error_format(const kl_error_item *it, char *buf, size_t n)
{
    char where[300] = "";
    if (it->file[0] && it->line > 0)
        snprintf(where, sizeof where, "%s:%d:%d: ", it->file, it->line, it->col);
    else if (it->file[0])
        snprintf(where, sizeof where, "%s: ", it->file);
    const char *w = it->warning ? "warning: " : "";
    if (it->element[0])
        return snprintf(buf, n, "%s%s%s: %s", where, w, it->element, it->message);
    return snprintf(buf, n, "%s%s%s", where, w, it->message);
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
