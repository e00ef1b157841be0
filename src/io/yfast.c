/* kilter: a scanner for the subset of YAML that feeder files are written in.
 *
 * It produces the events libyaml's parser would (type, scalar bytes, start
 * line and column) for block mappings and sequences laid out by indentation,
 * one-line flow mappings and sequences, one-line plain and quoted scalars,
 * literal and folded block scalars of even indentation, comments and a
 * leading '---'.  It never reports an error: on anything outside that subset,
 * or anything it is not sure libyaml would read the same way, it declines and
 * the reader (feeder_yaml.c) hands the whole input to libyaml instead.
 *
 * libyaml looks ahead of the event it returns: its scanner fetches the next
 * token (to settle simple keys) and its reader decodes, and checks, up to a
 * 16 KiB block of input ahead (reader.c, INPUT_RAW_BUFFER_SIZE).  So an event
 * is handed out only after the next content line has been scanned, and only
 * when every byte up to FAST_MARGIN past that line is printable ASCII or a
 * line feed: whatever libyaml would stop at lies beyond the events already
 * given, and after a decline libyaml reproduces them before it gets there.
 *
 * Input is read in chunks into a bounded window; scalar text is copied into a
 * small store owned by the event queue, so the window can move under it. */
#include <stdint.h>
#include <stdio.h>
#include <string.h>
#include "kl_io.h"

#define FAST_MARGIN ((size_t)64 << 10)  /* four times libyaml's read-ahead */
#define FAST_DEPTH 64                  /* block nesting; feeders use four */
#define FAST_FLOW_DEPTH 16             /* flow nesting */
#define FAST_KEY_MAX 1000              /* libyaml drops a simple key after 1024 characters */
#define NO_BYTE SIZE_MAX

enum { BLK_MAP, BLK_SEQ };

typedef struct {
    int kind;          /* kl_yev */
    size_t line, col;  /* 0-based, as libyaml's yaml_mark_t */
    size_t text, len;  /* scalar bytes at txt + text */
} fast_event;

struct kl_yfast {
    FILE *fp;              /* NULL: the whole input is in data */
    const char *data;      /* window: the caller's text, or win */
    char *win;             /* [wcap] owned window (file input) */
    size_t wcap, wlen;     /* window size, bytes in it */
    size_t pos;            /* start of the next line in the window */
    size_t wbase;          /* input offset of data[0] */
    size_t bad_at;         /* input offset of the first byte outside LF and 0x20-0x7e */
    int eof;               /* all input is in the window */
    size_t line;           /* 0-based line number of pos */
    int depth;             /* open block collections */
    int bindent[FAST_DEPTH];
    char bkind[FAST_DEPTH];
    int started;           /* document start given */
    int open;              /* the last line ended in 'key:' with the value to come */
    int plain_indent;      /* a plain scalar ended the last line inside a block of this indent; -2 none */
    int done, declined, nomem;
    fast_event *q;         /* [qcap] queued events, qn of them, qhead handed out */
    size_t qhead, qn, qcap;
    size_t nrel;           /* events q[0 .. nrel) may be handed out */
    char *txt;             /* [tcap] scalar bytes of the queued events */
    size_t tlen, tcap;
};

/* One line being scanned: [b, e), e at its line feed or the end of input. */
typedef struct {
    const char *b, *p, *e;
    size_t line;
} cursor;

/* Offset of the first byte outside LF and 0x20-0x7e in p[0 .. n), or
 * NO_BYTE.  Whole blocks are tested without branches (vectorised by the
 * compiler) and only a block with such a byte is searched. */
static size_t first_bad(const char *p, size_t n)
{
    size_t i = 0, j;
    for (; i + 64 <= n; i += 64) {
        unsigned bad = 0;
        for (j = 0; j < 64; j++) {
            unsigned char c = (unsigned char)p[i + j];
            bad |= ((unsigned char)(c - 0x20) > 0x5e) & (c != '\n');
        }
        if (bad)
            break;
    }
    for (; i < n; i++) {
        unsigned char c = (unsigned char)p[i];
        if ((unsigned char)(c - 0x20) > 0x5e && c != '\n')
            return i;
    }
    return NO_BYTE;
}

/* Characters that end a plain scalar, or need a closer look: in flow
 * context, in block context; and those that may not start one (the YAML 1.1
 * indicators, spec 5.3; '-' is looked at again). */
enum { C_FLOW = 1, C_BLOCK = 2, C_NOSTART = 4 };
static const unsigned char cclass[256] = {
    [' '] = C_FLOW | C_BLOCK | C_NOSTART, [':'] = C_FLOW | C_BLOCK | C_NOSTART,
    [','] = C_FLOW | C_NOSTART, ['['] = C_FLOW | C_NOSTART, [']'] = C_FLOW | C_NOSTART,
    ['{'] = C_FLOW | C_NOSTART, ['}'] = C_FLOW | C_NOSTART,
    ['-'] = C_NOSTART, ['?'] = C_NOSTART, ['#'] = C_NOSTART, ['&'] = C_NOSTART, ['*'] = C_NOSTART,
    ['!'] = C_NOSTART, ['|'] = C_NOSTART, ['>'] = C_NOSTART, ['\''] = C_NOSTART, ['"'] = C_NOSTART,
    ['%'] = C_NOSTART, ['@'] = C_NOSTART, ['`'] = C_NOSTART,
};

kl_yfast *kl_yfast_new(void *fp, const char *text, size_t len, size_t window)
{
    kl_yfast *s = kl_calloc(1, sizeof *s);
    if (!s)
        return NULL;
    s->fp = fp;
    s->bad_at = NO_BYTE;
    s->plain_indent = -2;
    if (fp) {
        s->wcap = window;
        s->win = kl_malloc(window);
        if (!s->win) {
            kl_free(s);
            return NULL;
        }
        s->data = s->win;
    } else {
        s->data = text;
        s->wlen = len;
        s->wcap = len;
        s->eof = 1;
        s->bad_at = first_bad(text, len);
    }
    return s;
}

void kl_yfast_free(kl_yfast *s)
{
    if (!s)
        return;
    kl_free(s->win);
    kl_free(s->q);
    kl_free(s->txt);
    kl_free(s);
}

/* Drops the lines before pos and reads more input; 0 if nothing could be added. */
static int fill(kl_yfast *s)
{
    size_t got, bad;
    if (!s->fp || s->eof)
        return 0;
    if (s->pos > 0) {
        memmove(s->win, s->win + s->pos, s->wlen - s->pos);
        s->wbase += s->pos;
        s->wlen -= s->pos;
        s->pos = 0;
    }
    if (s->wlen == s->wcap)
        return 0;
    got = fread(s->win + s->wlen, 1, s->wcap - s->wlen, s->fp);
    if (got < s->wcap - s->wlen) {
        if (ferror(s->fp))
            return 0;
        s->eof = 1;
    }
    bad = first_bad(s->win + s->wlen, got);
    if (bad != NO_BYTE && s->bad_at == NO_BYTE)
        s->bad_at = s->wbase + s->wlen + bad;
    s->wlen += got;
    return got > 0 || s->eof;
}

/* The next line, complete, with FAST_MARGIN clean bytes behind it (or a
 * clean end of input).  0: at the end of input (*at_end set) or declined. */
static int next_line(kl_yfast *s, cursor *c, int *at_end)
{
    *at_end = 0;
    for (;;) {
        const char *b = s->data + s->pos;
        const char *nl = memchr(b, '\n', s->wlen - s->pos);
        if (nl || s->eof) {
            size_t end = s->wbase + (size_t)((nl ? nl : s->data + s->wlen) - s->data);
            if (s->bad_at != NO_BYTE && s->bad_at < end + FAST_MARGIN)
                return 0;
            if (!s->eof && s->wbase + s->wlen < end + FAST_MARGIN) {
                if (!fill(s))
                    return 0;
                continue;
            }
            if (!nl && s->pos == s->wlen) {
                *at_end = 1;
                return 0;
            }
            c->b = c->p = b;
            c->e = nl ? nl : s->data + s->wlen;
            c->line = s->line;
            return 1;
        }
        if (!fill(s))
            return 0;
    }
}

static void advance(kl_yfast *s, const cursor *c)
{
    s->pos = (size_t)(c->e - s->data) + (c->e < s->data + s->wlen);
    s->line++;
}

/* ---- the event queue */

/* Room for one more event and len more bytes of text; an allocation
 * failure is reported as such (kl_yfast_next returns -1), never as a
 * decline, so the loader's out-of-memory path is the same either way. */
static int reserve(kl_yfast *s, size_t len)
{
    if (s->qn == s->qcap) {
        size_t cap = s->qcap ? 2 * s->qcap : 256;
        fast_event *q = kl_realloc(s->q, cap * sizeof *q);
        if (!q) {
            s->nomem = 1;
            return 0;
        }
        s->q = q;
        s->qcap = cap;
    }
    if (s->tlen + len + 8 > s->tcap) {
        size_t cap = s->tcap ? s->tcap : 4096;
        char *t;
        while (cap < s->tlen + len + 8) /* 8: texts may be read a word at a time */
            cap *= 2;
        t = kl_realloc(s->txt, cap);
        if (!t) {
            s->nomem = 1;
            return 0;
        }
        s->txt = t;
        s->tcap = cap;
    }
    return 1;
}

static fast_event *push(kl_yfast *s, int kind, size_t line, size_t col, size_t len)
{
    fast_event *ev;
    if (!reserve(s, len))
        return NULL;
    ev = &s->q[s->qn++];
    ev->kind = kind;
    ev->line = line;
    ev->col = col;
    ev->text = s->tlen;
    ev->len = len;
    s->tlen += len;
    return ev;
}

static int emit_at(kl_yfast *s, int kind, const cursor *c, const char *at)
{
    return push(s, kind, c->line, (size_t)(at - c->b), 0) != NULL;
}

/* A scalar's value [v, v + n) starting (its mark) at `at`; single-quoted
 * values have '' folded to '. */
static int emit_scalar(kl_yfast *s, const cursor *c, const char *at, const char *v, size_t n, int squote)
{
    fast_event *ev = push(s, KL_YEV_SCALAR, c->line, (size_t)(at - c->b), n);
    char *o;
    size_t i;
    if (!ev)
        return 0;
    o = s->txt + ev->text;
    if (!squote) {
        memcpy(o, v, n);
        return 1;
    }
    for (i = 0; i < n; i++) {
        *o++ = v[i];
        if (v[i] == '\'')
            i++;
    }
    ev->len = (size_t)(o - (s->txt + ev->text));
    s->tlen = ev->text + ev->len;
    return 1;
}

/* Moves the events not yet handed out to the front of the queue. */
static void compact(kl_yfast *s)
{
    size_t i, t0;
    if (s->qhead == 0)
        return;
    t0 = s->qhead < s->qn ? s->q[s->qhead].text : s->tlen;
    memmove(s->q, s->q + s->qhead, (s->qn - s->qhead) * sizeof *s->q);
    memmove(s->txt, s->txt + t0, s->tlen - t0);
    s->qn -= s->qhead;
    s->nrel -= s->qhead;
    s->qhead = 0;
    s->tlen -= t0;
    for (i = 0; i < s->qn; i++)
        s->q[i].text -= t0;
}

/* ---- scalars */

static void skip_spaces(cursor *c)
{
    while (c->p < c->e && *c->p == ' ')
        c->p++;
}

/* Whether a plain scalar may start here (not at an indicator, except '-'
 * before a digit, letter or point; bytes are printable ASCII here). */
static int plain_start(const cursor *c)
{
    unsigned char ch = (unsigned char)*c->p, n;
    if (!(cclass[ch] & C_NOSTART))
        return 1;
    if (ch != '-' || c->p + 1 >= c->e)
        return 0;
    n = (unsigned char)c->p[1];
    return ((n | 0x20) >= 'a' && (n | 0x20) <= 'z') || (n >= '0' && n <= '9') || n == '.';
}

typedef struct {
    const char *at, *v; /* mark, value */
    size_t n;
    int squote;         /* single-quoted with '' inside */
} scalar;

/* A plain scalar ends at q: its text is the bytes before q less trailing
 * spaces (in YAML a plain scalar's trailing white space is not content). */
static int plain_take(cursor *c, scalar *sc, const char *q)
{
    const char *end = q;
    while (end > c->p && end[-1] == ' ')
        end--;
    sc->at = sc->v = c->p;
    sc->n = (size_t)(end - c->p);
    sc->squote = 0;
    c->p = q;
    return 1;
}

/* A plain scalar in block context: up to ': ', ':' at the end of the line,
 * ' #' or the end of the line.  A ':' before anything else is left to
 * libyaml. */
static int plain_block(cursor *c, scalar *sc)
{
    const char *q = c->p;
    for (;;) {
        while (q < c->e && !(cclass[(unsigned char)*q] & C_BLOCK))
            q++;
        if (q == c->e)
            break;
        if (*q == ':') {
            if (q + 1 == c->e || q[1] == ' ')
                break;
            return 0;
        }
        if (q + 1 < c->e && q[1] == '#')
            break; /* ' #': a comment */
        q++;
    }
    return plain_take(c, sc, q);
}

/* A plain scalar inside a flow collection: up to ',', a bracket or ': '. */
static int plain_flow(cursor *c, scalar *sc)
{
    const char *q = c->p;
    for (;;) {
        while (q < c->e && !(cclass[(unsigned char)*q] & C_FLOW))
            q++;
        if (q == c->e)
            return 0; /* a flow collection closes on its own line here */
        if (*q == ':') {
            if (q + 1 < c->e && q[1] == ' ')
                break;
            return 0;
        }
        if (*q != ' ')
            break;
        if (q + 1 < c->e && q[1] == '#')
            return 0;
        q++;
    }
    return plain_take(c, sc, q);
}

/* A quoted scalar closed on the same line; escapes are left to libyaml. */
static int quoted(cursor *c, scalar *sc)
{
    const char *q = c->p + 1;
    char quote = *c->p;
    sc->squote = 0;
    for (; q < c->e; q++) {
        if (*q == quote) {
            if (quote == '\'' && q + 1 < c->e && q[1] == '\'') {
                sc->squote = 1;
                q++;
                continue;
            }
            break;
        }
        if (*q == '\\' && quote == '"')
            return 0;
    }
    if (q == c->e)
        return 0;
    sc->at = c->p;
    sc->v = c->p + 1;
    sc->n = (size_t)(q - sc->v);
    c->p = q + 1;
    return 1;
}

static int is_quote(char ch)
{
    return ch == '\'' || ch == '"';
}

/* A mapping key and its ':' (followed by a space or the end of the line). */
static int key(kl_yfast *s, cursor *c)
{
    scalar sc;
    if (c->p >= c->e)
        return 0;
    if (is_quote(*c->p)) {
        if (!quoted(c, &sc))
            return 0;
        skip_spaces(c);
    } else if (!plain_start(c) || !plain_block(c, &sc)) {
        return 0;
    }
    if (c->p == c->e || *c->p != ':' || (size_t)(c->p - sc.at) > FAST_KEY_MAX)
        return 0;
    c->p++;
    if (c->p < c->e && *c->p != ' ')
        return 0;
    return emit_scalar(s, c, sc.at, sc.v, sc.n, sc.squote);
}

/* The rest of a line after its last token: spaces, then a comment or nothing. */
static int line_end(const cursor *c)
{
    const char *q = c->p;
    while (q < c->e && *q == ' ')
        q++;
    return q == c->e || (*q == '#' && q > c->p);
}

/* ---- flow collections, on one line */

static int flow_node(kl_yfast *s, cursor *c, int depth);

static int flow_scalar(kl_yfast *s, cursor *c)
{
    scalar sc;
    if (is_quote(*c->p)) {
        if (!quoted(c, &sc))
            return 0;
    } else if (!plain_start(c) || !plain_flow(c, &sc)) {
        return 0;
    }
    return emit_scalar(s, c, sc.at, sc.v, sc.n, sc.squote);
}

static int flow_item(kl_yfast *s, cursor *c, int depth)
{
    if (c->p >= c->e)
        return 0;
    if (*c->p == '{' || *c->p == '[')
        return flow_node(s, c, depth + 1);
    return flow_scalar(s, c);
}

/* After an item: ',' and the next item, or the closing bracket. 1 more, 2 closed. */
static int flow_next(kl_yfast *s, cursor *c, char close, int kind)
{
    skip_spaces(c);
    if (c->p < c->e && *c->p == ',') {
        c->p++;
        skip_spaces(c);
        return c->p < c->e && *c->p != close && *c->p != ',' ? 1 : 0;
    }
    if (c->p < c->e && *c->p == close) {
        if (!emit_at(s, kind, c, c->p))
            return 0;
        c->p++;
        return 2;
    }
    return 0;
}

static int flow_mapping(kl_yfast *s, cursor *c, int depth)
{
    for (;;) {
        const char *k = c->p;
        int r;
        if (c->p >= c->e || *c->p == '{' || *c->p == '[' || !flow_scalar(s, c))
            return 0;
        skip_spaces(c);
        if (c->p + 1 >= c->e || *c->p != ':' || c->p[1] != ' ' || (size_t)(c->p - k) > FAST_KEY_MAX)
            return 0;
        c->p += 2;
        skip_spaces(c);
        if (!flow_item(s, c, depth))
            return 0;
        r = flow_next(s, c, '}', KL_YEV_MAP_END);
        if (r != 1)
            return r == 2;
    }
}

static int flow_sequence(kl_yfast *s, cursor *c, int depth)
{
    for (;;) {
        int r;
        if (!flow_item(s, c, depth))
            return 0;
        skip_spaces(c);
        if (c->p < c->e && *c->p == ':')
            return 0; /* a single-pair mapping: libyaml's */
        r = flow_next(s, c, ']', KL_YEV_SEQ_END);
        if (r != 1)
            return r == 2;
    }
}

static int flow_node(kl_yfast *s, cursor *c, int depth)
{
    char open = *c->p, close = open == '{' ? '}' : ']';
    if (depth > FAST_FLOW_DEPTH)
        return 0;
    if (!emit_at(s, open == '{' ? KL_YEV_MAP_START : KL_YEV_SEQ_START, c, c->p))
        return 0;
    c->p++;
    skip_spaces(c);
    if (c->p < c->e && *c->p == close) {
        if (!emit_at(s, open == '{' ? KL_YEV_MAP_END : KL_YEV_SEQ_END, c, c->p))
            return 0;
        c->p++;
        return 1;
    }
    return open == '{' ? flow_mapping(s, c, depth) : flow_sequence(s, c, depth);
}

/* ---- block scalars: '|' or '>' with '-' or no chomping indicator, every
 * content line at one indentation, no empty line between content lines. */

static int block_header(cursor *c, int *strip)
{
    c->p++;
    *strip = c->p < c->e && *c->p == '-';
    if (*strip)
        c->p++;
    if (c->p < c->e && *c->p != ' ')
        return 0;
    return line_end(c);
}

/* Appends one content line; lines are joined by a space (folded) or a line feed. */
static int block_append(kl_yfast *s, const char *v, size_t n, int first, char join)
{
    if (!reserve(s, n + 1))
        return 0;
    if (!first)
        s->txt[s->tlen++] = join;
    memcpy(s->txt + s->tlen, v, n);
    s->tlen += n;
    return 1;
}

static int block_scalar(kl_yfast *s, cursor *c, int parent)
{
    char join = *c->p == '>' ? ' ' : '\n';
    size_t line = c->line, col = (size_t)(c->p - c->b), t0, nlines = 0;
    int strip, indent = -1, blanks = 0, at_end = 0, last_lf = 0;
    fast_event *ev;
    if (!block_header(c, &strip) || !(ev = push(s, KL_YEV_SCALAR, line, col, 0)))
        return 0;
    t0 = ev->text;
    advance(s, c);
    for (;;) {
        cursor l;
        int k;
        if (!next_line(s, &l, &at_end)) {
            if (!at_end)
                return 0;
            break;
        }
        for (k = 0; l.b + k < l.e && l.b[k] == ' '; k++)
            ;
        if (l.b + k == l.e) {
            if (indent < 0 || k >= indent)
                return 0;
            blanks++;
        } else if (indent < 0) {
            if (k <= parent || k < 1)
                return 0;
            indent = k;
        } else if (k < indent) {
            break;
        } else if (k > indent || blanks) {
            return 0;
        }
        if (l.b + k < l.e) {
            if (!block_append(s, l.b + k, (size_t)(l.e - l.b - k), nlines == 0, join))
                return 0;
            nlines++;
            last_lf = l.e < s->data + s->wlen;
        }
        advance(s, &l);
    }
    if (nlines == 0)
        return 0;
    if (!strip && last_lf) {
        if (!reserve(s, 1))
            return 0;
        s->txt[s->tlen++] = '\n';
    }
    ev = &s->q[s->qn - 1];
    ev->len = s->tlen - t0;
    return 1;
}

/* ---- block structure */

static int push_block(kl_yfast *s, int kind, int indent, const cursor *c, const char *at)
{
    if (s->depth == FAST_DEPTH)
        return 0;
    s->bkind[s->depth] = (char)kind;
    s->bindent[s->depth++] = indent;
    return emit_at(s, kind == BLK_MAP ? KL_YEV_MAP_START : KL_YEV_SEQ_START, c, at);
}

/* What follows 'key:' on its line.  *advanced: a block scalar moved past the line. */
static int map_value(kl_yfast *s, cursor *c, int indent, int *advanced)
{
    scalar sc;
    skip_spaces(c);
    if (c->p == c->e || *c->p == '#') {
        s->open = 1;
        return 1;
    }
    if (*c->p == '{' || *c->p == '[')
        return flow_node(s, c, 0) && line_end(c);
    if (*c->p == '|' || *c->p == '>') {
        *advanced = 1;
        return block_scalar(s, c, indent);
    }
    if (is_quote(*c->p)) {
        if (!quoted(c, &sc))
            return 0;
    } else {
        if (!plain_start(c) || !plain_block(c, &sc) || (c->p < c->e && *c->p == ':'))
            return 0;
        s->plain_indent = indent;
    }
    return emit_scalar(s, c, sc.at, sc.v, sc.n, sc.squote) && line_end(c);
}

static int map_entry(kl_yfast *s, cursor *c, int indent, int *advanced)
{
    return key(s, c) && map_value(s, c, indent, advanced);
}

/* Whether the line at c->p starts a key ('...: ' on it). */
static int looks_like_key(const cursor *c)
{
    cursor t = *c;
    scalar sc;
    if (t.p >= t.e)
        return 0;
    if (is_quote(*t.p)) {
        if (!quoted(&t, &sc))
            return 0;
        skip_spaces(&t);
    } else if (!plain_start(&t) || !plain_block(&t, &sc)) {
        return 0;
    }
    return t.p < t.e && *t.p == ':';
}

static int dash(const cursor *c)
{
    return *c->p == '-' && (c->p + 1 == c->e || c->p[1] == ' ');
}

/* '- item' of a block sequence of indent `indent`. */
static int seq_entry(kl_yfast *s, cursor *c, int indent, int *advanced)
{
    scalar sc;
    if (c->p + 1 >= c->e)
        return 0;
    c->p += 2;
    skip_spaces(c);
    if (c->p == c->e || *c->p == '#' || dash(c))
        return 0;
    if (*c->p == '{' || *c->p == '[')
        return flow_node(s, c, 0) && line_end(c);
    if (looks_like_key(c)) {
        int col = (int)(c->p - c->b);
        return push_block(s, BLK_MAP, col, c, c->p) && map_entry(s, c, col, advanced);
    }
    if (is_quote(*c->p)) {
        if (!quoted(c, &sc))
            return 0;
    } else {
        if (!plain_start(c) || !plain_block(c, &sc) || (c->p < c->e && *c->p == ':'))
            return 0;
        s->plain_indent = indent;
    }
    return emit_scalar(s, c, sc.at, sc.v, sc.n, sc.squote) && line_end(c);
}

/* Closes the blocks indented deeper than `col`; the END events carry the
 * mark of the token that closes them.  0 only when out of memory. */
static int close_blocks(kl_yfast *s, const cursor *c, int col)
{
    while (s->depth > 0 && s->bindent[s->depth - 1] > col) {
        s->depth--;
        if (!emit_at(s, s->bkind[s->depth] == BLK_MAP ? KL_YEV_MAP_END : KL_YEV_SEQ_END, c, c->p))
            return 0;
    }
    return 1;
}

/* Closes the blocks a line at `col` ends; it must continue the one left. */
static int dedent(kl_yfast *s, const cursor *c, int col)
{
    return close_blocks(s, c, col) && s->depth > 0 && s->bindent[s->depth - 1] == col;
}

static int doc_marker(const cursor *c, char ch)
{
    return c->p == c->b && c->e - c->p >= 3 && c->p[0] == ch && c->p[1] == ch && c->p[2] == ch &&
           (c->e - c->p == 3 || c->p[3] == ' ');
}

/* Opens the collection the line begins (the document's root, or the value
 * of the 'key:' above it). */
static int open_block(kl_yfast *s, cursor *c, int col)
{
    if (dash(c))
        return push_block(s, BLK_SEQ, col, c, c->p);
    return looks_like_key(c) && push_block(s, BLK_MAP, col, c, c->p);
}

/* A line with content; 0 to decline. */
static int content_line(kl_yfast *s, cursor *c, int *advanced)
{
    int col = (int)(c->p - c->b);
    if (doc_marker(c, '.'))
        return 0;
    if (doc_marker(c, '-')) {
        if (s->started)
            return 0;
        s->started = s->open = 1;
        c->p += 3;
        return emit_at(s, KL_YEV_DOC_START, c, c->b) && line_end(c);
    }
    if (s->plain_indent > -2 && col > s->plain_indent)
        return 0; /* a plain scalar running on to this line */
    s->plain_indent = -2;
    if (!s->started) {
        s->started = 1;
        if (!emit_at(s, KL_YEV_DOC_START, c, c->p))
            return 0;
        s->open = 1;
    }
    if (s->open) {
        s->open = 0;
        if ((s->depth > 0 && col <= s->bindent[s->depth - 1]) || !open_block(s, c, col))
            return 0; /* an empty value, or a sequence at its key's indentation */
    } else if (!dedent(s, c, col)) {
        return 0;
    }
    if (s->bkind[s->depth - 1] == BLK_SEQ)
        return dash(c) && seq_entry(s, c, col, advanced);
    return map_entry(s, c, col, advanced);
}

/* The end of input.  libyaml first closes the blocks indented deeper than
 * the column where the input ends, at that point, then moves to the start
 * of the next line (scanner.c, yaml_parser_fetch_stream_end) and closes the
 * rest, the document and the stream there. */
static int finish(kl_yfast *s)
{
    cursor c;
    size_t last = s->wlen;
    if (!s->started || s->open || s->depth == 0)
        return 0;
    while (last > 0 && s->data[last - 1] != '\n')
        last--;
    c.p = c.e = s->data + s->wlen;
    c.b = s->data + last;
    c.line = s->line - (c.b < c.p);
    if (!close_blocks(s, &c, (int)(c.p - c.b)))
        return 0;
    c.b = c.p;
    c.line = s->line;
    if (!close_blocks(s, &c, -1))
        return 0;
    if (!emit_at(s, KL_YEV_DOC_END, &c, c.p) || !emit_at(s, KL_YEV_STREAM_END, &c, c.p))
        return 0;
    s->nrel = s->qn;
    s->done = 1;
    return 1;
}

/* Scans one line; its events wait until the next content line is scanned. */
static int scan_line(kl_yfast *s)
{
    cursor c;
    int at_end, advanced = 0;
    size_t before = s->qn;
    if (!next_line(s, &c, &at_end))
        return at_end && finish(s);
    skip_spaces(&c);
    if (c.p == c.e || *c.p == '#') {
        advance(s, &c);
        return 1;
    }
    if (!content_line(s, &c, &advanced))
        return 0;
    if (!advanced)
        advance(s, &c);
    s->nrel = before;
    return 1;
}

int kl_yfast_next(kl_yfast *s, kl_yfast_event *out)
{
    const fast_event *ev;
    while (s->qhead == s->nrel) {
        if (s->done || s->declined)
            return s->nomem ? -1 : 0;
        compact(s);
        if (!scan_line(s)) {
            s->declined = 1;
            return s->nomem ? -1 : 0;
        }
    }
    ev = &s->q[s->qhead++];
    /* hash_event (yreader.c) reads a text a word at a time, up to 8 bytes
     * past its end: reserve() keeps that slack after every text */
    KL_ASSERT(!s->txt || ev->text + ev->len + 8 <= s->tcap);
    out->kind = ev->kind;
    out->line = ev->line;
    out->col = ev->col;
    out->text = s->txt ? s->txt + ev->text : "";
    out->len = ev->len;
    return 1;
}
