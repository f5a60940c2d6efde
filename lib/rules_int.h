/* rules_int.h — rule-table internals shared by lib/rules.c and lib/rules_recog.c (never
 * installed).
 * Owns: the layout of the opaque as_rules table, the embedded copy of the rule files.
 * Must not: be included by the CLI or by other modules' public headers. */
#ifndef ADDSITE_RULES_INT_H
#define ADDSITE_RULES_INT_H

#define PCRE2_CODE_UNIT_WIDTH 8
#include <pcre2.h>
#include <stddef.h>

#include "addsite/rules.h"
#include "status_int.h"

/* Longest reagent text as_rules_recognise accepts, bytes (a reagent column is a line, not a
 * document; the limit keeps matching time bounded). */
#define AS_REAGENT_TEXT_MAX 4096

/* One rule file compiled into the library by cmake/rules_embed.cmake (the generated
 * rules_embedded.c defines the array, sorted by name). */
typedef struct as_rules_blob {
    const char *name;     /* "hx.json" */
    const char *text;     /* the file's bytes, NUL-terminated */
    size_t len;           /* bytes without the NUL */
} as_rules_blob;

AS_INTERNAL extern const as_rules_blob as_rules_embedded[];
AS_INTERNAL extern const int as_rules_nembedded;

/* One agent set of a variant: the canonical SMILES of each component (no atom maps). The
 * set matches when every component is among the agents given. */
typedef struct as_agent_set {
    int n;
    char **canon;         /* owned strings */
    const char *text;     /* the set as written in the file (borrows the JSON document) */
} as_agent_set;

/* Matching data of one variant, parallel to as_rule.variants. */
typedef struct as_variant_int {
    pcre2_code **pats;    /* any of them recognises the variant */
    int npats;
    pcre2_code **unless;  /* any of them vetoes the variant */
    int nunless;
    as_agent_set *sets;
    int nsets;
    const char **set_texts;   /* owned array, strings borrow the JSON document */
} as_variant_int;

/* A near miss: text that names the rule's reagent but not enough of it to pick a product. */
typedef struct as_rule_hint {
    pcre2_code *re;
    const char *msg;      /* borrows the JSON document */
} as_rule_hint;

typedef struct as_rule_int {
    as_rule pub;          /* must stay first: as_rule pointers handed out point here */
    int priority;         /* higher wins when several rules recognise one text */
    pcre2_code **unless;  /* rule-level vetoes */
    int nunless;
    as_rule_hint *hints;
    int nhints;
    as_variant_int *vi;   /* nvariants entries */
    as_rule_variant *vars;
    as_rule_figure *figs;
    const char **haz;
    void *doc;            /* the cJSON document every borrowed string lives in */
    char *file;           /* owned copy of the file name */
} as_rule_int;

struct as_rules {
    as_rule_int **rules;  /* each allocated separately so pointers survive appends */
    int n, cap;
    pcre2_code *temp_re;  /* temperature in normalised text */
    pcre2_code *equiv_re; /* equivalents in normalised text */
};

/* Normalises reagent text for matching: Unicode subscript digits → ASCII digits, middle dot
 * and bullet operators → '.', dashes and minus signs → '-', ℃ → °C, whitespace runs → one
 * space, trimmed. Returns new NUL-terminated string in *out (caller frees with free()).
 * AS_ERR_ENCODING (offset = byte) for NUL bytes or invalid UTF-8, AS_ERR_EMPTY when nothing
 * is left. */
AS_INTERNAL as_status as_rules_normalise(const char *text, size_t len, char **out,
                                         as_error *err);

/* Canonical SMILES of each component of the SMILES text (atom maps and stereo marks
 * dropped): new array of new strings in *parts (caller frees each and the array), *n set.
 * Errors are those of the SMILES reader (err->offset into text). */
AS_INTERNAL as_status as_rules_canon_parts(const char *text, size_t len, char ***parts, int *n,
                                           as_error *err);

/* The installed rule directory compiled in (AS_RULES_DIR), or NULL when none was set. */
AS_INTERNAL const char *as_rules_default_dir(void);

/* Compiles the temperature and equivalents patterns into t (called once when a table is
 * made). */
AS_INTERNAL as_status as_rules_init_extras(as_rules *t, as_error *err);

#endif
