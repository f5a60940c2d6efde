/* addsite/mol.h — the molecule graph: atoms, bonds and stereo records linked by index.
 * Owns: one allocation owner per molecule. Must not: know SMILES or chemistry rules.
 *
 * Memory: as_mol_new returns a new molecule; the caller frees it with as_mol_free. Every
 * pointer into a molecule (atoms, bonds, title) is valid until the next call that adds to
 * that molecule or frees it. Links between atoms, bonds and stereo records are int indices,
 * so a copy (as_mol_copy) needs no fix-ups and indices can be printed in messages. */
#ifndef ADDSITE_MOL_H
#define ADDSITE_MOL_H

#include <stddef.h>
#include <stdint.h>

#include "addsite/status.h"

#ifdef __cplusplus
extern "C" {
#endif

#define AS_MAX_DEGREE 12      /* most explicit neighbours one atom may have */
#define AS_IMPLICIT_H (-1)    /* a stereo neighbour slot held by an implicit/bracket H */

/* Bond orders. After as_perceive every bond holds a Kekulé order 1..3 in `order` and the
 * aromatic flag says whether it is part of an aromatic ring; before perception a bond read
 * as aromatic (lowercase pair or ':') holds AS_BOND_AROMATIC. */
enum { AS_BOND_SINGLE = 1, AS_BOND_DOUBLE = 2, AS_BOND_TRIPLE = 3, AS_BOND_QUADRUPLE = 4,
       AS_BOND_AROMATIC = 5 };

/* Tetrahedral parity as written in SMILES: looking from nbr[0], nbr[1..3] run anticlockwise
 * (AS_CCW, '@') or clockwise (AS_CW, '@@'). */
enum { AS_CCW = 1, AS_CW = 2 };

typedef struct as_atom {
    int elem;           /* atomic number; 0 for the '*' wildcard */
    int charge;         /* formal charge */
    int isotope;        /* mass number; -1 when unspecified (0 is a real value) */
    int hcount;         /* H written in brackets; -1 for organic-subset atoms (implicit) */
    int total_h;        /* hydrogens attached (bracket or implicit), set by as_perceive */
    int mapnum;         /* atom class / map number; 0 when none */
    int aromatic;       /* 1 when aromatic (as read before perception, as perceived after) */
    int bracket;        /* 1 when it was written in brackets */
    int ring_size;      /* smallest ring through the atom, 0 when acyclic (as_perceive;
                           AS_RING_SEARCH_MAX + 1 when larger than that) */
    int src_offset;     /* byte offset of the atom in the text it was read from, -1 if built */
    int degree;                    /* number of explicit neighbours */
    int nbr[AS_MAX_DEGREE];        /* neighbour atoms, in the order the bonds were made */
    int nbond[AS_MAX_DEGREE];      /* bond index to each neighbour, same order */
} as_atom;

typedef struct as_bond {
    int a, b;           /* atom indices; a was written first */
    int order;          /* AS_BOND_* */
    int aromatic;       /* 1 when part of an aromatic ring (after perception) */
    int ring_size;      /* smallest ring through the bond, 0 when acyclic (as_perceive;
                           AS_RING_SEARCH_MAX + 1 when larger than that) */
} as_bond;

/* A tetrahedral centre. nbr holds four neighbours in the reference order the parity refers
 * to; AS_IMPLICIT_H stands for the centre's single hydrogen (or lone pair on S/P/N+). */
typedef struct as_tetra {
    int center;
    int nbr[4];
    int parity;         /* AS_CCW or AS_CW */
} as_tetra;

/* Geometry of a double bond: ref_a is a neighbour of the bond's atom a, ref_b one of atom b;
 * cis = 1 when ref_a and ref_b stand on the same side. */
typedef struct as_dbstereo {
    int bond;
    int ref_a, ref_b;
    int cis;
} as_dbstereo;

typedef struct as_mol {
    as_atom *atoms;
    int natoms, cap_atoms;
    as_bond *bonds;
    int nbonds, cap_bonds;
    as_tetra *tetra;
    int ntetra, cap_tetra;
    as_dbstereo *dbs;
    int ndbs, cap_dbs;
    char *title;        /* text after the SMILES, or NULL; owned by the molecule */
    int perceived;      /* set by as_perceive; builders clear it */
    /* Smallest set of smallest rings, filled by as_perceive: ring r has atoms
     * ring_atoms[ring_start[r] .. ring_start[r+1]-1] in ring order. */
    int nrings;
    int *ring_start;
    int *ring_atoms;
    /* Bookkeeping of mol.c, never to be set by callers: which of the arrays above share the
     * molecule's own allocation (as_mol_new_sized, as_mol_copy) instead of one of their own. */
    unsigned inline_arrays;
    /* 1 while the ring data (ring_size of atoms and bonds, the ring list) is that of the
     * current graph: set by the ring pass of as_perceive, which then skips the search; kept
     * by edits that cannot change ring membership (bond orders, new atoms, a bond to an atom
     * without bonds, removing a bond that is in no ring), cleared by every other edit through
     * the functions below. Code that rewires atoms or bonds by hand must set it to 0. */
    int rings_known;
} as_mol;

/* Returns new empty molecule, or NULL when out of memory; caller frees with as_mol_free. */
as_mol *as_mol_new(void);
/* Returns new empty molecule with room for atoms atoms and bonds bonds in one allocation
 * (more may still be added), or NULL when out of memory; caller frees with as_mol_free. */
as_mol *as_mol_new_sized(int atoms, int bonds);
/* Frees m and everything it owns. NULL is a no-op. */
void as_mol_free(as_mol *m);
/* Returns new deep copy (one allocation, with room for a few more atoms and bonds); caller
 * frees with as_mol_free. NULL on out of memory. */
as_mol *as_mol_copy(const as_mol *m);

/* Appends an atom of element elem (all other fields at their "unset" values: charge 0,
 * isotope -1, hcount -1, src_offset -1). Returns its index, or -1 when out of memory. */
int as_mol_add_atom(as_mol *m, int elem);
/* Bonds atoms a and b with order; returns the bond index, or -1 when out of memory, when
 * a == b, when the bond exists already, or when an atom would exceed AS_MAX_DEGREE. */
int as_mol_add_bond(as_mol *m, int a, int b, int order);
/* Returns the index of the bond between a and b, or -1. */
int as_mol_bond_between(const as_mol *m, int a, int b);
/* Appends a tetrahedral record (copied); returns its index or -1 when out of memory. */
int as_mol_add_tetra(as_mol *m, const as_tetra *t);
/* Appends a double-bond geometry record (copied); returns its index or -1 on out of memory. */
int as_mol_add_dbstereo(as_mol *m, const as_dbstereo *d);
/* Index of the tetra record of atom a, or -1. */
int as_mol_find_tetra(const as_mol *m, int a);
/* Index of the double-bond record of bond b, or -1. */
int as_mol_find_dbstereo(const as_mol *m, int b);
/* Replaces the title with a copy of the first len bytes of text (NULL clears it). */
as_status as_mol_set_title(as_mol *m, const char *text, size_t len);

/* Removes atom a and its bonds, renumbering atoms and bonds above it; stereo records that
 * referred to it are dropped (a tetra record whose neighbour it was keeps the slot as
 * AS_IMPLICIT_H only when the removed atom was a hydrogen). */
as_status as_mol_remove_atom(as_mol *m, int a);
/* Changes the order of bond b; stereo records of that bond are dropped. */
void as_mol_set_bond_order(as_mol *m, int b, int order);
/* Removes bond b (renumbering bonds above it) and drops its stereo record. */
as_status as_mol_remove_bond(as_mol *m, int b);

/* Replaces the ring list (ring_start, ring_atoms, nrings) with the given arrays, taking
 * ownership of both (malloc'ed; NULL with nrings 0 clears it). */
void as_mol_set_rings(as_mol *m, int nrings, int *ring_start, int *ring_atoms);

/* Labels connected components 0.. in comp[natoms] (caller-sized); returns how many. */
int as_mol_components(const as_mol *m, int *comp);
/* Returns new molecule holding the atoms with comp[i] == which, in order; stereo, title
 * not copied. NULL on out of memory. */
as_mol *as_mol_extract(const as_mol *m, const int *comp, int which);
/* Appends a copy of src into dst (as another component); returns the offset added to src's
 * atom indices, or -1 on out of memory. */
int as_mol_append(as_mol *dst, const as_mol *src);

/* Sum of bond orders at atom a, aromatic bonds counting 1 (before perception) — for
 * valence checks; after perception Kekulé orders are used. */
int as_mol_bond_order_sum(const as_mol *m, int a);

/* Element symbol for an atomic number ("C", "Cl", "*"); NULL when out of range. */
const char *as_element_symbol(int elem);
/* Atomic number for a symbol of len bytes (case-sensitive, "Cl"), or -1. */
int as_element_number(const char *sym, size_t len);
/* Standard atomic weight (IUPAC 2013 abridged), 0.0 when unknown. */
double as_element_mass(int elem);

/* Molecular formula in Hill order ("C3H7Br"), hydrogens included (requires perception),
 * charge appended as "+"/"-n". Writes at most cap bytes including NUL; returns AS_OK or
 * AS_ERR_LIMIT when it did not fit. */
as_status as_mol_formula(const as_mol *m, char *buf, size_t cap);

/* Consistency check of indices, adjacency and stereo records (debug builds call it after
 * every transform). Returns AS_OK or AS_ERR_ARG with a message in err. */
as_status as_mol_check(const as_mol *m, as_error *err);

#ifdef __cplusplus
}
#endif
#endif
