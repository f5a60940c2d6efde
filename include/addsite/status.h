/* addsite/status.h — status codes and the caller-owned error record shared by every module.
 * Owns: the as_status enum and as_error. Must not: keep any global "last error". */
#ifndef ADDSITE_STATUS_H
#define ADDSITE_STATUS_H

#ifdef __cplusplus
extern "C" {
#endif

/* ORDER STATUS: keep in step with the name table in lib/status.c. */
typedef enum as_status {
    AS_OK = 0,
    AS_ERR_NOMEM,       /* allocation failed */
    AS_ERR_SYNTAX,      /* SMILES or record syntax */
    AS_ERR_RING,        /* ring-closure bond problem */
    AS_ERR_BRANCH,      /* unbalanced parentheses */
    AS_ERR_ELEMENT,     /* unknown element symbol */
    AS_ERR_CHARGE,      /* charge out of range or malformed */
    AS_ERR_VALENCE,     /* hypervalent atom */
    AS_ERR_AROMATIC,    /* aromatic atom outside a ring or not kekulisable */
    AS_ERR_STEREO,      /* conflicting or impossible stereo marks */
    AS_ERR_UNSUPPORTED, /* a valid feature we refuse by name */
    AS_ERR_LIMIT,       /* documented size limit exceeded */
    AS_ERR_REACTION,    /* reaction SMILES structure (number of '>') */
    AS_ERR_IO,          /* file could not be read or written */
    AS_ERR_RULE,        /* malformed reaction rule file */
    AS_ERR_REAGENT,     /* reagents not recognised or ambiguous */
    AS_ERR_NO_SITE,     /* no non-aromatic C=C to react */
    AS_ERR_ARG,         /* bad argument from the caller */
    AS_ERR_EMPTY,       /* nothing to work on (blank input) */
    AS_ERR_ENCODING,    /* bad bytes: NUL, invalid UTF-8 where text is needed */
    AS_STATUS_COUNT
} as_status;

/* Filled by a failing call; every field has a "not applicable" value. */
typedef struct as_error {
    as_status code;  /* AS_OK when nothing failed */
    long offset;     /* 0-based byte offset into the SMILES or record, -1 when none */
    long line;       /* 1-based line in a file, 0 when none */
    long column;     /* 1-based column in a file, 0 when none */
    int atom;        /* 0-based atom index, -1 when none */
    char msg[256];   /* a sentence a chemist understands, naming the token */
} as_error;

/* Resets err to "no error". err may be NULL. */
void as_error_clear(as_error *err);

/* Stable short name of a status code ("syntax", "ring", ...); never NULL. */
const char *as_status_name(as_status code);

#ifdef __cplusplus
}
#endif
#endif
