/* kilter: reading the values of one feeder element (loader helpers).
 *
 * Every value is checked where it is read: its YAML kind, its unit, its range;
 * every problem is reported with the value's own line and column and the
 * element's name, and reading goes on so that all problems are reported. */
#include <complex.h>
#include <stdarg.h>
#include <stdio.h>
#include <string.h>
#include "kilter/units.h"
#include "kl_io.h"

static const char *label(kl_loader *L);

static void vreport(kl_loader *L, int line, int col, const char *fmt, va_list ap)
{
    char msg[700];
    vsnprintf(msg, sizeof msg, fmt, ap);
    L->nerr++;
    if (kl_errors_add(L->err, L->file, line, col, label(L), "%s", msg) == KL_ENOMEM)
        L->nomem = 1;
}

void kl_ld_error(kl_loader *L, int node, const char *fmt, ...)
{
    const kl_ynode *n = kl_ynode_at(L->r, node);
    va_list ap;
    va_start(ap, fmt);
    vreport(L, n->line, n->col, fmt, ap);
    va_end(ap);
}

void kl_ld_warning(kl_loader *L, int node, const char *fmt, ...)
{
    const kl_ynode *n = kl_ynode_at(L->r, node);
    char msg[700];
    va_list ap;
    if (L->nwarn++ >= KL_WARNINGS_MAX)
        return; /* counted; the loader says how many were not shown */
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    if (kl_errors_warn(L->err, L->file, n->line, n->col, label(L), "%s", msg) == KL_ENOMEM)
        L->nomem = 1;
}

void kl_ld_error_at(kl_loader *L, int line, int col, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    vreport(L, line, col, fmt, ap);
    va_end(ap);
}

/* Only remembered here: the label is formatted when a problem is reported,
 * which keeps a million clean elements from paying for a million snprintf.
 * The name is copied, never kept as a pointer: callers pass names from
 * buffers of their own (a default name being made, the reader's node pool)
 * that are gone before the element's last message. */
void kl_ld_label(kl_loader *L, const char *kind, const char *name, int index)
{
    size_t n = 0;
    L->elem_kind = kind;
    L->elem_index = index;
    if (name)
        while (n < sizeof L->elem_name - 1 && name[n])
            n++;
    memcpy(L->elem_name, name ? name : "", n);
    L->elem_name[n] = '\0';
}

static const char *label(kl_loader *L)
{
    const char *kind = L->elem_kind ? L->elem_kind : "";
    if (L->elem_name[0])
        snprintf(L->elem, sizeof L->elem, "%s \"%.120s\"", kind, L->elem_name);
    else if (L->elem_index >= 0 && kind[0])
        snprintf(L->elem, sizeof L->elem, "%s #%d", kind, L->elem_index + 1);
    else
        snprintf(L->elem, sizeof L->elem, "%s", kind);
    return L->elem;
}

#define GROW_CHUNK (1u << 20)

/* When entry n is the first to start in a new MiB of the array, that MiB
 * (within the capacity) is mapped in one call rather than page by page as
 * the appends reach it (prefault.c). */
static void prefault_ahead(void *arr, int cap, int n, size_t size)
{
    size_t off = (size_t)n * size, k = off / GROW_CHUNK, end = (size_t)cap * size;
    if (n > 0 && (off - size) / GROW_CHUNK == k)
        return;
    if (end > (k + 1) * GROW_CHUNK)
        end = (k + 1) * GROW_CHUNK;
    kl_prefault((char *)arr + k * GROW_CHUNK, end - k * GROW_CHUNK);
}

/* Geometric growth: amortised O(1) appends, no per-element allocation.
 * Makes (*arr)[n] valid and zero.  Only that entry is cleared: zeroing the
 * whole new half on each doubling wrote (and faulted in) up to twice the
 * memory the feeder needs, about a tenth of the load time at a million buses. */
int kl_ld_grow(kl_loader *L, void **arr, int *cap, int n, size_t size)
{
    void *p;
    int c;
    if (n >= *cap) {
        if (*cap > (1 << 29)) {
            L->nomem = 1;
            return -1;
        }
        c = *cap ? *cap * 2 : 16;
        p = kl_realloc(*arr, (size_t)c * size);
        if (!p) {
            L->nomem = 1;
            return -1;
        }
        *arr = p;
        *cap = c;
    }
    prefault_ahead(*arr, *cap, n, size);
    memset((char *)*arr + (size_t)n * size, 0, size);
    return 0;
}

const char *kl_ld_strdup(kl_loader *L, const char *s)
{
    const char *p = kl_arena_strdup(L->f->arena, s);
    if (!p)
        L->nomem = 1;
    return p;
}

/* Levenshtein distance, capped: only short key names are compared. */
static int edit_distance(const char *a, const char *b)
{
    int la = (int)strlen(a), lb = (int)strlen(b), i, j;
    int row[64];
    if (la > 62 || lb > 62)
        return 99;
    for (j = 0; j <= lb; j++)
        row[j] = j;
    for (i = 1; i <= la; i++) {
        int diag = row[0];
        row[0] = i;
        for (j = 1; j <= lb; j++) {
            int up = row[j];
            int cost = a[i - 1] == b[j - 1] ? 0 : 1;
            int best = diag + cost;
            if (row[j] + 1 < best)
                best = row[j] + 1;
            if (row[j - 1] + 1 < best)
                best = row[j - 1] + 1;
            row[j] = best;
            diag = up;
        }
    }
    return row[lb];
}

/* Index of the closest name within a few edits, or -1. */
int kl_ld_suggest(const char *word, const char *const *names, int n)
{
    int i, best = -1, bestd = 99, limit = (int)strlen(word) / 3 + 1;
    if (limit < 2)
        limit = 2;
    for (i = 0; i < n && names[i]; i++) {
        int d = edit_distance(word, names[i]);
        if (d < bestd) {
            bestd = d;
            best = i;
        }
    }
    return bestd <= limit ? best : -1;
}

static void key_list(const char *const *keys, char *buf, size_t n)
{
    size_t used = 0;
    int i;
    buf[0] = '\0';
    for (i = 0; keys[i] && used < n; i++)
        used += (size_t)snprintf(buf + used, n - used, "%s%s", i ? ", " : "", keys[i]);
}

static void unknown_key(kl_loader *L, int key, const char *const *keys, const char *what)
{
    const char *k = kl_ynode_text(L->r, key);
    int s = kl_ld_suggest(k, keys, KL_FIELDS_MAX);
    char list[400];
    if (s >= 0) {
        kl_ld_error(L, key, "unknown key '%s' in %s: did you mean '%s'?", k, what, keys[s]);
        return;
    }
    key_list(keys, list, sizeof list);
    kl_ld_error(L, key, "unknown key '%s' in %s: the keys known here are %s", k, what, list);
}

/* Position of the key text t (len bytes) in keys, or -1: strcmp's equality,
 * written out, since key dispatch runs for every key of every element and
 * most candidates differ in the first byte (a call to strcmp for the few
 * that do not cost more than the comparison of a short key). */
static int key_index(const char *const *keys, const char *t, int len)
{
    int i, j;
    if (len == 0)
        return -1;
    for (i = 0; keys[i]; i++) {
        const char *k = keys[i];
        if (k[0] != t[0])
            continue;
        for (j = 1; k[j] && k[j] == t[j]; j++)
            ;
        if (k[j] == t[j])
            return i;
    }
    return -1;
}

/* Labels the element by its `name:` value so that unknown keys written before
 * the name are reported against it. */
static void label_by_name(kl_loader *L, const kl_ynode *m)
{
    int key;
    for (key = m->first; key >= 0; key = kl_ynode_at(L->r, kl_ynode_at(L->r, key)->next)->next) {
        const kl_ynode *k = kl_ynode_at(L->r, key), *v = kl_ynode_at(L->r, k->next);
        const char *t = kl_ynode_text(L->r, key);
        if (t[0] == 'n' && strcmp(t, "name") == 0 && v->kind == KL_YSCALAR)
            kl_ld_label(L, L->elem_kind, kl_ynode_text(L->r, k->next), L->elem_index);
    }
}

int kl_ld_fields(kl_loader *L, int map, const char *const *keys, kl_fields *fl, const char *what)
{
    const kl_ynode *m = kl_ynode_at(L->r, map);
    int i, key;
    fl->map = map;
    fl->keys = keys;
    for (i = 0; i < KL_FIELDS_MAX; i++)
        fl->val[i] = -1;
    if (m->kind != KL_YMAP) {
        kl_ld_error(L, map, "expected a mapping of keys for %s (like '{name: x, ...}')", what);
        return -1;
    }
    if (keys[0] && strcmp(keys[0], "name") == 0)
        label_by_name(L, m);
    for (key = m->first; key >= 0; key = kl_ynode_at(L->r, kl_ynode_at(L->r, key)->next)->next) {
        const kl_ynode *k = kl_ynode_at(L->r, key);
        int found;
        if (k->kind != KL_YSCALAR) {
            kl_ld_error(L, key, "expected a plain key name in %s", what);
            continue;
        }
        found = key_index(keys, kl_ynode_text(L->r, key), k->len);
        if (found < 0)
            unknown_key(L, key, keys, what);
        else if (fl->val[found] >= 0)
            kl_ld_error(L, key, "key '%s' given twice in %s: keep one", keys[found], what);
        else
            fl->val[found] = k->next;
    }
    return 0;
}

static int missing(kl_loader *L, const kl_fields *fl, int k, int flags)
{
    if (flags & KL_F_REQ)
        kl_ld_error(L, fl->map, "missing required key '%s'", fl->keys[k]);
    return -1;
}

static int expect_scalar(kl_loader *L, int node, const char *key)
{
    if (kl_ynode_at(L->r, node)->kind == KL_YSCALAR)
        return 0;
    kl_ld_error(L, node, "'%s' expects a single value, not a %s", key,
                kl_ynode_at(L->r, node)->kind == KL_YMAP ? "mapping" : "list");
    return -1;
}

/* The first byte of text[0 .. len) that a name may not hold, or -1: NUL,
 * the C0 controls and DEL, the C1 controls U+0080-U+009F (UTF-8 C2 80 to
 * C2 9F).  Names reach terminals and reports, where such a byte acts (ESC
 * and CSI rewrite the screen, ECMA-48 5.2) and a NUL ends the name early.
 * Free text (KL_F_TEXT) may hold line feeds and tabs. */
static int bad_byte(const char *text, int len, int flags)
{
    const unsigned char *t = (const unsigned char *)text;
    int i;
    for (i = 0; i < len; i++) {
        if ((flags & KL_F_TEXT) && (t[i] == '\n' || t[i] == '\t'))
            continue;
        if (t[i] < 0x20 || t[i] == 0x7F || (t[i] == 0xC2 && i + 1 < len && t[i + 1] >= 0x80 && t[i + 1] < 0xA0))
            return i;
    }
    return -1;
}

int kl_ld_printable(kl_loader *L, int node, const char *key, int flags)
{
    const kl_ynode *n = kl_ynode_at(L->r, node);
    const unsigned char *t = (const unsigned char *)kl_ynode_text(L->r, node);
    int at = n->kind == KL_YSCALAR ? bad_byte((const char *)t, n->len, flags) : -1;
    if (at < 0)
        return 0;
    kl_ld_error(L, node, "'%s' holds a control character (%s %s%02X at byte %d of the value): "
                "names and text may not contain NUL, escape or other control characters; remove it",
                key, t[at] == 0xC2 ? "code point" : "byte", t[at] == 0xC2 ? "U+00" : "0x",
                t[at] == 0xC2 ? t[at + 1] : t[at], at + 1);
    return -1;
}

const char *kl_ld_str(kl_loader *L, const kl_fields *fl, int k, int flags)
{
    int v = fl->val[k];
    if (v < 0) {
        missing(L, fl, k, flags);
        return NULL;
    }
    if (expect_scalar(L, v, fl->keys[k]) < 0)
        return NULL;
    if (kl_ynode_at(L->r, v)->len == 0) {
        kl_ld_error(L, v, "'%s' is empty: give a value", fl->keys[k]);
        return NULL;
    }
    if (kl_ld_printable(L, v, fl->keys[k], flags) < 0)
        return NULL;
    return kl_ynode_text(L->r, v);
}

int kl_ld_node(kl_loader *L, const kl_fields *fl, int k, int kind, int flags)
{
    int v = fl->val[k];
    static const char *const kinds[] = {"", "single value", "mapping", "list"};
    if (v < 0)
        return missing(L, fl, k, flags);
    if (kind && kl_ynode_at(L->r, v)->kind != kind) {
        kl_ld_error(L, v, "'%s' expects a %s", fl->keys[k], kinds[kind]);
        return -1;
    }
    return v;
}

static int range_ok(kl_loader *L, int node, const char *key, double x, int flags)
{
    if ((flags & KL_F_POS) && !(x > 0)) {
        kl_ld_error(L, node, "'%s' must be greater than zero, got '%s'", key, kl_ynode_text(L->r, node));
        return 0;
    }
    if ((flags & KL_F_NONNEG) && x < 0) {
        kl_ld_error(L, node, "'%s' must not be negative, got '%s'", key, kl_ynode_text(L->r, node));
        return 0;
    }
    return 1;
}

int kl_ld_range(kl_loader *L, int node, const char *key, int q, double x)
{
    const char *what = "", *text = kl_ynode_text(L->r, node);
    char span[120];
    int j = kl_ld_range_judge(L->range_cache, L->elem_kind, key, q, x, &what, span, sizeof span);
    if (j == 2) {
        kl_ld_error(L, node, "'%s' = %s is outside what %s can be (%s): check the number, its "
                    "exponent and its unit", key, text, what, span);
        return -1;
    }
    if (j == 1)
        kl_ld_warning(L, node, "'%s' = %s is unusual for %s (usually %s): kilter uses it as given; "
                      "check it if it was not meant", key, text, what, span);
    return 0;
}

int kl_ld_real_node(kl_loader *L, int node, const char *key, int q, double *out, int flags)
{
    char why[300];
    double x;
    if (expect_scalar(L, node, key) < 0)
        return -1;
    if (kl_units_parse_real(kl_ynode_text(L->r, node), (kl_quantity)q, &x, why, sizeof why) != KL_OK) {
        kl_ld_error(L, node, "'%s': %s", key, why);
        return -1;
    }
    if (!range_ok(L, node, key, x, flags) || kl_ld_range(L, node, key, q, x) < 0)
        return -1;
    *out = x;
    return 0;
}

int kl_ld_real(kl_loader *L, const kl_fields *fl, int k, int q, double *out, double def, int flags)
{
    if (fl->val[k] < 0) {
        *out = def;
        return missing(L, fl, k, flags);
    }
    return kl_ld_real_node(L, fl->val[k], fl->keys[k], q, out, flags);
}

int kl_ld_complex_node(kl_loader *L, int node, const char *key, int q, kl_complex *out)
{
    char why[300];
    if (expect_scalar(L, node, key) < 0)
        return -1;
    if (kl_units_parse(kl_ynode_text(L->r, node), (kl_quantity)q, 1, out, why, sizeof why) != KL_OK) {
        kl_ld_error(L, node, "'%s': %s", key, why);
        return -1;
    }
    return kl_ld_range(L, node, key, q, cabs(*out));
}

int kl_ld_complex(kl_loader *L, const kl_fields *fl, int k, int q, kl_complex *out, int flags)
{
    if (fl->val[k] < 0)
        return missing(L, fl, k, flags);
    return kl_ld_complex_node(L, fl->val[k], fl->keys[k], q, out);
}

int kl_ld_int(kl_loader *L, const kl_fields *fl, int k, int *out, int def, int flags)
{
    double x;
    int v = fl->val[k];
    *out = def;
    if (v < 0)
        return missing(L, fl, k, flags);
    if (kl_ld_real_node(L, v, fl->keys[k], KL_Q_NUMBER, &x, flags) < 0)
        return -1;
    /* The range first: converting a double outside int's range is undefined
     * (C11 6.3.1.4p1); !(|x| <= 1e9) also refuses a NaN. */
    if (!(x >= -1e9 && x <= 1e9) || x != (double)(int)x) {
        kl_ld_error(L, v, "'%s' must be a whole number, got '%s'", fl->keys[k], kl_ynode_text(L->r, v));
        return -1;
    }
    *out = (int)x;
    return 0;
}

int kl_ld_bool(kl_loader *L, const kl_fields *fl, int k, int def)
{
    int v = fl->val[k];
    const char *t;
    if (v < 0 || expect_scalar(L, v, fl->keys[k]) < 0)
        return def;
    t = kl_ynode_text(L->r, v);
    if (strcmp(t, "true") == 0)
        return 1;
    if (strcmp(t, "false") == 0)
        return 0;
    kl_ld_error(L, v, "'%s' expects true or false, got '%s'", fl->keys[k], t);
    return def;
}

/* Position of the value among names (NULL-terminated), def when absent. */
int kl_ld_enum(kl_loader *L, const kl_fields *fl, int k, const char *const *names, int def)
{
    int v = fl->val[k], i, s;
    const char *t;
    char list[300];
    if (v < 0 || expect_scalar(L, v, fl->keys[k]) < 0)
        return def;
    t = kl_ynode_text(L->r, v);
    for (i = 0; names[i]; i++)
        if (strcmp(names[i], t) == 0)
            return i;
    key_list(names, list, sizeof list);
    s = kl_ld_suggest(t, names, 64);
    if (s >= 0)
        kl_ld_error(L, v, "'%s' cannot be '%s': did you mean '%s'? (one of %s)", fl->keys[k], t, names[s], list);
    else
        kl_ld_error(L, v, "'%s' cannot be '%s': expected one of %s", fl->keys[k], t, list);
    return def;
}

/* "abc", "ac", "b": a phase mask; 0 after an error. */
int kl_ld_phases(kl_loader *L, int node, const char *key)
{
    const char *t;
    int mask = 0, bit;
    if (expect_scalar(L, node, key) < 0)
        return 0;
    t = kl_ynode_text(L->r, node);
    for (; *t; t++) {
        char c = *t >= 'A' && *t <= 'C' ? (char)(*t - 'A' + 'a') : *t;
        if (c < 'a' || c > 'c') {
            kl_ld_error(L, node, "'%s' expects phase letters a, b, c (like 'abc' or 'ac'), got '%s'",
                        key, kl_ynode_text(L->r, node));
            return 0;
        }
        bit = 1 << (c - 'a');
        if (mask & bit) {
            kl_ld_error(L, node, "'%s': phase %c written twice in '%s'", key, c, kl_ynode_text(L->r, node));
            return 0;
        }
        mask |= bit;
    }
    if (!mask)
        kl_ld_error(L, node, "'%s' is empty: give phase letters like 'abc'", key);
    return mask;
}

/* Looks name up now; when it is not (yet) known, remembers it for the end of
 * the file, since elements may refer to others written further down. */
void kl_ld_ref(kl_loader *L, int what, int elem, const char *name, int node, int *target,
               const kl_names *table)
{
    int i = kl_names_find(table, name, strlen(name));
    kl_pending_ref *p;
    const kl_ynode *n = kl_ynode_at(L->r, node);
    *target = i;
    if (i >= 0)
        return;
    if (kl_ld_grow(L, (void **)&L->pending, &L->cap_pending, L->npending, sizeof *L->pending) < 0)
        return;
    p = &L->pending[L->npending];
    p->name = kl_ld_strdup(L, name);
    if (!p->name)
        return;
    p->what = what;
    p->elem = elem;
    p->loc.line = n->line;
    p->loc.col = n->col;
    L->npending++;
}
