/* addsite/sites.h — the C=C sites of a perceived molecule and the scores of their carbons.
 * Owns: finding non-aromatic C=C bonds, describing each end carbon (substituents, donors,
 * acceptors, aryl groups with their ring substituents, conjugation) and scoring it.
 * Must not: know reagents or rules (addition and outcome decide what the scores mean).
 *
 * Scores are physical estimates in kcal/mol so a rationale can quote them:
 *  - cation_hia: gas-phase hydride ion affinity of the carbocation centred on this carbon,
 *    as it would be after an electrophile bonds to the partner carbon (lower = more stable);
 *  - radical_bde: C–H bond dissociation energy of the matching C–H bond, i.e. the stability
 *    of the radical on this carbon after a radical bonds to the partner (lower = more stable);
 *  - steric: steric demand of the substituents on this carbon, in methyl equivalents (a
 *    unitless number, used for the borane end).
 * Each constant and its source is listed in lib/sites.c beside its table.
 *
 * Memory: as_sites_find returns a new list; the caller frees it with as_sites_free. */
#ifndef ADDSITE_SITES_H
#define ADDSITE_SITES_H

#include "addsite/mol.h"
#include "addsite/status.h"

#ifdef __cplusplus
extern "C" {
#endif

/* Kinds of electron acceptor bonded to an alkene carbon (the first one found is kept). */
typedef enum as_acceptor {
    AS_ACC_NONE = 0,
    AS_ACC_CARBONYL,      /* C(=O): aldehyde, ketone, acid, ester, amide */
    AS_ACC_NITRILE,       /* C#N */
    AS_ACC_NITRO,         /* N(=O)=O or [N+](=O)[O-] */
    AS_ACC_PERFLUORO,     /* CF3, CF2R: a carbon carrying two or more F */
    AS_ACC_SULFONYL       /* S(=O)(=O) */
} as_acceptor;

/* Geometry of the reacting C=C as far as the input tells it. */
typedef enum as_geometry {
    AS_GEOM_NONE = 0,     /* one end carries two identical groups or H2: no E/Z */
    AS_GEOM_UNKNOWN,      /* could be E or Z, the input does not say */
    AS_GEOM_CIS,          /* from '/' '\' marks: the first heavy substituents are cis */
    AS_GEOM_TRANS,        /*   ... trans */
    AS_GEOM_RING          /* C=C in a ring of fewer than 8 atoms: the ring bonds are cis */
} as_geometry;

/* Whether the ring system around a C=C makes one face clearly more open. */
typedef enum as_face {
    AS_FACE_NONE = 0,     /* not in a bridged ring system: no facial question is asked */
    AS_FACE_EXO,          /* the two-carbon bridge of a bicyclo[2.2.1] system whose
                             one-carbon bridge carries only H (norbornene type): the exo face,
                             syn to the one-carbon bridge, is the open one */
    AS_FACE_UNCLEAR       /* a bridge of another bridged bicyclic system (bicyclo[2.2.2],
                             [3.2.1], a substituted one-carbon bridge, ...): not predicted */
} as_face;

/* One end carbon of a C=C. */
typedef struct as_site_end {
    int atom;             /* 0-based atom index (1-based position in messages) */
    int n_h;              /* hydrogens on it */
    int n_heavy;          /* heavy-atom substituents other than the partner carbon */
    int n_alkyl;          /* sp3 carbon substituents */
    int n_aryl;           /* aromatic carbon substituents */
    double sigma_plus;    /* summed Brown–Okamoto σ+ of the ring substituents (meta, para) */
    char aryl_note[48];   /* ring substituents found, e.g. "p-OMe", "" when none */
    int vinyl_atom;       /* carbon of another C=C bonded here (conjugated diene), or -1 */
    int donor_elem;       /* 8, 7 or 16 when an α O/N/S with a lone pair is bonded, else 0 */
    int donor_atom;       /* that heteroatom, or -1 */
    as_acceptor acceptor; /* acceptor bonded to this carbon, AS_ACC_NONE when none */
    int acceptor_atom;    /* its first atom, or -1 */
    int halogen;          /* atomic number of a halogen on this carbon, 0 when none */
    int allylic_halide;   /* 1 when an sp3 neighbour carries Cl, Br or I */
    double cation_hia;    /* kcal/mol, see the file comment */
    double radical_bde;   /* kcal/mol, see the file comment */
    double steric;        /* methyl equivalents */
    const char *cation_kind;  /* "primary", "secondary", "tertiary", "benzylic", "allylic",
                                 "oxocarbenium", "iminium", "methyl" — for rationales */
} as_site_end;

/* One non-aromatic C=C. */
typedef struct as_site {
    int bond;             /* bond index */
    as_site_end end[2];   /* end[0].atom < end[1].atom */
    int ring_size;        /* smallest ring through the C=C, 0 when acyclic */
    as_geometry geometry;
    int conj_site;        /* index of the site it is conjugated with (diene), or -1 */
    int acceptor_end;     /* 0/1: the end bearing an acceptor (α,β-unsaturated), -1 none */
    int n_subst;          /* heavy substituents on both ends together (1 = monosubstituted) */
    char cls[48];         /* substitution class: "monosubstituted", "1,1-disubstituted",
                             "cis-1,2-disubstituted", "trans-1,2-disubstituted",
                             "1,2-disubstituted", "trisubstituted", "tetrasubstituted",
                             "ethylene"; styrenes "styrene" or "styrene:p-OMe" */
    as_face face;         /* facial picture of a C=C that bridges two bridgeheads */
    int bridgehead[2];    /* the bridgehead bonded to end[k].atom, or -1 (face NONE) */
    int short_bridge[2];  /* bridgehead[k]'s neighbour in the shortest other bridge, -1 */
    int long_bridge[2];   /* bridgehead[k]'s neighbour in the longer other bridge, -1 */
    int bridge_len[2];    /* atoms in the shortest and the longer other bridge (1 and 2 for
                             norbornene: bicyclo[2.2.1]); 0 when face is NONE */
} as_site;

typedef struct as_sites {
    int n;
    as_site *site;
} as_sites;

/* Finds every C=C between two non-aromatic carbons of a perceived molecule (as_perceive
 * run) and scores both ends. Zero sites is not an error here (n = 0). Returns AS_OK and a
 * new list in *out; caller frees with as_sites_free. AS_ERR_ARG when m is not perceived. */
as_status as_sites_find(const as_mol *m, as_sites **out, as_error *err);
void as_sites_free(as_sites *s);

/* Estimated hydride ion affinity (kcal/mol) of a carbocation on carbon `center` of m, as if
 * center were sp2 with its present neighbours; the atom `ignore` (or -1) is left out (a
 * migrating group) and the atom `sat` (or -1) counts as a saturated alkyl carbon even if it
 * is doubly bonded now (the partner carbon that took the electrophile). Lower is more
 * stable. `kind` (may be NULL) receives a word for it ("secondary", "benzylic", ...),
 * a static string. */
double as_sites_cation_hia(const as_mol *m, int center, int ignore, int sat,
                           const char **kind);
/* Estimated C–H bond dissociation energy (kcal/mol) for a radical on `center`; ignore and
 * sat as for as_sites_cation_hia. */
double as_sites_radical_bde(const as_mol *m, int center, int ignore, int sat);

#ifdef __cplusplus
}
#endif
#endif
