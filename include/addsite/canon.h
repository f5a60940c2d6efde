/* addsite/canon.h — canonical atom ranking and the SMILES writer.
 * Owns: CANON/CANGEN-style ranking with tie breaking, SMILES output with @/@@ and / \.
 * Must not: depend on the rule table. */
#ifndef ADDSITE_CANON_H
#define ADDSITE_CANON_H

#include <stddef.h>

#include "addsite/mol.h"
#include "addsite/status.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef struct as_canon_opts {
    int stereo;       /* 1 (default): write @/@@ and / \ for real stereo elements */
    int atom_maps;    /* 1 (default): write atom classes; 0 drops them (identity checks) */
    int isotopes;     /* 1 (default): write isotopes */
} as_canon_opts;

void as_canon_opts_init(as_canon_opts *o);

/* Writes the canonical SMILES of a perceived molecule. Returns AS_OK and a new
 * NUL-terminated string in *out (caller frees with free()). opts may be NULL. */
as_status as_canon_smiles(const as_mol *m, const as_canon_opts *opts, char **out,
                          as_error *err);

/* Canonical SMILES straight from SMILES text (read, perceive, write). *out as above. */
as_status as_canon_from_text(const char *text, size_t len, const as_canon_opts *opts,
                             char **out, as_error *err);

/* Symmetry classes of a perceived molecule: cls[i] equal for atoms that the graph invariants
 * (without tie breaking) cannot tell apart; 0-based, dense. Caller sizes cls[natoms]. */
as_status as_canon_classes(const as_mol *m, int *cls, as_error *err);

#ifdef __cplusplus
}
#endif
#endif
