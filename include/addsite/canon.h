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

/* A molecule's refined canonical partition (the ranking before ties are broken), kept so
 * that the molecule's SMILES can be written later without ranking it a second time. It
 * depends only on the graph (atoms, bonds, charges, H counts, isotopes, map numbers,
 * aromatic flags, rings), not on stereo records, so records may be added or removed in
 * between. Opaque; one per molecule, not shared. */
typedef struct as_canon_ranking as_canon_ranking;

/* as_canon_classes, and in *ranking a new ranking of m (caller frees with
 * as_canon_ranking_free), or NULL when writing m would not reuse one (m is empty, in
 * several pieces, or has explicit hydrogens the writer folds). ranking may be NULL. */
as_status as_canon_classes_keep(const as_mol *m, int *cls, as_canon_ranking **ranking,
                                as_error *err);

/* 1 when r (may be NULL) was kept for a molecule with m's graph, in atom order, and opts
 * (may be NULL: defaults) rank alike (atom_maps as when it was kept; the stereo and isotope
 * options only change what is written). Costs one pass over the atoms and bonds. */
int as_canon_ranking_fits(const as_canon_ranking *r, const as_mol *m,
                          const as_canon_opts *opts);

/* as_canon_smiles, starting from r when it fits m (as_canon_ranking_fits); else exactly
 * as_canon_smiles. The string is the same either way. Borrows r. */
as_status as_canon_smiles_ranked(const as_mol *m, const as_canon_opts *opts,
                                 const as_canon_ranking *r, char **out, as_error *err);

void as_canon_ranking_free(as_canon_ranking *r);

#ifdef __cplusplus
}
#endif
#endif
