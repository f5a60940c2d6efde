/* io_read.c — streaming record readers: reaction SMILES lines, CSV/TSV with header, JSON Lines.
 * Owns: the byte source (file, stdin, gzip, memory), splitting bytes into records and cells,
 * finding the named fields. Must not: hold more than one record, parse SMILES.
 *
 * The reader pulls bytes from three layers, in this order: a replay buffer (bytes of a broken
 * multi-line CSV record handed back so the lines after its first are read again), the current
 * chunk (the caller's memory, or up to 64 KiB read or inflated), then the file for the next
 * chunk. Gzip is recognised by its two magic bytes and inflated here with zlib's inflate()
 * rather than gzread(): gzread waits until its whole buffer is full, so records trickling
 * into a pipe would sit unread; read() plus inflate() hands each line on as soon as it comes.
 * r->line is always the line number of the next unread byte. One record's bytes live in r->raw
 * and its cells in r->cells; both are reused, so memory stays flat. The formats and error rules
 * are documented in include/addsite/io.h. */
#include "addsite/io.h"
#include "io_int.h"

#include <cjson/cJSON.h>
#include <errno.h>
#include <fcntl.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>
#include <zlib.h>

#define IO_CHUNK 65536
#define IO_SNIFF 65536 /* bytes of the first line looked at to detect the format */

/* The fixed column names of reaction SMILES lines (documented in io.h). */
enum { RS_SMILES, RS_CX, RS_TITLE, RS_REAGENTS, RS_ID, RS_FIXED };
static const char *const rsmi_names[RS_FIXED] = {"smiles", "cx", "title", "reagents", "id"};

struct as_reader {
    as_reader_opts o;
    size_t max;                 /* o.max_record as a size */
    as_format fmt;
    /* byte source */
    int fd;                     /* -1 for memory input */
    int own_fd;                 /* 0 for standard input */
    int gz;                     /* -1 not yet known, 0 plain, 1 gzip */
    z_stream zs;                /* gzip: the inflate state (zs_init when set up) */
    int zs_init;
    int member_open;            /* gzip: inside a member (its end not yet seen) */
    int in_eof;                 /* read() returned 0 */
    unsigned char *inbuf;       /* gzip: compressed bytes */
    const unsigned char *data;  /* current chunk */
    size_t pos, len;
    unsigned char *chunk;       /* owned chunk buffer (file input) */
    int src_end;                /* nothing more will come from the file */
    int src_err;                /* reading stopped on an error */
    char src_msg[160];
    as_io_buf rep;              /* replay buffer and read position in it */
    size_t rep_pos;
    long line;                  /* line of the next unread byte */
    long index;                 /* index of the next record */
    int done;                   /* end reached or an I/O error record given */
    int nomem;                  /* an allocation failed while filling a buffer */
    /* the current record */
    as_io_buf raw;
    as_io_buf cells;            /* cell values, each followed by a NUL */
    size_t *cell_off;           /* start of each cell in cells */
    size_t *cell_raw;           /* raw offset where each cell starts */
    size_t ncells, cell_cap;
    const char **vals;          /* column values handed out */
    const char **names;         /* column names handed out (JSONL, SMILES lines) */
    size_t vals_cap, names_cap;
    /* header (CSV/TSV): names are NUL-separated in hdr */
    as_io_buf hdr;
    const char **hdr_names;
    size_t nhdr;
    int col[AS_IO_ROLE_COUNT];  /* header column per role, -1 when none */
    int explicit_smiles;        /* a reaction/substrate/SMILES column was named in the options */
    /* names "extra1", "extra2"... for SMILES lines with more TAB cells */
    char **extra;
    size_t nextra;
    /* JSON Lines: the parsed line and value texts printed for it */
    cJSON *json;
    char **jtext;
    size_t njtext, jtext_cap;
};

/* ==== Byte source =========================================================================== */

/* read() that retries on EINTR. */
static ssize_t read_some(int fd, void *buf, size_t n)
{
    for (;;) {
        ssize_t k = read(fd, buf, n);
        if (k >= 0 || errno != EINTR)
            return k;
    }
}

static void src_fail(as_reader *r, const char *fmt, const char *what)
{
    r->src_err = 1;
    r->src_end = 1;
    r->pos = r->len = 0;
    snprintf(r->src_msg, sizeof r->src_msg, fmt, what);
}

/* First call on a file: reads the first bytes and decides between plain and gzip. */
static void src_first(as_reader *r)
{
    size_t have = 0;
    while (have < 2) {
        ssize_t k = read_some(r->fd, r->chunk + have, IO_CHUNK - have);
        if (k < 0) {
            src_fail(r, "%s", strerror(errno));
            return;
        }
        if (k == 0) {
            r->in_eof = 1;
            break;
        }
        have += (size_t)k;
    }
    if (have >= 2 && r->chunk[0] == 0x1F && r->chunk[1] == 0x8B) {
        r->inbuf = malloc(IO_CHUNK);
        if (!r->inbuf) {
            r->nomem = 1;
            src_fail(r, "%s", "out of memory");
            return;
        }
        memcpy(r->inbuf, r->chunk, have);
        memset(&r->zs, 0, sizeof r->zs);
        if (inflateInit2(&r->zs, 15 + 16) != Z_OK) {
            r->nomem = 1;
            src_fail(r, "%s", "out of memory");
            return;
        }
        r->zs_init = 1;
        r->zs.next_in = r->inbuf;
        r->zs.avail_in = (uInt)have;
        r->member_open = 1;
        r->gz = 1;
        return;
    }
    r->gz = 0;
    r->data = r->chunk;
    r->pos = 0;
    r->len = have;
    if (have == 0)
        r->src_end = 1;
}

/* Gzip: inflates until some bytes come out, more input is needed and none is left, or an error.
 * Several members one after another are read as one stream (as gzip(1) does); bytes after
 * the last member that do not start another one are ignored, as zlib's own reader does. */
static void src_inflate(as_reader *r)
{
    for (;;) {
        if (r->zs.avail_in == 0 && !r->in_eof) {
            ssize_t k = read_some(r->fd, r->inbuf, IO_CHUNK);
            if (k < 0) {
                src_fail(r, "%s", strerror(errno));
                return;
            }
            if (k == 0)
                r->in_eof = 1;
            r->zs.next_in = r->inbuf;
            r->zs.avail_in = (uInt)k;
        }
        if (r->zs.avail_in == 0 && r->in_eof) {
            if (r->member_open)
                src_fail(r, "%s", "the gzip data ends early (truncated file)");
            else
                r->src_end = 1;
            return;
        }
        if (!r->member_open) {
            if (r->zs.next_in[0] != 0x1F) {
                r->src_end = 1; /* trailing bytes that are not another member */
                return;
            }
            if (inflateReset(&r->zs) != Z_OK) {
                src_fail(r, "%s", "the gzip data could not be restarted");
                return;
            }
            r->member_open = 1;
        }
        r->zs.next_out = r->chunk;
        r->zs.avail_out = IO_CHUNK;
        int ret = inflate(&r->zs, Z_NO_FLUSH);
        size_t out = IO_CHUNK - r->zs.avail_out;
        if (ret == Z_STREAM_END) {
            r->member_open = 0;
        } else if (ret == Z_MEM_ERROR) {
            r->nomem = 1;
            src_fail(r, "%s", "out of memory");
            return;
        } else if (ret != Z_OK && ret != Z_BUF_ERROR) {
            src_fail(r, "the gzip data is corrupt (%s)", r->zs.msg ? r->zs.msg : "zlib error");
            return;
        }
        if (out > 0) {
            r->data = r->chunk;
            r->pos = 0;
            r->len = out;
            return;
        }
    }
}

static void src_refill(as_reader *r)
{
    if (r->src_end)
        return;
    if (r->fd < 0) {
        r->src_end = 1;
        return;
    }
    if (r->gz < 0) {
        src_first(r);
        return;
    }
    if (r->gz) {
        src_inflate(r);
        return;
    }
    ssize_t k = read_some(r->fd, r->chunk, IO_CHUNK);
    if (k < 0) {
        src_fail(r, "%s", strerror(errno));
        return;
    }
    r->data = r->chunk;
    r->pos = 0;
    r->len = (size_t)k;
    if (k == 0)
        r->src_end = 1;
}

/* Points *p at the next unread bytes and returns how many; 0 at the end of the input. */
static size_t src_peek(as_reader *r, const unsigned char **p)
{
    if (r->rep_pos < r->rep.len) {
        *p = (const unsigned char *)r->rep.p + r->rep_pos;
        return r->rep.len - r->rep_pos;
    }
    r->rep.len = r->rep_pos = 0;
    while (r->pos >= r->len && !r->src_end)
        src_refill(r);
    *p = r->data ? r->data + r->pos : (const unsigned char *)"";
    return r->len - r->pos;
}

/* Consumes n bytes of the segment src_peek returned. */
static void src_skip(as_reader *r, size_t n)
{
    if (r->rep_pos < r->rep.len)
        r->rep_pos += n;
    else
        r->pos += n;
}

/* The next byte, or -1 at the end of the input. */
static int src_getc(as_reader *r)
{
    if (r->rep_pos < r->rep.len)
        return (unsigned char)r->rep.p[r->rep_pos++];
    if (r->pos < r->len)
        return r->data[r->pos++];
    const unsigned char *p;
    if (src_peek(r, &p) == 0)
        return -1;
    src_skip(r, 1);
    return p[0];
}

/* Hands n bytes at p, then byte c (when c >= 0), back to be read before anything unread. */
static int src_replay(as_reader *r, const char *p, size_t n, int c)
{
    as_io_buf nb = {NULL, 0, 0};
    size_t rest = r->rep.len - r->rep_pos;
    if (as_io_buf_reserve(&nb, n + 1 + rest) != 0)
        return -1;
    as_io_buf_put(&nb, p, n);
    if (c >= 0)
        as_io_buf_putc(&nb, (char)c);
    as_io_buf_put(&nb, r->rep.p ? r->rep.p + r->rep_pos : "", rest);
    as_io_buf_free(&r->rep);
    r->rep = nb;
    r->rep_pos = 0;
    return 0;
}

/* ==== Small helpers ========================================================================= */

/* 1-based line and column of raw offset off in a record that starts on line line0. */
static void raw_linecol(const char *raw, size_t off, long line0, long *line, long *col)
{
    long l = line0;
    size_t start = 0;
    for (size_t i = 0; i < off; i++) {
        if (raw[i] == '\n') {
            l++;
            start = i + 1;
        }
    }
    *line = l;
    *col = (long)(off - start) + 1;
}

/* Fills rec->err with a position given as an offset into the record's raw text. */
static void rec_error(as_record *rec, as_status code, size_t off, const char *fmt, ...)
    AS_PRINTF(4, 5);
static void rec_error(as_record *rec, as_status code, size_t off, const char *fmt, ...)
{
    as_error_clear(&rec->err);
    rec->err.code = code;
    rec->err.offset = (long)off;
    raw_linecol(rec->raw ? rec->raw : "", off, rec->line, &rec->err.line, &rec->err.column);
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(rec->err.msg, sizeof rec->err.msg, fmt, ap);
    va_end(ap);
}

static int is_blank_char(char c)
{
    return c == ' ' || c == '\t' || c == '\r' || c == '\v' || c == '\f';
}

static int all_blank(const char *s, size_t n)
{
    for (size_t i = 0; i < n; i++)
        if (!is_blank_char(s[i]))
            return 0;
    return 1;
}

static void cells_reset(as_reader *r)
{
    r->cells.len = 0;
    r->ncells = 0;
}

static int cell_begin(as_reader *r, size_t raw_off)
{
    if (r->ncells == r->cell_cap) {
        size_t cap = r->cell_cap ? r->cell_cap * 2 : 16;
        size_t *a = realloc(r->cell_off, cap * sizeof *a);
        if (!a)
            return -1;
        r->cell_off = a;
        size_t *b = realloc(r->cell_raw, cap * sizeof *b);
        if (!b)
            return -1;
        r->cell_raw = b;
        r->cell_cap = cap;
    }
    r->cell_off[r->ncells] = r->cells.len;
    r->cell_raw[r->ncells] = raw_off;
    r->ncells++;
    return 0;
}

static int cell_end(as_reader *r)
{
    return as_io_buf_putc(&r->cells, '\0');
}

/* Appends a whole cell. */
static int cell_add(as_reader *r, const char *p, size_t n, size_t raw_off)
{
    if (cell_begin(r, raw_off) != 0 || as_io_buf_put(&r->cells, p, n) != 0 || cell_end(r) != 0)
        return -1;
    return 0;
}

static const char *cell(const as_reader *r, size_t i)
{
    return r->cells.p + r->cell_off[i];
}

static int ensure_ptrs(const char ***arr, size_t *cap, size_t n)
{
    if (n <= *cap)
        return 0;
    size_t c = *cap ? *cap : 16;
    while (c < n)
        c *= 2;
    const char **a = realloc((void *)*arr, c * sizeof *a);
    if (!a)
        return -1;
    *arr = a;
    *cap = c;
    return 0;
}

static void json_release(as_reader *r)
{
    for (size_t i = 0; i < r->njtext; i++)
        cJSON_free(r->jtext[i]);
    r->njtext = 0;
    if (r->json) {
        cJSON_Delete(r->json);
        r->json = NULL;
    }
}

/* A non-empty value or NULL. */
static const char *nonempty(const char *s)
{
    return (s && s[0]) ? s : NULL;
}

/* ==== Line reading (SMILES lines, TSV, JSON Lines) ========================================== */

enum { LINE_NONE = 0, LINE_NL, LINE_EOF };

/* Reads one physical line into r->raw without its line break (and a CR before it), keeping at
 * most max bytes; *total is the line's full length. Returns LINE_NONE at the end of the input,
 * LINE_NL for a line ended by LF, LINE_EOF for a last line without one. */
static int read_line(as_reader *r, size_t *total)
{
    r->raw.len = 0;
    if (as_io_buf_reserve(&r->raw, 0) != 0) {
        r->nomem = 1;
        return LINE_NONE;
    }
    r->raw.p[0] = '\0';
    size_t tot = 0, keep = r->max + 1;
    int any = 0, last = -1;
    for (;;) {
        const unsigned char *p;
        size_t n = src_peek(r, &p);
        if (n == 0)
            break;
        any = 1;
        const unsigned char *nl = memchr(p, '\n', n);
        size_t take = nl ? (size_t)(nl - p) : n;
        if (take) {
            size_t room = r->raw.len < keep ? keep - r->raw.len : 0;
            size_t k = take < room ? take : room;
            if (k && as_io_buf_put(&r->raw, p, k) != 0) {
                r->nomem = 1;
                return LINE_NONE;
            }
            tot += take;
            last = p[take - 1];
        }
        src_skip(r, nl ? take + 1 : take);
        if (nl) {
            r->line++;
            if (last == '\r') {
                tot--;
                if (r->raw.len > tot)
                    r->raw.p[--r->raw.len] = '\0';
            }
            *total = tot;
            return LINE_NL;
        }
    }
    if (last == '\r') {
        tot--;
        if (r->raw.len > tot)
            r->raw.p[--r->raw.len] = '\0';
    }
    *total = tot;
    return any ? LINE_EOF : LINE_NONE;
}

/* The record that reports a read error; it is the last one. */
static void io_error_record(as_reader *r, as_record *rec, long line0)
{
    rec->line = line0;
    rec->nlines = 1;
    rec->raw = r->raw.p ? r->raw.p : "";
    rec->raw_len = r->raw.len;
    rec_error(rec, AS_ERR_IO, r->raw.len,
              "the input could not be read past this point: %s; no further records",
              r->src_msg);
    r->done = 1;
}

/* Checks the record's bytes for NUL and invalid UTF-8. Returns 1 when rec->err was filled. */
static int check_encoding(as_record *rec)
{
    size_t pos;
    int is_nul;
    if (!as_io_utf8_find_bad(rec->raw, rec->raw_len, &pos, &is_nul))
        return 0;
    if (is_nul)
        rec_error(rec, AS_ERR_ENCODING, pos, "NUL byte in the record");
    else
        rec_error(rec, AS_ERR_ENCODING, pos, "invalid UTF-8 byte 0x%02X",
                  (unsigned)(unsigned char)rec->raw[pos]);
    return 1;
}

/* Reads one line-based record. Returns 1 when rec holds a line whose content should be parsed,
 * 0 when rec is finished (end, error record) or r->nomem is set. */
static int take_line(as_reader *r, as_record *rec)
{
    long line0 = r->line;
    size_t total = 0;
    int st = read_line(r, &total);
    if (r->nomem)
        return 0;
    if (st == LINE_NONE) {
        if (r->src_err)
            io_error_record(r, rec, line0);
        else
            rec->at_end = 1;
        return 0;
    }
    rec->line = line0;
    rec->nlines = 1;
    rec->raw = r->raw.p;
    rec->raw_len = r->raw.len;
    if (st == LINE_EOF && r->src_err) {
        io_error_record(r, rec, line0);
        return 0;
    }
    if (total > r->max) {
        rec->truncated = 1;
        rec->raw_len = r->raw.len = r->max;
        r->raw.p[r->max] = '\0';
        rec_error(rec, AS_ERR_LIMIT, r->max,
                  "line is %zu bytes, longer than the limit of %zu; skipped to the next line",
                  total, r->max);
        return 0;
    }
    if (check_encoding(rec))
        return 0;
    return 1;
}

/* ==== Reaction SMILES lines ================================================================= */

static const char *extra_name(as_reader *r, size_t k)
{
    while (r->nextra <= k) {
        char **a = realloc(r->extra, (r->nextra + 1) * sizeof *a);
        if (!a)
            return NULL;
        r->extra = a;
        char buf[32];
        snprintf(buf, sizeof buf, "extra%zu", r->nextra + 1);
        a[r->nextra] = strdup(buf);
        if (!a[r->nextra])
            return NULL;
        r->nextra++;
    }
    return r->extra[k];
}

static as_status next_rsmi(as_reader *r, as_record *rec)
{
    if (!take_line(r, rec))
        return r->nomem ? AS_ERR_NOMEM : AS_OK;
    const char *s = rec->raw;
    size_t n = rec->raw_len;
    if (n == 0 || all_blank(s, n)) {
        rec->skipped = 1;
        rec->skip_reason = "blank line";
        return AS_OK;
    }
    if (is_blank_char(s[0])) {
        rec->skipped = 1;
        rec->skip_reason = "line starts with whitespace, so it holds no SMILES";
    }
    /* Cell 1: SMILES [|cx|] [title]. */
    cells_reset(r);
    size_t tab = 0;
    while (tab < n && s[tab] != '\t')
        tab++;
    size_t i = 0;
    while (i < tab && !is_blank_char(s[i]))
        i++;
    int bad = cell_add(r, s, i, 0);
    while (i < tab && is_blank_char(s[i]))
        i++;
    size_t cx0 = i, cx1 = i;
    if (i < tab && s[i] == '|') {
        const char *close = memchr(s + i + 1, '|', tab - i - 1);
        if (close) {
            cx1 = (size_t)(close - s) + 1;
            i = cx1;
            while (i < tab && is_blank_char(s[i]))
                i++;
        } else {
            snprintf(rec->warning, sizeof rec->warning,
                     "a CXSMILES block opens with '|' at column %zu but is not closed; "
                     "read as part of the title", cx0 + 1);
        }
    }
    bad |= cell_add(r, s + cx0, cx1 - cx0, cx0);
    size_t t1 = tab;
    while (t1 > i && is_blank_char(s[t1 - 1]))
        t1--;
    bad |= cell_add(r, s + i, t1 - i, i);
    /* Cells 2.. : reagent text, id, extras (trimmed). */
    size_t at = tab;
    while (at < n && !bad) {
        size_t b = at + 1, e = b;
        while (e < n && s[e] != '\t')
            e++;
        size_t vb = b, ve = e;
        while (vb < ve && is_blank_char(s[vb]))
            vb++;
        while (ve > vb && is_blank_char(s[ve - 1]))
            ve--;
        bad |= cell_add(r, s + vb, ve - vb, b);
        at = e;
    }
    while (!bad && r->ncells < RS_FIXED)
        bad |= cell_add(r, "", 0, n);
    if (bad || ensure_ptrs(&r->vals, &r->vals_cap, r->ncells) != 0 ||
        ensure_ptrs(&r->names, &r->names_cap, r->ncells) != 0)
        return AS_ERR_NOMEM;
    for (size_t k = 0; k < r->ncells; k++) {
        r->vals[k] = cell(r, k);
        if (k < RS_FIXED) {
            r->names[k] = rsmi_names[k];
        } else {
            r->names[k] = extra_name(r, k - RS_FIXED);
            if (!r->names[k])
                return AS_ERR_NOMEM;
        }
    }
    rec->ncols = r->ncells;
    rec->col_names = r->names;
    rec->col_values = r->vals;
    const char *smiles = nonempty(r->vals[RS_SMILES]);
    if (smiles && as_io_is_reaction(smiles, strlen(smiles)))
        rec->reaction = smiles;
    else
        rec->substrate = smiles;
    rec->cx = nonempty(r->vals[RS_CX]);
    rec->reagents = nonempty(r->vals[RS_REAGENTS]);
    rec->id = nonempty(r->vals[RS_ID]) ? r->vals[RS_ID] : nonempty(r->vals[RS_TITLE]);
    return AS_OK;
}

/* ==== CSV =================================================================================== */

enum { CS_START, CS_UNQ, CS_Q, CS_QQ, CS_QCR };

enum { CSV_NONE = 0, CSV_OK, CSV_BAD };

/* Drops the record's line break (LF, and a CR before it) from the end of r->raw. */
static void raw_drop_break(as_reader *r)
{
    if (r->raw.len && r->raw.p[r->raw.len - 1] == '\n')
        r->raw.len--;
    if (r->raw.len && r->raw.p[r->raw.len - 1] == '\r')
        r->raw.len--;
    r->raw.p[r->raw.len] = '\0';
}

/* A malformed record that spans lines: keep its first line as the error record and hand the
 * rest (and the byte c not yet stored, when c >= 0) back to be read as new records. */
static int csv_cut_first_line(as_reader *r, size_t first_nl, long line0, int c)
{
    if (src_replay(r, r->raw.p + first_nl + 1, r->raw.len - first_nl - 1, c) != 0)
        return -1;
    r->raw.len = first_nl + 1;
    raw_drop_break(r);
    r->line = line0 + 1;
    return 0;
}

/* Discards input up to and including the next line break, keeping bytes in r->raw while it is
 * shorter than max. Returns the number of bytes seen (without the break). */
static size_t skip_rest_of_line(as_reader *r)
{
    size_t seen = 0;
    for (;;) {
        int c = src_getc(r);
        if (c < 0)
            break;
        if (c == '\n') {
            r->line++;
            break;
        }
        seen++;
        if (r->raw.len < r->max && as_io_buf_putc(&r->raw, (char)c) != 0)
            r->nomem = 1;
    }
    if (r->raw.len && r->raw.p[r->raw.len - 1] == '\r')
        r->raw.p[--r->raw.len] = '\0';
    return seen;
}

/* Reads one CSV record: its bytes into r->raw (line break dropped) and its cells. Returns
 * CSV_NONE at the end of the input, CSV_OK, or CSV_BAD with rec->err filled (rec->line and
 * rec->raw set). rec->line is set in every case but CSV_NONE. */
static int csv_read(as_reader *r, as_record *rec, char delim)
{
    long line0 = r->line;
    r->raw.len = 0;
    if (as_io_buf_reserve(&r->raw, 0) != 0) {
        r->nomem = 1;
        return CSV_NONE;
    }
    r->raw.p[0] = '\0';
    cells_reset(r);
    rec->line = line0;
    rec->nlines = 1;
    int state = CS_START, any = 0;
    size_t first_nl = SIZE_MAX, line_start = 0;
    long cur_line = line0, qline = 0, qcol = 0;
    if (cell_begin(r, 0) != 0) {
        r->nomem = 1;
        return CSV_NONE;
    }
    for (;;) {
        int c = src_getc(r);
        if (c < 0) {
            if (!any) {
                cells_reset(r);
                return CSV_NONE;
            }
            if (r->src_err)
                return CSV_BAD; /* the caller turns this into the I/O error record */
            if (state == CS_Q) {
                rec->raw = r->raw.p;
                rec->raw_len = r->raw.len;
                if (first_nl != SIZE_MAX) {
                    if (csv_cut_first_line(r, first_nl, line0, -1) != 0) {
                        r->nomem = 1;
                        return CSV_NONE;
                    }
                    rec->raw_len = r->raw.len;
                    rec_error(rec, AS_ERR_SYNTAX, 0,
                              "quoted field opened at line %ld, column %ld is never closed; "
                              "reading resumes at line %ld", qline, qcol, line0 + 1);
                } else {
                    rec_error(rec, AS_ERR_SYNTAX, 0,
                              "quoted field opened at column %ld is never closed", qcol);
                }
                rec->err.line = qline;
                rec->err.column = qcol;
                rec->err.offset = qline == line0 ? qcol - 1 : -1;
                /* a CR kept inside the open quote may stand one byte past the limit */
                if (rec->raw_len > r->max) {
                    r->raw.p[r->raw.len = r->max] = '\0';
                    rec->raw_len = r->max;
                    rec->truncated = 1;
                }
                return CSV_BAD;
            }
            if (state == CS_UNQ) {
                size_t start = r->cell_off[r->ncells - 1];
                if (r->cells.len > start && r->cells.p[r->cells.len - 1] == '\r')
                    r->cells.p[--r->cells.len] = '\0';
            }
            break;
        }
        any = 1;
        /* The line break that ends the record (and a CR before it) does not count. */
        int ends = c == '\n' && state != CS_Q;
        if (!ends && r->raw.len >= r->max + (c == '\r')) {
            if (first_nl != SIZE_MAX) {
                if (csv_cut_first_line(r, first_nl, line0, c) != 0) {
                    r->nomem = 1;
                    return CSV_NONE;
                }
                rec->raw = r->raw.p;
                rec->raw_len = r->raw.len;
                rec_error(rec, AS_ERR_LIMIT, 0,
                          "quoted field opened at line %ld, column %ld runs past the limit of "
                          "%zu bytes; reading resumes at line %ld", qline, qcol, r->max,
                          line0 + 1);
                rec->err.line = qline;
                rec->err.column = qcol;
                rec->err.offset = qline == line0 ? qcol - 1 : -1;
                return CSV_BAD;
            }
            rec->truncated = 1;
            size_t seen = r->raw.len + (c == '\n' ? 0 : 1);
            if (c == '\n')
                r->line++;
            else
                seen += skip_rest_of_line(r);
            if (r->nomem)
                return CSV_NONE;
            if (r->raw.len > r->max)
                r->raw.p[r->raw.len = r->max] = '\0';
            rec->raw = r->raw.p;
            rec->raw_len = r->raw.len;
            rec_error(rec, AS_ERR_LIMIT, r->raw.len,
                      "line is %zu bytes or more, longer than the limit of %zu; skipped to the "
                      "next line", seen, r->max);
            return CSV_BAD;
        }
        if (as_io_buf_putc(&r->raw, (char)c) != 0) {
            r->nomem = 1;
            return CSV_NONE;
        }
        if (c == '\n') {
            cur_line++;
            r->line++;
            if (first_nl == SIZE_MAX)
                first_nl = r->raw.len - 1;
            line_start = r->raw.len;
        }
        int err_after_quote = 0, end = 0, put = 0;
        switch (state) {
        case CS_START:
            if (c == '"') {
                state = CS_Q;
                qline = cur_line;
                qcol = (long)(r->raw.len - line_start);
            } else if (c == delim) {
                if (cell_end(r) != 0 || cell_begin(r, r->raw.len) != 0)
                    r->nomem = 1;
            } else if (c == '\n') {
                end = 1;
            } else {
                put = 1;
                state = CS_UNQ;
            }
            break;
        case CS_UNQ:
            if (c == delim) {
                if (cell_end(r) != 0 || cell_begin(r, r->raw.len) != 0)
                    r->nomem = 1;
                state = CS_START;
            } else if (c == '\n') {
                end = 1;
            } else {
                put = 1;
            }
            break;
        case CS_Q:
            if (c == '"')
                state = CS_QQ;
            else
                put = 1;
            break;
        case CS_QQ:
            if (c == '"') {
                put = 1;
                state = CS_Q;
            } else if (c == delim) {
                if (cell_end(r) != 0 || cell_begin(r, r->raw.len) != 0)
                    r->nomem = 1;
                state = CS_START;
            } else if (c == '\n') {
                end = 2;
            } else if (c == '\r') {
                state = CS_QCR;
            } else {
                err_after_quote = 1;
            }
            break;
        default: /* CS_QCR */
            if (c == '\n')
                end = 2;
            else
                err_after_quote = 1;
            break;
        }
        if (put && as_io_buf_putc(&r->cells, (char)c) != 0)
            r->nomem = 1;
        if (r->nomem)
            return CSV_NONE;
        if (err_after_quote) {
            long ecol = (long)(r->raw.len - line_start);
            long eline = cur_line;
            if (first_nl == SIZE_MAX) {
                /* The record so far is on one line: the error covers that line. */
                skip_rest_of_line(r);
                if (r->nomem)
                    return CSV_NONE;
                rec->raw = r->raw.p;
                rec->raw_len = r->raw.len;
                rec_error(rec, AS_ERR_SYNTAX, (size_t)(ecol - 1),
                          "text after the closing quote of a field (character '%c')",
                          c >= 32 && c < 127 ? c : '?');
            } else {
                if (csv_cut_first_line(r, first_nl, line0, -1) != 0) {
                    r->nomem = 1;
                    return CSV_NONE;
                }
                rec->raw = r->raw.p;
                rec->raw_len = r->raw.len;
                rec_error(rec, AS_ERR_SYNTAX, 0,
                          "quoted field opened at line %ld, column %ld is followed by text "
                          "after its closing quote at line %ld, column %ld; reading resumes "
                          "at line %ld", qline, qcol, eline, ecol, line0 + 1);
                rec->err.line = eline;
                rec->err.column = ecol;
                rec->err.offset = -1;
            }
            return CSV_BAD;
        }
        if (end) {
            if (end == 1) {
                /* An unquoted cell ended by CRLF: drop the CR. */
                size_t start = r->cell_off[r->ncells - 1];
                if (r->cells.len > start && r->cells.p[r->cells.len - 1] == '\r')
                    r->cells.p[--r->cells.len] = '\0';
            }
            break;
        }
    }
    if (cell_end(r) != 0) {
        r->nomem = 1;
        return CSV_NONE;
    }
    raw_drop_break(r);
    rec->raw = r->raw.p;
    rec->raw_len = r->raw.len;
    rec->nlines = 1;
    for (size_t i = 0; i < r->raw.len; i++)
        if (r->raw.p[i] == '\n')
            rec->nlines++;
    return CSV_OK;
}

/* ==== TSV =================================================================================== */

/* Splits r->raw into cells at every TAB, decoding escapes when asked. */
static int tsv_split(as_reader *r, const char *s, size_t n)
{
    cells_reset(r);
    size_t b = 0;
    for (;;) {
        size_t e = b;
        while (e < n && s[e] != '\t')
            e++;
        if (cell_begin(r, b) != 0)
            return -1;
        if (!r->o.tsv_unescape) {
            if (as_io_buf_put(&r->cells, s + b, e - b) != 0)
                return -1;
        } else {
            for (size_t i = b; i < e; i++) {
                char c = s[i];
                if (c == '\\' && i + 1 < e) {
                    char d = s[i + 1];
                    char out = d == 't' ? '\t' : d == 'n' ? '\n' : d == 'r' ? '\r'
                             : d == '\\' ? '\\' : 0;
                    if (out) {
                        c = out;
                        i++;
                    }
                }
                if (as_io_buf_putc(&r->cells, c) != 0)
                    return -1;
            }
        }
        if (cell_end(r) != 0)
            return -1;
        if (e >= n)
            break;
        b = e + 1;
    }
    return 0;
}

/* ==== CSV/TSV records and header ============================================================ */

static char ascii_lower(char c)
{
    return (c >= 'A' && c <= 'Z') ? (char)(c - 'A' + 'a') : c;
}

/* Finds the header column a *_col option names: exact name, then the name in any letter case,
 * then a 1-based index. */
static as_status resolve_col(as_reader *r, const char *spec, const char *what, int *col,
                             as_error *err)
{
    for (size_t i = 0; i < r->nhdr; i++) {
        if (strcmp(r->hdr_names[i], spec) == 0) {
            *col = (int)i;
            return AS_OK;
        }
    }
    for (size_t i = 0; i < r->nhdr; i++) {
        const char *a = r->hdr_names[i], *b = spec;
        while (*a && ascii_lower(*a) == ascii_lower(*b)) {
            a++;
            b++;
        }
        if (!*a && !*b) {
            *col = (int)i;
            return AS_OK;
        }
    }
    size_t sl = strlen(spec);
    int digits = sl > 0 && sl < 10;
    for (size_t i = 0; i < sl; i++)
        if (spec[i] < '0' || spec[i] > '9')
            digits = 0;
    if (digits) {
        long k = strtol(spec, NULL, 10);
        if (k >= 1 && (size_t)k <= r->nhdr) {
            *col = (int)(k - 1);
            return AS_OK;
        }
        return as_error_set(err, AS_ERR_ARG, -1, -1,
                            "%s column %ld is out of range: the header has %zu columns", what, k,
                            r->nhdr);
    }
    char list[120];
    size_t at = 0;
    list[0] = '\0';
    for (size_t i = 0; i < r->nhdr && at + 4 < sizeof list; i++) {
        int w = snprintf(list + at, sizeof list - at, "%s%s", i ? ", " : "", r->hdr_names[i]);
        if (w < 0)
            break;
        at += (size_t)w;
    }
    if (at >= sizeof list)
        memcpy(list + sizeof list - 4, "...", 4);
    return as_error_set(err, AS_ERR_ARG, -1, -1, "no %s column '%.40s' in the header (%s)", what,
                        spec, list);
}

static int best_col(const char *const *names, size_t n, as_io_role role)
{
    int best = -1, best_rank = 1 << 20;
    for (size_t i = 0; i < n; i++) {
        int k = as_io_column_rank(names[i], strlen(names[i]), role);
        if (k >= 0 && k < best_rank) {
            best = (int)i;
            best_rank = k;
        }
    }
    return best;
}

static const char *role_option(const as_reader_opts *o, as_io_role role)
{
    switch (role) {
    case AS_IO_ROLE_REACTION: return o->reaction_col;
    case AS_IO_ROLE_SMILES: return o->smiles_col;
    case AS_IO_ROLE_SUBSTRATE: return o->substrate_col;
    case AS_IO_ROLE_PRODUCT: return o->product_col;
    case AS_IO_ROLE_REAGENTS: return o->reagent_col;
    default: return o->id_col;
    }
}

static const char *const role_words[AS_IO_ROLE_COUNT] = {"reaction", "SMILES", "substrate",
                                                         "product",  "reagent", "id"};

static as_status header_columns(as_reader *r, as_error *err)
{
    r->explicit_smiles = r->o.reaction_col || r->o.substrate_col || r->o.smiles_col;
    for (int k = 0; k < AS_IO_ROLE_COUNT; k++) {
        as_io_role role = (as_io_role)k;
        const char *spec = role_option(&r->o, role);
        r->col[k] = -1;
        if (spec) {
            as_status st = resolve_col(r, spec, role_words[k], &r->col[k], err);
            if (st != AS_OK)
                return st;
        } else if (!(r->explicit_smiles && role <= AS_IO_ROLE_SUBSTRATE)) {
            r->col[k] = best_col(r->hdr_names, r->nhdr, role);
        }
    }
    if (!r->explicit_smiles && (r->col[AS_IO_ROLE_REACTION] >= 0 ||
                                r->col[AS_IO_ROLE_SUBSTRATE] >= 0))
        r->col[AS_IO_ROLE_SMILES] = -1;
    if (r->col[AS_IO_ROLE_REACTION] < 0 && r->col[AS_IO_ROLE_SUBSTRATE] < 0 &&
        r->col[AS_IO_ROLE_SMILES] < 0) {
        if (r->nhdr == 1) {
            r->col[AS_IO_ROLE_SMILES] = 0;
        } else if (r->nhdr > 1) {
            char list[120];
            size_t at = 0;
            list[0] = '\0';
            for (size_t i = 0; i < r->nhdr && at + 4 < sizeof list; i++) {
                int w = snprintf(list + at, sizeof list - at, "%s%s", i ? ", " : "",
                                 r->hdr_names[i]);
                if (w < 0)
                    break;
                at += (size_t)w;
            }
            if (at >= sizeof list)
                memcpy(list + sizeof list - 4, "...", 4);
            return as_error_set(err, AS_ERR_ARG, -1, -1,
                                "no reaction, substrate or SMILES column recognised in the "
                                "header (%s); name one in the options", list);
        }
    }
    return AS_OK;
}

/* Keeps the cells of the just-read header as the column names. */
static as_status header_keep(as_reader *r)
{
    as_io_buf_free(&r->hdr);
    if (as_io_buf_put(&r->hdr, r->cells.p ? r->cells.p : "", r->cells.len) != 0)
        return AS_ERR_NOMEM;
    free((void *)r->hdr_names);
    r->hdr_names = malloc((r->ncells ? r->ncells : 1) * sizeof *r->hdr_names);
    if (!r->hdr_names)
        return AS_ERR_NOMEM;
    r->nhdr = r->ncells;
    for (size_t i = 0; i < r->ncells; i++)
        r->hdr_names[i] = r->hdr.p + r->cell_off[i];
    return AS_OK;
}

static as_status header_error(const as_record *rec, as_error *err)
{
    if (err) {
        *err = rec->err;
        size_t k = strlen(err->msg);
        snprintf(err->msg + k, sizeof err->msg - k, " (in the header)");
    }
    return rec->err.code;
}

/* Reads the header row, passing over blank lines before it. */
static as_status read_header(as_reader *r, as_error *err)
{
    as_record rec;
    for (;;) {
        memset(&rec, 0, sizeof rec);
        as_error_clear(&rec.err);
        if (r->fmt == AS_FMT_CSV) {
            int st = csv_read(r, &rec, r->o.csv_delimiter);
            if (r->nomem)
                return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory reading the header");
            if (st == CSV_NONE)
                return AS_OK;
            if (st == CSV_BAD && r->src_err)
                return as_error_set(err, AS_ERR_IO, -1, -1, "the header could not be read (%s)",
                                    r->src_msg);
            if (st == CSV_BAD || check_encoding(&rec))
                return header_error(&rec, err);
        } else {
            if (!take_line(r, &rec)) {
                if (r->nomem)
                    return as_error_set(err, AS_ERR_NOMEM, -1, -1,
                                        "out of memory reading the header");
                if (rec.at_end)
                    return AS_OK;
                return header_error(&rec, err);
            }
            if (tsv_split(r, rec.raw, rec.raw_len) != 0)
                return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory reading the header");
        }
        if (!(rec.nlines == 1 && all_blank(rec.raw, rec.raw_len) &&
              memchr(rec.raw, '"', rec.raw_len) == NULL))
            break;
    }
    /* A header ending in an empty cell (a trailing delimiter) keeps it out of the names. */
    if (r->ncells > 1 && cell(r, r->ncells - 1)[0] == '\0')
        r->ncells--;
    if (header_keep(r) != AS_OK)
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory reading the header");
    return header_columns(r, err);
}

/* Sets the named fields from the columns picked for each role (-1: none). */
static void assign_named(as_record *rec, const int *col, const char *const *vals, size_t n)
{
    const char *v[AS_IO_ROLE_COUNT];
    for (int k = 0; k < AS_IO_ROLE_COUNT; k++)
        v[k] = (col[k] >= 0 && (size_t)col[k] < n) ? nonempty(vals[col[k]]) : NULL;
    rec->reaction = v[AS_IO_ROLE_REACTION];
    rec->substrate = v[AS_IO_ROLE_SUBSTRATE];
    rec->product = v[AS_IO_ROLE_PRODUCT];
    rec->reagents = v[AS_IO_ROLE_REAGENTS];
    rec->id = v[AS_IO_ROLE_ID];
    const char *sm = v[AS_IO_ROLE_SMILES];
    if (sm) {
        if (as_io_is_reaction(sm, strlen(sm))) {
            if (!rec->reaction)
                rec->reaction = sm;
        } else if (!rec->substrate) {
            rec->substrate = sm;
        }
    }
}

static as_status next_table(as_reader *r, as_record *rec)
{
    if (r->fmt == AS_FMT_CSV) {
        long line0 = r->line;
        int st = csv_read(r, rec, r->o.csv_delimiter);
        if (r->nomem)
            return AS_ERR_NOMEM;
        if (st == CSV_NONE) {
            if (r->src_err)
                io_error_record(r, rec, line0);
            else
                rec->at_end = 1;
            return AS_OK;
        }
        if (st == CSV_BAD && r->src_err) {
            io_error_record(r, rec, line0);
            return AS_OK;
        }
        if (st == CSV_BAD || check_encoding(rec))
            return AS_OK;
        if (rec->nlines == 1 && all_blank(rec->raw, rec->raw_len) &&
            memchr(rec->raw, '"', rec->raw_len) == NULL) {
            rec->skipped = 1;
            rec->skip_reason = "blank line";
            return AS_OK;
        }
    } else {
        if (!take_line(r, rec))
            return r->nomem ? AS_ERR_NOMEM : AS_OK;
        if (all_blank(rec->raw, rec->raw_len)) {
            rec->skipped = 1;
            rec->skip_reason = "blank line";
            return AS_OK;
        }
        if (tsv_split(r, rec->raw, rec->raw_len) != 0)
            return AS_ERR_NOMEM;
    }
    /* One extra empty cell at the end (a trailing TAB or comma) is ignored. */
    if (r->ncells == r->nhdr + 1 && cell(r, r->ncells - 1)[0] == '\0')
        r->ncells--;
    size_t ncols = r->ncells;
    if (r->ncells != r->nhdr) {
        size_t at = r->ncells > r->nhdr ? r->cell_raw[r->nhdr] : rec->raw_len;
        if (!r->o.lenient_fields) {
            rec_error(rec, AS_ERR_SYNTAX, at, "the record has %zu fields but the header has %zu",
                      r->ncells, r->nhdr);
        } else {
            long line, col;
            raw_linecol(rec->raw, at, rec->line, &line, &col);
            snprintf(rec->warning, sizeof rec->warning,
                     "the record has %zu fields but the header has %zu (line %ld, column %ld); "
                     "%s", r->ncells, r->nhdr, line, col,
                     r->ncells > r->nhdr ? "extra fields left out of the columns"
                                         : "missing fields read as empty");
        }
        ncols = r->nhdr;
    }
    if (ensure_ptrs(&r->vals, &r->vals_cap, ncols ? ncols : 1) != 0)
        return AS_ERR_NOMEM;
    for (size_t k = 0; k < ncols; k++)
        r->vals[k] = k < r->ncells ? cell(r, k) : "";
    rec->ncols = ncols;
    rec->col_names = r->hdr_names;
    rec->col_values = r->vals;
    if (rec->err.code == AS_OK)
        assign_named(rec, r->col, r->vals, ncols);
    return AS_OK;
}

/* ==== JSON Lines ============================================================================ */

static const char *json_type_name(const cJSON *j)
{
    if (cJSON_IsArray(j))
        return "array";
    if (cJSON_IsString(j))
        return "string";
    if (cJSON_IsNumber(j))
        return "number";
    if (cJSON_IsBool(j))
        return "boolean";
    if (cJSON_IsNull(j))
        return "null";
    return "value";
}

static int json_find_key(const char *const *names, size_t n, const char *spec)
{
    for (size_t i = 0; i < n; i++)
        if (strcmp(names[i], spec) == 0)
            return (int)i;
    return -1;
}

static as_status next_jsonl(as_reader *r, as_record *rec)
{
    if (!take_line(r, rec))
        return r->nomem ? AS_ERR_NOMEM : AS_OK;
    if (all_blank(rec->raw, rec->raw_len)) {
        rec->skipped = 1;
        rec->skip_reason = "blank line";
        return AS_OK;
    }
    const char *end = NULL;
    cJSON *j = cJSON_ParseWithLengthOpts(rec->raw, rec->raw_len, &end, 0);
    if (!j) {
        size_t off = (end && end >= rec->raw) ? (size_t)(end - rec->raw) : 0;
        if (off > rec->raw_len)
            off = rec->raw_len;
        rec_error(rec, AS_ERR_SYNTAX, off, "not valid JSON: parsing stopped at column %zu",
                  off + 1);
        return AS_OK;
    }
    r->json = j;
    size_t first = 0;
    while (first < rec->raw_len && is_blank_char(rec->raw[first]))
        first++;
    if (!cJSON_IsObject(j)) {
        rec_error(rec, AS_ERR_SYNTAX, first, "the line holds a JSON %s, not an object",
                  json_type_name(j));
        return AS_OK;
    }
    size_t eo = (end && end >= rec->raw) ? (size_t)(end - rec->raw) : rec->raw_len;
    while (eo < rec->raw_len && is_blank_char(rec->raw[eo]))
        eo++;
    if (eo < rec->raw_len) {
        rec_error(rec, AS_ERR_SYNTAX, eo, "text after the JSON object at column %zu", eo + 1);
        return AS_OK;
    }
    size_t n = 0;
    for (const cJSON *c = j->child; c; c = c->next)
        n++;
    if (ensure_ptrs(&r->vals, &r->vals_cap, n ? n : 1) != 0 ||
        ensure_ptrs(&r->names, &r->names_cap, n ? n : 1) != 0)
        return AS_ERR_NOMEM;
    if (n > r->jtext_cap) {
        char **a = realloc(r->jtext, n * sizeof *a);
        if (!a)
            return AS_ERR_NOMEM;
        r->jtext = a;
        r->jtext_cap = n;
    }
    size_t i = 0;
    for (cJSON *c = j->child; c; c = c->next, i++) {
        r->names[i] = c->string ? c->string : "";
        if (cJSON_IsString(c)) {
            r->vals[i] = c->valuestring ? c->valuestring : "";
        } else if (cJSON_IsNull(c)) {
            r->vals[i] = "";
        } else if (cJSON_IsTrue(c)) {
            r->vals[i] = "true";
        } else if (cJSON_IsFalse(c)) {
            r->vals[i] = "false";
        } else {
            char *t = cJSON_PrintUnformatted(c);
            if (!t)
                return AS_ERR_NOMEM;
            r->jtext[r->njtext++] = t;
            r->vals[i] = t;
        }
    }
    rec->ncols = n;
    rec->col_names = r->names;
    rec->col_values = r->vals;
    int col[AS_IO_ROLE_COUNT];
    for (int k = 0; k < AS_IO_ROLE_COUNT; k++) {
        as_io_role role = (as_io_role)k;
        const char *spec = role_option(&r->o, role);
        if (spec)
            col[k] = json_find_key(r->names, n, spec);
        else if (r->explicit_smiles && role <= AS_IO_ROLE_SUBSTRATE)
            col[k] = -1;
        else
            col[k] = best_col(r->names, n, role);
    }
    if (!r->explicit_smiles && (col[AS_IO_ROLE_REACTION] >= 0 || col[AS_IO_ROLE_SUBSTRATE] >= 0))
        col[AS_IO_ROLE_SMILES] = -1;
    assign_named(rec, col, r->vals, n);
    return AS_OK;
}

/* ==== Opening and detection ================================================================= */

void as_reader_opts_init(as_reader_opts *o)
{
    if (!o)
        return;
    memset(o, 0, sizeof *o);
    o->format = AS_FMT_AUTO;
    o->max_record = AS_IO_DEFAULT_MAX_RECORD;
    o->csv_delimiter = ',';
}

static as_status reader_alloc(const as_reader_opts *opts, as_reader **out, as_error *err)
{
    as_reader_opts o;
    if (opts)
        o = *opts;
    else
        as_reader_opts_init(&o);
    if (o.csv_delimiter == 0)
        o.csv_delimiter = ',';
    if (o.max_record < AS_IO_MIN_MAX_RECORD)
        return as_error_set(err, AS_ERR_ARG, -1, -1,
                            "record limit %ld is below the smallest accepted (%ld bytes)",
                            o.max_record, AS_IO_MIN_MAX_RECORD);
    if ((int)o.format < 0 || o.format >= AS_FMT_COUNT)
        return as_error_set(err, AS_ERR_ARG, -1, -1, "unknown input format %d", (int)o.format);
    if (o.csv_delimiter == '"' || o.csv_delimiter == '\n' || o.csv_delimiter == '\r')
        return as_error_set(err, AS_ERR_ARG, -1, -1,
                            "a quote or line break cannot be the CSV delimiter");
    as_reader *r = calloc(1, sizeof *r);
    if (!r)
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory opening the input");
    r->o = o;
    r->max = (size_t)o.max_record;
    r->line = 1;
    r->fd = -1;
    r->gz = -1;
    for (int k = 0; k < AS_IO_ROLE_COUNT; k++)
        r->col[k] = -1;
    *out = r;
    return AS_OK;
}

/* 1 when the file name ends in ext (case-insensitive), ignoring a trailing ".gz". */
static int name_has_ext(const char *path, const char *ext)
{
    size_t n = strlen(path), e = strlen(ext);
    if (n > 3 && (strcmp(path + n - 3, ".gz") == 0 || strcmp(path + n - 3, ".GZ") == 0))
        n -= 3;
    if (n <= e)
        return 0;
    for (size_t i = 0; i < e; i++) {
        char c = path[n - e + i];
        if (c >= 'A' && c <= 'Z')
            c = (char)(c - 'A' + 'a');
        if (c != ext[i])
            return 0;
    }
    return 1;
}

/* 1 when one of the cells of line (split at sep; surrounding blanks and quotes dropped) is a
 * known column name. */
static int has_known_name(const char *s, size_t n, char sep)
{
    size_t b = 0;
    while (b <= n) {
        size_t e = b;
        while (e < n && s[e] != sep)
            e++;
        size_t vb = b, ve = e;
        while (vb < ve && (is_blank_char(s[vb]) || s[vb] == '"'))
            vb++;
        while (ve > vb && (is_blank_char(s[ve - 1]) || s[ve - 1] == '"'))
            ve--;
        for (int k = 0; k < AS_IO_ROLE_COUNT; k++)
            if (as_io_column_rank(s + vb, ve - vb, (as_io_role)k) >= 0)
                return 1;
        b = e + 1;
    }
    return 0;
}

static as_format sniff(as_reader *r, const char *path)
{
    if (path && strcmp(path, "-") != 0) {
        if (name_has_ext(path, ".jsonl") || name_has_ext(path, ".ndjson"))
            return AS_FMT_JSONL;
        if (name_has_ext(path, ".csv"))
            return AS_FMT_CSV;
        if (name_has_ext(path, ".tsv") || name_has_ext(path, ".tab"))
            return AS_FMT_TSV;
    }
    const unsigned char *up;
    size_t n = src_peek(r, &up);
    const char *p = (const char *)up;
    if (n > IO_SNIFF)
        n = IO_SNIFF;
    /* The first line with something on it. */
    size_t b = 0;
    for (;;) {
        const char *nl = memchr(p + b, '\n', n - b);
        size_t e = nl ? (size_t)(nl - p) : n;
        if (!all_blank(p + b, e - b) || !nl) {
            n = e;
            break;
        }
        b = e + 1;
    }
    if (n > b && p[n - 1] == '\r')
        n--;
    const char *s = p + b;
    size_t len = n - b, i = 0;
    while (i < len && is_blank_char(s[i]))
        i++;
    if (i < len && s[i] == '{')
        return AS_FMT_JSONL;
    if (memchr(s, '\t', len) && has_known_name(s, len, '\t'))
        return AS_FMT_TSV;
    if (memchr(s, r->o.csv_delimiter, len) && has_known_name(s, len, r->o.csv_delimiter))
        return AS_FMT_CSV;
    return AS_FMT_RSMI;
}

/* Common to both open functions: BOM, format, header. Frees r on failure. */
static as_status reader_start(as_reader *r, const char *path, as_reader **out, as_error *err)
{
    const unsigned char *p;
    size_t n = src_peek(r, &p);
    if (n >= 3 && p[0] == 0xEF && p[1] == 0xBB && p[2] == 0xBF)
        src_skip(r, 3);
    r->fmt = r->o.format != AS_FMT_AUTO ? r->o.format : sniff(r, path);
    r->explicit_smiles = r->o.reaction_col || r->o.substrate_col || r->o.smiles_col;
    if (r->fmt == AS_FMT_CSV || r->fmt == AS_FMT_TSV) {
        as_status st = read_header(r, err);
        if (st != AS_OK) {
            as_reader_close(r);
            return st;
        }
    }
    *out = r;
    return AS_OK;
}

as_status as_reader_open_buffer(const char *data, size_t len, const as_reader_opts *opts,
                                as_reader **out, as_error *err)
{
    if (!out || (!data && len))
        return as_error_set(err, AS_ERR_ARG, -1, -1, "no buffer or no place for the reader");
    *out = NULL;
    as_reader *r;
    as_status st = reader_alloc(opts, &r, err);
    if (st != AS_OK)
        return st;
    r->data = (const unsigned char *)(data ? data : "");
    r->len = len;
    r->src_end = 1;
    return reader_start(r, NULL, out, err);
}

as_status as_reader_open(const char *path, const as_reader_opts *opts, as_reader **out,
                         as_error *err)
{
    if (!path || !out)
        return as_error_set(err, AS_ERR_ARG, -1, -1, "no input path or no place for the reader");
    *out = NULL;
    as_reader *r;
    as_status st = reader_alloc(opts, &r, err);
    if (st != AS_OK)
        return st;
    int is_stdin = strcmp(path, "-") == 0;
    int fd = is_stdin ? STDIN_FILENO : open(path, O_RDONLY | O_CLOEXEC);
    if (fd < 0) {
        int e = errno;
        as_reader_close(r);
        return as_error_set(err, AS_ERR_IO, -1, -1, "cannot open %.160s: %s", path, strerror(e));
    }
    r->fd = fd;
    r->own_fd = !is_stdin;
    struct stat sb;
    if (fstat(fd, &sb) == 0 && S_ISDIR(sb.st_mode)) {
        as_reader_close(r);
        return as_error_set(err, AS_ERR_IO, -1, -1, "cannot read %.160s: it is a directory",
                            is_stdin ? "standard input" : path);
    }
    r->chunk = malloc(IO_CHUNK);
    if (!r->chunk) {
        as_reader_close(r);
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory opening %.160s", path);
    }
    return reader_start(r, path, out, err);
}

/* ==== Records =============================================================================== */

as_status as_reader_next(as_reader *r, as_record *rec, as_error *err)
{
    if (!r || !rec)
        return as_error_set(err, AS_ERR_ARG, -1, -1, "no reader or no record to fill");
    memset(rec, 0, sizeof *rec);
    as_error_clear(&rec->err);
    json_release(r);
    if (r->done) {
        rec->at_end = 1;
        return AS_OK;
    }
    as_status st;
    switch (r->fmt) {
    case AS_FMT_CSV:
    case AS_FMT_TSV: st = next_table(r, rec); break;
    case AS_FMT_JSONL: st = next_jsonl(r, rec); break;
    default: st = next_rsmi(r, rec); break;
    }
    if (st != AS_OK || r->nomem) {
        r->done = 1;
        memset(rec, 0, sizeof *rec);
        as_error_clear(&rec->err);
        rec->at_end = 1;
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory reading line %ld",
                            r->line);
    }
    if (rec->at_end) {
        r->done = 1;
        return AS_OK;
    }
    rec->index = r->index++;
    return AS_OK;
}

as_format as_reader_format(const as_reader *r)
{
    return r ? r->fmt : AS_FMT_AUTO;
}

size_t as_reader_columns(const as_reader *r, const char *const **names)
{
    if (!r || r->fmt == AS_FMT_JSONL) {
        if (names)
            *names = NULL;
        return 0;
    }
    if (r->fmt == AS_FMT_RSMI) {
        if (names)
            *names = rsmi_names;
        return RS_FIXED;
    }
    if (names)
        *names = r->hdr_names;
    return r->nhdr;
}

void as_reader_close(as_reader *r)
{
    if (!r)
        return;
    json_release(r);
    if (r->zs_init)
        inflateEnd(&r->zs);
    if (r->own_fd && r->fd >= 0)
        close(r->fd);
    free(r->inbuf);
    free(r->chunk);
    as_io_buf_free(&r->rep);
    as_io_buf_free(&r->raw);
    as_io_buf_free(&r->cells);
    as_io_buf_free(&r->hdr);
    free(r->cell_off);
    free(r->cell_raw);
    free((void *)r->vals);
    free((void *)r->names);
    free((void *)r->hdr_names);
    for (size_t i = 0; i < r->nextra; i++)
        free(r->extra[i]);
    free(r->extra);
    free(r->jtext);
    free(r);
}
