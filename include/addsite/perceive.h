/* addsite/perceive.h — chemical perception as ordered, selectable passes.
 * Owns: implicit H, valence check, rings (SSSR), Hückel aromaticity, stereo clean-up.
 * Must not: print anything. */
#ifndef ADDSITE_PERCEIVE_H
#define ADDSITE_PERCEIVE_H

#include "addsite/mol.h"
#include "addsite/status.h"

#ifdef __cplusplus
extern "C" {
#endif

/* Largest ring, in atoms, whose exact size the ring pass finds. A ring bond whose smallest
 * ring is larger gets ring_size AS_RING_SEARCH_MAX + 1 and its ring no SSSR entry (keeps
 * perception of a 100,000-atom macrocycle near-linear; real macrocycles are far smaller). */
#define AS_RING_SEARCH_MAX 1024

/* Pass bits, run in this order. */
enum {
    AS_PASS_HYDROGENS = 1 << 0,  /* implicit H by the OpenSMILES default valences */
    AS_PASS_VALENCE   = 1 << 1,  /* refuse hypervalent atoms */
    AS_PASS_RINGS     = 1 << 2,  /* SSSR, ring sizes of atoms and bonds */
    AS_PASS_KEKULE    = 1 << 3,  /* lowercase input → Kekulé orders (refuse if impossible) */
    AS_PASS_AROMATIC  = 1 << 4,  /* Hückel 4n+2 over rings and fused systems */
    AS_PASS_STEREO    = 1 << 5,  /* drop stereo records that cannot be real */
    AS_PASS_ALL       = 0x3f
};

/* Runs the selected passes on m. On failure returns the code, sets err (offset = the atom's
 * source offset, atom = its index) and, when failed_pass is not NULL, the bit of the pass
 * that failed. */
as_status as_perceive(as_mol *m, unsigned passes, unsigned *failed_pass, as_error *err);

/* First atom that perception accepted but a chemist would query: a neutral N written with
 * four single bonds (N(C)(C)(C)C reads as NH with valence 5: probably a missing charge,
 * [N+]). Returns its index, or -1 when there is none. */
int as_perceive_suspect_atom(const as_mol *m);

/* Default valence list lookup (OpenSMILES): the smallest normal valence of elem that is
 * >= used, or -1 when used exceeds them all or elem is outside the organic subset. */
int as_default_valence(int elem, int used);

#ifdef __cplusplus
}
#endif
#endif
