/* io_text.c — byte buffers, UTF-8 checks, format names and column-name matching for io.
 * Owns: the tables of known column names and format names. Must not: do I/O or hold records. */
#include "addsite/io.h"
#include "io_int.h"

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
