/* io_write.c — record writers: JSON Lines (cJSON), TSV with backslash escapes, CSV (RFC 4180).
 * Owns: the header of a TSV/CSV output and the escaping rules documented in io.h. Must not:
 * hold more than one record or open files (it writes to a borrowed as_outfile). */
#include "addsite/io.h"
#include "io_int.h"

#include <cjson/cJSON.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

struct as_writer {
    as_outfile *out;               /* borrowed */
    as_writer_opts o;
    int header_done;
    char **hnames;                 /* header: field names, then carried names (renamed) */
    char **horig;                  /* original carried names, parallel to hnames[nfields..] */
    size_t nfields, ncarry;
    as_io_buf line;                /* the line being built */
    as_io_buf tmp;                 /* scratch: sanitised text */
    const char **slot;             /* TSV/CSV: text of each header column for this record */
    size_t *slot_len;
    size_t slot_cap;
    char (*num)[40];               /* TSV/CSV: number texts, one per field */
    size_t num_cap;
    long dropped;
};

static const char *const eol_lf = "\n";
static const char *const eol_crlf = "\r\n";

void as_writer_opts_init(as_writer_opts *o)
{
    if (!o)
        return;
    memset(o, 0, sizeof *o);
    o->format = AS_FMT_JSONL;
    o->csv_delimiter = ',';
}

as_status as_writer_open(as_outfile *out, const as_writer_opts *opts, as_writer **w,
                         as_error *err)
{
    if (!out || !w)
        return as_error_set(err, AS_ERR_ARG, -1, -1, "no output file or no place for the writer");
    *w = NULL;
    as_writer_opts o;
    if (opts)
        o = *opts;
    else
        as_writer_opts_init(&o);
    if (o.csv_delimiter == 0)
        o.csv_delimiter = ',';
    if (o.format != AS_FMT_JSONL && o.format != AS_FMT_TSV && o.format != AS_FMT_CSV)
        return as_error_set(err, AS_ERR_ARG, -1, -1,
                            "records can be written as jsonl, tsv or csv, not as %s",
                            as_format_name(o.format));
    if (o.csv_delimiter == '"' || o.csv_delimiter == '\n' || o.csv_delimiter == '\r')
        return as_error_set(err, AS_ERR_ARG, -1, -1,
                            "a quote or line break cannot be the CSV delimiter");
    as_writer *x = calloc(1, sizeof *x);
    if (!x)
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory creating the writer");
    x->out = out;
    x->o = o;
    *w = x;
    return AS_OK;
}

long as_writer_dropped(const as_writer *w)
{
    return w ? w->dropped : 0;
}

void as_writer_free(as_writer *w)
{
    if (!w)
        return;
    for (size_t i = 0; i < w->nfields + w->ncarry; i++)
        free(w->hnames[i]);
    for (size_t i = 0; i < w->ncarry; i++)
        free(w->horig[i]);
    free(w->hnames);
    free(w->horig);
    as_io_buf_free(&w->line);
    as_io_buf_free(&w->tmp);
    free((void *)w->slot);
    free(w->slot_len);
    free(w->num);
    free(w);
}

/* ==== Values as text ======================================================================== */

/* The text of one field for TSV/CSV (null and non-finite numbers are empty). */
static void kv_text(const as_kv *kv, char num[40], const char **p, size_t *n)
{
    switch (kv->kind) {
    case AS_KV_INT:
        as_fmt_ll(num, kv->i);
        *p = num;
        break;
    case AS_KV_REAL:
        if (isfinite(kv->d))
            as_fmt_g6(num, 40, kv->d);
        else
            num[0] = '\0';
        *p = num;
        break;
    case AS_KV_BOOL:
        *p = kv->i ? "true" : "false";
        break;
    default:
        *p = kv->text ? kv->text : "";
        *n = (kv->text && kv->len) ? kv->len : strlen(*p);
        return;
    }
    *n = strlen(*p);
}

/* Copies s[0..n) into w->tmp as valid UTF-8 without NUL: each bad byte becomes U+FFFD. */
static int sanitise(as_writer *w, const char *s, size_t n)
{
    static const char repl[] = "\xEF\xBF\xBD";
    w->tmp.len = 0;
    if (as_io_buf_reserve(&w->tmp, n) != 0)
        return -1;
    const unsigned char *u = (const unsigned char *)s;
    size_t i = 0;
    while (i < n) {
        size_t run = i;
        while (run < n && u[run] != 0 && u[run] < 0x80)
            run++;
        if (run > i) { /* plain ASCII goes in one piece */
            if (as_io_buf_put(&w->tmp, s + i, run - i) != 0)
                return -1;
            i = run;
            continue;
        }
        size_t k = as_io_utf8_seq(u + i, n - i);
        if (k == 0) {
            if (as_io_buf_put(&w->tmp, repl, 3) != 0)
                return -1;
            i++;
        } else {
            if (as_io_buf_put(&w->tmp, s + i, k) != 0)
                return -1;
            i += k;
        }
    }
    if (as_io_buf_reserve(&w->tmp, 0) != 0)
        return -1;
    w->tmp.p[w->tmp.len] = '\0';
    return 0;
}

/* ==== TSV and CSV cells ===================================================================== */

static int put_tsv(as_io_buf *b, const char *s, size_t n)
{
    size_t run = 0;
    for (size_t i = 0; i < n; i++) {
        char c = s[i];
        const char *esc = c == '\t' ? "\\t" : c == '\n' ? "\\n" : c == '\r' ? "\\r"
                        : c == '\\' ? "\\\\" : c == '\0' ? "\\0" : NULL;
        if (!esc)
            continue;
        if (as_io_buf_put(b, s + run, i - run) != 0 || as_io_buf_put(b, esc, 2) != 0)
            return -1;
        run = i + 1;
    }
    return as_io_buf_put(b, s + run, n - run);
}

static int put_csv(as_io_buf *b, const char *s, size_t n, char delim)
{
    int quote = n > 0 && (s[0] == ' ' || s[n - 1] == ' ');
    for (size_t i = 0; i < n && !quote; i++)
        if (s[i] == delim || s[i] == '"' || s[i] == '\n' || s[i] == '\r')
            quote = 1;
    if (quote && as_io_buf_putc(b, '"') != 0)
        return -1;
    for (size_t i = 0; i < n; i++) {
        int r;
        if (s[i] == '"')
            r = as_io_buf_put(b, "\"\"", 2);
        else if (s[i] == '\0')
            r = as_io_buf_put(b, "\xEF\xBF\xBD", 3);
        else
            r = as_io_buf_putc(b, s[i]);
        if (r != 0)
            return -1;
    }
    return quote ? as_io_buf_putc(b, '"') : 0;
}

static int put_cell(as_writer *w, size_t k, const char *s, size_t n)
{
    if (k > 0) {
        char sep = w->o.format == AS_FMT_TSV ? '\t' : w->o.csv_delimiter;
        if (as_io_buf_putc(&w->line, sep) != 0)
            return -1;
    }
    if (w->o.format == AS_FMT_TSV)
        return put_tsv(&w->line, s, n);
    return put_csv(&w->line, s, n, w->o.csv_delimiter);
}

static const char *eol(const as_writer *w)
{
    return w->o.crlf ? eol_crlf : eol_lf;
}

/* ==== Carried names ========================================================================= */

/* 1 when name is among the first n of names. */
static int name_taken(char *const *names, size_t n, const char *name)
{
    for (size_t i = 0; i < n; i++)
        if (strcmp(names[i], name) == 0)
            return 1;
    return 0;
}

/* A copy of name with "input_" put in front until it differs from the first n names. */
static char *unique_name(char *const *names, size_t n, const char *name)
{
    char *cur = strdup(name);
    while (cur && name_taken(names, n, cur)) {
        size_t l = strlen(cur);
        char *next = malloc(l + 7);
        if (next) {
            memcpy(next, "input_", 6);
            memcpy(next + 6, cur, l + 1);
        }
        free(cur);
        cur = next;
    }
    return cur;
}

/* ==== Header (TSV/CSV) ====================================================================== */

static as_status write_header(as_writer *w, const as_kv *fields, size_t nfields,
                              const char *const *carry_names, size_t ncarry, as_error *err)
{
    size_t total = nfields + ncarry;
    w->hnames = calloc(total ? total : 1, sizeof *w->hnames);
    w->horig = calloc(ncarry ? ncarry : 1, sizeof *w->horig);
    if (!w->hnames || !w->horig)
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory writing the header");
    for (size_t i = 0; i < nfields; i++) {
        w->hnames[i] = strdup(fields[i].name ? fields[i].name : "");
        if (!w->hnames[i])
            return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory writing the header");
        w->nfields++;
    }
    for (size_t i = 0; i < ncarry; i++) {
        const char *nm = carry_names[i] ? carry_names[i] : "";
        w->horig[i] = strdup(nm);
        w->hnames[nfields + i] = unique_name(w->hnames, nfields + i, nm);
        if (!w->horig[i] || !w->hnames[nfields + i]) {
            free(w->horig[i]);
            free(w->hnames[nfields + i]);
            w->horig[i] = w->hnames[nfields + i] = NULL;
            return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory writing the header");
        }
        w->ncarry++;
    }
    w->line.len = 0;
    for (size_t i = 0; i < total; i++)
        if (put_cell(w, i, w->hnames[i], strlen(w->hnames[i])) != 0)
            return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory writing the header");
    if (as_io_buf_put(&w->line, eol(w), strlen(eol(w))) != 0)
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory writing the header");
    w->header_done = 1;
    return as_outfile_write(w->out, w->line.p, w->line.len, err);
}

static as_status put_table(as_writer *w, const as_kv *fields, size_t nfields,
                           const char *const *carry_names, const char *const *carry_values,
                           size_t ncarry, as_error *err)
{
    if (!w->header_done) {
        as_status st = write_header(w, fields, nfields, carry_names, ncarry, err);
        if (st != AS_OK)
            return st;
    }
    size_t total = w->nfields + w->ncarry;
    if (total > w->slot_cap) {
        const char **s = realloc((void *)w->slot, total * sizeof *s);
        if (!s)
            return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory writing a record");
        w->slot = s;
        size_t *l = realloc(w->slot_len, total * sizeof *l);
        if (!l)
            return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory writing a record");
        w->slot_len = l;
        w->slot_cap = total;
    }
    if (nfields > w->num_cap) {
        char (*nb)[40] = realloc(w->num, nfields * sizeof *nb);
        if (!nb)
            return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory writing a record");
        w->num = nb;
        w->num_cap = nfields;
    }
    for (size_t i = 0; i < total; i++) {
        w->slot[i] = "";
        w->slot_len[i] = 0;
    }
    for (size_t i = 0; i < nfields; i++) {
        const char *nm = fields[i].name ? fields[i].name : "";
        size_t k = i;
        if (k >= w->nfields || strcmp(w->hnames[k], nm) != 0) {
            for (k = 0; k < w->nfields; k++)
                if (strcmp(w->hnames[k], nm) == 0)
                    break;
            if (k == w->nfields)
                return as_error_set(err, AS_ERR_ARG, -1, -1,
                                    "field '%.60s' is not in the header written with the first "
                                    "record", nm);
        }
        kv_text(&fields[i], w->num[i], &w->slot[k], &w->slot_len[k]);
    }
    for (size_t i = 0; i < ncarry; i++) {
        const char *nm = carry_names && carry_names[i] ? carry_names[i] : "";
        size_t k = i;
        if (k >= w->ncarry || strcmp(w->horig[k], nm) != 0) {
            for (k = 0; k < w->ncarry; k++)
                if (strcmp(w->horig[k], nm) == 0)
                    break;
            if (k == w->ncarry) {
                w->dropped++;
                continue;
            }
        }
        const char *v = carry_values && carry_values[i] ? carry_values[i] : "";
        w->slot[w->nfields + k] = v;
        w->slot_len[w->nfields + k] = strlen(v);
    }
    w->line.len = 0;
    for (size_t i = 0; i < total; i++)
        if (put_cell(w, i, w->slot[i], w->slot_len[i]) != 0)
            return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory writing a record");
    if (as_io_buf_put(&w->line, eol(w), strlen(eol(w))) != 0)
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory writing a record");
    return as_outfile_write(w->out, w->line.p, w->line.len, err);
}

/* ==== JSON Lines ============================================================================ */

/* The record is written straight into w->line, escaped exactly as cJSON_PrintUnformatted
 * would write the same object (the output predates this writer and must not change): no
 * tree is built. Only AS_KV_JSON values go through cJSON, to be checked and re-printed. */

/* Appends s[0..n) (no NUL inside) as a JSON string: '"' '\\' and the controls \b \f \n \r \t
 * get their short escapes, other bytes below 0x20 \u00xx, everything else as it is. Room for
 * the worst case is made once, then bytes go straight into the buffer. */
static int json_put_mem(as_io_buf *b, const char *s, size_t n)
{
    static const char hex[] = "0123456789abcdef";
    if (n > ((size_t)-1 - 2) / 6 || as_io_buf_reserve(b, 6 * n + 2) != 0)
        return -1;
    char *o = b->p + b->len;
    *o++ = '"';
    const unsigned char *u = (const unsigned char *)s, *end = u + n;
    for (; u < end; u++) {
        unsigned c = *u;
        if (c >= 0x20 && c != '"' && c != '\\') {
            *o++ = (char)c;
            continue;
        }
        *o++ = '\\';
        switch (c) {
        case '"': *o++ = '"'; break;
        case '\\': *o++ = '\\'; break;
        case '\b': *o++ = 'b'; break;
        case '\f': *o++ = 'f'; break;
        case '\n': *o++ = 'n'; break;
        case '\r': *o++ = 'r'; break;
        case '\t': *o++ = 't'; break;
        default:
            *o++ = 'u';
            *o++ = '0';
            *o++ = '0';
            *o++ = hex[c >> 4];
            *o++ = hex[c & 15];
        }
    }
    *o++ = '"';
    b->len = (size_t)(o - b->p);
    b->p[b->len] = '\0';
    return 0;
}

static int json_put_string(as_io_buf *b, const char *s)
{
    return json_put_mem(b, s, strlen(s));
}

/* 1 when s[0..n) is plain ASCII without NUL: sanitise would copy it unchanged. */
static int plain_ascii(const char *s, size_t n)
{
    const unsigned char *u = (const unsigned char *)s;
    for (size_t i = 0; i < n; i++)
        if (u[i] == 0 || u[i] >= 0x80)
            return 0;
    return 1;
}

/* Appends the value of one field. */
static as_status json_value(as_writer *w, const as_kv *kv, as_error *err)
{
    as_io_buf *b = &w->line;
    char num[40];
    int bad = 0;
    switch (kv->kind) {
    case AS_KV_INT:
        as_fmt_ll(num, kv->i);
        bad = as_io_buf_put(b, num, strlen(num));
        break;
    case AS_KV_REAL:
        if (isfinite(kv->d))
            as_fmt_g6(num, sizeof num, kv->d);
        else
            strcpy(num, "null");
        bad = as_io_buf_put(b, num, strlen(num));
        break;
    case AS_KV_BOOL:
        bad = kv->i ? as_io_buf_put(b, "true", 4) : as_io_buf_put(b, "false", 5);
        break;
    case AS_KV_JSON_COMPACT:
        if (!kv->text)
            bad = as_io_buf_put(b, "null", 4);
        else
            bad = as_io_buf_put(b, kv->text, kv->len ? kv->len : strlen(kv->text));
        break;
    case AS_KV_JSON: {
        if (!kv->text) {
            bad = as_io_buf_put(b, "null", 4);
            break;
        }
        size_t n = kv->len ? kv->len : strlen(kv->text);
        const char *end = NULL;
        cJSON *item = cJSON_ParseWithLengthOpts(kv->text, n, &end, 0);
        size_t at = (end && end >= kv->text) ? (size_t)(end - kv->text) : 0;
        while (item && at < n && (kv->text[at] == ' ' || kv->text[at] == '\t' ||
                                  kv->text[at] == '\n' || kv->text[at] == '\r'))
            at++;
        if (!item || at < n) {
            cJSON_Delete(item);
            return as_error_set(err, AS_ERR_SYNTAX, (long)at, -1,
                                "field '%.60s' should hold JSON but does not (byte %zu)",
                                kv->name ? kv->name : "", at + 1);
        }
        char *text = cJSON_PrintUnformatted(item);
        cJSON_Delete(item);
        bad = !text || as_io_buf_put(b, text, strlen(text)) != 0;
        cJSON_free(text);
        break;
    }
    default:
        if (!kv->text)
            bad = as_io_buf_put(b, "null", 4);
        else {
            size_t n = kv->len ? kv->len : strlen(kv->text);
            if (plain_ascii(kv->text, n))
                bad = json_put_mem(b, kv->text, n) != 0;
            else
                bad = sanitise(w, kv->text, n) != 0 || json_put_string(b, w->tmp.p) != 0;
        }
        break;
    }
    if (bad)
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory writing a record");
    return AS_OK;
}

static as_status put_json(as_writer *w, const as_kv *fields, size_t nfields,
                          const char *const *carry_names, const char *const *carry_values,
                          size_t ncarry, as_error *err)
{
    as_status st = AS_OK;
    char **used = NULL;
    size_t nused = 0;
    as_io_buf *b = &w->line;
    b->len = 0;
    if (ncarry && !(used = calloc(nfields + ncarry + 1, sizeof *used)))
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory writing a record");
    if (as_io_buf_putc(b, '{') != 0)
        st = as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory writing a record");
    for (size_t i = 0; i < nfields && st == AS_OK; i++) {
        const char *nm = fields[i].name ? fields[i].name : "";
        if ((i && as_io_buf_putc(b, ',') != 0) || json_put_string(b, nm) != 0 ||
            as_io_buf_putc(b, ':') != 0) {
            st = as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory writing a record");
            break;
        }
        if ((st = json_value(w, &fields[i], err)) != AS_OK)
            break;
        if (used && !(used[nused++] = strdup(nm)))
            st = as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory writing a record");
    }
    for (size_t i = 0; i < ncarry && st == AS_OK; i++) {
        const char *nm = carry_names && carry_names[i] ? carry_names[i] : "";
        const char *v = carry_values && carry_values[i] ? carry_values[i] : "";
        char *uniq = unique_name(used, nused, nm);
        if (!uniq || (nfields + i && as_io_buf_putc(b, ',') != 0) ||
            json_put_string(b, uniq) != 0 || as_io_buf_putc(b, ':') != 0 ||
            sanitise(w, v, strlen(v)) != 0 || json_put_string(b, w->tmp.p) != 0) {
            free(uniq);
            st = as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory writing a record");
            break;
        }
        used[nused++] = uniq;
    }
    if (st == AS_OK) {
        if (as_io_buf_putc(b, '}') != 0 || as_io_buf_put(b, eol(w), strlen(eol(w))) != 0)
            st = as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory writing a record");
        else
            st = as_outfile_write(w->out, b->p, b->len, err);
    }
    for (size_t i = 0; used && i < nused; i++)
        free(used[i]);
    free(used);
    return st;
}

as_status as_writer_put(as_writer *w, const as_kv *fields, size_t nfields,
                        const char *const *carry_names, const char *const *carry_values,
                        size_t ncarry, as_error *err)
{
    if (!w || (!fields && nfields) || (!carry_names && ncarry))
        return as_error_set(err, AS_ERR_ARG, -1, -1, "no writer, fields or column names");
    if (w->o.format == AS_FMT_JSONL)
        return put_json(w, fields, nfields, carry_names, carry_values, ncarry, err);
    return put_table(w, fields, nfields, carry_names, carry_values, ncarry, err);
}
