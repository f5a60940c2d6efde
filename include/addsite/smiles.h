/* addsite/smiles.h — the OpenSMILES-subset reader and reaction-SMILES splitter.
 * Owns: text → as_mol, errors with byte offsets. Must not: perceive chemistry (as_perceive
 * does that; as_smiles_parse runs both for convenience). */
#ifndef ADDSITE_SMILES_H
#define ADDSITE_SMILES_H

#include <stddef.h>

#include "addsite/mol.h"
#include "addsite/status.h"

#ifdef __cplusplus
extern "C" {
#endif

#define AS_SMILES_MAX_LEN 1000000   /* longest SMILES accepted, bytes */
#define AS_SMILES_MAX_ATOMS 200000  /* most atoms in one SMILES */

typedef struct as_smiles_opts {
    int keep_title;     /* 1 (default): text after whitespace becomes the title */
    int strict_title;   /* 0 (default): any text after whitespace is a title */
} as_smiles_opts;

/* Sets the documented defaults. */
void as_smiles_opts_init(as_smiles_opts *o);

/* Reads one molecule (may have '.'-separated components) from the first len bytes of text.
 * Stops at whitespace; the rest (trimmed) is the title. Returns AS_OK and a new molecule in
 * *out (caller frees with as_mol_free), or an error with err->offset at the offending byte
 * and *out = NULL. The molecule is not perceived. opts may be NULL for defaults. */
as_status as_smiles_read(const char *text, size_t len, const as_smiles_opts *opts,
                         as_mol **out, as_error *err);

/* as_smiles_read followed by as_perceive with all passes: the usual entry point. */
as_status as_smiles_parse(const char *text, size_t len, as_mol **out, as_error *err);

/* One reaction SMILES "reactants>agents>products [title]". Each role is one molecule that
 * may hold several components (NULL-free: an empty role is a molecule with no atoms). */
typedef struct as_reaction {
    as_mol *role[3];    /* 0 reactants, 1 agents, 2 products; owned */
    char *title;        /* owned, or NULL */
    int cx_stripped;    /* 1 when a trailing |...| CXSMILES block was removed */
} as_reaction;

enum { AS_ROLE_REACTANTS = 0, AS_ROLE_AGENTS = 1, AS_ROLE_PRODUCTS = 2 };

/* Reads a reaction SMILES; separators are found by a scanner that knows bracket atoms, so
 * '>' inside "[...]" or in "->" is not a role separator. Exactly two top-level '>' are
 * required (AS_ERR_REACTION otherwise, offset at the third '>' or at the end). Each role is
 * perceived. Offsets in errors are into the whole text. Returns new reaction in *out;
 * caller frees with as_reaction_free. */
as_status as_reaction_parse(const char *text, size_t len, as_reaction **out, as_error *err);
void as_reaction_free(as_reaction *r);

#ifdef __cplusplus
}
#endif
#endif
