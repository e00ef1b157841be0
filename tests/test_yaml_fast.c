/* The loader's YAML reader (src/feeder_yaml.c with the fast scanner of
 * src/yaml_fast.c) against libyaml, the reference library: for every YAML
 * file of the project and thousands of seeded mutations of them, the reader's
 * whole event stream (event types, scalar bytes, start line and column) and
 * its error, when there is one, must be libyaml's own (libyaml 0.2.5's
 * yaml_parser_parse, read here directly).  The fast scanner must really be
 * used on ordinary feeder files, and must hand over to libyaml on input
 * outside its subset without changing what the loader sees. */
#include <check.h>
#include <dirent.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <yaml.h>
#include "kilter/error.h"
#include "kilter/feeder.h"
#include "kilter/rebalance.h"
#include "kl_io.h"

#define MAX_EVENTS 200000
#define SMALL_WINDOW ((size_t)80 << 10) /* the scanner's 64 KiB margin plus 16 KiB */

typedef struct {
    int kind, line, col; /* 1-based marks */
    size_t text, len;    /* scalar bytes at buf + text */
} tev;

typedef struct {
    tev *ev;
    size_t n, cap;
    char *buf;
    size_t blen, bcap;
    int err;        /* 0 none, 1 syntax error, 2 anchor or alias */
    int eline, ecol;
    char emsg[800];
} tstream;

static void ts_add(tstream *s, int kind, int line, int col, const char *t, size_t len)
{
    tev *e;
    if (s->n == s->cap) {
        s->cap = s->cap ? 2 * s->cap : 256;
        s->ev = realloc(s->ev, s->cap * sizeof *s->ev);
        ck_assert_ptr_nonnull(s->ev);
    }
    if (s->blen + len > s->bcap) {
        while (s->blen + len > s->bcap)
            s->bcap = s->bcap ? 2 * s->bcap : 4096;
        s->buf = realloc(s->buf, s->bcap);
        ck_assert_ptr_nonnull(s->buf);
    }
    e = &s->ev[s->n++];
    e->kind = kind;
    e->line = line;
    e->col = col;
    e->text = s->blen;
    e->len = len;
    if (len)
        memcpy(s->buf + s->blen, t, len);
    s->blen += len;
}

static void ts_free(tstream *s)
{
    free(s->ev);
    free(s->buf);
    memset(s, 0, sizeof *s);
}

static int ref_kind(yaml_event_type_t t)
{
    switch (t) {
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

static int ref_anchored(const yaml_event_t *e)
{
    return e->type == YAML_ALIAS_EVENT ||
           (e->type == YAML_SCALAR_EVENT && e->data.scalar.anchor) ||
           (e->type == YAML_MAPPING_START_EVENT && e->data.mapping_start.anchor) ||
           (e->type == YAML_SEQUENCE_START_EVENT && e->data.sequence_start.anchor);
}

/* The reference: libyaml's parser on the text, as the loader would take it
 * (stream start skipped, stopping at an anchor or alias). */
static void ref_stream(const char *text, size_t len, tstream *s)
{
    yaml_parser_t p;
    yaml_event_t e;
    ck_assert(yaml_parser_initialize(&p));
    yaml_parser_set_input_string(&p, (const unsigned char *)text, len);
    while (s->n < MAX_EVENTS) {
        int line, col, end;
        if (!yaml_parser_parse(&p, &e)) {
            s->err = 1;
            s->eline = (int)p.problem_mark.line + 1;
            s->ecol = (int)p.problem_mark.column + 1;
            snprintf(s->emsg, sizeof s->emsg, "%s", p.problem ? p.problem : "unreadable input");
            break;
        }
        line = (int)e.start_mark.line + 1;
        col = (int)e.start_mark.column + 1;
        if (ref_anchored(&e)) {
            s->err = 2;
            s->eline = line;
            s->ecol = col;
            yaml_event_delete(&e);
            break;
        }
        end = e.type == YAML_STREAM_END_EVENT;
        if (e.type != YAML_STREAM_START_EVENT)
            ts_add(s, ref_kind(e.type), line, col,
                   e.type == YAML_SCALAR_EVENT ? (const char *)e.data.scalar.value : "",
                   e.type == YAML_SCALAR_EVENT ? e.data.scalar.length : 0);
        yaml_event_delete(&e);
        if (end)
            break;
    }
    yaml_parser_delete(&p);
}

/* What the loader sees through the reader; returns whether it declined. */
static int got_stream(kl_yreader *r, kl_errors *err, tstream *s)
{
    while (s->n < MAX_EVENTS) {
        int k = kl_yreader_peek(r), line, col;
        size_t len;
        const char *t;
        if (k == KL_YEV_ERROR) {
            const kl_error_item *it;
            s->err = 1;
            ck_assert_int_ge(err->count, 1);
            it = &err->items[err->count - 1];
            s->eline = it->line;
            s->ecol = it->col;
            snprintf(s->emsg, sizeof s->emsg, "%s", it->message);
            break;
        }
        kl_yreader_mark(r, &line, &col);
        t = kl_yreader_text(r, &len);
        ts_add(s, k, line, col, t, len);
        if (k == KL_YEV_STREAM_END)
            break;
        kl_yreader_consume(r);
    }
    return kl_yreader_declined(r);
}

/* Check records every assertion it passes (a write per call), so events are
 * compared with a plain test and only a difference is asserted. */
static void compare(const tstream *want, const tstream *got, const char *what)
{
    size_t i;
    for (i = 0; i < want->n && i < got->n; i++) {
        const tev *a = &want->ev[i], *b = &got->ev[i];
        if (a->kind == b->kind && a->line == b->line && a->col == b->col && a->len == b->len &&
            (a->len == 0 || memcmp(want->buf + a->text, got->buf + b->text, a->len) == 0))
            continue;
        ck_abort_msg("%s: event %zu: libyaml kind %d at %d:%d '%.*s', reader kind %d at %d:%d '%.*s'",
                     what, i, a->kind, a->line, a->col, (int)a->len, a->len ? want->buf + a->text : "",
                     b->kind, b->line, b->col, (int)b->len, b->len ? got->buf + b->text : "");
    }
    ck_assert_msg(want->n == got->n, "%s: libyaml gives %zu events, the reader %zu", what, want->n, got->n);
    ck_assert_msg((want->err != 0) == (got->err != 0), "%s: libyaml error %d '%s', reader error %d '%s'",
                  what, want->err, want->emsg, got->err, got->emsg);
    if (!want->err)
        return;
    ck_assert_msg(want->eline == got->eline && want->ecol == got->ecol,
                  "%s: libyaml error at %d:%d, reader at %d:%d (%s)", what, want->eline, want->ecol,
                  got->eline, got->ecol, got->emsg);
    ck_assert_msg(strstr(got->emsg, want->err == 1 ? want->emsg : "anchors and aliases"),
                  "%s: libyaml says '%s', the reader '%s'", what, want->emsg, got->emsg);
}

/* Reads text through the reader, from a buffer or (window > 0) as a file,
 * compares with libyaml and returns whether the fast scanner declined. */
static int check_text(const char *text, size_t len, size_t window, const char *what)
{
    tstream want = {0}, got = {0};
    kl_errors err;
    kl_yreader *r;
    FILE *fp = NULL;
    int declined;
    kl_errors_init(&err);
    ref_stream(text, len, &want);
    if (window) {
        fp = fmemopen((void *)text, len ? len : 1, "rb");
        ck_assert_ptr_nonnull(fp);
        if (!len)
            fgetc(fp); /* fmemopen wants a size of at least 1: start at its end */
        r = kl_yreader_new_file_window(fp, "t.yaml", &err, window);
    } else {
        r = kl_yreader_new_buffer(text, len, "t.yaml", &err);
    }
    ck_assert_ptr_nonnull(r);
    declined = got_stream(r, &err, &got);
    compare(&want, &got, what);
    kl_yreader_free(r);
    if (fp)
        fclose(fp);
    kl_errors_free(&err);
    ts_free(&want);
    ts_free(&got);
    return declined;
}

static char *slurp(const char *path, size_t *len)
{
    FILE *fp = fopen(path, "rb");
    char *t;
    long n;
    ck_assert_msg(fp != NULL, "cannot open %s", path);
    fseek(fp, 0, SEEK_END);
    n = ftell(fp);
    rewind(fp);
    t = malloc((size_t)n + 1);
    ck_assert_ptr_nonnull(t);
    ck_assert_int_eq((long)fread(t, 1, (size_t)n, fp), n);
    fclose(fp);
    t[n] = '\0';
    *len = (size_t)n;
    return t;
}

/* A kl_synth feeder (kilter's own generator: flow mappings for every
 * element, as in the benchmark files). */
static char *synth(int buses, size_t *len)
{
    char cmd[1024], path[512];
    char *t;
    snprintf(path, sizeof path, "%s/test_yaml_fast_%d.yaml", KILTER_BINARY_DIR, buses);
    snprintf(cmd, sizeof cmd, "'%s/kl_synth' --buses %d --seed 5 -o '%s'", KILTER_BINARY_DIR, buses, path);
    ck_assert_msg(system(cmd) == 0, "kl_synth failed (is it built?): %s", cmd);
    t = slurp(path, len);
    remove(path);
    return t;
}

/* ---- the files */

static const char *const DIRS[] = {"feeders/demo", "feeders/reference", "tests/data", "tests/corpus", NULL};

typedef struct {
    char *text[64];
    size_t len[64];
    char name[64][256];
    int n;
} fileset;

static void files_load(fileset *fs)
{
    int d;
    fs->n = 0;
    for (d = 0; DIRS[d]; d++) {
        char dir[512];
        DIR *dp;
        struct dirent *de;
        snprintf(dir, sizeof dir, "%s/%s", KILTER_SOURCE_DIR, DIRS[d]);
        dp = opendir(dir);
        ck_assert_msg(dp != NULL, "cannot open %s", dir);
        while ((de = readdir(dp))) {
            size_t k = strlen(de->d_name);
            char path[1024];
            if (k < 5 || strcmp(de->d_name + k - 5, ".yaml") != 0)
                continue;
            ck_assert_int_lt(fs->n, 64);
            snprintf(path, sizeof path, "%s/%s", dir, de->d_name);
            snprintf(fs->name[fs->n], sizeof fs->name[0], "%s/%.200s", DIRS[d], de->d_name);
            fs->text[fs->n] = slurp(path, &fs->len[fs->n]);
            fs->n++;
        }
        closedir(dp);
    }
    ck_assert_int_ge(fs->n, 30);
}

static void files_free(fileset *fs)
{
    int i;
    for (i = 0; i < fs->n; i++)
        free(fs->text[i]);
}

START_TEST(every_yaml_file_as_libyaml)
{
    fileset fs;
    int i;
    files_load(&fs);
    for (i = 0; i < fs.n; i++) {
        check_text(fs.text[i], fs.len[i], 0, fs.name[i]);
        check_text(fs.text[i], fs.len[i], KL_YFAST_WINDOW, fs.name[i]);
    }
    files_free(&fs);
}
END_TEST

/* The fast scanner takes ordinary feeder files whole: the demo feeder, the
 * IEEE 13-node test feeder (IEEE PES Distribution System Analysis
 * Subcommittee data), the demo as kilter writes it back, and kl_synth output,
 * read from a buffer, as a file, and as a file through a window smaller than
 * the file (the window moves). */
START_TEST(fast_path_on_feeders)
{
    static const char *const files[] = {"/feeders/demo/quillmere-f3.yaml",
                                        "/feeders/reference/ieee-13-node.yaml"};
    size_t len, i;
    char *t;
    for (i = 0; i < 2; i++) {
        char path[1024];
        snprintf(path, sizeof path, "%s%s", KILTER_SOURCE_DIR, files[i]);
        t = slurp(path, &len);
        ck_assert_msg(!check_text(t, len, 0, files[i]), "%s: declined from a buffer", files[i]);
        ck_assert_msg(!check_text(t, len, KL_YFAST_WINDOW, files[i]), "%s: declined as a file", files[i]);
        free(t);
    }
    { /* the demo feeder as kilter writes it back (kl_feeder_write: quoted names, SI units) */
        char path[1024];
        kl_feeder *f = NULL;
        kl_errors e;
        kl_errors_init(&e);
        ck_assert_int_eq(kl_feeder_load(KILTER_SOURCE_DIR "/feeders/demo/quillmere-f3.yaml", &f, &e), KL_OK);
        snprintf(path, sizeof path, "%s/test_yaml_fast_written.yaml", KILTER_BINARY_DIR);
        ck_assert_int_eq(kl_feeder_write(f, NULL, NULL, path, &e), KL_OK);
        kl_feeder_free(f);
        kl_errors_free(&e);
        t = slurp(path, &len);
        remove(path);
        ck_assert_msg(!check_text(t, len, 0, "written demo"), "written demo feeder: declined");
        free(t);
    }
    t = synth(2000, &len);
    ck_assert_uint_gt(len, 4 * SMALL_WINDOW);
    ck_assert_msg(!check_text(t, len, 0, "kl_synth"), "kl_synth feeder: declined from a buffer");
    ck_assert_msg(!check_text(t, len, SMALL_WINDOW, "kl_synth"), "kl_synth feeder: declined in a small window");
    free(t);
}
END_TEST

/* Outside the subset the reader hands over to libyaml, and the loader still
 * sees libyaml's stream and libyaml's error. */
START_TEST(declines_outside_the_subset)
{
    static const char *const cases[] = {
        /* a literal block scalar with a more-indented line */
        "kilter-feeder: 1\nname: |\n  first\n    second\nunits: si\n",
        /* a block scalar keeping its trailing line feeds */
        "kilter-feeder: 1\nname: >+\n  first\n\nunits: si\n",
        /* an anchor and an alias */
        "kilter-feeder: 1\nsource: &s\n  bus: a\nother: *s\n",
        /* syntax errors: an unclosed flow sequence, a value with ': ', bad indentation */
        "kilter-feeder: 1\nbuses:\n  - {name: a, phases: [a, b}\n",
        "kilter-feeder: 1\nname: a: b\n",
        "kilter-feeder: 1\nsource:\n    bus: a\n  kind: b\n",
        /* a tab, a multi-line plain scalar, an escape, a second document */
        "kilter-feeder: 1\nname:\ta\n",
        "kilter-feeder: 1\nname: a long\n  name\nunits: si\n",
        "kilter-feeder: 1\nname: \"a\\tb\"\n",
        "kilter-feeder: 1\n---\nname: b\n",
        NULL};
    int i;
    for (i = 0; cases[i]; i++) {
        char what[32];
        snprintf(what, sizeof what, "case %d", i);
        ck_assert_msg(check_text(cases[i], strlen(cases[i]), 0, what), "%s: not declined", what);
        ck_assert_msg(check_text(cases[i], strlen(cases[i]), KL_YFAST_WINDOW, what), "%s: not declined", what);
    }
}
END_TEST

/* A decline far into a large file: the events already handed out are
 * replayed through libyaml and the stream carries on as libyaml's. */
START_TEST(late_decline)
{
    /* an anchor, a syntax error, a block scalar outside the subset,
     * non-ASCII text, and bytes libyaml's reader refuses (a control
     * character, a broken UTF-8 sequence) that it sees up to 16 KiB early */
    static const char *const tails[] = {"extra: &a 1\n", "extra: [1, 2\n", "extra: |+\n  x\n\n",
                                        "extra: \xc3\xa9\n", "# \x01\n", "extra: \xc3(\n"};
    size_t len, i;
    char *t = synth(2000, &len);
    for (i = 0; i < sizeof tails / sizeof tails[0]; i++) {
        size_t k = strlen(tails[i]);
        char *u = malloc(len + k);
        ck_assert_ptr_nonnull(u);
        memcpy(u, t, len);
        memcpy(u + len, tails[i], k);
        ck_assert(check_text(u, len + k, 0, tails[i]));
        ck_assert(check_text(u, len + k, SMALL_WINDOW, tails[i]));
        free(u);
    }
    free(t);
}
END_TEST

/* Limits of the subset, where the scanner must decline or agree exactly:
 * libyaml forgets a possible simple key 1024 characters after its start
 * (scanner.c, yaml_parser_stale_simple_keys), in block and flow context;
 * lines near and over the scanner's window. */
START_TEST(edges_as_libyaml)
{
    static const int lengths[] = {990, 999, 1000, 1001, 1010, 1022, 1023, 1024, 1025, 1030, 5000};
    char *buf = malloc(300000);
    size_t i, n;
    ck_assert_ptr_nonnull(buf);
    for (i = 0; i < sizeof lengths / sizeof lengths[0]; i++) {
        int k = lengths[i];
        n = (size_t)sprintf(buf, "a: 1\n%0*d: 2\nb: {%0*d: 3, c: 4}\n", k, 7, k, 8);
        check_text(buf, n, 0, "long keys");
        n = (size_t)sprintf(buf, "a: 1\nb: [x, %0*d]\n\"%0*d\": 5\n", k, 9, k, 6);
        check_text(buf, n, 0, "long flow item and quoted key");
    }
    /* one line longer than the small window, between ordinary ones */
    n = (size_t)sprintf(buf, "a: 1\nb: ");
    memset(buf + n, 'x', 200000);
    n += 200000;
    n += (size_t)sprintf(buf + n, "\nc: 2\n");
    ck_assert(check_text(buf, n, SMALL_WINDOW, "long line, small window"));
    ck_assert(!check_text(buf, n, KL_YFAST_WINDOW, "long line"));
    free(buf);
}
END_TEST

/* Small inputs at the edges of the subset, each compared with libyaml
 * (taken or declined, the stream must be libyaml's). */
START_TEST(small_cases_as_libyaml)
{
    static const char *const cases[] = {
        "--- \na: 1\n", "---\n- a\n- b\n", "# c\n---  # x\na: 1\n", "  a: 1\n  b: 2\n",
        "  a: 1\nb: 2\n", "a: 1\n  # comment\nb: 2\n", "a:\n  - x\n  - y\nb: 1", "a:\n- x\n",
        "a: 'it''s'\n", "a: ''\n", "a: \"\"\n", "{a: 1}\n", "a: {}\nb: []\n", "a: [[1, 2], [3]]\n",
        "a: {b: {c: d}}\n", "a: x #c\n", "a: x#c\n", "a: -1\n", "a: - 1\n", "a: .5\n", "- a\n-  b\n",
        "-   x: 1\n    y: 2\n", "a: >\n  x\n  y\n\n\nb: 1\n", "a: |\n  x\n  y\n", "a: |-\n  x\n",
        "a: |\n  x", "a: >-\n  x\n   y\n", "a: |\n\n  x\n", "a: b\n...\n", "a: b\n---\n", "a: 1 \n",
        "a:   \n  b: 1\n", "a : 1\n", "? a\n: b\n", "a: !!str x\n", "a: b\n\n\n", "\n\na: b", "a: b\r\n",
        "a:\n", "a:", "a: b\n  c\n", "a: b\n  # c\n", "a: [1, 2]\n  b: 3\n", "a: 1\n b: 2\n",
        "- a: 1\n  b: 2\n- c: 3\n", "- a: 1\n   b: 2\n", "- - a\n", "-\n  a: 1\n", "a: {b: 1, }\n",
        "a: [1, , 2]\n", "a: {b}\n", "a: [b: 1]\n", "a: {b: 1}}\n", "a: x: y\n", "a: 'x\n  y'\n",
        "a: \"x\n  y\"\n", "a: 12:30\n", "a: http://x.y/z\n", "a: {b: c:d}\n", "a: {b: c #d}\n",
        "- {a: 1}\n- [b]\n- 'c'\n- d\n", "a:\n  b:\n    c: 1\n  d: 2\ne: 3\n", "a: |\n   x\n  y\n",
        "a:\n  - |\n    x\n", "a: >\n  x\n  # not a comment\n# a comment\nb: 1\n", "a: b\n   ",
        "a: b\n# c", "a:\n  - b\n   ", "'a': 1\n\"b\": 2\n", "a: \"\\u00e9\"\n", "-a: 1\n", "a: [-1, -.5]\n",
        "", "# only\n", "---\n", "a: 1\n%x\n", "a: &x 1\n", "a: *x\n", "a: @x\n", "a: `x\n", NULL};
    int i;
    for (i = 0; cases[i]; i++) {
        char what[64];
        snprintf(what, sizeof what, "small case %d", i);
        check_text(cases[i], strlen(cases[i]), 0, what);
        check_text(cases[i], strlen(cases[i]), KL_YFAST_WINDOW, what);
    }
}
END_TEST

/* If libyaml's replay does not reproduce the events already handed out (here
 * the caller's buffer changes under the reader, the one way to provoke it
 * from outside), the reader reports an internal error at the last event
 * given, and no event after it. */
START_TEST(replay_mismatch_is_reported)
{
    static const char *const edits[] = {"b: 2y", "b: 2:"}; /* another value; a syntax error */
    int i;
    for (i = 0; i < 2; i++) {
        char text[] = "a: 1\nb: 22\nc: [3, 4]\nd: 5\ne: &x 6\n";
        kl_errors err;
        kl_yreader *r;
        int k, n = 0;
        kl_errors_init(&err);
        r = kl_yreader_new_buffer(text, strlen(text), "t.yaml", &err);
        ck_assert_ptr_nonnull(r);
        for (; n < 4; n++) { /* document, mapping, a, 1 */
            ck_assert_int_ne(kl_yreader_peek(r), KL_YEV_ERROR);
            kl_yreader_consume(r);
        }
        memcpy(text + 5, edits[i], 5);
        while ((k = kl_yreader_peek(r)) != KL_YEV_ERROR && k != KL_YEV_STREAM_END && n < 100) {
            kl_yreader_consume(r);
            n++;
        }
        ck_assert_int_eq(k, KL_YEV_ERROR);
        ck_assert(kl_yreader_declined(r));
        ck_assert_int_eq(err.count, 1);
        ck_assert_msg(strstr(err.items[0].message, "internal error"), "message: %s", err.items[0].message);
        /* the last event handed out: ']' on line 3 (line 4's events wait for
         * line 5, where the anchor makes the scanner decline) */
        ck_assert_int_eq(err.items[0].line, 3);
        ck_assert_int_eq(err.items[0].col, 9);
        kl_yreader_free(r);
        kl_errors_free(&err);
    }
}
END_TEST

/* A pipe cannot be read again from its start: libyaml reads it directly. */
START_TEST(pipe_goes_to_libyaml)
{
    char cmd[1024];
    size_t len;
    char *t = slurp(KILTER_SOURCE_DIR "/feeders/reference/ieee-13-node.yaml", &len);
    tstream want = {0}, got = {0};
    kl_errors err;
    kl_yreader *r;
    FILE *fp;
    snprintf(cmd, sizeof cmd, "cat '%s/feeders/reference/ieee-13-node.yaml'", KILTER_SOURCE_DIR);
    fp = popen(cmd, "r");
    ck_assert_ptr_nonnull(fp);
    kl_errors_init(&err);
    r = kl_yreader_new_file(fp, "pipe", &err);
    ck_assert_ptr_nonnull(r);
    ck_assert_msg(kl_yreader_declined(r), "a pipe was given to the fast scanner");
    ref_stream(t, len, &want);
    got_stream(r, &err, &got);
    compare(&want, &got, "pipe");
    kl_yreader_free(r);
    pclose(fp);
    kl_errors_free(&err);
    ts_free(&want);
    ts_free(&got);
    free(t);
}
END_TEST

/* ---- seeded mutations */

static unsigned long rnd(unsigned long long *st)
{
    /* xorshift64* (Vigna, "An experiment with xorshift generators", 2014) */
    *st ^= *st >> 12;
    *st ^= *st << 25;
    *st ^= *st >> 27;
    return (unsigned long)((*st * 2685821657736338717ull) >> 33);
}

static const char POOL[] = ":{}[],#'\"\\- \n\t|>&*!%@?.~0a";

/* One mutation of buf[0 .. *len) (capacity cap): a byte flip, an inserted
 * or deleted character, an indentation change or a truncation. */
static void mutate(char *buf, size_t *len, size_t cap, unsigned long long *st)
{
    size_t n = *len, pos = n ? rnd(st) % n : 0, ls;
    switch (rnd(st) % 7) {
    case 0:
        if (n)
            buf[pos] = (char)(rnd(st) & 0xff);
        break;
    case 1:
    case 2:
        if (n + 2 <= cap) {
            int two = rnd(st) % 8 == 0;
            memmove(buf + pos + 1 + two, buf + pos, n - pos);
            if (two) {
                buf[pos] = (char)0xc3;
                buf[pos + 1] = (char)0xa9;
            } else {
                buf[pos] = POOL[rnd(st) % (sizeof POOL - 1)];
            }
            *len = n + 1 + (size_t)two;
        }
        break;
    case 3:
        if (n) {
            memmove(buf + pos, buf + pos + 1, n - pos - 1);
            *len = n - 1;
        }
        break;
    case 4: /* one space more or less at the start of a line */
        for (ls = pos; ls > 0 && buf[ls - 1] != '\n'; ls--)
            ;
        if (rnd(st) % 2 && n + 1 <= cap) {
            memmove(buf + ls + 1, buf + ls, n - ls);
            buf[ls] = ' ';
            *len = n + 1;
        } else if (ls < n && buf[ls] == ' ') {
            memmove(buf + ls, buf + ls + 1, n - ls - 1);
            *len = n - 1;
        }
        break;
    case 5:
        *len = pos;
        break;
    default: /* a character doubled */
        if (n && n + 1 <= cap) {
            memmove(buf + pos + 1, buf + pos, n - pos);
            *len = n + 1;
        }
        break;
    }
}

/* KILTER_YAML_DUMP=FILE: each mutated input is written to FILE before it is
 * checked, so after a failure FILE holds the input that failed. */
static void dump_input(const char *path, const char *buf, size_t n)
{
    FILE *o = fopen(path, "wb");
    if (o) {
        fwrite(buf, 1, n, o);
        fclose(o);
    }
}

/* KILTER_YAML_SOAK=N: N times as many mutations, with other seeds. */
static int soak(void)
{
    const char *v = getenv("KILTER_YAML_SOAK");
    int n = v ? atoi(v) : 1;
    return n > 1 ? n : 1;
}

static int mutation_cases(const char *text, size_t len, int count, unsigned long long seed, size_t window,
                          const char *name)
{
    const char *dump = getenv("KILTER_YAML_DUMP");
    size_t cap = len + 64;
    char *buf = malloc(cap);
    int k, declined = 0;
    unsigned long long st = (seed + 1000000ull * (unsigned long long)(soak() - 1)) * 0x9e3779b97f4a7c15ull + 1;
    ck_assert_ptr_nonnull(buf);
    for (k = 0; k < count; k++) {
        size_t n = len;
        int j, m = 1 + (int)(rnd(&st) % 3);
        char what[320];
        memcpy(buf, text, len);
        for (j = 0; j < m; j++)
            mutate(buf, &n, cap, &st);
        snprintf(what, sizeof what, "%s, seed %llu, mutation %d", name, seed, k);
        if (dump)
            dump_input(dump, buf, n);
        declined += check_text(buf, n, window, what);
    }
    free(buf);
    return declined;
}

/* Every project YAML file mutated 120 times (the demo feeder 100 times,
 * corpus files over 9 KB 10 times): over 3,000 inputs, each compared with
 * libyaml. */
START_TEST(mutations_as_libyaml)
{
    fileset fs;
    int i, cases = 0, declined = 0;
    files_load(&fs);
    for (i = 0; i < fs.n; i++) {
        /* libyaml takes time quadratic in the depth on the deeply nested
         * corpus files: few mutations of the larger corpus files */
        int corpus = strstr(fs.name[i], "corpus/") != NULL;
        int count = (fs.len[i] < (corpus ? 9000u : 12000u) ? 120 : corpus ? 10 : 100) * soak();
        declined += mutation_cases(fs.text[i], fs.len[i], count, (unsigned long long)i + 1,
                                   i % 2 ? SMALL_WINDOW : 0, fs.name[i]);
        cases += count;
    }
    files_free(&fs);
    ck_assert_int_ge(cases, 3000);
    /* both paths are exercised: most mutations leave the subset, not all */
    ck_assert_int_gt(declined, cases / 4);
    ck_assert_int_lt(declined, cases);
}
END_TEST

/* Mutations of a file larger than the window, read as a file through the
 * small window: declines at any point of a moving window. */
START_TEST(mutations_in_a_moving_window)
{
    size_t len;
    char *t = synth(1200, &len);
    ck_assert_uint_gt(len, 2 * SMALL_WINDOW);
    mutation_cases(t, len, 16 * soak(), 99, SMALL_WINDOW, "kl_synth");
    free(t);
}
END_TEST

/* Allocation failure inside the reader is reported as such (KL_ENOMEM),
 * whether it hits the fast scanner or the loader. */
START_TEST(allocation_failures_fast_path)
{
    size_t len;
    char path[1024];
    char *t;
    long n, total;
    kl_feeder *f = NULL;
    kl_errors e;
    snprintf(path, sizeof path, "%s/feeders/reference/ieee-13-node.yaml", KILTER_SOURCE_DIR);
    t = slurp(path, &len);
    kl_errors_init(&e);
    n = kl_alloc_count();
    ck_assert_int_eq(kl_feeder_load_buffer(t, len, "ieee13", &f, &e), KL_OK);
    total = kl_alloc_count() - n;
    kl_feeder_free(f);
    for (n = 0; n < total; n++) {
        kl_status s;
        kl_errors_clear(&e);
        kl_alloc_fail_after(n);
        s = kl_feeder_load_buffer(t, len, "ieee13", &f, &e);
        kl_alloc_fail_after(-1);
        ck_assert_msg(s == KL_ENOMEM, "allocation %ld of %ld failed but status %d", n, total, s);
        ck_assert_ptr_null(f);
    }
    kl_errors_free(&e);
    free(t);
}
END_TEST

static Suite *suite(void)
{
    Suite *s = suite_create("yaml_fast");
    TCase *tc = tcase_create("reader");
    tcase_set_timeout(tc, 300);
    tcase_add_test(tc, every_yaml_file_as_libyaml);
    tcase_add_test(tc, fast_path_on_feeders);
    tcase_add_test(tc, declines_outside_the_subset);
    tcase_add_test(tc, late_decline);
    tcase_add_test(tc, edges_as_libyaml);
    tcase_add_test(tc, small_cases_as_libyaml);
    tcase_add_test(tc, replay_mismatch_is_reported);
    tcase_add_test(tc, pipe_goes_to_libyaml);
    tcase_add_test(tc, mutations_as_libyaml);
    tcase_add_test(tc, mutations_in_a_moving_window);
    tcase_add_test(tc, allocation_failures_fast_path);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    SRunner *sr = srunner_create(suite());
    int failed;
    srunner_run_all(sr, CK_NORMAL);
    failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
