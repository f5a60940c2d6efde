/* cmd_annotate.c — `addsite annotate`: one annotated output record per input record, in order.
 * Owns: the annotate subcommand's arguments, the batch pipeline (threads that read, annotate
 * and write batches in input order), progress and summary lines, exit status.
 * Must not: hold chemistry (as_check_record resolves, predicts and judges every record).
 *
 * Threads. With -j 1 one thread reads, annotates and writes, a record at a time. With -j N,
 * N threads each read a batch of consecutive records, annotate it and write whatever is next
 * in input order (see "the pipeline"); a bounded ring of batches keeps memory flat however
 * long the input. Annotating a record depends on nothing but the record, the options and the
 * read-only rule table, so the output is the same byte for byte for every N. */
#include "addsite/io.h"
#include "addsite/outcome.h"
#include "addsite/rules.h"
#include "addsite/workflow.h"
#include "cli.h"

#include <cjson/cJSON.h>
#include <errno.h>
#include <float.h>
#include <limits.h>
#include <math.h>
#include <pthread.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

enum { POLICY_REPORT = 0, POLICY_STOP, POLICY_IGNORE };
enum { ST_ANNOTATED = 0, ST_SKIPPED, ST_ERROR, ST_COUNT };
static const char *const status_names[ST_COUNT] = {"annotated", "skipped", "error"};

static void help(FILE *f)
{
    fputs("usage: addsite annotate [FILE|-] [options]\n"
          "\n"
          "Reads reaction records and writes exactly one output record per input record, in\n"
          "input order, errors included: the predicted products and, when a product was\n"
          "recorded, the check verdict (see 'addsite check --help'). Gzip input is read\n"
          "directly; FILE '-' or none is standard input.\n"
          "\n"
          "Input\n"
          "  --input-format F  auto (default), smiles, csv, tsv or jsonl. smiles: one\n"
          "                    'reactants>agents>products [title]' or substrate SMILES per\n"
          "                    line, optional TAB-separated reagent text and id\n"
          "  --reaction-col C, --substrate-col C, --product-col C, --reagent-col C,\n"
          "  --id-col C, --smiles-col C\n"
          "                    CSV/TSV/JSON Lines columns by header name or 1-based index\n"
          "                    (default: recognised header names)\n"
          "  --reagents TEXT   reagents for records that name none (no reagent column, no\n"
          "                    agents in the reaction SMILES)\n"
          "  --max-record N    longest record in bytes (default 1048576)\n"
          "Output\n"
          "  --format F        jsonl (default), tsv or csv\n"
          "  --keep-columns    carry every input column through after the output fields\n"
          "  -o FILE           write to FILE (a temporary name, renamed when complete)\n"
          "  --rejects FILE    also write the input text of every record that failed, one\n"
          "                    per line (after the header for CSV/TSV input), to fix and rerun\n"
          "  -j N              N threads (default 1); output order is input order. Threads\n"
          "                    take records in batches of 64 (one at a time when the input\n"
          "                    is typed at a terminal)\n"
          "  --on-error P      report (default): annotate everything, exit 3 when any record\n"
          "                    failed; ignore: the same, exit 0; stop: end after the first\n"
          "                    failed record (it is written), exit 1, -o FILE not kept\n"
          "  --strict-stereo   stereo must be drawn exactly as the conditions fix it\n"
          "  --no-memo         do not reuse the results of recent identical records (each\n"
          "                    worker remembers 4096; the output is the same either way)\n"
          "  --progress        progress line on stderr (default: when stderr is a terminal)\n"
          "  -q, --quiet       no summary or progress on stderr\n"
          "  --rules DIR       rule table directory\n"
          "\n"
          "Output fields: line, id, status (annotated, skipped, error), error {code, message,\n"
          "line, column, field, offset}, substrate, reaction, reagents, reagent_source,\n"
          "major, products, recorded, verdict, reason, notes.\n"
          "Exit status: 0 done, 3 done but some records failed (--on-error report), 1 stopped\n"
          "(--on-error stop) or the output could not be written, 2 usage error or unreadable\n"
          "input.\n",
          f);
}

static int usage_error(const char *msg, const char *arg)
{
    fprintf(stderr, "addsite annotate: %s%s%s\n", msg, arg ? " " : "", arg ? arg : "");
    fputs("Try 'addsite annotate --help'.\n", stderr);
    return 2;
}

/* ---------------------------------------------------------------- one slot */

typedef struct slot {
    /* input, copied from the reader's record into one block (mem) */
    char *mem;
    long line;
    int skipped;
    char *skip_reason;
    as_error rec_err;       /* reader error (code != AS_OK) */
    char *reaction, *substrate, *product, *reagents, *id;
    long col_reaction, col_substrate, col_product, col_reagents; /* 1-based, 0 unknown */
    size_t ncols;
    char **names, **values;
    char warning[192];
    char *raw;              /* the record's bytes, kept only for --rejects */
    size_t raw_len;
    /* output */
    int status;
    as_error err;
    const char *err_field;
    long err_column;
    int has_verdict;
    as_verdict verdict;
    char *substrate_out, *reaction_id, *reagents_out, *source, *major, *products_json,
        *products_text, *recorded, *reason, *notes_json, *notes_text;
} slot;

static char *dup_or_null(const char *s)
{
    if (!s)
        return NULL;
    size_t n = strlen(s) + 1;
    char *d = malloc(n);
    if (d)
        memcpy(d, s, n);
    return d;
}

static void slot_clear(slot *s)
{
    free(s->mem);
    free(s->substrate_out);
    free(s->reaction_id);
    free(s->reagents_out);
    free(s->source);
    free(s->major);
    free(s->products_json);
    free(s->products_text);
    free(s->recorded);
    free(s->reason);
    free(s->notes_json);
    free(s->notes_text);
    memset(s, 0, sizeof *s);
}

/* 1-based column of field value v in the raw line, 0 when it cannot be placed. */
static long column_of(const as_record *r, const char *v)
{
    if (!v || !r->raw)
        return 0;
    if (v >= r->raw && v < r->raw + r->raw_len)
        return (long)(v - r->raw) + 1;
    size_t n = strlen(v);
    if (!n || n > r->raw_len)
        return 0;
    for (size_t i = 0; i + n <= r->raw_len; i++)
        if (!memcmp(r->raw + i, v, n))
            return (long)i + 1;
    return 0;
}

static size_t size_of(const char *t)
{
    return t ? strlen(t) + 1 : 0;
}

/* Copies t (NULL stays NULL) to *at and moves *at past it. */
static char *put_text(char **at, const char *t, size_t n)
{
    if (!t)
        return NULL;
    char *d = *at;
    memcpy(d, t, n);
    *at += n;
    return d;
}

/* Copies what annotation needs out of the reader's record, in one allocation; -1 when out
 * of memory (s is then as empty as before). */
static int slot_fill(slot *s, const as_record *r, int keep_columns, int keep_raw)
{
    size_t n_skip = size_of(r->skip_reason), n_rxn = size_of(r->reaction),
           n_sub = size_of(r->substrate), n_prod = size_of(r->product),
           n_rgt = size_of(r->reagents), n_id = size_of(r->id);
    size_t ncols = keep_columns ? r->ncols : 0;
    size_t need = 2 * ncols * sizeof(char *) + n_skip + n_rxn + n_sub + n_prod + n_rgt + n_id;
    for (size_t i = 0; i < ncols; i++)
        need += size_of(r->col_names[i]) + size_of(r->col_values[i]);
    int raw = keep_raw && r->raw;
    if (raw)
        need += r->raw_len + 1;
    if (need) {
        s->mem = malloc(need);
        if (!s->mem)
            return -1;
    }
    char *at = s->mem;
    if (ncols) { /* the pointer arrays first, where malloc's alignment holds */
        s->names = (char **)(void *)at;
        s->values = s->names + ncols;
        at += 2 * ncols * sizeof(char *);
        s->ncols = ncols;
        for (size_t i = 0; i < ncols; i++) {
            s->names[i] = put_text(&at, r->col_names[i], size_of(r->col_names[i]));
            s->values[i] = put_text(&at, r->col_values[i], size_of(r->col_values[i]));
        }
    }
    if (raw) {
        s->raw = at;
        memcpy(at, r->raw, r->raw_len);
        at[r->raw_len] = '\0';
        s->raw_len = r->raw_len;
        at += r->raw_len + 1;
    }
    s->skip_reason = put_text(&at, r->skip_reason, n_skip);
    s->reaction = put_text(&at, r->reaction, n_rxn);
    s->substrate = put_text(&at, r->substrate, n_sub);
    s->product = put_text(&at, r->product, n_prod);
    s->reagents = put_text(&at, r->reagents, n_rgt);
    s->id = put_text(&at, r->id, n_id);
    s->line = r->line;
    s->skipped = r->skipped;
    s->rec_err = r->err;
    s->col_reaction = column_of(r, r->reaction);
    s->col_substrate = column_of(r, r->substrate);
    s->col_product = column_of(r, r->product);
    s->col_reagents = column_of(r, r->reagents);
    memcpy(s->warning, r->warning, sizeof s->warning);
    return 0;
}

/* ---------------------------------------------------------------- annotating */

typedef struct config {
    const as_rules *rules;
    as_check_opts opts;
    const char *default_reagents;
    as_format out_format;
    int keep_columns;
    int memo;               /* 1: each worker keeps a record memo */
    int keep_raw;           /* 1: records keep their input bytes (for --rejects) */
} config;

/* ---------------------------------------------------------------- JSON text
 *
 * The products and notes arrays are written straight into a buffer, byte for byte as
 * cJSON_PrintUnformatted writes the same tree (the output predates this code and must not
 * change); building the tree and printing it cost more than the rest of the command. */

typedef struct jbuf {
    char *p;
    size_t len, cap;
    int bad;                /* out of memory: p is freed and the text is lost */
} jbuf;

static void jb_put(jbuf *b, const char *s, size_t n)
{
    if (b->bad)
        return;
    if (b->len + n + 1 > b->cap) {
        size_t cap = b->cap ? b->cap : 256;
        while (cap < b->len + n + 1)
            cap *= 2;
        char *q = realloc(b->p, cap);
        if (!q) {
            free(b->p);
            memset(b, 0, sizeof *b);
            b->bad = 1;
            return;
        }
        b->p = q;
        b->cap = cap;
    }
    memcpy(b->p + b->len, s, n);
    b->len += n;
    b->p[b->len] = '\0';
}

static void jb_lit(jbuf *b, const char *s)
{
    jb_put(b, s, strlen(s));
}

/* s as a JSON string: '"' '\\' and the controls \b \f \n \r \t get their short escapes, other
 * bytes below 0x20 \u00xx, everything else as it is (cJSON's escaping). */
static void jb_str(jbuf *b, const char *s)
{
    static const char hex[] = "0123456789abcdef";
    jb_put(b, "\"", 1);
    const char *run = s;
    for (const unsigned char *u = (const unsigned char *)s;; u++) {
        unsigned c = *u;
        if (c >= 0x20 && c != '"' && c != '\\')
            continue;
        jb_put(b, run, (size_t)((const char *)u - run));
        if (c == 0)
            break;
        char e[6] = {'\\', 0, '0', '0', 0, 0};
        size_t k = 2;
        switch (c) {
        case '"': e[1] = '"'; break;
        case '\\': e[1] = '\\'; break;
        case '\b': e[1] = 'b'; break;
        case '\f': e[1] = 'f'; break;
        case '\n': e[1] = 'n'; break;
        case '\r': e[1] = 'r'; break;
        case '\t': e[1] = 't'; break;
        default:
            e[1] = 'u';
            e[4] = hex[c >> 4];
            e[5] = hex[c & 15];
            k = 6;
        }
        jb_put(b, e, k);
        run = (const char *)u + 1;
    }
    jb_put(b, "\"", 1);
}

/* Writes the decimal digits of u before e; returns where they start. */
static char *digits(char *e, unsigned long long u)
{
    do
        *--e = (char)('0' + u % 10);
    while (u /= 10);
    return e;
}

/* d as cJSON writes a number: null when not finite, else %1.15g when that reads back as d
 * (within DBL_EPSILON relative), else %1.17g. Shares are mostly whole or have one or two
 * decimals: when d is the double nearest to such a short decimal below 1e9, %1.15g writes
 * exactly that decimal, and it is written here without printf. */
static void jb_num(jbuf *b, double d)
{
    char t[40];
    if (!isfinite(d)) {
        jb_put(b, "null", 4);
        return;
    }
    double a = fabs(d);
    if (a < 1e9 && !(d == 0 && signbit(d))) {
        static const double scale[3] = {1, 10, 100};
        for (int k = 0; k < 3; k++) {
            double v = floor(a * scale[k] + 0.5);
            if (v / scale[k] != a) /* both exact, so the quotient is correctly rounded */
                continue;
            unsigned long long u = (unsigned long long)v, p = k == 2 ? 100 : (unsigned long long)k * 10;
            char *e = t + sizeof t, *q = e;
            if (k) {
                unsigned long long f = u % p;
                u /= p;
                if (k == 2 && f % 10 == 0) { /* %g drops the trailing zero */
                    f /= 10;
                    p = 10;
                }
                char *fe = e;
                e = digits(fe, f);
                if (p == 100 && f < 10)
                    *--e = '0';
                *--e = '.';
                q = e;
            }
            q = digits(q, u);
            if (d < 0)
                *--q = '-';
            jb_put(b, q, (size_t)(t + sizeof t - q));
            return;
        }
    }
    snprintf(t, sizeof t, "%1.15g", d);
    double back = strtod(t, NULL);
    double big = fabs(back) > fabs(d) ? fabs(back) : fabs(d);
    if (!(fabs(back - d) <= big * DBL_EPSILON))
        snprintf(t, sizeof t, "%1.17g", d);
    jb_lit(b, t);
}

/* The products array in JSON; NULL when out of memory or a product lacks a text field
 * (the field is then written as null, as before). */
static char *products_json(const as_outcome *o)
{
    jbuf b = {0};
    jb_put(&b, "[", 1);
    for (int i = 0; o && i < o->nproducts; i++) {
        const as_product *p = &o->products[i];
        const char *role = as_product_role_name(p->role), *stereo = as_stereo_name(p->stereo);
        if (!p->smiles || !role || !stereo || !p->regio) {
            free(b.p);
            return NULL;
        }
        /* the keys need no escaping */
        jb_lit(&b, i ? ",{\"smiles\":" : "{\"smiles\":");
        jb_str(&b, p->smiles);
        jb_lit(&b, ",\"role\":");
        jb_str(&b, role);
        jb_lit(&b, ",\"share\":");
        jb_num(&b, p->share);
        jb_lit(&b, p->share_published ? ",\"share_published\":true"
                                      : ",\"share_published\":false");
        jb_lit(&b, ",\"stereo\":");
        jb_str(&b, stereo);
        jb_lit(&b, ",\"regio\":");
        jb_str(&b, p->regio);
        jb_lit(&b, p->rearranged ? ",\"rearranged\":true" : ",\"rearranged\":false");
        jb_put(&b, "}", 1);
    }
    jb_put(&b, "]", 1);
    return b.p;
}

/* "SMILES major 94%; SMILES minor 6%" for TSV/CSV. */
static char *products_text(const as_outcome *o)
{
    size_t cap = 1;
    for (int i = 0; o && i < o->nproducts; i++)
        cap += strlen(o->products[i].smiles) + 64;
    char *s = malloc(cap);
    if (!s)
        return NULL;
    size_t used = 0;
    s[0] = '\0';
    for (int i = 0; o && i < o->nproducts; i++) {
        const as_product *p = &o->products[i];
        int n = snprintf(s + used, cap - used, "%s%s %s %.1f%%%s", i ? "; " : "", p->smiles,
                         as_product_role_name(p->role), p->share,
                         p->rearranged ? " rearranged" : "");
        if (n > 0)
            used += (size_t)n;
    }
    return s;
}

/* The notes as the output format wants them: a JSON array for JSON Lines, " | "-joined text
 * for TSV and CSV (only that one is made). */
static int notes_out(const config *cfg, slot *s, const char *const *notes, int n)
{
    if (cfg->out_format == AS_FMT_JSONL) {
        jbuf b = {0};
        jb_put(&b, "[", 1);
        for (int i = 0; i < n; i++) {
            if (i)
                jb_put(&b, ",", 1);
            jb_str(&b, notes[i]);
        }
        jb_put(&b, "]", 1);
        s->notes_json = b.p;
        return b.bad ? -1 : 0;
    }
    size_t cap = 1;
    for (int i = 0; i < n; i++)
        cap += strlen(notes[i]) + 3;
    s->notes_text = malloc(cap);
    if (!s->notes_text)
        return -1;
    size_t used = 0;
    for (int i = 0; i < n; i++) {
        size_t k = strlen(notes[i]);
        if (i) {
            memcpy(s->notes_text + used, " | ", 3);
            used += 3;
        }
        memcpy(s->notes_text + used, notes[i], k);
        used += k;
    }
    s->notes_text[used] = '\0';
    return 0;
}

static void set_error(slot *s, as_status code, const char *field, long column, const char *fmt,
                      const char *arg)
{
    s->status = ST_ERROR;
    as_error_clear(&s->err);
    s->err.code = code;
    s->err.line = s->line;
    s->err.column = column;
    s->err_field = field;
    snprintf(s->err.msg, sizeof s->err.msg, fmt, arg);
}

/* Annotates one slot (pure: the result depends on the slot and the configuration only;
 * cache is the calling thread's reagent memo, or NULL). */
static void annotate(const config *cfg, as_check_cache *cache, slot *s)
{
    const char *notes1[2];
    int nn = 0;
    if (s->warning[0])
        notes1[nn++] = s->warning;
    if (s->rec_err.code != AS_OK) {
        s->status = ST_ERROR;
        s->err = s->rec_err;
        s->err.line = s->rec_err.line ? s->rec_err.line : s->line;
        s->err_column = s->rec_err.column;
        notes_out(cfg, s, notes1, nn);
        return;
    }
    if (s->skipped) {
        s->status = ST_SKIPPED;
        if (s->skip_reason)
            notes1[nn++] = s->skip_reason;
        notes_out(cfg, s, notes1, nn);
        return;
    }
    as_check_input in;
    memset(&in, 0, sizeof in);
    in.reaction = s->reaction;
    in.substrate = s->substrate;
    in.product = s->product;
    in.reagents = s->reagents;
    in.default_reagents = cfg->default_reagents;
    as_check *c = NULL;
    const char *field = NULL;
    as_error err;
    as_error_clear(&err);
    as_check_opts opts = cfg->opts;
    opts.cache = cache;
    as_status st = as_check_record(cfg->rules, &in, &opts, &c, &field, &err);
    if (st == AS_ERR_EMPTY) {
        s->status = ST_SKIPPED;
        notes1[nn++] = err.msg;
        notes_out(cfg, s, notes1, nn);
        return;
    }
    if (st != AS_OK) {
        s->status = ST_ERROR;
        s->err = err;
        s->err.line = s->line;
        s->err_field = field;
        long base = 0;
        if (field && !strcmp(field, "reaction"))
            base = s->col_reaction;
        else if (field && !strcmp(field, "substrate"))
            base = s->col_substrate;
        else if (field && !strcmp(field, "product"))
            base = s->col_product;
        else if (field && !strcmp(field, "reagents"))
            base = s->col_reagents;
        /* the field's first column when the message points at no byte in it */
        s->err.column = base > 0 ? base + (err.offset >= 0 ? err.offset : 0) : 0;
        notes_out(cfg, s, notes1, nn);
        return;
    }
    s->status = ST_ANNOTATED;
    s->substrate_out = dup_or_null(c->substrate);
    s->reaction_id = dup_or_null(c->match.rule->id);
    s->reagents_out = dup_or_null(c->match.variant->name);
    s->source = dup_or_null(as_reagent_source_name(c->reagent_source));
    if (c->outcome && c->outcome->nproducts)
        s->major = dup_or_null(c->outcome->products[0].smiles);
    if (cfg->out_format == AS_FMT_JSONL)
        s->products_json = products_json(c->outcome);
    else
        s->products_text = products_text(c->outcome);
    if (c->has_product) {
        s->has_verdict = 1;
        s->verdict = c->verdict;
        s->recorded = dup_or_null(c->proposed);
        s->reason = dup_or_null(c->reason);
    }
    const char **notes = malloc((size_t)(c->nnotes + nn + 1) * sizeof *notes);
    if (notes) {
        int k = 0;
        for (int i = 0; i < nn; i++)
            notes[k++] = notes1[i];
        for (int i = 0; i < c->nnotes; i++)
            notes[k++] = c->notes[i];
        notes_out(cfg, s, notes, k);
        free(notes);
    }
    if (c->no_site) {
        char sub[160];
        snprintf(sub, sizeof sub, "%.120s", c->substrate);
        set_error(s, AS_ERR_NO_SITE, s->reaction ? "reaction" : "substrate",
                  s->reaction ? s->col_reaction : s->col_substrate,
                  "the substrate %s has no C=C outside aromatic rings: nothing to add to", sub);
    }
    as_check_free(c);
}

/* ---------------------------------------------------------------- record memo */

/* Reaction files repeat records (the same substrate with the same reagents, often many lines
 * apart). Each worker remembers the outcome fields of its last MEMO_CAP annotated records,
 * keyed by the input fields that decide them (reaction, substrate, product and reagent
 * text; the default reagents are fixed for the run), and replaces the oldest unused entry
 * when full (the clock algorithm). Records with a reader warning, skipped records, errors
 * and substrates without C=C are never kept: their output names the line. */
#define MEMO_CAP 4096
#define MEMO_BUCKETS 8192 /* power of two */

typedef struct memo_entry {
    char *key;               /* owned; NULL when the entry is free */
    size_t klen;
    unsigned hash;
    int next;                /* next entry in the bucket, -1 at the end */
    int used;                /* clock bit */
    int has_verdict;
    as_verdict verdict;
    char *f[11];             /* the slot's outcome strings, in MEMO_FIELDS order (owned) */
} memo_entry;

typedef struct memo {
    memo_entry e[MEMO_CAP];
    int bucket[MEMO_BUCKETS];
    int n, hand;
    char *kbuf;              /* key being built */
    size_t kcap;
} memo;

/* ORDER MEMO_FIELDS: the slot fields a memo entry holds. */
#define MEMO_FIELDS(s)                                                                         \
    {&(s)->substrate_out, &(s)->reaction_id, &(s)->reagents_out, &(s)->source, &(s)->major,   \
     &(s)->products_json, &(s)->products_text, &(s)->recorded, &(s)->reason,                  \
     &(s)->notes_json, &(s)->notes_text}

static memo *memo_new(void)
{
    memo *m = calloc(1, sizeof *m);
    if (!m)
        return NULL;
    for (int i = 0; i < MEMO_BUCKETS; i++)
        m->bucket[i] = -1;
    return m;
}

static void memo_entry_clear(memo_entry *e)
{
    free(e->key);
    for (int i = 0; i < 11; i++)
        free(e->f[i]);
    memset(e, 0, sizeof *e);
}

static void memo_free(memo *m)
{
    if (!m)
        return;
    for (int i = 0; i < m->n; i++)
        memo_entry_clear(&m->e[i]);
    free(m->kbuf);
    free(m);
}

static int key_add(memo *m, size_t *len, const char *t)
{
    size_t n = t ? strlen(t) : 0;
    if (*len + n + 2 > m->kcap) {
        size_t cap = (*len + n + 2) * 2;
        char *k = realloc(m->kbuf, cap);
        if (!k)
            return -1;
        m->kbuf = k;
        m->kcap = cap;
    }
    m->kbuf[(*len)++] = t ? '1' : '0'; /* absent and empty differ */
    memcpy(m->kbuf + *len, t ? t : "", n);
    *len += n;
    m->kbuf[(*len)++] = '\0';
    return 0;
}

/* Builds the key of slot s in m->kbuf; returns its length, 0 when s is not to be memoised. */
static size_t memo_key(memo *m, const slot *s, unsigned *hash)
{
    if (!m || s->rec_err.code != AS_OK || s->skipped || s->warning[0])
        return 0;
    size_t len = 0;
    if (key_add(m, &len, s->reaction) || key_add(m, &len, s->substrate) ||
        key_add(m, &len, s->product) || key_add(m, &len, s->reagents))
        return 0;
    uint32_t h = 2166136261u; /* FNV-1a */
    for (size_t i = 0; i < len; i++) {
        h ^= (unsigned char)m->kbuf[i];
        h *= 16777619u;
    }
    *hash = h;
    return len;
}

/* Fills s from the memo; 1 when found. */
static int memo_get(memo *m, slot *s, size_t klen, unsigned hash)
{
    for (int i = m->bucket[hash & (MEMO_BUCKETS - 1)]; i >= 0; i = m->e[i].next) {
        memo_entry *e = &m->e[i];
        if (e->hash != hash || e->klen != klen || memcmp(e->key, m->kbuf, klen))
            continue;
        char **f[11] = MEMO_FIELDS(s);
        for (int k = 0; k < 11; k++) {
            if (e->f[k] && !(*f[k] = dup_or_null(e->f[k]))) {
                for (int j = 0; j < k; j++) {
                    free(*f[j]);
                    *f[j] = NULL;
                }
                return 0;
            }
        }
        s->status = ST_ANNOTATED;
        s->has_verdict = e->has_verdict;
        s->verdict = e->verdict;
        e->used = 1;
        return 1;
    }
    return 0;
}

/* Remembers the annotated slot s under the key in m->kbuf. */
static void memo_put(memo *m, const slot *s, size_t klen, unsigned hash)
{
    int i;
    if (m->n < MEMO_CAP) {
        i = m->n++;
    } else {
        while (m->e[m->hand].used) {
            m->e[m->hand].used = 0;
            m->hand = (m->hand + 1) % MEMO_CAP;
        }
        i = m->hand;
        m->hand = (m->hand + 1) % MEMO_CAP;
        memo_entry *old = &m->e[i];
        if (old->key) { /* linked in its bucket */
            int *link = &m->bucket[old->hash & (MEMO_BUCKETS - 1)];
            while (*link != i)
                link = &m->e[*link].next;
            *link = old->next;
        }
        memo_entry_clear(old);
    }
    memo_entry *e = &m->e[i];
    char *const *f[11] = MEMO_FIELDS(s);
    int bad = !(e->key = malloc(klen));
    for (int k = 0; k < 11 && !bad; k++)
        bad = *f[k] && !(e->f[k] = dup_or_null(*f[k]));
    if (bad) { /* out of memory only costs the memo: the entry stays free and unlinked */
        memo_entry_clear(e);
        return;
    }
    memcpy(e->key, m->kbuf, klen);
    e->klen = klen;
    e->hash = hash;
    e->has_verdict = s->has_verdict;
    e->verdict = s->verdict;
    e->used = 0;
    int *b = &m->bucket[hash & (MEMO_BUCKETS - 1)];
    e->next = *b;
    *b = i;
}

/* annotate() through the worker's memo (NULL: none). */
static void annotate_memo(const config *cfg, as_check_cache *cache, memo *m, slot *s)
{
    unsigned hash = 0;
    size_t klen = memo_key(m, s, &hash);
    if (klen && memo_get(m, s, klen, hash))
        return;
    annotate(cfg, cache, s);
    if (klen && s->status == ST_ANNOTATED)
        memo_put(m, s, klen, hash);
}

/* ---------------------------------------------------------------- writing */

typedef struct counts {
    long status[ST_COUNT];
    long verdict[AS_VERDICT_COUNT];
    long records;
} counts;

static as_status write_slot(const config *cfg, as_writer *w, slot *s, as_error *err)
{
    as_kv kv[24];
    size_t n = 0;
    int jsonl = cfg->out_format == AS_FMT_JSONL;
    char *errjson = NULL;
    kv[n++] = as_kv_int("line", s->line);
    kv[n++] = as_kv_text("id", s->id);
    kv[n++] = as_kv_text("status", status_names[s->status]);
    int has_err = s->status == ST_ERROR;
    if (jsonl) {
        if (has_err) {
            cJSON *e = cJSON_CreateObject();
            if (e) {
                cJSON_AddStringToObject(e, "code", as_status_name(s->err.code));
                cJSON_AddStringToObject(e, "message", s->err.msg);
                cJSON_AddNumberToObject(e, "line", (double)s->err.line);
                if (s->err.column > 0)
                    cJSON_AddNumberToObject(e, "column", (double)s->err.column);
                else
                    cJSON_AddNullToObject(e, "column");
                if (s->err_field)
                    cJSON_AddStringToObject(e, "field", s->err_field);
                else
                    cJSON_AddNullToObject(e, "field");
                if (s->err.offset >= 0)
                    cJSON_AddNumberToObject(e, "offset", (double)s->err.offset);
                else
                    cJSON_AddNullToObject(e, "offset");
                errjson = cJSON_PrintUnformatted(e);
                cJSON_Delete(e);
            }
            if (!errjson)
                return AS_ERR_NOMEM;
            as_kv ekv = {"error", AS_KV_JSON_COMPACT, errjson, 0, 0, 0.0};
            kv[n++] = ekv;
        } else {
            kv[n++] = as_kv_text("error", NULL);
        }
    } else {
        kv[n++] = as_kv_text("error_code", has_err ? as_status_name(s->err.code) : NULL);
        kv[n++] = as_kv_text("error_message", has_err ? s->err.msg : NULL);
        kv[n++] = has_err ? as_kv_int("error_line", s->err.line) : as_kv_text("error_line", NULL);
        kv[n++] = has_err && s->err.column > 0 ? as_kv_int("error_column", s->err.column)
                                               : as_kv_text("error_column", NULL);
        kv[n++] = as_kv_text("error_field", has_err ? s->err_field : NULL);
        kv[n++] = has_err && s->err.offset >= 0 ? as_kv_int("error_offset", s->err.offset)
                                                : as_kv_text("error_offset", NULL);
    }
    kv[n++] = as_kv_text("substrate", s->substrate_out);
    kv[n++] = as_kv_text("reaction", s->reaction_id);
    kv[n++] = as_kv_text("reagents", s->reagents_out);
    kv[n++] = as_kv_text("reagent_source", s->source);
    kv[n++] = as_kv_text("major", s->major);
    if (jsonl && s->products_json) {
        as_kv e = {"products", AS_KV_JSON_COMPACT, s->products_json, 0, 0, 0.0};
        kv[n++] = e;
    } else {
        kv[n++] = as_kv_text("products", jsonl ? NULL : s->products_text);
    }
    kv[n++] = as_kv_text("recorded", s->recorded);
    kv[n++] = as_kv_text("verdict", s->has_verdict ? as_verdict_name(s->verdict) : NULL);
    kv[n++] = as_kv_text("reason", s->reason);
    if (jsonl) {
        as_kv e = {"notes", AS_KV_JSON_COMPACT, s->notes_json ? s->notes_json : "[]", 0, 0, 0.0};
        kv[n++] = e;
    } else {
        kv[n++] = as_kv_text("notes", s->notes_text ? s->notes_text : "");
    }
    as_status st =
        as_writer_put(w, kv, n, cfg->keep_columns ? (const char *const *)s->names : NULL,
                      cfg->keep_columns ? (const char *const *)s->values : NULL,
                      cfg->keep_columns ? s->ncols : 0, err);
    free(errjson);
    return st;
}

/* ---------------------------------------------------------------- progress */

static double now_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + (double)ts.tv_nsec / 1e9;
}

typedef struct progress {
    int on, tty;
    double start, last;
} progress;

static void progress_line(progress *p, long records, int final)
{
    if (!p->on)
        return;
    double t = now_s();
    if (!final && t - p->last < (p->tty ? 0.25 : 1.0))
        return;
    p->last = t;
    double el = t - p->start;
    fprintf(stderr, "%sannotate: %ld records, %.0f records/s, %.1f s elapsed%s",
            p->tty ? "\r" : "", records, el > 0 ? (double)records / el : 0.0, el,
            p->tty && !final ? "" : "\n");
    fflush(stderr);
}

typedef struct run_state {
    const config *cfg;
    as_writer *w;
    counts *cnt;
    progress *prog;
    int policy;
    int stopped;       /* --on-error stop ended the run */
    int write_failed;
    as_error werr;
    as_outfile *rejects;    /* --rejects: failed records' input lines, or NULL */
} run_state;

/* Writes one annotated slot and counts it; returns 0 to go on, 1 to stop. */
static int emit(run_state *rs, slot *s)
{
    if (write_slot(rs->cfg, rs->w, s, &rs->werr) != AS_OK) {
        rs->write_failed = 1;
        return 1;
    }
    if (rs->rejects && s->status == ST_ERROR &&
        (as_outfile_write(rs->rejects, s->raw ? s->raw : "", s->raw_len, &rs->werr) != AS_OK ||
         as_outfile_write(rs->rejects, "\n", 1, &rs->werr) != AS_OK)) {
        rs->write_failed = 1;
        return 1;
    }
    rs->cnt->records++;
    rs->cnt->status[s->status]++;
    if (s->has_verdict)
        rs->cnt->verdict[s->verdict]++;
    progress_line(rs->prog, rs->cnt->records, 0);
    if (s->status == ST_ERROR && rs->policy == POLICY_STOP) {
        rs->stopped = 1;
        fprintf(stderr, "addsite annotate: line %ld: %s: %s (stopping: --on-error stop)\n",
                s->err.line, as_status_name(s->err.code), s->err.msg);
        return 1;
    }
    return 0;
}

/* Opens the --rejects file; for CSV and TSV input its first line is the input's header (CSV
 * names quoted as RFC 4180 wants), so the rejects can be fixed and fed back as they are. */
static as_status write_rejects_header(const char *path, const as_reader *r, as_outfile **out,
                                      as_error *err)
{
    as_status st = as_outfile_open(path, out, err);
    if (st != AS_OK)
        return st;
    as_format f = as_reader_format(r);
    if (f != AS_FMT_CSV && f != AS_FMT_TSV)
        return AS_OK;
    const char *const *names = NULL;
    size_t n = as_reader_columns(r, &names);
    for (size_t i = 0; i < n && st == AS_OK; i++) {
        const char *v = names[i];
        if (i)
            st = as_outfile_write(*out, f == AS_FMT_CSV ? "," : "\t", 1, err);
        int quote = f == AS_FMT_CSV && strpbrk(v, ",\"\r\n") != NULL;
        if (st == AS_OK && quote)
            st = as_outfile_write(*out, "\"", 1, err);
        for (const char *c = v; st == AS_OK && *c; c++) {
            st = as_outfile_write(*out, c, 1, err);
            if (st == AS_OK && quote && *c == '"')
                st = as_outfile_write(*out, "\"", 1, err);
        }
        if (st == AS_OK && quote)
            st = as_outfile_write(*out, "\"", 1, err);
    }
    if (st == AS_OK && n)
        st = as_outfile_write(*out, "\n", 1, err);
    if (st != AS_OK) {
        as_outfile_abort(*out);
        *out = NULL;
    }
    return st;
}

static int run_serial(run_state *rs, as_reader *r, as_error *rerr)
{
    slot s;
    memset(&s, 0, sizeof s);
    as_check_cache *cache = as_check_cache_new(); /* NULL: no memo, same results */
    memo *m = rs->cfg->memo ? memo_new() : NULL;
    int rc = 0;
    for (;;) {
        as_record rec;
        if (as_reader_next(r, &rec, rerr) != AS_OK) {
            rc = -1;
            break;
        }
        if (rec.at_end)
            break;
        if (slot_fill(&s, &rec, rs->cfg->keep_columns, rs->cfg->keep_raw)) {
            slot_clear(&s);
            rerr->code = AS_ERR_NOMEM;
            snprintf(rerr->msg, sizeof rerr->msg, "out of memory");
            rc = -1;
            break;
        }
        annotate_memo(rs->cfg, cache, m, &s);
        int stop = emit(rs, &s);
        slot_clear(&s);
        if (stop)
            break;
    }
    as_check_cache_free(cache);
    memo_free(m);
    return rc;
}

/* ---------------------------------------------------------------- the pipeline */

/* With -j N the main thread and N-1 others run the same loop: take the next batch of up to
 * BATCH_MAX consecutive records, read it (one thread reads at a time, in input order),
 * annotate it with the thread's own memos, and hand it in. Whoever hands in the batch that is
 * next in input order writes it, and every batch after it that is ready, so no thread only
 * waits and a batch costs a few lock operations instead of a few per record. At most
 * RING_PER_THREAD * N batches are read and not yet written: a thread that would read past
 * that waits for the writer, so memory stays flat however long the input. A batch also ends
 * after BATCH_BYTES of input, which bounds memory when records are long. */
#define BATCH_MAX 64
#define BATCH_BYTES (256L * 1024)
#define RING_PER_THREAD 4

typedef struct batch {
    slot s[BATCH_MAX];
    int n;                   /* records read into s */
    int done;                /* 1: annotated, not yet written */
} batch;

typedef struct pipeline {
    const config *cfg;
    run_state *rs;
    as_reader *reader;
    int batch_max;           /* BATCH_MAX, or 1 when a person types the input */
    batch *ring;
    long cap;                /* batches in the ring */
    long nread, nwritten;    /* batches taken for reading; batches written */
    int reading, writing;    /* a thread is reading / writing (only one at a time each) */
    int eof, stop, fatal;
    int waiting;             /* threads waiting on cv */
    as_error read_err;
    pthread_mutex_t mu;
    pthread_cond_t cv;       /* the reader is free, a batch was written, or the run ended */
} pipeline;

/* Reads records into b until it is full; 0, or 1 at the end of input, or -1 when reading
 * failed or memory ran out (err says which). The records read before stay in b. */
static int read_batch(pipeline *p, batch *b, as_error *err)
{
    long bytes = 0;
    while (b->n < p->batch_max && bytes < BATCH_BYTES) {
        as_record rec;
        if (as_reader_next(p->reader, &rec, err) != AS_OK)
            return -1;
        if (rec.at_end)
            return 1;
        slot *s = &b->s[b->n];
        if (slot_fill(s, &rec, p->cfg->keep_columns, p->cfg->keep_raw)) {
            slot_clear(s);
            as_error_clear(err);
            err->code = AS_ERR_NOMEM;
            snprintf(err->msg, sizeof err->msg, "out of memory");
            return -1;
        }
        b->n++;
        bytes += (long)rec.raw_len + 1;
    }
    return 0;
}

/* Writes the batches that are next in input order and annotated; called with mu held by a
 * thread that is not writing, returns with mu held. */
static void write_ready(pipeline *p)
{
    p->writing = 1;
    while (!p->stop && p->nwritten < p->nread) {
        batch *b = &p->ring[p->nwritten % p->cap];
        if (!b->done)
            break;
        pthread_mutex_unlock(&p->mu);
        int stop = 0;
        for (int i = 0; i < b->n; i++) {
            if (!stop)
                stop = emit(p->rs, &b->s[i]);
            slot_clear(&b->s[i]);
        }
        pthread_mutex_lock(&p->mu);
        b->n = 0;
        b->done = 0;
        p->nwritten++;
        if (stop)
            p->stop = 1;
        if (p->waiting)
            pthread_cond_broadcast(&p->cv);
    }
    p->writing = 0;
}

static void *worker_main(void *arg)
{
    pipeline *p = arg;
    as_check_cache *cache = as_check_cache_new(); /* NULL: no memo, same results */
    memo *m = p->cfg->memo ? memo_new() : NULL;
    pthread_mutex_lock(&p->mu);
    for (;;) {
        while (!p->stop && !p->eof && (p->reading || p->nread - p->nwritten >= p->cap)) {
            p->waiting++;
            pthread_cond_wait(&p->cv, &p->mu);
            p->waiting--;
        }
        if (p->stop || p->eof)
            break;
        p->reading = 1;
        batch *b = &p->ring[p->nread++ % p->cap];
        pthread_mutex_unlock(&p->mu);
        as_error err;
        as_error_clear(&err);
        int end = read_batch(p, b, &err);
        pthread_mutex_lock(&p->mu);
        p->reading = 0;
        if (end) {
            p->eof = 1;
            if (end < 0) {
                p->fatal = 1;
                p->read_err = err;
            }
        }
        if (p->waiting)
            pthread_cond_broadcast(&p->cv);
        if (!b->n) { /* the end of input: nobody took a batch after this one */
            p->nread--;
            continue;
        }
        pthread_mutex_unlock(&p->mu);
        for (int i = 0; i < b->n; i++)
            annotate_memo(p->cfg, cache, m, &b->s[i]);
        pthread_mutex_lock(&p->mu);
        b->done = 1;
        if (!p->writing)
            write_ready(p);
    }
    pthread_mutex_unlock(&p->mu);
    as_check_cache_free(cache);
    memo_free(m);
    return NULL;
}

static int run_threads(run_state *rs, as_reader *r, int nthreads, int batch_max,
                       as_error *rerr)
{
    pipeline p;
    memset(&p, 0, sizeof p);
    p.cfg = rs->cfg;
    p.rs = rs;
    p.reader = r;
    p.batch_max = batch_max;
    p.cap = (long)RING_PER_THREAD * nthreads;
    p.ring = calloc((size_t)p.cap, sizeof *p.ring);
    pthread_t *t = calloc((size_t)nthreads, sizeof *t);
    if (!p.ring || !t) {
        free(p.ring);
        free(t);
        rerr->code = AS_ERR_NOMEM;
        snprintf(rerr->msg, sizeof rerr->msg, "out of memory");
        return -1;
    }
    pthread_mutex_init(&p.mu, NULL);
    pthread_cond_init(&p.cv, NULL);
    /* the main thread is one of the N; when a thread cannot be started the others do its
     * share, the output is the same */
    int nstarted = 0;
    for (int i = 1; i < nthreads; i++)
        if (pthread_create(&t[nstarted], NULL, worker_main, &p) == 0)
            nstarted++;
    worker_main(&p);
    for (int i = 0; i < nstarted; i++)
        pthread_join(t[i], NULL);
    int rc = 0;
    if (p.fatal) {
        *rerr = p.read_err;
        rc = -1;
    }
    for (long i = 0; i < p.cap; i++)
        for (int k = 0; k < p.ring[i].n; k++)
            slot_clear(&p.ring[i].s[k]);
    free(p.ring);
    free(t);
    pthread_mutex_destroy(&p.mu);
    pthread_cond_destroy(&p.cv);
    return rc;
}

/* ---------------------------------------------------------------- summary */

static void summary(FILE *f, const counts *c, const char *out_name)
{
    fprintf(f, "annotate: %ld records:", c->records);
    for (int i = 0; i < ST_COUNT; i++)
        fprintf(f, " %s %ld%s", status_names[i], c->status[i], i + 1 < ST_COUNT ? "," : "");
    long nv = 0;
    for (int i = 0; i < AS_VERDICT_COUNT; i++)
        nv += c->verdict[i];
    if (nv) {
        fputs("; verdicts:", f);
        int first = 1;
        for (int i = 0; i < AS_VERDICT_COUNT; i++)
            if (c->verdict[i]) {
                fprintf(f, "%s %s %ld", first ? "" : ",", as_verdict_name((as_verdict)i),
                        c->verdict[i]);
                first = 0;
            }
    }
    if (out_name)
        fprintf(f, "; written to %s", out_name);
    fputc('\n', f);
}

/* ---------------------------------------------------------------- entry */

int as_cli_annotate(int argc, char **argv)
{
    const char *input = NULL, *out_path = NULL, *rules_dir = NULL, *rejects_path = NULL;
    int nworkers = 1, policy = POLICY_REPORT, quiet = 0, want_progress = 0;
    config cfg;
    memset(&cfg, 0, sizeof cfg);
    as_check_opts_init(&cfg.opts);
    cfg.opts.predict.rationale = 0; /* annotate never prints the rationale */
    cfg.memo = 1;
    cfg.out_format = AS_FMT_JSONL;
    as_reader_opts ropts;
    as_reader_opts_init(&ropts);
    as_error err;
    as_error_clear(&err);
    for (int i = 1; i < argc; i++) {
        const char *a = argv[i];
        int has_val = i + 1 < argc;
        const char **col = NULL;
        if (!strcmp(a, "--help") || !strcmp(a, "-h")) {
            help(stdout);
            return 0;
        } else if (!strcmp(a, "--reaction-col")) {
            col = &ropts.reaction_col;
        } else if (!strcmp(a, "--substrate-col")) {
            col = &ropts.substrate_col;
        } else if (!strcmp(a, "--product-col")) {
            col = &ropts.product_col;
        } else if (!strcmp(a, "--reagent-col")) {
            col = &ropts.reagent_col;
        } else if (!strcmp(a, "--id-col")) {
            col = &ropts.id_col;
        } else if (!strcmp(a, "--smiles-col")) {
            col = &ropts.smiles_col;
        } else if (!strcmp(a, "--input-format")) {
            if (!has_val || as_format_parse(argv[++i], &ropts.format, &err) != AS_OK)
                return usage_error("--input-format needs auto, smiles, csv, tsv or jsonl",
                                   NULL);
        } else if (!strcmp(a, "--format")) {
            if (!has_val || as_format_parse(argv[++i], &cfg.out_format, &err) != AS_OK ||
                (cfg.out_format != AS_FMT_JSONL && cfg.out_format != AS_FMT_TSV &&
                 cfg.out_format != AS_FMT_CSV))
                return usage_error("--format needs jsonl, tsv or csv", NULL);
        } else if (!strcmp(a, "--reagents")) {
            if (!has_val)
                return usage_error("--reagents needs a value", NULL);
            cfg.default_reagents = argv[++i];
        } else if (!strcmp(a, "--max-record")) {
            char *end = NULL;
            if (!has_val)
                return usage_error("--max-record needs a size in bytes", NULL);
            long v = strtol(argv[++i], &end, 10);
            if (!end || *end || v < AS_IO_MIN_MAX_RECORD)
                return usage_error("--max-record needs a size in bytes of at least 64", NULL);
            ropts.max_record = v;
        } else if (!strcmp(a, "--keep-columns")) {
            cfg.keep_columns = 1;
        } else if (!strcmp(a, "--rejects")) {
            if (!has_val)
                return usage_error("--rejects needs a file name", NULL);
            rejects_path = argv[++i];
            cfg.keep_raw = 1;
        } else if (!strcmp(a, "-o") || !strcmp(a, "--output")) {
            if (!has_val)
                return usage_error("-o needs a file name", NULL);
            out_path = argv[++i];
        } else if (!strcmp(a, "-j") || !strcmp(a, "--jobs")) {
            char *end = NULL;
            if (!has_val)
                return usage_error("-j needs a number of threads", NULL);
            long v = strtol(argv[++i], &end, 10);
            if (!end || *end || v < 1 || v > 256)
                return usage_error("-j needs a number of threads from 1 to 256", NULL);
            nworkers = (int)v;
        } else if (!strcmp(a, "--on-error")) {
            if (!has_val)
                return usage_error("--on-error needs report, stop or ignore", NULL);
            const char *v = argv[++i];
            if (!strcmp(v, "report"))
                policy = POLICY_REPORT;
            else if (!strcmp(v, "stop"))
                policy = POLICY_STOP;
            else if (!strcmp(v, "ignore"))
                policy = POLICY_IGNORE;
            else
                return usage_error("--on-error needs report, stop or ignore, not", v);
        } else if (!strcmp(a, "--no-memo")) {
            cfg.memo = 0;
        } else if (!strcmp(a, "--strict-stereo")) {
            cfg.opts.strict_stereo = 1;
        } else if (!strcmp(a, "--progress")) {
            want_progress = 1;
        } else if (!strcmp(a, "-q") || !strcmp(a, "--quiet")) {
            quiet = 1;
        } else if (!strcmp(a, "--rules")) {
            if (!has_val)
                return usage_error("--rules needs a directory", NULL);
            rules_dir = argv[++i];
        } else if (a[0] == '-' && a[1] != '\0') {
            return usage_error("unknown option", a);
        } else if (!input) {
            input = a;
        } else {
            return usage_error("only one input file is taken; extra argument", a);
        }
        if (col) {
            if (!has_val)
                return usage_error(a, "needs a column name or index");
            *col = argv[++i];
        }
    }
    if (!input)
        input = "-";

    as_rules *rules = NULL;
    as_reader *reader = NULL;
    as_outfile *out = NULL, *rejects = NULL;
    as_writer *w = NULL;
    int rc = 2;
    if (as_rules_load(rules_dir, &rules, &err) != AS_OK) {
        as_cli_print_error(stderr, "annotate", 0, NULL, 0, &err);
        goto done;
    }
    cfg.rules = rules;
    if (cfg.default_reagents) {
        as_reagent_match m;
        if (as_rules_recognise(rules, cfg.default_reagents, strlen(cfg.default_reagents), &m,
                               &err) != AS_OK) {
            fputs("addsite annotate: --reagents: ", stderr);
            as_cli_print_error(stderr, "annotate", 0, NULL, 0, &err);
            goto done;
        }
    }
    if (as_reader_open(input, &ropts, &reader, &err) != AS_OK) {
        as_cli_print_error(stderr, "annotate", err.line, NULL, 0, &err);
        goto done;
    }
    if (as_outfile_open(out_path ? out_path : "-", &out, &err) != AS_OK) {
        as_cli_print_error(stderr, "annotate", 0, NULL, 0, &err);
        goto done;
    }
    if (rejects_path && write_rejects_header(rejects_path, reader, &rejects, &err) != AS_OK) {
        as_cli_print_error(stderr, "annotate", 0, NULL, 0, &err);
        goto done;
    }
    as_writer_opts wopts;
    as_writer_opts_init(&wopts);
    wopts.format = cfg.out_format;
    if (as_writer_open(out, &wopts, &w, &err) != AS_OK) {
        as_cli_print_error(stderr, "annotate", 0, NULL, 0, &err);
        goto done;
    }

    counts cnt;
    memset(&cnt, 0, sizeof cnt);
    progress prog;
    memset(&prog, 0, sizeof prog);
    prog.tty = isatty(2);
    prog.on = !quiet && (want_progress || prog.tty);
    prog.start = prog.last = now_s();
    run_state rs;
    memset(&rs, 0, sizeof rs);
    rs.cfg = &cfg;
    rs.w = w;
    rs.cnt = &cnt;
    rs.prog = &prog;
    rs.policy = policy;
    rs.rejects = rejects;
    as_error rerr;
    as_error_clear(&rerr);
    /* typed input is annotated a record at a time; otherwise threads take batches */
    int typed = !strcmp(input, "-") && isatty(0);
    int r = nworkers == 1 ? run_serial(&rs, reader, &rerr)
                          : run_threads(&rs, reader, nworkers, typed ? 1 : BATCH_MAX, &rerr);
    progress_line(&prog, cnt.records, 1);
    as_writer_free(w);
    w = NULL;
    if (r != 0) {
        as_cli_print_error(stderr, "annotate", 0, NULL, 0, &rerr);
        as_outfile_abort(out);
        out = NULL;
        rc = 1;
        goto done;
    }
    if (rs.write_failed) {
        as_cli_print_error(stderr, "annotate", 0, NULL, 0, &rs.werr);
        as_outfile_abort(out);
        out = NULL;
        rc = 1;
        goto done;
    }
    if (rs.stopped) {
        /* an incomplete file is not put in place; on standard output it is already out; the
         * rejects file holds the failed record that stopped the run */
        if (rejects) {
            as_error rej;
            as_outfile *f = rejects;
            rejects = NULL;
            if (as_outfile_close(f, &rej) != AS_OK)
                as_cli_print_error(stderr, "annotate", 0, NULL, 0, &rej);
        }
        as_status cst = out_path ? (as_outfile_abort(out), AS_OK) : as_outfile_close(out, &err);
        out = NULL;
        if (cst != AS_OK)
            as_cli_print_error(stderr, "annotate", 0, NULL, 0, &err);
        if (!quiet)
            summary(stderr, &cnt, NULL);
        rc = 1;
        goto done;
    }
    as_status cst = as_outfile_close(out, &err);
    out = NULL;
    if (cst == AS_OK && rejects) {
        cst = as_outfile_close(rejects, &err);
        rejects = NULL;
    }
    if (cst != AS_OK) {
        as_cli_print_error(stderr, "annotate", 0, NULL, 0, &err);
        rc = 1;
        goto done;
    }
    if (!quiet)
        summary(stderr, &cnt, out_path);
    rc = cnt.status[ST_ERROR] && policy == POLICY_REPORT ? 3 : 0;
done:
    as_writer_free(w);
    as_outfile_abort(out);
    as_outfile_abort(rejects);
    as_reader_close(reader);
    as_rules_free(rules);
    return rc;
}
