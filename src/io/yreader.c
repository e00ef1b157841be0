/* kilter: the loader's view of the YAML event stream.
 *
 * The feeder file is never held as a document tree: the loader walks the
 * top-level mapping event by event and reads one element (one list item) at a
 * time into a node pool that is reused for the next element.  Anchors and
 * aliases are refused outright: they are never needed in a feeder file and
 * they are how a small file expands into a huge one.
 *
 * Events come from the fast scanner for the feeder subset (yaml_fast.c) while
 * it is sure of them, and from libyaml's parser otherwise.  When the scanner
 * declines, libyaml is started on the input from the beginning and the events
 * already handed out are parsed again and skipped, so the loader sees
 * exactly libyaml's stream, errors included.  A running hash of the handed-out
 * events is checked against libyaml's on the way; a difference is reported as
 * an internal error rather than loading what libyaml would not. */
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>
#include <yaml.h>
#include "kl_io.h"

#define MAX_DEPTH 32             /* deeper than any feeder element needs */
#define MAX_NODES (1 << 20)      /* per element */
#define MAX_TEXT (64u << 20)     /* bytes of scalar text per element */
#define HASH_SEED 0x243f6a8885a308d3ull /* any constant: pi's first fraction bits */

struct kl_yreader {
    kl_ypool pool;          /* first: kl_ynode_at reads it through the header */
    yaml_parser_t parser;
    yaml_event_t ev;        /* libyaml's current event */
    kl_yfast *fast;         /* the fast scanner, until it declines */
    kl_yfast_event fev;     /* its current event */
    int have_ev;
    int failed;
    int nomem;
    int declined;
    void *fp;               /* input, to give libyaml from the start on a decline */
    long fp_start;
    const char *text;
    size_t len;
    uint64_t hash;          /* of the events the fast scanner handed out */
    size_t nfast;           /* how many */
    int last_line, last_col;
    const char *file;
    kl_errors *err;
    int nnodes, capnodes;
    size_t ntext, captext;
};
/* kl_ynode_at and kl_ynode_text (kl_io.h) read the pool through a pointer to
 * the reader: it must stay the first member. */
_Static_assert(offsetof(struct kl_yreader, pool) == 0,
               "kl_yreader: the node pool must be the first member (kl_ynode_at)");

static kl_yreader *reader_alloc(const char *file, kl_errors *err)
{
    kl_yreader *r = kl_calloc(1, sizeof *r);
    if (!r)
        return NULL;
    if (!yaml_parser_initialize(&r->parser)) {
        kl_free(r);
        return NULL;
    }
    r->file = file;
    r->err = err;
    r->hash = HASH_SEED;
    return r;
}

kl_yreader *kl_yreader_new_file_window(void *fp, const char *file, kl_errors *err, size_t window)
{
    kl_yreader *r = reader_alloc(file, err);
    if (!r)
        return NULL;
    r->fp = fp;
    r->fp_start = ftell(fp);
    /* Only input that can be read again from the start (not a pipe) gets the
     * fast scanner: a decline has to give libyaml the whole input. */
    if (r->fp_start < 0 || fseek(fp, r->fp_start, SEEK_SET) != 0) {
        yaml_parser_set_input_file(&r->parser, fp);
        r->declined = 1;
        return r;
    }
    r->fast = kl_yfast_new(fp, NULL, 0, window);
    if (!r->fast) {
        kl_yreader_free(r);
        return NULL;
    }
    return r;
}

kl_yreader *kl_yreader_new_file(void *fp, const char *file, kl_errors *err)
{
    return kl_yreader_new_file_window(fp, file, err, KL_YFAST_WINDOW);
}

kl_yreader *kl_yreader_new_buffer(const char *text, size_t len, const char *file, kl_errors *err)
{
    kl_yreader *r = reader_alloc(file, err);
    if (!r)
        return NULL;
    r->text = text;
    r->len = len;
    r->fast = kl_yfast_new(NULL, text, len, 0);
    if (!r->fast) {
        kl_yreader_free(r);
        return NULL;
    }
    return r;
}

void kl_yreader_free(kl_yreader *r)
{
    if (!r)
        return;
    if (r->have_ev && !r->fast)
        yaml_event_delete(&r->ev);
    kl_yfast_free(r->fast);
    yaml_parser_delete(&r->parser);
    kl_free(r->pool.nodes);
    kl_free(r->pool.text);
    kl_free(r);
}

static void fail(kl_yreader *r, int line, int col, const char *fmt, const char *a, const char *b)
{
    if (!r->failed)
        kl_errors_add(r->err, r->file, line, col, NULL, fmt, a, b);
    r->failed = 1;
}

static void syntax_error(kl_yreader *r)
{
    const yaml_parser_t *p = &r->parser;
    const yaml_mark_t *m = &p->problem_mark;
    if (p->error == YAML_MEMORY_ERROR) {
        r->nomem = 1;
        r->failed = 1;
        return;
    }
    fail(r, (int)m->line + 1, (int)m->column + 1,
         "YAML syntax error: %s%s; check the indentation, colons and quotes around this point",
         p->problem ? p->problem : "unreadable input",
         p->context ? " (while reading the enclosing block)" : "");
}

static int has_anchor(const yaml_event_t *e)
{
    switch (e->type) {
    case YAML_SCALAR_EVENT: return e->data.scalar.anchor != NULL;
    case YAML_MAPPING_START_EVENT: return e->data.mapping_start.anchor != NULL;
    case YAML_SEQUENCE_START_EVENT: return e->data.sequence_start.anchor != NULL;
    default: return 0;
    }
}

static kl_yev event_kind(const yaml_event_t *e)
{
    switch (e->type) {
    case YAML_STREAM_END_EVENT: return KL_YEV_STREAM_END;
    case YAML_DOCUMENT_START_EVENT: return KL_YEV_DOC_START;
    case YAML_DOCUMENT_END_EVENT: return KL_YEV_DOC_END;
    case YAML_MAPPING_START_EVENT: return KL_YEV_MAP_START;
    case YAML_MAPPING_END_EVENT: return KL_YEV_MAP_END;
    case YAML_SEQUENCE_START_EVENT: return KL_YEV_SEQ_START;
    case YAML_SEQUENCE_END_EVENT: return KL_YEV_SEQ_END;
    case YAML_SCALAR_EVENT: return KL_YEV_SCALAR;
    default: return KL_YEV_ERROR;
    }
}

/* A running hash of the events (not cryptographic: it catches a scanner
 * that disagrees with libyaml, it does not resist a crafted file). */
static uint64_t mix(uint64_t h, uint64_t w)
{
    h = (h ^ w) * 0x9e3779b97f4a7c15ull; /* 2^64 / golden ratio (Knuth, TAOCP 6.4) */
    return h ^ (h >> 29);
}

/* Leading bytes kept by each mask, in memory order (so the hash does not
 * depend on the byte order of the machine). */
static const unsigned char TAIL_MASK[8][8] = {
    {0}, {0xff}, {0xff, 0xff}, {0xff, 0xff, 0xff}, {0xff, 0xff, 0xff, 0xff},
    {0xff, 0xff, 0xff, 0xff, 0xff}, {0xff, 0xff, 0xff, 0xff, 0xff, 0xff},
    {0xff, 0xff, 0xff, 0xff, 0xff, 0xff, 0xff}};

/* The event's kind, mark and length in one word (overlapping bits only make
 * very large values weaker checks), then its text 8 bytes at a time; the
 * last word holds the remaining bytes and zeros.  `padded`: text may be
 * read up to 8 bytes past its end (the fast scanner's store guarantees it),
 * so the last word is one load and a mask, not a copy of variable length. */
static uint64_t hash_event(uint64_t h, int kind, size_t line, size_t col, const char *text, size_t len,
                           int padded)
{
    uint64_t w, m;
    h = mix(h, (uint64_t)line ^ ((uint64_t)col << 32) ^ ((uint64_t)len << 44) ^ ((uint64_t)kind << 60));
    for (; len >= 8; len -= 8, text += 8) {
        memcpy(&w, text, 8);
        h = mix(h, w);
    }
    if (!len)
        return h;
    if (padded) {
        memcpy(&w, text, 8);
        memcpy(&m, TAIL_MASK[len], 8);
        w &= m;
    } else {
        unsigned char tail[8] = {0};
        memcpy(tail, text, len);
        memcpy(&w, tail, 8);
    }
    return mix(h, w);
}

static void mismatch(kl_yreader *r)
{
    fail(r, r->last_line, r->last_col,
         "internal error: kilter's fast YAML reader and libyaml read this file differently "
         "before this point%s%s; please report it with the file", "", "");
}

/* The fast scanner declined: libyaml from the start of the input, skipping
 * (and checking) the events already handed out. */
static int switch_to_libyaml(kl_yreader *r)
{
    uint64_t h = HASH_SEED;
    size_t n = 0;
    kl_yfast_free(r->fast);
    r->fast = NULL;
    r->declined = 1;
    if (r->fp) {
        if (fseek(r->fp, r->fp_start, SEEK_SET) != 0) {
            fail(r, 0, 0, "cannot read the file again from its start%s%s", "", "");
            return 0;
        }
        clearerr(r->fp);
        yaml_parser_set_input_file(&r->parser, r->fp);
    } else {
        yaml_parser_set_input_string(&r->parser, (const unsigned char *)r->text, r->len);
    }
    while (n < r->nfast) {
        if (!yaml_parser_parse(&r->parser, &r->ev)) {
            if (r->parser.error == YAML_MEMORY_ERROR)
                r->nomem = r->failed = 1;
            else
                mismatch(r);
            return 0;
        }
        if (r->ev.type != YAML_STREAM_START_EVENT) {
            const yaml_mark_t *m = &r->ev.start_mark;
            int scalar = r->ev.type == YAML_SCALAR_EVENT;
            h = hash_event(h, event_kind(&r->ev), m->line, m->column,
                           scalar ? (const char *)r->ev.data.scalar.value : "",
                           scalar ? r->ev.data.scalar.length : 0, 0);
            n++;
        }
        yaml_event_delete(&r->ev);
    }
    if (h != r->hash) {
        mismatch(r);
        return 0;
    }
    return 1;
}

/* The next event from the fast scanner; 0 when it declined (or failed). */
static int fast_next(kl_yreader *r)
{
    kl_yfast_event *e = &r->fev;
    int k = kl_yfast_next(r->fast, e);
    if (k < 0) {
        r->nomem = r->failed = 1;
        return 0;
    }
    if (k == 0)
        return 0;
    r->have_ev = 1;
    r->hash = hash_event(r->hash, e->kind, e->line, e->col, e->text, e->len, 1);
    r->nfast++;
    r->last_line = (int)e->line + 1;
    r->last_col = (int)e->col + 1;
    return 1;
}

/* libyaml's next event (after the fast scanner declined, or without it). */
static kl_yev libyaml_peek(kl_yreader *r)
{
    for (;;) {
        if (r->failed)
            return KL_YEV_ERROR;
        if (!r->have_ev) {
            if (!yaml_parser_parse(&r->parser, &r->ev)) {
                syntax_error(r);
                return KL_YEV_ERROR;
            }
            r->have_ev = 1;
        }
        if (r->ev.type == YAML_ALIAS_EVENT || has_anchor(&r->ev)) {
            fail(r, (int)r->ev.start_mark.line + 1, (int)r->ev.start_mark.column + 1,
                 "YAML anchors and aliases ('&name', '*name') are not accepted in a feeder file%s%s: "
                 "write the values out in full", "", "");
            return KL_YEV_ERROR;
        }
        if (r->ev.type != YAML_STREAM_START_EVENT)
            return event_kind(&r->ev);
        kl_yreader_consume(r);
    }
}

/* The fast scanner declined: libyaml from here on. */
static kl_yev declined_peek(kl_yreader *r)
{
    if (r->failed || !switch_to_libyaml(r))
        return KL_YEV_ERROR;
    return libyaml_peek(r);
}

/* Called for every event, most often with the event already peeked: that
 * case and the fast scanner's next event come first. */
kl_yev kl_yreader_peek(kl_yreader *r)
{
    if (r->fast && !r->failed) {
        if (r->have_ev || fast_next(r))
            return (kl_yev)r->fev.kind;
        return declined_peek(r);
    }
    return libyaml_peek(r);
}

void kl_yreader_consume(kl_yreader *r)
{
    if (r->have_ev) {
        if (!r->fast)
            yaml_event_delete(&r->ev);
        r->have_ev = 0;
    }
}

void kl_yreader_mark(const kl_yreader *r, int *line, int *col)
{
    if (r->have_ev && r->fast) {
        *line = (int)r->fev.line + 1;
        *col = (int)r->fev.col + 1;
    } else if (r->have_ev) {
        *line = (int)r->ev.start_mark.line + 1;
        *col = (int)r->ev.start_mark.column + 1;
    } else if (r->fast) {
        *line = r->last_line;
        *col = r->last_col;
    } else {
        *line = (int)r->parser.mark.line + 1;
        *col = (int)r->parser.mark.column + 1;
    }
}

const char *kl_yreader_text(const kl_yreader *r, size_t *len)
{
    *len = 0;
    if (!r->have_ev)
        return "";
    if (r->fast) {
        *len = r->fev.kind == KL_YEV_SCALAR ? r->fev.len : 0;
        return *len ? r->fev.text : "";
    }
    if (r->ev.type != YAML_SCALAR_EVENT)
        return "";
    *len = r->ev.data.scalar.length;
    return (const char *)r->ev.data.scalar.value;
}

int kl_yreader_declined(const kl_yreader *r)
{
    return r->declined;
}

int kl_yreader_nomem(const kl_yreader *r)
{
    return r->nomem;
}

int kl_yreader_failed(const kl_yreader *r)
{
    return r->failed;
}

void kl_yreader_reset(kl_yreader *r)
{
    r->nnodes = 0;
    r->ntext = 0;
}

static int new_node(kl_yreader *r, int kind)
{
    kl_ynode *n;
    if (r->nnodes == MAX_NODES) {
        int line, col;
        kl_yreader_mark(r, &line, &col);
        fail(r, line, col, "element too large: more than a million YAML nodes in one element%s%s", "", "");
        return -1;
    }
    if (r->nnodes == r->capnodes) {
        int cap = r->capnodes ? r->capnodes * 2 : 64;
        kl_ynode *p = kl_realloc(r->pool.nodes, (size_t)cap * sizeof *p);
        if (!p) {
            r->nomem = r->failed = 1;
            return -1;
        }
        r->pool.nodes = p;
        r->capnodes = cap;
    }
    n = &r->pool.nodes[r->nnodes];
    memset(n, 0, sizeof *n);
    n->kind = kind;
    kl_yreader_mark(r, &n->line, &n->col);
    n->first = n->next = -1;
    return r->nnodes++;
}

static int store_text(kl_yreader *r, int node)
{
    size_t len;
    const char *text = kl_yreader_text(r, &len);
    if (len >= MAX_TEXT || r->ntext + len + 1 > MAX_TEXT) {
        fail(r, r->pool.nodes[node].line, r->pool.nodes[node].col,
             "scalar text too long (over 64 MiB in one element)%s%s", "", "");
        return -1;
    }
    if (r->ntext + len + 1 > r->captext) {
        size_t cap = r->captext ? r->captext : 1024;
        char *p;
        while (cap < r->ntext + len + 1)
            cap *= 2;
        p = kl_realloc(r->pool.text, cap);
        if (!p) {
            r->nomem = r->failed = 1;
            return -1;
        }
        r->pool.text = p;
        r->captext = cap;
    }
    memcpy(r->pool.text + r->ntext, text, len);
    r->pool.text[r->ntext + len] = '\0';
    r->pool.nodes[node].text = (int)r->ntext;
    r->pool.nodes[node].len = (int)len;
    r->ntext += len + 1;
    return 0;
}

static int read_value(kl_yreader *r, int depth);

/* Children of a mapping or sequence, up to its end event. */
static int read_children(kl_yreader *r, int node, kl_yev end, int depth)
{
    int last = -1;
    for (;;) {
        kl_yev k = kl_yreader_peek(r);
        int c;
        if (k == KL_YEV_ERROR)
            return -1;
        if (k == end) {
            kl_yreader_consume(r);
            return node;
        }
        c = read_value(r, depth + 1);
        if (c < 0)
            return -1;
        if (last < 0)
            r->pool.nodes[node].first = c;
        else
            r->pool.nodes[last].next = c;
        last = c;
        r->pool.nodes[node].count++;
    }
}

static int read_value(kl_yreader *r, int depth)
{
    kl_yev k = kl_yreader_peek(r);
    int n;
    if (k == KL_YEV_ERROR)
        return -1;
    if (depth > MAX_DEPTH) {
        int line, col;
        kl_yreader_mark(r, &line, &col);
        fail(r, line, col, "YAML nested too deeply (more than 32 levels)%s%s: "
             "a feeder element needs no more than three", "", "");
        return -1;
    }
    if (k == KL_YEV_SCALAR) {
        n = new_node(r, KL_YSCALAR);
        if (n < 0 || store_text(r, n) < 0)
            return -1;
        kl_yreader_consume(r);
        return n;
    }
    if (k == KL_YEV_MAP_START || k == KL_YEV_SEQ_START) {
        n = new_node(r, k == KL_YEV_MAP_START ? KL_YMAP : KL_YSEQ);
        if (n < 0)
            return -1;
        kl_yreader_consume(r);
        return read_children(r, n, k == KL_YEV_MAP_START ? KL_YEV_MAP_END : KL_YEV_SEQ_END, depth);
    }
    {
        int line, col;
        kl_yreader_mark(r, &line, &col);
        fail(r, line, col, "unexpected YAML structure%s%s", "", "");
    }
    return -1;
}

int kl_yreader_tree(kl_yreader *r)
{
    return read_value(r, 0);
}

int kl_yreader_skip(kl_yreader *r)
{
    long depth = 0;
    do {
        kl_yev k = kl_yreader_peek(r);
        if (k == KL_YEV_ERROR || k == KL_YEV_STREAM_END || k == KL_YEV_DOC_END)
            return -1;
        if (k == KL_YEV_MAP_START || k == KL_YEV_SEQ_START)
            depth++;
        else if (k == KL_YEV_MAP_END || k == KL_YEV_SEQ_END)
            depth--;
        kl_yreader_consume(r);
    } while (depth > 0);
    return 0;
}
