/* kilter: the text, CSV and JSON writers of a table described by its
 * columns (kilter/table.h).  Each writer walks the rows the format keeps and,
 * for a table with sub-rows, each row's sub-rows, and asks every column it
 * shows for its value: one getter call per cell, nothing allocated, printed
 * as it goes (a million-bus table streams straight to the file). */
#include <math.h>
#include <string.h>
#include "kl_report.h"
#include "kilter/table.h"

/* ---- escapes */

void kl_table_json_str(FILE *o, const char *s)
{
    if (!s) {
        fputs("null", o);
        return;
    }
    fputc('"', o);
    for (; *s; s++) {
        unsigned char c = (unsigned char)*s;
        if (c == '"' || c == '\\')
            fprintf(o, "\\%c", c);
        else if (c < 0x20)
            fprintf(o, "\\u%04x", c);
        else
            fputc(c, o);
    }
    fputc('"', o);
}

void kl_table_json_num(FILE *o, double x)
{
    if (!isfinite(x))
        fputs("null", o); /* JSON has no NaN or infinity */
    else
        kl_numfmt_put(o, "%.8g", x);
}

void kl_table_csv_str(FILE *o, const char *s)
{
    if (!s)
        s = "";
    if (!strpbrk(s, ",\"\n\r")) {
        fputs(s, o);
        return;
    }
    fputc('"', o); /* RFC 4180: quoted, quotes doubled */
    for (; *s; s++) {
        if (*s == '"')
            fputc('"', o);
        fputc(*s, o);
    }
    fputc('"', o);
}

static int shows(const kl_column *c, kl_table_format fmt)
{
    return (c->in >> fmt) & 1u;
}

static int kept(const kl_table *t, const void *ctx, int row, kl_table_format fmt)
{
    return !t->keep || t->keep(ctx, row, fmt);
}

static int has_subs(const kl_table *t, kl_table_format fmt)
{
    return t->next_sub && (!t->sub_in || ((t->sub_in >> fmt) & 1u));
}

static int first_sub(const kl_table *t, const void *ctx, int row)
{
    return t->next_sub(ctx, row, -1);
}

static void cell_of(const kl_column *c, const void *ctx, int row, int sub, kl_cell *v)
{
    v->num = NAN;
    v->i = 0;
    v->str = NULL;
    v->cls = NULL;
    c->get(ctx, row, sub, v);
}

int kl_table_get(const kl_table *t, const void *ctx, const char *key, kl_table_format fmt,
                 int row, int sub, kl_cell *v)
{
    for (int k = 0; k < t->ncol; k++)
        if (shows(&t->col[k], fmt) && strcmp(t->col[k].key, key) == 0) {
            cell_of(&t->col[k], ctx, row, sub, v);
            return 0;
        }
    return -1;
}

int kl_table_count(const kl_table *t, const void *ctx, kl_table_format fmt)
{
    int n = t->rows(ctx), k = 0;
    for (int r = 0; r < n; r++)
        k += kept(t, ctx, r, fmt) != 0;
    return k;
}

/* ---- text */

/* A text format taken apart: prefix, then %[-]width[.prec]conv, then suffix. */
typedef struct {
    int prefix;      /* bytes before the conversion */
    int left;        /* '-' flag */
    int width;       /* field width, 0 none */
    int suffix_len;  /* characters the suffix prints ("%%" is one) */
} text_spec;

static void text_parse(const char *fmt, text_spec *s)
{
    const char *p = fmt;
    memset(s, 0, sizeof *s);
    while (*p && !(p[0] == '%' && p[1] != '%'))
        p += p[0] == '%' ? 2 : 1;
    s->prefix = (int)(p - fmt);
    if (!*p)
        return;
    for (p++; *p && strchr("-+ #0", *p); p++)
        s->left |= *p == '-';
    for (; *p >= '0' && *p <= '9'; p++)
        s->width = 10 * s->width + (*p - '0');
    while (*p && !strchr("diouxXeEfFgGaAcsp", *p))
        p++; /* precision and length modifiers */
    if (*p)
        p++;
    for (; *p; p += p[0] == '%' ? 2 : 1)
        s->suffix_len++;
}

void kl_table_text_head(FILE *o, const kl_table *t)
{
    for (int k = 0; k < t->ncol; k++) {
        const kl_column *c = &t->col[k];
        text_spec s;
        if (!shows(c, KL_TABLE_TEXT) || !c->text_head || !c->text_head[0])
            continue;
        if (c->text_hfmt) {
            fprintf(o, c->text_hfmt, c->text_head);
            continue;
        }
        text_parse(c->text, &s);
        fwrite(c->text, 1, (size_t)s.prefix, o);
        fprintf(o, s.left ? "%-*s" : "%*s", s.width + s.suffix_len, c->text_head);
    }
    fputc('\n', o);
}

static void text_cell(FILE *o, const kl_column *c, const kl_cell *v)
{
    switch (c->type) {
    case KL_CELL_NUM:
        if (!isfinite(v->num)) {
            /* a dash in the field's width, its separator one space short: as
             * the study's tables have always printed it (an infinity is no
             * more a figure than a NaN: never "inf" in a table) */
            text_spec s;
            text_parse(c->text, &s);
            if (s.prefix > 1)
                fwrite(c->text, 1, (size_t)s.prefix - 1, o);
            fprintf(o, "%*s", s.width, "-");
        } else {
            kl_numfmt_put(o, c->text, v->num);
        }
        break;
    case KL_CELL_STR: fprintf(o, c->text, v->str ? v->str : ""); break;
    case KL_CELL_BOOL:
    case KL_CELL_CHAR:
    case KL_CELL_INT: fprintf(o, c->text, v->i); break;
    }
}

void kl_table_text_line(FILE *o, const kl_table *t, const void *ctx, int row, int sub)
{
    kl_cell v;
    for (int k = 0; k < t->ncol; k++) {
        const kl_column *c = &t->col[k];
        if (!shows(c, KL_TABLE_TEXT))
            continue;
        cell_of(c, ctx, row, sub, &v);
        text_cell(o, c, &v);
    }
    fputc('\n', o);
}

void kl_table_text_rows(FILE *o, const kl_table *t, const void *ctx)
{
    int n = t->rows(ctx);
    for (int r = 0; r < n; r++) {
        if (!kept(t, ctx, r, KL_TABLE_TEXT))
            continue;
        if (!has_subs(t, KL_TABLE_TEXT))
            kl_table_text_line(o, t, ctx, r, -1);
        else
            for (int j = first_sub(t, ctx, r); j >= 0; j = t->next_sub(ctx, r, j))
                kl_table_text_line(o, t, ctx, r, j);
        if (t->text_after)
            t->text_after(o, ctx, r);
    }
}

void kl_table_text(FILE *o, const kl_table *t, const void *ctx)
{
    kl_table_text_head(o, t);
    kl_table_text_rows(o, t, ctx);
}

/* ---- CSV (RFC 4180; the contracts in docs/flow.md, docs/study.md,
 * docs/rebalance.md) */

static void csv_cell(FILE *o, const kl_column *c, const kl_cell *v)
{
    switch (c->type) {
    case KL_CELL_NUM:
        if (isfinite(v->num))
            kl_numfmt_put(o, c->csv ? c->csv : "%.6f", v->num);
        break;
    case KL_CELL_STR: kl_table_csv_str(o, v->str); break;
    case KL_CELL_CHAR: fputc(v->i, o); break;
    case KL_CELL_BOOL:
    case KL_CELL_INT: fprintf(o, "%d", v->i); break;
    }
}

static void csv_line(FILE *o, const kl_table *t, const void *ctx, int row, int sub)
{
    kl_cell v;
    int n = 0;
    for (int k = 0; k < t->ncol; k++) {
        const kl_column *c = &t->col[k];
        if (!shows(c, KL_TABLE_CSV))
            continue;
        if (n++)
            fputc(',', o);
        cell_of(c, ctx, row, sub, &v);
        csv_cell(o, c, &v);
    }
    fputc('\n', o);
}

void kl_table_csv(FILE *o, const kl_table *t, const void *ctx)
{
    int n = 0;
    for (int k = 0; k < t->ncol; k++)
        if (shows(&t->col[k], KL_TABLE_CSV))
            fprintf(o, "%s%s", n++ ? "," : "", t->col[k].key);
    fputc('\n', o);
    n = t->rows(ctx);
    for (int r = 0; r < n; r++) {
        if (!kept(t, ctx, r, KL_TABLE_CSV))
            continue;
        if (!has_subs(t, KL_TABLE_CSV))
            csv_line(o, t, ctx, r, -1);
        else
            for (int j = first_sub(t, ctx, r); j >= 0; j = t->next_sub(ctx, r, j))
                csv_line(o, t, ctx, r, j);
    }
}

/* ---- JSON */

static void json_cell(FILE *o, const kl_column *c, const kl_cell *v)
{
    switch (c->type) {
    case KL_CELL_NUM:
        if (!isfinite(v->num))
            fputs("null", o);
        else
            kl_numfmt_put(o, c->json ? c->json : "%.8g", v->num);
        break;
    case KL_CELL_STR: kl_table_json_str(o, v->str); break;
    case KL_CELL_CHAR: fprintf(o, "\"%c\"", v->i); break;
    case KL_CELL_BOOL: fputs(v->i ? "true" : "false", o); break;
    case KL_CELL_INT: fprintf(o, "%d", v->i); break;
    }
}

/* A JSON key split into the group it opens ("a" of "a.b" or "a[]") and the
 * member's own key ("b"; none in an array). */
typedef struct {
    const char *group;
    size_t glen;     /* 0: no group */
    int array;
    const char *key;
    size_t klen;
} json_key;

static void json_key_split(const kl_column *c, json_key *k)
{
    const char *s = c->json_key ? c->json_key : c->key, *dot = strchr(s, '.');
    size_t n = strlen(s);
    memset(k, 0, sizeof *k);
    k->key = s;
    k->klen = n;
    if (dot) {
        k->group = s;
        k->glen = (size_t)(dot - s);
        k->key = dot + 1;
        k->klen = n - k->glen - 1;
    } else if (n > 2 && strcmp(s + n - 2, "[]") == 0) {
        k->group = s;
        k->glen = n - 2;
        k->array = 1;
        k->klen = 0;
    }
}

/* Members of one object level: the row's own columns (sub < 0 asks for the
 * row level, where the sub-rows' container takes the place of the first sub
 * column) or one sub-row's columns. */
static void json_level(FILE *o, const kl_table *t, const void *ctx, int row, int sub, int subs);

static void json_subs(FILE *o, const kl_table *t, const void *ctx, int row)
{
    char buf[8];
    int n = 0;
    fprintf(o, "\"%s\": %c", t->sub_key, t->sub_name ? '{' : '[');
    for (int j = first_sub(t, ctx, row); j >= 0; j = t->next_sub(ctx, row, j)) {
        if (n++)
            fputs(", ", o);
        if (t->sub_name)
            fprintf(o, "\"%s\": ", t->sub_name(ctx, row, j, buf));
        fputc('{', o);
        json_level(o, t, ctx, row, j, 1);
        fputc('}', o);
    }
    fputc(t->sub_name ? '}' : ']', o);
}

static void json_level(FILE *o, const kl_table *t, const void *ctx, int row, int sub, int subs)
{
    json_key open = {0};
    int n = 0, ingroup = 0, subs_done = 0;
    kl_cell v;
    for (int k = 0; k < t->ncol; k++) {
        const kl_column *c = &t->col[k];
        json_key key;
        if (!shows(c, KL_TABLE_JSON))
            continue;
        if (!subs && c->sub) { /* at the row level, the sub-rows' place */
            if (subs_done || !has_subs(t, KL_TABLE_JSON))
                continue;
            if (ingroup)
                fputc(open.array ? ']' : '}', o);
            ingroup = 0;
            fputs(n++ ? ", " : "", o);
            json_subs(o, t, ctx, row);
            subs_done = 1;
            continue;
        }
        if (subs != c->sub)
            continue;
        json_key_split(c, &key);
        int same = ingroup && key.glen == open.glen && strncmp(key.group, open.group, key.glen) == 0;
        if (ingroup && !same) {
            fputc(open.array ? ']' : '}', o);
            ingroup = 0;
        }
        if (same) {
            fputs(", ", o);
        } else {
            fputs(n++ ? ", " : "", o);
            if (key.glen) {
                fprintf(o, "\"%.*s\": %c", (int)key.glen, key.group, key.array ? '[' : '{');
                open = key;
                ingroup = 1;
            }
        }
        if (key.klen)
            fprintf(o, "\"%.*s\": ", (int)key.klen, key.key);
        cell_of(c, ctx, row, sub, &v);
        json_cell(o, c, &v);
    }
    if (ingroup)
        fputc(open.array ? ']' : '}', o);
}

void kl_table_json_members(FILE *o, const kl_table *t, const void *ctx, int row)
{
    json_level(o, t, ctx, row, -1, 0);
}

void kl_table_json(FILE *o, const kl_table *t, const void *ctx)
{
    int n = t->rows(ctx), shown = 0, in = t->json_indent ? t->json_indent : 2;
    fprintf(o, "%*s\"%s\": [", in, "", t->json_key ? t->json_key : t->name);
    for (int r = 0; r < n; r++) {
        if (!kept(t, ctx, r, KL_TABLE_JSON))
            continue;
        fprintf(o, "%s\n%*s{", shown++ ? "," : "", 2 * in, "");
        kl_table_json_members(o, t, ctx, r);
        fputc('}', o);
    }
    if (shown || !(t->flags & KL_TABLE_JSON_EMPTY_INLINE))
        fprintf(o, "\n%*s]", in, "");
    else
        fputc(']', o);
}
