/* io_text.c — byte buffers, UTF-8 checks, format names and column-name matching for io.
 * Owns: the tables of known column names and format names. Must not: do I/O or hold records. */
#include "addsite/io.h"
#include "io_int.h"

#include <limits.h>
#include <math.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* ==== Format names ========================================================================== */

/* ORDER FORMAT: one name per as_format value. */
static const char *const format_names[AS_FMT_COUNT] = {"auto", "smiles", "csv", "tsv", "jsonl"};

/* Extra spellings accepted by as_format_parse. */
static const struct {
    const char *name;
    as_format fmt;
} format_aliases[] = {
    {"rsmi", AS_FMT_RSMI}, {"smi", AS_FMT_RSMI}, {"json", AS_FMT_JSONL}, {"ndjson", AS_FMT_JSONL},
};

const char *as_format_name(as_format f)
{
    if ((int)f < 0 || f >= AS_FMT_COUNT)
        return "unknown";
    return format_names[f];
}

as_status as_format_parse(const char *name, as_format *out, as_error *err)
{
    if (!name || !out)
        return as_error_set(err, AS_ERR_ARG, -1, -1, "no format name given");
    for (int i = 0; i < AS_FMT_COUNT; i++) {
        if (strcmp(name, format_names[i]) == 0) {
            *out = (as_format)i;
            return AS_OK;
        }
    }
    for (size_t i = 0; i < sizeof format_aliases / sizeof format_aliases[0]; i++) {
        if (strcmp(name, format_aliases[i].name) == 0) {
            *out = format_aliases[i].fmt;
            return AS_OK;
        }
    }
    return as_error_set(err, AS_ERR_ARG, -1, -1,
                        "unknown format '%.40s' (use auto, smiles, csv, tsv or jsonl)", name);
}

/* ==== Byte buffers ========================================================================== */

int as_io_buf_reserve(as_io_buf *b, size_t extra)
{
    if (extra > (size_t)-1 / 2 - b->len)
        return -1;
    size_t need = b->len + extra + 1;
    if (need <= b->cap)
        return 0;
    size_t cap = b->cap ? b->cap : 256;
    while (cap < need)
        cap *= 2;
    char *p = realloc(b->p, cap);
    if (!p)
        return -1;
    b->p = p;
    b->cap = cap;
    return 0;
}

int as_io_buf_put(as_io_buf *b, const void *data, size_t n)
{
    if (as_io_buf_reserve(b, n) != 0)
        return -1;
    if (n)
        memcpy(b->p + b->len, data, n);
    b->len += n;
    b->p[b->len] = '\0';
    return 0;
}

int as_io_buf_putc(as_io_buf *b, char c)
{
    if (b->len + 1 >= b->cap && as_io_buf_reserve(b, 1) != 0)
        return -1;
    b->p[b->len++] = c;
    b->p[b->len] = '\0';
    return 0;
}

void as_io_buf_free(as_io_buf *b)
{
    free(b->p);
    b->p = NULL;
    b->len = b->cap = 0;
}

/* ==== UTF-8 ================================================================================= */

/* Well-formed UTF-8 as in the Unicode Standard, Table 3-7: no overlong forms, no surrogates
 * (U+D800..U+DFFF), nothing above U+10FFFF. */
size_t as_io_utf8_seq(const unsigned char *s, size_t n)
{
    unsigned c = s[0];
    if (c == 0)
        return 0;
    if (c < 0x80)
        return 1;
    size_t len;
    unsigned lo = 0x80, hi = 0xBF;
    if (c >= 0xC2 && c <= 0xDF) {
        len = 2;
    } else if (c >= 0xE0 && c <= 0xEF) {
        len = 3;
        if (c == 0xE0)
            lo = 0xA0;
        else if (c == 0xED)
            hi = 0x9F;
    } else if (c >= 0xF0 && c <= 0xF4) {
        len = 4;
        if (c == 0xF0)
            lo = 0x90;
        else if (c == 0xF4)
            hi = 0x8F;
    } else {
        return 0;
    }
    if (n < len)
        return 0;
    if (s[1] < lo || s[1] > hi)
        return 0;
    for (size_t i = 2; i < len; i++)
        if (s[i] < 0x80 || s[i] > 0xBF)
            return 0;
    return len;
}

int as_io_utf8_find_bad(const char *s, size_t n, size_t *pos, int *is_nul)
{
    const unsigned char *u = (const unsigned char *)s;
    size_t i = 0;
    while (i < n) {
        if (u[i] >= 0x01 && u[i] < 0x80) {
            i++;
            continue;
        }
        size_t k = as_io_utf8_seq(u + i, n - i);
        if (k == 0) {
            *pos = i;
            *is_nul = (u[i] == 0);
            return 1;
        }
        i += k;
    }
    return 0;
}

/* ==== Column names ========================================================================== */

/* Known header names per role, already normalised (lowercase letters and digits only), best
 * first. Common practice in reaction data sets and chemistry spreadsheets (USPTO extracts use
 * ReactionSmiles and PatentNumber). A bare "reaction" or "rxn" is left out on purpose: such
 * columns as often hold a reaction name ("hx") as a reaction SMILES. ORDER ROLE: one row per
 * as_io_role. */
static const char *const role_names[AS_IO_ROLE_COUNT][9] = {
    {"reactionsmiles", "rxnsmiles", "rsmiles", "mappedreactionsmiles", NULL},
    {"smiles", "canonicalsmiles", "isosmiles", NULL},
    {"substrate", "substratesmiles", "alkene", "alkenesmiles", "reactant", "reactants",
     "reactantsmiles", "startingmaterial", NULL},
    {"product", "products", "productsmiles", "proposedproduct", "expectedproduct", "majorproduct",
     "major", NULL},
    {"reagents", "reagent", "conditions", "reagenttext", "reagentset", NULL},
    {"id", "recordid", "reactionid", "rxnid", "name", "title", "compoundid", "patentnumber", NULL},
};

int as_io_column_rank(const char *name, size_t len, as_io_role role)
{
    char norm[64];
    size_t k = 0;
    for (size_t i = 0; i < len; i++) {
        unsigned char c = (unsigned char)name[i];
        if (c >= 'A' && c <= 'Z')
            c = (unsigned char)(c - 'A' + 'a');
        if ((c >= 'a' && c <= 'z') || (c >= '0' && c <= '9')) {
            if (k + 1 >= sizeof norm)
                return -1;
            norm[k++] = (char)c;
        }
    }
    norm[k] = '\0';
    if (k == 0 || (int)role < 0 || role >= AS_IO_ROLE_COUNT)
        return -1;
    for (int i = 0; role_names[role][i]; i++)
        if (strcmp(norm, role_names[role][i]) == 0)
            return i;
    return -1;
}

int as_io_is_reaction(const char *text, size_t len)
{
    int depth = 0;
    for (size_t i = 0; i < len; i++) {
        char c = text[i];
        if (c == '[')
            depth++;
        else if (c == ']' && depth > 0)
            depth--;
        else if (c == '>' && depth == 0 && !(i > 0 && text[i - 1] == '-'))
            return 1;
    }
    return 0;
}

/* ==== Numbers as text ======================================================================= */

/* The hot output paths format a few numbers per record ("%.1f", "%.6g"); glibc's printf spends
 * thousands of instructions on each. These give the same bytes as printf in the C locale for
 * the ranges that occur (shares, energies, temperatures) and hand anything else to snprintf.
 * Method: a double is m * 2^e exactly (m < 2^53); the wanted digits are round(m * 10^k / 2^-e)
 * computed in 128-bit integers, ties to even like printf under the default rounding mode. */

typedef unsigned __int128 u128;

static const uint64_t pow10_u64[] = {1u, 10u, 100u, 1000u, 10000u, 100000u, 1000000u,
                                     10000000u, 100000000u, 1000000000u};

/* a = m * 2^-sh exactly for finite a > 0 below 2^60; returns 0, or -1 outside that range. */
static int split_double(double a, uint64_t *m, int *sh)
{
    int e2;
    double f = frexp(a, &e2); /* a = f * 2^e2, f in [0.5, 1) */
    if (e2 > 60)
        return -1;
    *m = (uint64_t)ldexp(f, 53); /* exact: f has at most 53 significant bits */
    *sh = 53 - e2;
    return 0;
}

/* round(m * mult / 2^sh), ties to even; sh may be 0..127, m * mult < 2^127. */
static uint64_t round_shift(uint64_t m, uint64_t mult, int sh, uint64_t *trunc)
{
    u128 t = (u128)m * mult;
    if (sh <= 0) {
        *trunc = (uint64_t)t;
        return (uint64_t)t;
    }
    u128 q = t >> sh, r = t & (((u128)1 << sh) - 1), half = (u128)1 << (sh - 1);
    *trunc = (uint64_t)q;
    if (r > half || (r == half && (q & 1)))
        q++;
    return (uint64_t)q;
}

/* Writes the decimal digits of v (at least width, zero-padded) at p; returns the count. */
static int put_digits(char *p, uint64_t v, int width)
{
    char tmp[24];
    int n = 0;
    do {
        tmp[n++] = (char)('0' + v % 10);
        v /= 10;
    } while (v);
    while (n < width)
        tmp[n++] = '0';
    for (int i = 0; i < n; i++)
        p[i] = tmp[n - 1 - i];
    return n;
}

int as_fmt_fixed(char *buf, size_t cap, double x, int prec)
{
    uint64_t m = 0, tr;
    int sh = 0;
    double a = fabs(x);
    if (prec < 0 || prec > 3 || !isfinite(x) || a >= 1e15 || cap < 24 ||
        (a != 0 && split_double(a, &m, &sh)))
        return snprintf(buf, cap, "%.*f", prec, x);
    uint64_t scale = pow10_u64[prec];
    uint64_t q = 0;
    if (a != 0)
        q = sh >= 128 ? 0 : round_shift(m, scale, sh, &tr); /* below 2^-75: rounds to 0 */
    char *p = buf;
    if (signbit(x))
        *p++ = '-';
    p += put_digits(p, q / scale, 1);
    if (prec > 0) {
        *p++ = '.';
        p += put_digits(p, q % scale, prec);
    }
    *p = '\0';
    return (int)(p - buf);
}

int as_fmt_g6(char *buf, size_t cap, double x)
{
    uint64_t m = 0, q = 0, tr = 0;
    int sh = 0, e10;
    double a = fabs(x);
    if (!isfinite(x) || cap < 24 || (a != 0 && (a < 1e-4 || a >= 1e6)))
        return snprintf(buf, cap, "%.6g", x);
    char *p = buf;
    if (signbit(x))
        *p++ = '-';
    if (a == 0) {
        *p++ = '0';
        *p = '\0';
        return (int)(p - buf);
    }
    split_double(a, &m, &sh); /* a < 1e6: in range, sh between 33 and 67 */
    /* e10 = floor(log10(a)): the guess is corrected with exact integer truncations */
    e10 = (int)floor(log10(a));
    for (int tries = 0;; tries++) {
        if (e10 < -4 || e10 > 5 || tries > 3)
            return snprintf(buf, cap, "%.6g", x);
        q = round_shift(m, pow10_u64[5 - e10], sh, &tr);
        if (tr < 100000u)
            e10--;
        else if (tr >= 1000000u)
            e10++;
        else
            break;
    }
    if (q == 1000000u) { /* 9.999995 -> 10.0000 */
        q = 100000u;
        e10++;
    }
    if (e10 >= 6) /* %g switches to the exponent form */
        return snprintf(buf, cap, "%.6g", x);
    /* fixed form with 5 - e10 decimals, trailing zeros dropped */
    int dec = 5 - e10;
    uint64_t ip = q / pow10_u64[dec], fp = q % pow10_u64[dec];
    while (dec > 0 && fp % 10 == 0) {
        fp /= 10;
        dec--;
    }
    p += put_digits(p, ip, 1);
    if (dec > 0) {
        *p++ = '.';
        p += put_digits(p, fp, dec);
    }
    *p = '\0';
    return (int)(p - buf);
}

/* Appends n bytes of s at *used, writing only what fits below cap - 1. */
static void fmt_put(char *buf, size_t cap, size_t *used, const char *s, size_t n)
{
    if (*used + 1 < cap) {
        size_t room = cap - 1 - *used;
        memcpy(buf + *used, s, n < room ? n : room);
    }
    *used += n;
}

/* 1 when every conversion in fmt is one as_fmt_v does itself. */
static int fmt_simple(const char *fmt)
{
    for (const char *p = fmt; (p = strchr(p, '%')) != NULL;) {
        p++;
        if (*p == 's' || *p == 'd' || *p == '%')
            p++;
        else if (p[0] == '.' && p[1] >= '0' && p[1] <= '3' && p[2] == 'f')
            p += 3;
        else
            return 0;
    }
    return 1;
}

int as_fmt_v(char *buf, size_t cap, const char *fmt, va_list ap)
{
    if (!fmt_simple(fmt))
        return vsnprintf(buf, cap, fmt, ap);
    size_t used = 0;
    char num[512];
    for (const char *p = fmt; *p;) {
        const char *q = strchr(p, '%');
        if (!q) {
            fmt_put(buf, cap, &used, p, strlen(p));
            break;
        }
        fmt_put(buf, cap, &used, p, (size_t)(q - p));
        q++;
        if (*q == '%') {
            fmt_put(buf, cap, &used, "%", 1);
            p = q + 1;
        } else if (*q == 's') {
            const char *s = va_arg(ap, const char *);
            if (!s)
                s = "(null)"; /* what glibc prints */
            fmt_put(buf, cap, &used, s, strlen(s));
            p = q + 1;
        } else if (*q == 'd') {
            long long v = va_arg(ap, int);
            char *d = num;
            if (v < 0) {
                *d++ = '-';
                v = -v;
            }
            d += put_digits(d, (uint64_t)v, 1);
            fmt_put(buf, cap, &used, num, (size_t)(d - num));
            p = q + 1;
        } else { /* ".Nf" */
            int n = as_fmt_fixed(num, sizeof num, va_arg(ap, double), q[1] - '0');
            if (n < 0)
                return n;
            fmt_put(buf, cap, &used, num, (size_t)n < sizeof num ? (size_t)n : sizeof num - 1);
            p = q + 3;
        }
    }
    if (cap)
        buf[used < cap ? used : cap - 1] = '\0';
    return used > INT_MAX ? -1 : (int)used;
}

int as_fmt_ll(char *buf, long long v)
{
    char *p = buf;
    unsigned long long u = (unsigned long long)v;
    if (v < 0) {
        *p++ = '-';
        u = 0 - u;
    }
    p += put_digits(p, u, 0);
    *p = '\0';
    return (int)(p - buf);
}

char *as_fmt_alloc_v(const char *fmt, va_list ap)
{
    char tmp[512];
    va_list cp;
    va_copy(cp, ap);
    int n = as_fmt_v(tmp, sizeof tmp, fmt, cp);
    va_end(cp);
    if (n < 0)
        return NULL;
    char *p = malloc((size_t)n + 1);
    if (!p)
        return NULL;
    if ((size_t)n < sizeof tmp)
        memcpy(p, tmp, (size_t)n + 1);
    else
        as_fmt_v(p, (size_t)n + 1, fmt, ap);
    return p;
}
