/* rules_recog.c — recognising reagents from text and from agent SMILES.
 * Owns: text normalisation, pattern matching with rule priorities, temperature and
 * equivalents found in the text, agent-set comparison. Must not: build molecules or change
 * the table (it is read-only and shared by threads; match data is made per call). */
#include "addsite/canon.h"
#include "addsite/perceive.h"
#include "addsite/rules.h"
#include "rules_int.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* ---------------------------------------------------------------- normalisation */

/* Multi-byte UTF-8 sequences replaced during normalisation. ORDER: longest match first is
 * not needed, every entry is a complete code point. */
static const struct {
    const char *from;   /* UTF-8 bytes of one code point */
    const char *to;     /* replacement ("" drops it, " " is folded like whitespace) */
} repl[] = {
    /* subscript digits U+2080..U+2089 */
    {"\xE2\x82\x80", "0"}, {"\xE2\x82\x81", "1"}, {"\xE2\x82\x82", "2"},
    {"\xE2\x82\x83", "3"}, {"\xE2\x82\x84", "4"}, {"\xE2\x82\x85", "5"},
    {"\xE2\x82\x86", "6"}, {"\xE2\x82\x87", "7"}, {"\xE2\x82\x88", "8"},
    {"\xE2\x82\x89", "9"},
    /* superscript plus and minus (H3O⁺) */
    {"\xE2\x81\xBA", "+"}, {"\xE2\x81\xBB", "-"},
    /* middle dot, bullet, bullet operator, dot operator, katakana middle dot */
    {"\xC2\xB7", "."}, {"\xE2\x80\xA2", "."}, {"\xE2\x88\x99", "."}, {"\xE2\x8B\x85", "."},
    {"\xE3\x83\xBB", "."},
    /* hyphen, non-breaking hyphen, figure dash, en dash, em dash, bar, minus sign */
    {"\xE2\x80\x90", "-"}, {"\xE2\x80\x91", "-"}, {"\xE2\x80\x92", "-"},
    {"\xE2\x80\x93", "-"}, {"\xE2\x80\x94", "-"}, {"\xE2\x80\x95", "-"},
    {"\xE2\x88\x92", "-"},
    /* degree Celsius sign, masculine ordinal written for a degree sign */
    {"\xE2\x84\x83", "\xC2\xB0" "C"}, {"\xC2\xBA", "\xC2\xB0"},
    /* no-break space, en/em/thin/hair spaces, narrow no-break, ideographic space */
    {"\xC2\xA0", " "}, {"\xE2\x80\x80", " "}, {"\xE2\x80\x81", " "}, {"\xE2\x80\x82", " "},
    {"\xE2\x80\x83", " "}, {"\xE2\x80\x84", " "}, {"\xE2\x80\x85", " "},
    {"\xE2\x80\x86", " "}, {"\xE2\x80\x87", " "}, {"\xE2\x80\x88", " "},
    {"\xE2\x80\x89", " "}, {"\xE2\x80\x8A", " "}, {"\xE2\x80\xAF", " "},
    {"\xE2\x81\x9F", " "}, {"\xE3\x80\x80", " "},
    /* zero-width space, word joiner, byte-order mark */
    {"\xE2\x80\x8B", ""}, {"\xE2\x81\xA0", ""}, {"\xEF\xBB\xBF", ""},
};

/* Length of the valid UTF-8 sequence at s (n bytes left), or 0 when invalid. */
static size_t utf8_len(const unsigned char *s, size_t n)
{
    unsigned c = s[0];
    size_t want;
    unsigned min;
    if (c < 0x80)
        return 1;
    if (c >= 0xC2 && c <= 0xDF) {
        want = 2;
        min = 0x80;
    } else if (c >= 0xE0 && c <= 0xEF) {
        want = 3;
        min = 0x800;
    } else if (c >= 0xF0 && c <= 0xF4) {
        want = 4;
        min = 0x10000;
    } else {
        return 0;
    }
    if (n < want)
        return 0;
    unsigned cp = c & (want == 2 ? 0x1Fu : want == 3 ? 0x0Fu : 0x07u);
    for (size_t i = 1; i < want; i++) {
        if ((s[i] & 0xC0) != 0x80)
            return 0;
        cp = (cp << 6) | (s[i] & 0x3Fu);
    }
    if (cp < min || cp > 0x10FFFF || (cp >= 0xD800 && cp <= 0xDFFF))
        return 0;
    return want;
}

as_status as_rules_normalise(const char *text, size_t len, char **out, as_error *err)
{
    *out = NULL;
    /* Every replacement is at most as long as what it replaces, so len + 1 is enough. */
    char *buf = malloc(len + 1);
    if (!buf)
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
    size_t o = 0, i = 0;
    int space = 1;   /* suppress leading blanks and runs */
    while (i < len) {
        const unsigned char *s = (const unsigned char *)text + i;
        if (s[0] == '\0') {
            free(buf);
            return as_error_set(err, AS_ERR_ENCODING, (long)i, -1,
                                "NUL byte at offset %lu of the reagent text", (unsigned long)i);
        }
        size_t l = utf8_len(s, len - i);
        if (l == 0) {
            free(buf);
            return as_error_set(err, AS_ERR_ENCODING, (long)i, -1,
                                "invalid UTF-8 at offset %lu of the reagent text",
                                (unsigned long)i);
        }
        const char *to = NULL;
        if (l == 1) {
            if (s[0] == ' ' || s[0] == '\t' || s[0] == '\n' || s[0] == '\r' || s[0] == '\v' ||
                s[0] == '\f')
                to = " ";
        } else {
            for (size_t k = 0; k < sizeof repl / sizeof repl[0]; k++)
                if (strlen(repl[k].from) == l && memcmp(repl[k].from, s, l) == 0) {
                    to = repl[k].to;
                    break;
                }
        }
        if (to && to[0] == ' ') {
            if (!space)
                buf[o++] = ' ';
            space = 1;
        } else if (to) {
            size_t tl = strlen(to);
            memcpy(buf + o, to, tl);
            o += tl;
            if (tl)
                space = 0;
        } else {
            memcpy(buf + o, s, l);
            o += l;
            space = 0;
        }
        i += l;
    }
    while (o > 0 && buf[o - 1] == ' ')
        o--;
    buf[o] = '\0';
    if (o == 0) {
        free(buf);
        return as_error_set(err, AS_ERR_EMPTY, -1, -1, "no reagent text given");
    }
    *out = buf;
    return AS_OK;
}

/* ---------------------------------------------------------------- temperature, equivalents */

/* Temperature: a number (or range "a to b") followed by °C, deg C, or a bare C that is not
 * the start of a formula ("-78 C" but not "2 CH2Cl2"). Group 1 first number, group 2 the
 * upper end of a range. */
static const char temp_pattern[] =
    "(?<![\\w.)])(-?\\d+(?:\\.\\d+)?)"
    "(?:\\s*(?:°\\s*C)?\\s*(?:to|\\.\\.)\\s*(-?\\d+(?:\\.\\d+)?))?"
    "\\s*(?:°\\s*C|°|deg(?:rees?)?\\s*C|C)(?![A-Za-z])";
/* Equivalents: "1 equiv", "2.2 eq.", "1.05 equivalents". Group 1 the number. */
static const char equiv_pattern[] =
    "(?<![\\w.])(\\d+(?:\\.\\d+)?)\\s*(?i:eq(?:uiv(?:alents?)?)?)\\b";

as_status as_rules_init_extras(as_rules *t, as_error *err)
{
    int code = 0;
    PCRE2_SIZE off = 0;
    t->temp_re = pcre2_compile((PCRE2_SPTR)temp_pattern, PCRE2_ZERO_TERMINATED, PCRE2_UTF,
                               &code, &off, NULL);
    t->equiv_re = pcre2_compile((PCRE2_SPTR)equiv_pattern, PCRE2_ZERO_TERMINATED, PCRE2_UTF,
                                &code, &off, NULL);
    if (!t->temp_re || !t->equiv_re)
        return as_error_set(err, AS_ERR_NOMEM, -1, -1,
                            "could not compile the built-in temperature patterns");
    (void)pcre2_jit_compile(t->temp_re, PCRE2_JIT_COMPLETE);   /* optional speed-up */
    (void)pcre2_jit_compile(t->equiv_re, PCRE2_JIT_COMPLETE);
    return AS_OK;
}

/* Reads a decimal number "-12.5" without the locale (strtod would follow LC_NUMERIC). */
static double parse_num(const char *s, size_t n)
{
    double v = 0.0, scale = 1.0;
    int neg = 0, frac = 0;
    for (size_t i = 0; i < n; i++) {
        char ch = s[i];
        if (ch == '-' && i == 0)
            neg = 1;
        else if (ch == '.')
            frac = 1;
        else if (ch >= '0' && ch <= '9') {
            if (frac) {
                scale /= 10.0;
                v += (ch - '0') * scale;
            } else {
                v = v * 10.0 + (ch - '0');
            }
        }
    }
    return neg ? -v : v;
}

static void find_extras(const as_rules *t, const char *s, pcre2_match_data *md,
                        as_reagent_match *out)
{
    size_t n = strlen(s);
    out->temp_c = NAN;
    out->has_temp = 0;
    out->equiv = 0.0;
    if (pcre2_match(t->temp_re, (PCRE2_SPTR)s, n, 0, 0, md, NULL) > 0) {
        PCRE2_SIZE *ov = pcre2_get_ovector_pointer(md);
        int g = (pcre2_get_ovector_count(md) > 2 && ov[4] != PCRE2_UNSET) ? 2 : 1;
        out->temp_c = parse_num(s + ov[2 * g], ov[2 * g + 1] - ov[2 * g]);
        out->has_temp = 1;
    }
    if (pcre2_match(t->equiv_re, (PCRE2_SPTR)s, n, 0, 0, md, NULL) > 0) {
        PCRE2_SIZE *ov = pcre2_get_ovector_pointer(md);
        out->equiv = parse_num(s + ov[2], ov[3] - ov[2]);
    }
}

/* ---------------------------------------------------------------- text recognition */

static int any_match(pcre2_code *const *v, int n, const char *s, size_t len,
                     pcre2_match_data *md)
{
    for (int i = 0; i < n; i++)
        if (pcre2_match(v[i], (PCRE2_SPTR)s, len, 0, 0, md, NULL) >= 0)
            return 1;
    return 0;
}

/* Writes "id, id, …" into buf (cap bytes); when the ids do not all fit, the list ends
 * with "…" after the last one that did. */
static void list_ids(const as_rules *t, char *buf, size_t cap)
{
    size_t o = 0;
    buf[0] = '\0';
    for (int i = 0; i < t->n; i++) {
        const char *id = t->rules[i]->pub.id;
        size_t need = strlen(id) + (i ? 2 : 0);
        /* keep room for ", …" (6 bytes) and the NUL unless this is the last id */
        size_t reserve = i + 1 < t->n ? 7 : 1;
        if (o + need + reserve > cap) {
            snprintf(buf + o, cap - o, "%s…", i ? ", " : "");
            return;
        }
        snprintf(buf + o, cap - o, "%s%s", i ? ", " : "", id);
        o += need;
    }
}

as_status as_rules_recognise(const as_rules *t, const char *text, size_t len,
                             as_reagent_match *out, as_error *err)
{
    as_error_clear(err);
    if (!t || !text || !out)
        return as_error_set(err, AS_ERR_ARG, -1, -1, "as_rules_recognise: NULL argument");
    memset(out, 0, sizeof *out);
    out->temp_c = NAN;
    if (len > AS_REAGENT_TEXT_MAX)
        return as_error_set(err, AS_ERR_LIMIT, (long)AS_REAGENT_TEXT_MAX, -1,
                            "reagent text of %lu bytes is longer than the %d accepted",
                            (unsigned long)len, AS_REAGENT_TEXT_MAX);
    char *s = NULL;
    as_status st = as_rules_normalise(text, len, &s, err);
    if (st != AS_OK)
        return st;
    size_t n = strlen(s);
    pcre2_match_data *md = pcre2_match_data_create(8, NULL);
    if (!md) {
        free(s);
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
    }

    const as_rule_int *best = NULL;
    int best_var = -1, tie = -1, tie_var = -1;
    for (int i = 0; i < t->n; i++) {
        const as_rule_int *r = t->rules[i];
        if (any_match(r->unless, r->nunless, s, n, md))
            continue;
        int hit = -1;
        for (int v = 0; v < r->pub.nvariants && hit < 0; v++) {
            const as_variant_int *vi = &r->vi[v];
            if (any_match(vi->pats, vi->npats, s, n, md) &&
                !any_match(vi->unless, vi->nunless, s, n, md))
                hit = v;
        }
        if (hit < 0)
            continue;
        if (!best || r->priority > best->priority) {
            best = r;
            best_var = hit;
            tie = -1;
        } else if (r->priority == best->priority && tie < 0) {
            tie = i;
            tie_var = hit;
        }
    }

    if (best && tie >= 0) {
        const as_rule_int *o = t->rules[tie];
        st = as_error_set(err, AS_ERR_REAGENT, -1, -1,
                          "reagents \"%.60s\" are ambiguous: they match %s (%s) and %s (%s) "
                          "equally; name one reagent set or pass the rule id",
                          s, best->pub.id, best->vars[best_var].name, o->pub.id,
                          o->vars[tie_var].name);
    } else if (!best) {
        const char *hint = NULL;
        for (int i = 0; i < t->n && !hint; i++)
            for (int h = 0; h < t->rules[i]->nhints && !hint; h++)
                if (pcre2_match(t->rules[i]->hints[h].re, (PCRE2_SPTR)s, n, 0, 0, md, NULL) >=
                    0)
                    hint = t->rules[i]->hints[h].msg;
        if (hint) {
            st = as_error_set(err, AS_ERR_REAGENT, -1, -1, "reagents \"%.60s\": %s", s, hint);
        } else {
            /* The list of rule ids has priority; the text is quoted only as far as the
             * message has room (the caller has the full text). */
            static const char lead[] = "not recognised; rules: ";
            char ids[sizeof err->msg - sizeof lead + 1];
            list_ids(t, ids, sizeof ids);
            int room = (int)(sizeof err->msg) - (int)sizeof lead - 14 - (int)strlen(ids);
            int cut = (int)n > room;   /* the quote ends in "…" when shortened */
            if (room >= 8)
                st = as_error_set(err, AS_ERR_REAGENT, -1, -1, "reagents \"%.*s%s\" %s%s",
                                  cut ? room - 3 : room, s, cut ? "…" : "", lead, ids);
            else
                st = as_error_set(err, AS_ERR_REAGENT, -1, -1, "%s%s", lead, ids);
        }
    } else {
        out->rule = &best->pub;
        out->variant = &best->vars[best_var];
        find_extras(t, s, md, out);
        st = AS_OK;
    }
    pcre2_match_data_free(md);
    free(s);
    return st;
}

/* ---------------------------------------------------------------- agent recognition */

static void free_parts(char **parts, int n)
{
    if (!parts)
        return;
    for (int i = 0; i < n; i++)
        free(parts[i]);
    free(parts);
}

/* Splits a canonical SMILES at its '.' separators (the writer puts '.' only between
 * components, never inside brackets or ring bonds). Takes ownership of canon. */
static as_status split_canon(char *canon, char ***parts, int *n, as_error *err)
{
    int k = 1;
    for (const char *q = canon; *q; q++)
        k += *q == '.';
    *parts = NULL;
    *n = 0;
    if (!canon[0]) {
        free(canon);
        return AS_OK;
    }
    char **v = calloc((size_t)k, sizeof *v);
    if (!v) {
        free(canon);
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
    }
    int i = 0;
    for (char *tok = canon;; i++) {
        char *dot = strchr(tok, '.');
        size_t l = dot ? (size_t)(dot - tok) : strlen(tok);
        v[i] = malloc(l + 1);
        if (!v[i]) {
            free_parts(v, i);
            free(canon);
            return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
        }
        memcpy(v[i], tok, l);
        v[i][l] = '\0';
        if (!dot)
            break;
        tok = dot + 1;
    }
    free(canon);
    *parts = v;
    *n = i + 1;
    return AS_OK;
}

static void identity_opts(as_canon_opts *o)
{
    as_canon_opts_init(o);
    o->atom_maps = 0;   /* agents are compared without atom maps ... */
    o->stereo = 0;      /* ... and without stereo marks (disiamylborane is a mixture) */
}

as_status as_rules_canon_parts(const char *text, size_t len, char ***parts, int *n,
                               as_error *err)
{
    as_canon_opts o;
    identity_opts(&o);
    char *canon = NULL;
    *parts = NULL;
    *n = 0;
    as_status st = as_canon_from_text(text, len, &o, &canon, err);
    if (st != AS_OK)
        return st;
    return split_canon(canon, parts, n, err);
}

static int has_part(char *const *parts, int n, const char *s)
{
    for (int i = 0; i < n; i++)
        if (strcmp(parts[i], s) == 0)
            return 1;
    return 0;
}

as_status as_rules_recognise_agents(const as_rules *t, const as_mol *agents,
                                    as_reagent_match *out, as_error *err)
{
    as_error_clear(err);
    if (!t || !agents || !out)
        return as_error_set(err, AS_ERR_ARG, -1, -1,
                            "as_rules_recognise_agents: NULL argument");
    memset(out, 0, sizeof *out);
    out->temp_c = NAN;
    if (agents->natoms == 0)
        return as_error_set(err, AS_ERR_EMPTY, -1, -1, "no agent molecules given");

    /* Canonical SMILES of the agents; an unperceived molecule is perceived on a copy. */
    as_canon_opts o;
    identity_opts(&o);
    char *canon = NULL;
    as_status st;
    if (agents->perceived) {
        st = as_canon_smiles(agents, &o, &canon, err);
    } else {
        as_mol *c = as_mol_copy(agents);
        if (!c)
            return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
        st = as_perceive(c, AS_PASS_ALL, NULL, err);
        if (st == AS_OK)
            st = as_canon_smiles(c, &o, &canon, err);
        as_mol_free(c);
    }
    if (st != AS_OK)
        return st;
    char *shown = strdup(canon);   /* for the error message */
    if (!shown) {
        free(canon);
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
    }
    char **parts = NULL;
    int np = 0;
    st = split_canon(canon, &parts, &np, err);
    if (st != AS_OK) {
        free(shown);
        return st;
    }

    /* Best rule: highest priority, then the larger (more specific) matching set. */
    const as_rule_int *best = NULL, *tie = NULL;
    int best_var = -1, best_size = 0, tie_var = -1;
    for (int i = 0; i < t->n; i++) {
        const as_rule_int *r = t->rules[i];
        int hit = -1, size = 0;
        for (int v = 0; v < r->pub.nvariants; v++)
            for (int k = 0; k < r->vi[v].nsets; k++) {
                const as_agent_set *set = &r->vi[v].sets[k];
                int all = set->n > 0;
                for (int j = 0; j < set->n && all; j++)
                    all = has_part(parts, np, set->canon[j]);
                if (all && set->n > size) {
                    hit = v;
                    size = set->n;
                }
            }
        if (hit < 0)
            continue;
        if (!best || r->priority > best->priority ||
            (r->priority == best->priority && size > best_size)) {
            best = r;
            best_var = hit;
            best_size = size;
            tie = NULL;
        } else if (r->priority == best->priority && size == best_size && !tie) {
            tie = r;
            tie_var = hit;
        }
    }
    if (best && tie) {
        st = as_error_set(err, AS_ERR_REAGENT, -1, -1,
                          "agents %.60s are ambiguous: they match %s (%s) and %s (%s) equally; "
                          "pass the reagents as text or the rule id",
                          shown, best->pub.id, best->vars[best_var].name, tie->pub.id,
                          tie->vars[tie_var].name);
    } else if (!best) {
        static const char lead[] = "not recognised; rules: ";
        char ids[sizeof err->msg - sizeof lead + 1];
        list_ids(t, ids, sizeof ids);
        int room = (int)(sizeof err->msg) - (int)sizeof lead - 12 - (int)strlen(ids);
        int cut = (int)strlen(shown) > room;
        if (room >= 8)
            st = as_error_set(err, AS_ERR_REAGENT, -1, -1, "agents %.*s%s %s%s",
                              cut ? room - 3 : room, shown, cut ? "…" : "", lead, ids);
        else
            st = as_error_set(err, AS_ERR_REAGENT, -1, -1, "agents %s%s", lead, ids);
    } else {
        out->rule = &best->pub;
        out->variant = &best->vars[best_var];
        st = AS_OK;
    }
    free_parts(parts, np);
    free(shown);
    return st;
}
