/* rules.c — loading and validating the reaction rule table (one JSON file per rule).
 * Owns: reading rule files, checking every key, type, enum and number, compiling the PCRE2
 * patterns, the search order for the table. Must not: build molecules.
 *
 * Every string of a rule borrows from the rule's cJSON document, which the rule keeps until
 * as_rules_free; arrays of variants, figures and hazards are separate allocations. */
#include "addsite/rules.h"
#include "addsite/smiles.h"
#include "rules_int.h"

#include <cjson/cJSON.h>
#include <dirent.h>
#include <errno.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#define MAX_RULE_FILE (4L * 1024 * 1024)  /* a rule file larger than this is refused */
#define MAX_PATH_TEXT 96                  /* JSON path buffer */

/* ---------------------------------------------------------------- validation context */

typedef struct vctx {
    const char *file;   /* base name used in messages */
    as_error *err;
} vctx;

static as_status fail(const vctx *c, const char *path, const char *fmt, ...) AS_PRINTF(3, 4);

/* "hx.json: $.variants[1].patterns[0]: reason" */
static as_status fail(const vctx *c, const char *path, const char *fmt, ...)
{
    char reason[200];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(reason, sizeof reason, fmt, ap);
    va_end(ap);
    return as_error_set(c->err, AS_ERR_RULE, -1, -1, "%s: %s: %s", c->file, path, reason);
}

static const char *base_name(const char *name)
{
    const char *s = strrchr(name, '/');
    return s ? s + 1 : name;
}

/* path + ".key" or path + "[i]" into out */
static void path_key(char *out, const char *path, const char *key)
{
    /* built piecewise so an over-long path is cut, never overrun */
    size_t n = strlen(path);
    if (n > MAX_PATH_TEXT - 1)
        n = MAX_PATH_TEXT - 1;
    memmove(out, path, n);
    size_t k = strlen(key);
    if (n + 1 + k > MAX_PATH_TEXT - 1)
        k = n + 1 < MAX_PATH_TEXT - 1 ? MAX_PATH_TEXT - 2 - n : 0;
    if (n + 1 < MAX_PATH_TEXT) {
        out[n++] = '.';
        memcpy(out + n, key, k);
        n += k;
    }
    out[n] = '\0';
}

static void path_index(char *out, const char *path, int i)
{
    char idx[16];
    int w = snprintf(idx, sizeof idx, "[%d]", i);
    size_t n = strlen(path);
    if (n > MAX_PATH_TEXT - 1)
        n = MAX_PATH_TEXT - 1;
    memmove(out, path, n);
    size_t k = w > 0 ? (size_t)w : 0;
    if (n + k > MAX_PATH_TEXT - 1)
        k = MAX_PATH_TEXT - 1 - n;
    memcpy(out + n, idx, k);
    out[n + k] = '\0';
}

static const char *json_type_name(const cJSON *v)
{
    if (cJSON_IsString(v))
        return "a string";
    if (cJSON_IsNumber(v))
        return "a number";
    if (cJSON_IsBool(v))
        return "a boolean";
    if (cJSON_IsNull(v))
        return "null";
    if (cJSON_IsArray(v))
        return "an array";
    if (cJSON_IsObject(v))
        return "an object";
    return "an unknown value";
}

/* ---------------------------------------------------------------- key specifications */

typedef enum kind { K_STR, K_BOOL, K_NUM, K_INT, K_ARR, K_OBJ, K_STR_OR_NULL } kind;

typedef struct keyspec {
    const char *key;
    kind k;
    int required;
} keyspec;

static const char *kind_name(kind k)
{
    switch (k) {
    case K_STR: return "a string";
    case K_BOOL: return "a boolean";
    case K_NUM: return "a number";
    case K_INT: return "an integer";
    case K_ARR: return "an array";
    case K_OBJ: return "an object";
    case K_STR_OR_NULL: return "a string or null";
    }
    return "?";
}

static int kind_ok(const cJSON *v, kind k)
{
    switch (k) {
    case K_STR: return cJSON_IsString(v) && v->valuestring;
    case K_BOOL: return cJSON_IsBool(v);
    case K_NUM: return cJSON_IsNumber(v);
    case K_INT:
        /* range first: casting an out-of-range double to long is undefined */
        return cJSON_IsNumber(v) && v->valuedouble >= -1e6 && v->valuedouble <= 1e6 &&
               v->valuedouble == (double)(long)v->valuedouble;
    case K_ARR: return cJSON_IsArray(v);
    case K_OBJ: return cJSON_IsObject(v);
    case K_STR_OR_NULL: return cJSON_IsNull(v) || (cJSON_IsString(v) && v->valuestring);
    }
    return 0;
}

/* Checks obj against spec: every member known (keys starting with '_' are notes and are
 * skipped), no key twice, each of the right kind, every required key present, strings not
 * empty. */
static as_status check_object(const vctx *c, const cJSON *obj, const char *path,
                              const keyspec *spec, int nspec)
{
    char p[MAX_PATH_TEXT];
    if (!cJSON_IsObject(obj))
        return fail(c, path, "expected an object, found %s", json_type_name(obj));
    for (const cJSON *m = obj->child; m; m = m->next) {
        const char *key = m->string ? m->string : "";
        if (key[0] == '_')
            continue;
        for (const cJSON *o = obj->child; o != m; o = o->next)
            if (o->string && strcmp(o->string, key) == 0)
                return fail(c, path, "key \"%s\" appears twice", key);
        int found = -1;
        for (int i = 0; i < nspec; i++)
            if (strcmp(spec[i].key, key) == 0)
                found = i;
        if (found < 0)
            return fail(c, path, "unknown key \"%s\"", key);
        path_key(p, path, key);
        if (!kind_ok(m, spec[found].k))
            return fail(c, p, "expected %s, found %s", kind_name(spec[found].k),
                        json_type_name(m));
        if (cJSON_IsString(m) && m->valuestring[0] == '\0')
            return fail(c, p, "empty string");
    }
    for (int i = 0; i < nspec; i++)
        if (spec[i].required && !cJSON_GetObjectItemCaseSensitive(obj, spec[i].key))
            return fail(c, path, "missing required key \"%s\"", spec[i].key);
    return AS_OK;
}

static const char *get_str(const cJSON *obj, const char *key)
{
    const cJSON *v = cJSON_GetObjectItemCaseSensitive(obj, key);
    return cJSON_IsString(v) ? v->valuestring : NULL;
}

/* Looks s up in names[]; returns the index or -1. */
static int enum_index(const char *s, const char *const *names, int n)
{
    for (int i = 0; i < n; i++)
        if (strcmp(s, names[i]) == 0)
            return i;
    return -1;
}

/* ORDER REGIO: same order as as_regio. */
static const char *const regio_names[] = {"cation", "radical", "borane", "none", "cleave"};
/* ORDER ADDMODE: same order as as_addmode. */
static const char *const stereo_names[] = {"none", "syn", "anti"};
static const char *const end_names[] = {"less_substituted", "more_substituted"};
static const char *const workup_names[] = {"reductive", "oxidative"};
static const char *const facial_names[] = {"exo", "not_predicted"};
static const char *const class_names[] = {
    "monosubstituted", "1,1-disubstituted", "cis-1,2-disubstituted",
    "trans-1,2-disubstituted", "trisubstituted", "tetrasubstituted", "styrene",
};

static as_status check_enum(const vctx *c, const cJSON *obj, const char *path, const char *key,
                            const char *const *names, int n, int *out)
{
    char p[MAX_PATH_TEXT];
    const char *s = get_str(obj, key);
    path_key(p, path, key);
    int i = enum_index(s, names, n);
    if (i < 0) {
        char list[160] = "";
        for (int j = 0; j < n; j++) {
            strncat(list, j ? ", " : "", sizeof list - strlen(list) - 1);
            strncat(list, names[j], sizeof list - strlen(list) - 1);
        }
        return fail(c, p, "\"%s\" is not one of %s", s, list);
    }
    *out = i;
    return AS_OK;
}

/* ---------------------------------------------------------------- rule lifetime */

static void free_codes(pcre2_code **v, int n)
{
    if (!v)
        return;
    for (int i = 0; i < n; i++)
        pcre2_code_free(v[i]);
    free(v);
}

static void rule_free(as_rule_int *r)
{
    if (!r)
        return;
    free_codes(r->unless, r->nunless);
    if (r->hints) {
        for (int i = 0; i < r->nhints; i++)
            pcre2_code_free(r->hints[i].re);
        free(r->hints);
    }
    if (r->vi) {
        for (int i = 0; i < r->pub.nvariants; i++) {
            as_variant_int *v = &r->vi[i];
            free_codes(v->pats, v->npats);
            free_codes(v->unless, v->nunless);
            if (v->sets) {
                for (int s = 0; s < v->nsets; s++) {
                    for (int k = 0; k < v->sets[s].n; k++)
                        free(v->sets[s].canon[k]);
                    free(v->sets[s].canon);
                }
                free(v->sets);
            }
            free(v->set_texts);
        }
        free(r->vi);
    }
    free(r->vars);
    free(r->figs);
    free(r->haz);
    cJSON_Delete((cJSON *)r->doc);
    free(r->file);
    free(r);
}

void as_rules_free(as_rules *t)
{
    if (!t)
        return;
    for (int i = 0; i < t->n; i++)
        rule_free(t->rules[i]);
    free(t->rules);
    pcre2_code_free(t->temp_re);
    pcre2_code_free(t->equiv_re);
    free(t);
}

static as_status table_new(as_rules **out, as_error *err)
{
    as_rules *t = calloc(1, sizeof *t);
    if (!t)
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory making the rule table");
    as_status st = as_rules_init_extras(t, err);
    if (st != AS_OK) {
        as_rules_free(t);
        return st;
    }
    *out = t;
    return AS_OK;
}

/* ---------------------------------------------------------------- patterns */

/* Compiles one pattern (UTF-8 mode); a compile error names the pattern and the offset. */
static as_status compile_pattern(const vctx *c, const char *path, const char *pat,
                                 pcre2_code **out)
{
    int code = 0;
    PCRE2_SIZE off = 0;
    pcre2_code *re = pcre2_compile((PCRE2_SPTR)pat, PCRE2_ZERO_TERMINATED, PCRE2_UTF, &code,
                                   &off, NULL);
    if (!re) {
        PCRE2_UCHAR msg[120];
        if (pcre2_get_error_message(code, msg, sizeof msg) < 0)
            snprintf((char *)msg, sizeof msg, "error %d", code);
        return fail(c, path, "pattern \"%.60s\" does not compile at offset %lu: %s", pat,
                    (unsigned long)off, (const char *)msg);
    }
    /* JIT when the PCRE2 build has it (matching then runs several times faster); without it
     * pcre2_match falls back to the interpreter, so a failure here is not an error. */
    (void)pcre2_jit_compile(re, PCRE2_JIT_COMPLETE);
    *out = re;
    return AS_OK;
}

/* Compiles an array of pattern strings at obj[key] (which must be an array; empty allowed
 * unless nonempty). */
static as_status compile_list(const vctx *c, const cJSON *obj, const char *path,
                              const char *key, int nonempty, pcre2_code ***out, int *nout)
{
    char p[MAX_PATH_TEXT], pi[MAX_PATH_TEXT];
    const cJSON *arr = cJSON_GetObjectItemCaseSensitive(obj, key);
    *out = NULL;
    *nout = 0;
    if (!arr)
        return AS_OK;
    path_key(p, path, key);
    int n = cJSON_GetArraySize(arr);
    if (n == 0 && nonempty)
        return fail(c, p, "needs at least one pattern");
    if (n == 0)
        return AS_OK;
    pcre2_code **v = calloc((size_t)n, sizeof *v);
    if (!v)
        return as_error_set(c->err, AS_ERR_NOMEM, -1, -1, "out of memory");
    *out = v;
    int i = 0;
    for (const cJSON *e = arr->child; e; e = e->next, i++) {
        path_index(pi, p, i);
        if (!cJSON_IsString(e) || !e->valuestring[0])
            return fail(c, pi, "expected a non-empty string, found %s", json_type_name(e));
        as_status st = compile_pattern(c, pi, e->valuestring, &v[i]);
        if (st != AS_OK)
            return st;
        (*nout)++;
    }
    return AS_OK;
}

/* ---------------------------------------------------------------- sections */

static const keyspec variant_spec[] = {
    {"name", K_STR, 1},          {"first", K_STR_OR_NULL, 0},
    {"second", K_STR_OR_NULL, 0}, {"bridge", K_STR_OR_NULL, 0},
    {"workup", K_STR, 0},        {"reagent_smiles", K_STR_OR_NULL, 0},
    {"patterns", K_ARR, 1},      {"unless", K_ARR, 0},
    {"agents", K_ARR, 0},
};

static const char *str_or_null(const cJSON *obj, const char *key)
{
    const cJSON *v = cJSON_GetObjectItemCaseSensitive(obj, key);
    return cJSON_IsString(v) ? v->valuestring : NULL;
}

static as_status load_agents(const vctx *c, const cJSON *vobj, const char *path,
                             as_variant_int *vi)
{
    char p[MAX_PATH_TEXT], pi[MAX_PATH_TEXT];
    const cJSON *arr = cJSON_GetObjectItemCaseSensitive(vobj, "agents");
    if (!arr)
        return AS_OK;
    path_key(p, path, "agents");
    int n = cJSON_GetArraySize(arr);
    if (n == 0)
        return AS_OK;
    vi->sets = calloc((size_t)n, sizeof *vi->sets);
    vi->set_texts = calloc((size_t)n, sizeof *vi->set_texts);
    if (!vi->sets || !vi->set_texts)
        return as_error_set(c->err, AS_ERR_NOMEM, -1, -1, "out of memory");
    int i = 0;
    for (const cJSON *e = arr->child; e; e = e->next, i++) {
        path_index(pi, p, i);
        if (!cJSON_IsString(e) || !e->valuestring[0])
            return fail(c, pi, "expected a SMILES string, found %s", json_type_name(e));
        as_agent_set *set = &vi->sets[i];
        set->text = e->valuestring;
        vi->set_texts[i] = e->valuestring;
        vi->nsets++;
        as_error se;
        as_error_clear(&se);
        as_status st = as_rules_canon_parts(set->text, strlen(set->text), &set->canon, &set->n,
                                            &se);
        if (st == AS_ERR_NOMEM)
            return as_error_set(c->err, st, -1, -1, "out of memory");
        if (st != AS_OK)
            return fail(c, pi, "agent set \"%.40s\" is not valid SMILES at byte %ld: %s",
                        set->text, se.offset, se.msg);
    }
    return AS_OK;
}

/* A product group or reagent formula must be readable SMILES. */
static as_status check_smiles(const vctx *c, const char *path, const char *key, const char *smi)
{
    char p[MAX_PATH_TEXT];
    if (!smi)
        return AS_OK;
    as_mol *m = NULL;
    as_error se;
    as_error_clear(&se);
    as_status st = as_smiles_parse(smi, strlen(smi), &m, &se);
    as_mol_free(m);
    if (st == AS_ERR_NOMEM)
        return as_error_set(c->err, st, -1, -1, "out of memory");
    if (st != AS_OK) {
        path_key(p, path, key);
        return fail(c, p, "\"%.40s\" is not valid SMILES at byte %ld: %s", smi, se.offset,
                    se.msg);
    }
    return AS_OK;
}

static as_status load_variant(const vctx *c, const cJSON *vobj, const char *path,
                              as_regio regio, as_rule_variant *v, as_variant_int *vi)
{
    char p[MAX_PATH_TEXT];
    as_status st = check_object(c, vobj, path, variant_spec,
                                (int)(sizeof variant_spec / sizeof variant_spec[0]));
    if (st != AS_OK)
        return st;
    v->name = get_str(vobj, "name");
    v->first = str_or_null(vobj, "first");
    v->second = str_or_null(vobj, "second");
    v->bridge = str_or_null(vobj, "bridge");
    v->reagent_smiles = str_or_null(vobj, "reagent_smiles");
    v->workup = NULL;
    if (regio == AS_REGIO_CLEAVE) {
        int w = 0;
        if (!cJSON_GetObjectItemCaseSensitive(vobj, "workup"))
            return fail(c, path, "missing required key \"workup\" (regio \"cleave\")");
        st = check_enum(c, vobj, path, "workup", workup_names, 2, &w);
        if (st != AS_OK)
            return st;
        v->workup = workup_names[w];
        if (v->first || v->second || v->bridge)
            return fail(c, path, "regio \"cleave\" takes no first/second/bridge groups");
    } else {
        if (cJSON_GetObjectItemCaseSensitive(vobj, "workup")) {
            path_key(p, path, "workup");
            return fail(c, p, "only rules with regio \"cleave\" have a work-up");
        }
        if (v->bridge) {
            if (regio != AS_REGIO_NONE)
                return fail(c, path, "a bridge group needs regio \"none\"");
            if (v->first || v->second)
                return fail(c, path, "give either a bridge or first/second groups, not both");
        } else if (!v->first || !v->second) {
            return fail(c, path, "needs both \"first\" and \"second\" groups (or a \"bridge\")");
        }
    }
    static const char *const group_keys[] = {"first", "second", "bridge", "reagent_smiles"};
    const char *groups[] = {v->first, v->second, v->bridge, v->reagent_smiles};
    for (int g = 0; g < 4; g++) {
        st = check_smiles(c, path, group_keys[g], groups[g]);
        if (st != AS_OK)
            return st;
    }
    st = compile_list(c, vobj, path, "patterns", 1, &vi->pats, &vi->npats);
    if (st != AS_OK)
        return st;
    st = compile_list(c, vobj, path, "unless", 0, &vi->unless, &vi->nunless);
    if (st != AS_OK)
        return st;
    st = load_agents(c, vobj, path, vi);
    if (st != AS_OK)
        return st;
    v->nagents = vi->nsets;
    v->agents = vi->set_texts;
    return AS_OK;
}

static const keyspec figure_spec[] = {
    {"class", K_STR, 1},   {"first_end", K_STR, 1}, {"percent", K_NUM, 1},
    {"example", K_STR, 0}, {"source", K_STR, 1},
};

static as_status load_figure(const vctx *c, const cJSON *fobj, const char *path,
                             as_rule_figure *f)
{
    char p[MAX_PATH_TEXT];
    as_status st = check_object(c, fobj, path, figure_spec,
                                (int)(sizeof figure_spec / sizeof figure_spec[0]));
    if (st != AS_OK)
        return st;
    f->cls = get_str(fobj, "class");
    int known = enum_index(f->cls, class_names,
                           (int)(sizeof class_names / sizeof class_names[0])) >= 0;
    if (!known && strncmp(f->cls, "styrene:", 8) == 0 && f->cls[8])
        known = 1;
    if (!known) {
        path_key(p, path, "class");
        return fail(c, p, "unknown substrate class \"%s\" (monosubstituted, "
                          "1,1-disubstituted, cis-/trans-1,2-disubstituted, trisubstituted, "
                          "tetrasubstituted, styrene, styrene:<ring substituent>)", f->cls);
    }
    int e = 0;
    st = check_enum(c, fobj, path, "first_end", end_names, 2, &e);
    if (st != AS_OK)
        return st;
    f->first_end = end_names[e];
    f->percent = cJSON_GetObjectItemCaseSensitive(fobj, "percent")->valuedouble;
    if (!(f->percent >= 0.0 && f->percent <= 100.0)) {
        path_key(p, path, "percent");
        return fail(c, p, "%g is outside 0..100", f->percent);
    }
    f->example = get_str(fobj, "example");
    st = check_smiles(c, path, "example", f->example);
    if (st != AS_OK)
        return st;
    f->source = get_str(fobj, "source");
    return AS_OK;
}

static const keyspec hint_spec[] = {
    {"pattern", K_STR, 1},
    {"message", K_STR, 1},
};

static const keyspec rule_spec[] = {
    {"id", K_STR, 1},           {"title", K_STR, 1},         {"summary", K_STR, 1},
    {"regio", K_STR, 1},        {"stereo", K_STR, 1},        {"stereo_source", K_STR, 1},
    {"shifts", K_BOOL, 1},      {"conjugate", K_BOOL, 1},    {"bulk", K_NUM, 0},
    {"bulk_source", K_STR, 0},  {"intermediate", K_STR, 1},  {"conditions", K_STR, 1},
    {"priority", K_INT, 1},     {"unless", K_ARR, 0},        {"hints", K_ARR, 0},
    {"variants", K_ARR, 1},     {"figures", K_ARR, 0},       {"hazards", K_ARR, 1},
    {"facial", K_STR, 0},       {"facial_source", K_STR, 0},
};

/* Rule ids are used as words in output and on command lines: [a-z0-9_], letter first. */
static int id_ok(const char *s)
{
    if (!(s[0] >= 'a' && s[0] <= 'z'))
        return 0;
    for (const char *q = s; *q; q++)
        if (!((*q >= 'a' && *q <= 'z') || (*q >= '0' && *q <= '9') || *q == '_'))
            return 0;
    return strlen(s) <= 40;
}

static as_status nomem(as_error *err)
{
    return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory loading the rule table");
}

static as_status load_rule(const vctx *c, const cJSON *root, as_rule_int *r)
{
    char p[MAX_PATH_TEXT], pi[MAX_PATH_TEXT];
    as_status st = check_object(c, root, "$", rule_spec,
                                (int)(sizeof rule_spec / sizeof rule_spec[0]));
    if (st != AS_OK)
        return st;
    as_rule *pub = &r->pub;
    pub->id = get_str(root, "id");
    if (!id_ok(pub->id))
        return fail(c, "$.id", "\"%s\" is not a rule id (lower-case letters, digits and '_', "
                               "letter first, at most 40)", pub->id);
    pub->title = get_str(root, "title");
    pub->summary = get_str(root, "summary");
    int e = 0;
    st = check_enum(c, root, "$", "regio", regio_names, 5, &e);
    if (st != AS_OK)
        return st;
    pub->regio = (as_regio)e;
    st = check_enum(c, root, "$", "stereo", stereo_names, 3, &e);
    if (st != AS_OK)
        return st;
    pub->stereo = (as_addmode)e;
    pub->stereo_source = get_str(root, "stereo_source");
    pub->shifts = cJSON_IsTrue(cJSON_GetObjectItemCaseSensitive(root, "shifts"));
    pub->conjugate = cJSON_IsTrue(cJSON_GetObjectItemCaseSensitive(root, "conjugate"));
    const cJSON *bulk = cJSON_GetObjectItemCaseSensitive(root, "bulk");
    if (pub->regio == AS_REGIO_BORANE) {
        if (!bulk)
            return fail(c, "$", "missing required key \"bulk\" (regio \"borane\")");
        if (!get_str(root, "bulk_source"))
            return fail(c, "$", "missing required key \"bulk_source\" (every number needs "
                                "a source)");
        pub->bulk = bulk->valuedouble;
        if (!(pub->bulk >= 0.5 && pub->bulk <= 10.0))
            return fail(c, "$.bulk", "%g is outside 0.5..10 (1.0 = BH3)", pub->bulk);
    } else if (bulk) {
        return fail(c, "$.bulk", "only rules with regio \"borane\" have a steric bulk");
    } else {
        pub->bulk = 0.0;
    }
    pub->intermediate = get_str(root, "intermediate");
    pub->conditions = get_str(root, "conditions");
    if (cJSON_GetObjectItemCaseSensitive(root, "facial")) {
        st = check_enum(c, root, "$", "facial", facial_names, 2, &e);
        if (st != AS_OK)
            return st;
        if (!get_str(root, "facial_source"))
            return fail(c, "$", "missing required key \"facial_source\" (\"facial\" needs a "
                                "source or a reason)");
        pub->facial = facial_names[e];
        pub->facial_source = get_str(root, "facial_source");
    } else if (get_str(root, "facial_source")) {
        return fail(c, "$.facial_source", "only allowed together with \"facial\"");
    }
    r->priority = (int)cJSON_GetObjectItemCaseSensitive(root, "priority")->valuedouble;

    st = compile_list(c, root, "$", "unless", 0, &r->unless, &r->nunless);
    if (st != AS_OK)
        return st;

    const cJSON *hints = cJSON_GetObjectItemCaseSensitive(root, "hints");
    int nh = hints ? cJSON_GetArraySize(hints) : 0;
    if (nh > 0) {
        r->hints = calloc((size_t)nh, sizeof *r->hints);
        if (!r->hints)
            return nomem(c->err);
        int i = 0;
        for (const cJSON *h = hints->child; h; h = h->next, i++) {
            path_index(pi, "$.hints", i);
            st = check_object(c, h, pi, hint_spec, 2);
            if (st != AS_OK)
                return st;
            path_key(p, pi, "pattern");
            st = compile_pattern(c, p, get_str(h, "pattern"), &r->hints[i].re);
            if (st != AS_OK)
                return st;
            r->hints[i].msg = get_str(h, "message");
            r->nhints++;
        }
    }

    const cJSON *vars = cJSON_GetObjectItemCaseSensitive(root, "variants");
    int nv = cJSON_GetArraySize(vars);
    if (nv == 0)
        return fail(c, "$.variants", "needs at least one variant");
    r->vars = calloc((size_t)nv, sizeof *r->vars);
    r->vi = calloc((size_t)nv, sizeof *r->vi);
    if (!r->vars || !r->vi)
        return nomem(c->err);
    int i = 0;
    for (const cJSON *v = vars->child; v; v = v->next, i++) {
        path_index(pi, "$.variants", i);
        pub->nvariants = i + 1;   /* so rule_free sees what was filled */
        st = load_variant(c, v, pi, pub->regio, &r->vars[i], &r->vi[i]);
        if (st != AS_OK)
            return st;
        for (int j = 0; j < i; j++)
            if (strcmp(r->vars[j].name, r->vars[i].name) == 0) {
                path_key(p, pi, "name");
                return fail(c, p, "variant name \"%s\" used twice", r->vars[i].name);
            }
    }
    pub->variants = r->vars;

    const cJSON *figs = cJSON_GetObjectItemCaseSensitive(root, "figures");
    int nf = figs ? cJSON_GetArraySize(figs) : 0;
    if (nf > 0) {
        r->figs = calloc((size_t)nf, sizeof *r->figs);
        if (!r->figs)
            return nomem(c->err);
        i = 0;
        for (const cJSON *f = figs->child; f; f = f->next, i++) {
            path_index(pi, "$.figures", i);
            st = load_figure(c, f, pi, &r->figs[i]);
            if (st != AS_OK)
                return st;
        }
    }
    pub->nfigures = nf;
    pub->figures = r->figs;

    const cJSON *haz = cJSON_GetObjectItemCaseSensitive(root, "hazards");
    int nz = cJSON_GetArraySize(haz);
    if (nz == 0)
        return fail(c, "$.hazards", "needs at least one caution sentence");
    r->haz = calloc((size_t)nz, sizeof *r->haz);
    if (!r->haz)
        return nomem(c->err);
    i = 0;
    for (const cJSON *h = haz->child; h; h = h->next, i++) {
        path_index(pi, "$.hazards", i);
        if (!cJSON_IsString(h) || !h->valuestring[0])
            return fail(c, pi, "expected a non-empty string, found %s", json_type_name(h));
        r->haz[i] = h->valuestring;
    }
    pub->nhazards = nz;
    pub->hazards = r->haz;
    return AS_OK;
}

/* ---------------------------------------------------------------- public loading */

/* Line and column (1-based) of byte `at` in json. */
static void line_col(const char *json, size_t at, long *line, long *col)
{
    long l = 1, cl = 1;
    for (size_t i = 0; i < at; i++) {
        if (json[i] == '\n') {
            l++;
            cl = 1;
        } else if (((unsigned char)json[i] & 0xC0) != 0x80) {
            cl++;   /* count characters, not UTF-8 continuation bytes */
        }
    }
    *line = l;
    *col = cl;
}

as_status as_rules_add_json(as_rules **tab, const char *name, const char *json, size_t len,
                            as_error *err)
{
    as_error_clear(err);
    if (!tab || !name || (!json && len))
        return as_error_set(err, AS_ERR_ARG, -1, -1, "as_rules_add_json: NULL argument");
    vctx c = {base_name(name), err};
    if (!json)
        json = "";
    const char *nul = memchr(json, '\0', len);
    if (nul)
        return as_error_set(err, AS_ERR_ENCODING, (long)(nul - json), -1,
                            "%s: NUL byte at offset %ld of a rule file", c.file,
                            (long)(nul - json));
    /* A UTF-8 byte-order mark (some editors write one) is skipped; it takes no column. */
    long skip = 0;
    if (len >= 3 && memcmp(json, "\xEF\xBB\xBF", 3) == 0) {
        json += 3;
        len -= 3;
        skip = 3;
    }
    const char *end = NULL;
    cJSON *doc = cJSON_ParseWithLengthOpts(json, len, &end, 0);
    if (!doc) {
        size_t at = end && end >= json && end <= json + len ? (size_t)(end - json) : len;
        long line = 0, col = 0;
        line_col(json, at, &line, &col);
        if (at >= len)
            as_error_set(err, AS_ERR_RULE, (long)at + skip, -1,
                         "%s:%ld:%ld: JSON syntax error: the text ends too early", c.file, line,
                         col);
        else {
            /* quote at most 12 bytes, within the buffer and the line */
            int show = 0;
            while (show < 12 && at + (size_t)show < len && json[at + (size_t)show] != '\n' &&
                   json[at + (size_t)show] != '\r')
                show++;
            while (show > 0 && at + (size_t)show < len &&
                   ((unsigned char)json[at + (size_t)show] & 0xC0) == 0x80)
                show--;   /* do not cut a UTF-8 sequence */
            as_error_set(err, AS_ERR_RULE, (long)at + skip, -1,
                         "%s:%ld:%ld: JSON syntax error near '%.*s'", c.file, line, col, show,
                         json + at);
        }
        if (err) {
            err->line = line;
            err->column = col;
        }
        return AS_ERR_RULE;
    }
    /* Anything but whitespace after the value is an error too. */
    const char *q = end;
    while (q && q < json + len && (*q == ' ' || *q == '\t' || *q == '\n' || *q == '\r'))
        q++;
    if (q && q < json + len) {
        long line = 0, col = 0;
        line_col(json, (size_t)(q - json), &line, &col);
        cJSON_Delete(doc);
        as_error_set(err, AS_ERR_RULE, (long)(q - json) + skip, -1,
                     "%s:%ld:%ld: JSON syntax error: text after the end of the rule object",
                     c.file, line, col);
        if (err) {
            err->line = line;
            err->column = col;
        }
        return AS_ERR_RULE;
    }

    as_rule_int *r = calloc(1, sizeof *r);
    if (!r) {
        cJSON_Delete(doc);
        return nomem(err);
    }
    r->doc = doc;
    r->file = strdup(name);
    if (!r->file) {
        rule_free(r);
        return nomem(err);
    }
    r->pub.file = r->file;
    as_status st = load_rule(&c, doc, r);
    if (st != AS_OK) {
        rule_free(r);
        return st;
    }
    int made = 0;
    if (!*tab) {
        st = table_new(tab, err);
        if (st != AS_OK) {
            rule_free(r);
            return st;
        }
        made = 1;
    }
    as_rules *t = *tab;
    for (int i = 0; i < t->n; i++)
        if (strcmp(t->rules[i]->pub.id, r->pub.id) == 0) {
            fail(&c, "$.id", "duplicate rule id \"%s\" (first defined in %s)", r->pub.id,
                 base_name(t->rules[i]->pub.file));
            rule_free(r);
            return AS_ERR_RULE;
        }
    if (t->n == t->cap) {
        int cap = t->cap ? t->cap * 2 : 16;
        as_rule_int **nr = realloc(t->rules, (size_t)cap * sizeof *nr);
        if (!nr) {
            rule_free(r);
            if (made) {
                as_rules_free(t);
                *tab = NULL;
            }
            return nomem(err);
        }
        t->rules = nr;
        t->cap = cap;
    }
    t->rules[t->n++] = r;
    return AS_OK;
}

static int cmp_names(const void *a, const void *b)
{
    return strcmp(*(char *const *)a, *(char *const *)b);
}

static as_status read_file(const char *path, char **out, size_t *len, as_error *err)
{
    FILE *f = fopen(path, "rb");
    if (!f)
        return as_error_set(err, AS_ERR_IO, -1, -1, "cannot open rule file %s: %s", path,
                            strerror(errno));
    size_t cap = 8192, n = 0;
    char *buf = malloc(cap);
    if (!buf) {
        fclose(f);
        return nomem(err);
    }
    for (;;) {
        if (n == cap) {
            if (cap >= (size_t)MAX_RULE_FILE) {
                free(buf);
                fclose(f);
                return as_error_set(err, AS_ERR_LIMIT, -1, -1,
                                    "rule file %s is larger than %ld bytes", path,
                                    MAX_RULE_FILE);
            }
            char *nb = realloc(buf, cap * 2);
            if (!nb) {
                free(buf);
                fclose(f);
                return nomem(err);
            }
            buf = nb;
            cap *= 2;
        }
        size_t got = fread(buf + n, 1, cap - n, f);
        n += got;
        if (got == 0)
            break;
    }
    int bad = ferror(f);
    fclose(f);
    if (bad) {
        free(buf);
        return as_error_set(err, AS_ERR_IO, -1, -1, "error reading rule file %s", path);
    }
    *out = buf;
    *len = n;
    return AS_OK;
}

as_status as_rules_load_dir(const char *dir, as_rules **out, as_error *err)
{
    as_error_clear(err);
    if (!dir || !out)
        return as_error_set(err, AS_ERR_ARG, -1, -1, "as_rules_load_dir: NULL argument");
    *out = NULL;
    DIR *d = opendir(dir);
    if (!d)
        return as_error_set(err, AS_ERR_IO, -1, -1, "cannot open rule directory %s: %s", dir,
                            strerror(errno));
    char **names = NULL;
    int n = 0, cap = 0;
    as_status st = AS_OK;
    struct dirent *e;
    while ((e = readdir(d)) != NULL) {
        size_t l = strlen(e->d_name);
        if (l < 6 || e->d_name[0] == '.' || strcmp(e->d_name + l - 5, ".json") != 0)
            continue;
        if (n == cap) {
            cap = cap ? cap * 2 : 32;
            char **nn = realloc(names, (size_t)cap * sizeof *nn);
            if (!nn) {
                st = nomem(err);
                break;
            }
            names = nn;
        }
        names[n] = strdup(e->d_name);
        if (!names[n]) {
            st = nomem(err);
            break;
        }
        n++;
    }
    closedir(d);
    if (st == AS_OK && n == 0)
        st = as_error_set(err, AS_ERR_RULE, -1, -1, "no *.json rule files in %s", dir);
    if (st == AS_OK)
        qsort(names, (size_t)n, sizeof *names, cmp_names);
    as_rules *t = NULL;
    for (int i = 0; st == AS_OK && i < n; i++) {
        size_t pl = strlen(dir) + strlen(names[i]) + 2;
        char *path = malloc(pl);
        if (!path) {
            st = nomem(err);
            break;
        }
        snprintf(path, pl, "%s/%s", dir, names[i]);
        char *buf = NULL;
        size_t len = 0;
        st = read_file(path, &buf, &len, err);
        if (st == AS_OK)
            st = as_rules_add_json(&t, path, buf, len, err);
        free(buf);
        free(path);
    }
    for (int i = 0; i < n; i++)
        free(names[i]);
    free(names);
    if (st != AS_OK) {
        as_rules_free(t);
        return st;
    }
    *out = t;
    return AS_OK;
}

as_status as_rules_load_embedded(as_rules **out, as_error *err)
{
    as_error_clear(err);
    if (!out)
        return as_error_set(err, AS_ERR_ARG, -1, -1, "as_rules_load_embedded: NULL argument");
    *out = NULL;
    as_rules *t = NULL;
    for (int i = 0; i < as_rules_nembedded; i++) {
        char name[128];
        snprintf(name, sizeof name, "<embedded>/%s", as_rules_embedded[i].name);
        as_status st = as_rules_add_json(&t, name, as_rules_embedded[i].text,
                                         as_rules_embedded[i].len, err);
        if (st != AS_OK) {
            as_rules_free(t);
            return st;
        }
    }
    if (!t)
        return as_error_set(err, AS_ERR_RULE, -1, -1, "the library was built without rules");
    *out = t;
    return AS_OK;
}

static int is_dir(const char *path)
{
    struct stat sb;
    return stat(path, &sb) == 0 && S_ISDIR(sb.st_mode);
}

const char *as_rules_default_dir(void)
{
#ifdef AS_RULES_DIR
    return AS_RULES_DIR;
#else
    return NULL;
#endif
}

as_status as_rules_load(const char *dir, as_rules **out, as_error *err)
{
    if (dir && dir[0])
        return as_rules_load_dir(dir, out, err);
    const char *env = getenv("ADDSITE_REACTIONS");
    if (env && env[0])
        return as_rules_load_dir(env, out, err);
    const char *def = as_rules_default_dir();
    if (def && is_dir(def))
        return as_rules_load_dir(def, out, err);
    return as_rules_load_embedded(out, err);
}

/* ---------------------------------------------------------------- queries */

int as_rules_count(const as_rules *t)
{
    return t ? t->n : 0;
}

const as_rule *as_rules_get(const as_rules *t, int i)
{
    if (!t || i < 0 || i >= t->n)
        return NULL;
    return &t->rules[i]->pub;
}

const as_rule *as_rules_find(const as_rules *t, const char *id)
{
    if (!t || !id)
        return NULL;
    for (int i = 0; i < t->n; i++)
        if (strcmp(t->rules[i]->pub.id, id) == 0)
            return &t->rules[i]->pub;
    return NULL;
}
