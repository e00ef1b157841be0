/* kilter: comma-separated values streamed row by row, as utilities export them (RFC 4180: fields
 * separated by commas, a field in double quotes may hold commas and doubled
 * quotes; CR LF or LF line ends), read row by row with the line and column
 * of every field, for located messages.  Blank lines and lines whose first
 * character is '#' are skipped (a note above the header).  A quoted field
 * may not span lines: exports of meter data never need it, and a stray quote
 * is then reported at its own line rather than swallowing the file. */
#include <errno.h>
#include <stdio.h>
#include <string.h>
#include <sys/stat.h>
#include "kl_io.h"

kl_status kl_csv_stream_file(const char *path, size_t max_bytes, char **text, size_t *len, kl_errors *err)
{
    struct stat st;
    FILE *fp = fopen(path, "rb");
    *text = NULL;
    *len = 0;
    if (!fp) {
        kl_errors_add(err, path, 0, 0, NULL, "cannot open the file: %s", strerror(errno));
        return KL_EIO;
    }
    if (fstat(fileno(fp), &st) != 0 || !S_ISREG(st.st_mode)) {
        kl_errors_add(err, path, 0, 0, NULL, "is not a regular file: give a CSV file");
        fclose(fp);
        return KL_EIO;
    }
    if ((unsigned long long)st.st_size > (unsigned long long)max_bytes) {
        kl_errors_add(err, path, 0, 0, NULL, "the file is %lld bytes, over the limit of %zu bytes",
                      (long long)st.st_size, max_bytes);
        fclose(fp);
        return KL_EINPUT;
    }
    size_t n = (size_t)st.st_size;
    char *buf = kl_malloc(n + 1);
    if (!buf) {
        fclose(fp);
        return KL_ENOMEM;
    }
    size_t got = fread(buf, 1, n, fp);
    int bad = ferror(fp);
    fclose(fp);
    if (bad || got != n) {
        kl_errors_add(err, path, 0, 0, NULL, "read error: %s", bad ? strerror(errno) : "file changed");
        kl_free(buf);
        return KL_EIO;
    }
    buf[n] = 0;
    *text = buf;
    *len = n;
    return KL_OK;
}

void kl_csv_stream_init(kl_csv_stream *c, const char *text, size_t len, const char *file, kl_errors *err)
{
    memset(c, 0, sizeof *c);
    c->text = text;
    c->len = len;
    c->file = file;
    c->err = err;
    c->next_line = 1;
}

static int blank_or_note(const char *s, size_t n)
{
    size_t i = 0;
    while (i < n && (s[i] == ' ' || s[i] == '\t' || s[i] == '\r'))
        i++;
    return i == n || s[i] == '#';
}

/* One field starting at s[*i] of a line of n bytes, copied into c->buf;
 * 0, or -1 after a located message. */
static int field(kl_csv_stream *c, const char *s, size_t n, size_t *i, size_t *used, kl_csv_cell *f)
{
    size_t at = *i;
    while (at < n && (s[at] == ' ' || s[at] == '\t'))
        at++;
    f->col = (int)at + 1;
    f->text = c->buf + *used;
    int quoted = at < n && s[at] == '"';
    if (quoted)
        at++;
    for (; at < n; at++) {
        char ch = s[at];
        if (quoted && ch == '"') {
            if (at + 1 < n && s[at + 1] == '"') {
                at++;
            } else {
                quoted = 2; /* closed */
                at++;
                break;
            }
        } else if (!quoted && ch == ',') {
            break;
        } else if ((unsigned char)ch < 0x20 && ch != '\t' && ch != '\r') {
            kl_errors_add(c->err, c->file, c->line, (int)at + 1, NULL,
                          "a control character (byte %d) in a field: save the file as plain text",
                          (unsigned char)ch);
            return -1;
        }
        if (*used + 1 >= sizeof c->buf) {
            kl_errors_add(c->err, c->file, c->line, f->col, NULL, "the line is longer than %zu bytes",
                          sizeof c->buf - 1);
            return -1;
        }
        c->buf[(*used)++] = ch;
    }
    if (quoted == 1) {
        kl_errors_add(c->err, c->file, c->line, f->col, NULL,
                      "a quoted field is not closed on its line: add the closing \"");
        return -1;
    }
    while (*used > 0 && f->text < c->buf + *used &&
           (c->buf[*used - 1] == ' ' || c->buf[*used - 1] == '\t' || c->buf[*used - 1] == '\r'))
        (*used)--; /* trailing blanks and the CR of a CR LF line end */
    c->buf[(*used)++] = 0;
    while (at < n && (s[at] == ' ' || s[at] == '\t' || s[at] == '\r'))
        at++;
    if (at < n && s[at] != ',') {
        kl_errors_add(c->err, c->file, c->line, (int)at + 1, NULL,
                      "text after a quoted field's closing quote: put a comma between fields");
        return -1;
    }
    *i = at;
    return 0;
}

int kl_csv_stream_row(kl_csv_stream *c)
{
    for (;;) {
        if (c->at >= c->len)
            return 0;
        const char *s = c->text + c->at;
        const char *nl = memchr(s, '\n', c->len - c->at);
        size_t n = nl ? (size_t)(nl - s) : c->len - c->at;
        c->line = c->next_line++;
        c->at += n + (nl != NULL);
        if (blank_or_note(s, n))
            continue;
        size_t i = 0, used = 0;
        c->nfields = 0;
        for (;;) {
            if (c->nfields == KL_CSV_STREAM_MAX_FIELDS) {
                kl_errors_add(c->err, c->file, c->line, (int)i + 1, NULL, "more than %d fields in a row",
                              KL_CSV_STREAM_MAX_FIELDS);
                return -1;
            }
            if (field(c, s, n, &i, &used, &c->f[c->nfields]) < 0)
                return -1;
            c->nfields++;
            if (i >= n)
                break;
            i++; /* the comma */
        }
        return 1;
    }
}
