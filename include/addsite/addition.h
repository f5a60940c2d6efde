/* addsite/addition.h — applying one rule variant to one C=C site: the candidate products.
 * Owns: placing the added atoms, regiochemistry per the rule's regio mode, syn/anti stereo
 * from E/Z or ring geometry (as_tetra records), 1,2-H and 1,2-alkyl shifts where the rule
 * allows them, conjugate and 1,4-addition, ozonolysis cleavage.
 * Must not: do I/O, or edit its input (every product is a new molecule; atom indices of the
 * substrate are kept in every product, added atoms come after them).
 *
 * Memory: as_addition_run returns a new list; the caller frees it with as_adducts_free,
 * which frees every product molecule (and kept ranking) in it. Products borrow nothing from
 * the inputs. */
#ifndef ADDSITE_ADDITION_H
#define ADDSITE_ADDITION_H

#include "addsite/canon.h"
#include "addsite/mol.h"
#include "addsite/rules.h"
#include "addsite/sites.h"
#include "addsite/status.h"

#ifdef __cplusplus
extern "C" {
#endif

/* How a candidate product arose. */
typedef enum as_path {
    AS_PATH_DIRECT = 0,   /* 1,2-addition across the C=C */
    AS_PATH_SHIFT_H,      /* the cation moved by a 1,2-hydride shift before capture */
    AS_PATH_SHIFT_ALKYL,  /* the cation moved by a 1,2-alkyl shift before capture */
    AS_PATH_DIENE_14,     /* 1,4-adduct of a conjugated diene (the C=C moved) */
    AS_PATH_CONJUGATE,    /* conjugate addition to an acceptor-conjugated C=C */
    AS_PATH_CLEAVE        /* the C=C was cut (ozonolysis) */
} as_path;

/* The stereochemical description of a product. */
typedef enum as_stereo {
    AS_STEREO_NONE = 0,      /* no stereocentre formed and none in the substrate */
    AS_STEREO_RACEMIC,       /* chiral product from an achiral substrate: both enantiomers */
    AS_STEREO_MESO,          /* the relative configuration makes the product achiral */
    AS_STEREO_SINGLE,        /* one stereoisomer (enantiopure substrate, no new centre) */
    AS_STEREO_DIASTEREOMERS  /* new centres without full control: a diastereomer mixture */
} as_stereo;

/* Stable word for a label: "none", "racemic", "meso", "single", "diastereomers". */
const char *as_stereo_name(as_stereo s);

/* One candidate product. */
typedef struct as_adduct {
    as_mol *mol;          /* the product, perceived, with @/@@ records where relative
                             configuration is known; owned by the list */
    int site;             /* index of the site in the as_sites list it came from */
    as_path path;
    int first_atom;       /* substrate atom that took the rule's `first` group, -1 if none */
    int second_atom;      /* atom that took `second` (after a shift or 1,4: the new one) */
    int first_group;      /* product atom index of the added first group, -1 for H/none */
    int second_group;     /* product atom index of the added second group, -1 for H/none */
    int preferred;        /* 1 when this orientation is the one the regio mode picks */
    int ends_alike;       /* 1 when the scores cannot tell the two ends apart */
    double gap;           /* kcal/mol by which this orientation's intermediate (or, for
                             boranes, transition state estimate) is worse than the
                             preferred one; 0 for the preferred */
    double score_first;   /* the score that decided: HIA, BDE+attack term, or steric
                             term, for the cation/radical/boron end of this orientation */
    int cation_atom;      /* cation or radical centre before capture (shift: where it
                             started), -1 when none */
    int shift_to;         /* shift paths: carbon the cation moved to, else -1 */
    int migrant;          /* alkyl shift: the migrating carbon, else -1 */
    double shift_gain;    /* kcal/mol: HIA gained by the shift (positive) */
    int rearranged;       /* 1 for the shift paths */
    as_stereo stereo;
    int new_centres;      /* stereocentres created by the addition */
    int cis_trans;        /* 1 when the addition leaves two ring atoms whose substituents
                             can be cis or trans to each other without either being a
                             stereocentre (4-substituted cyclohexyl products): stereo is
                             then "diastereomers" with no new centre */
    int marked;           /* 1 when their relative configuration is written with @/@@ */
    int meso;             /* 1 when the product is achiral although it has stereocentres */
    int exo;              /* 1 when the groups were placed on the exo face of a
                             norbornene-type C=C (site face AS_FACE_EXO, rule facial "exo") */
    as_canon_ranking *ranking; /* mol's refined canonical ranking, taken when its
                             stereocentres were decided (before the new @/@@ records, which
                             it does not depend on), or NULL; owned, freed with the adduct.
                             Pass it to as_canon_smiles_ranked to write mol without ranking
                             it again (it is checked against mol there) */
} as_adduct;

typedef struct as_adducts {
    int n, cap;
    as_adduct *v;
} as_adducts;

/* Options for as_addition_run; set defaults with as_addition_opts_init. */
typedef struct as_addition_opts {
    int allow_shifts;     /* 1 (default): 1,2-shifts where the rule says shifts = 1 */
    int allow_conjugate;  /* 1 (default): 1,4/conjugate paths where the rule says so */
    int tie_kcal_x100;    /* scores closer than this /100 kcal/mol count as alike
                             (default 50 = 0.5 kcal/mol) */
    double temp_c;        /* reaction temperature, °C; NAN (default) when not known. Radical
                             addition to a ring C=C at or below -70 °C is anti (see
                             lib/addition.c) */
} as_addition_opts;

void as_addition_opts_init(as_addition_opts *o);

/* Builds every candidate product of rule/variant at site `site` of the perceived substrate
 * sub (sites from as_sites_find on sub): both orientations for regio modes that choose an
 * end (the preferred first), shifted and 1,4/conjugate products where they apply. Returns
 * AS_OK and a new list in *out (caller frees with as_adducts_free); opts may be NULL.
 * AS_ERR_RULE when a group of the variant is not readable SMILES. */
as_status as_addition_run(const as_mol *sub, const as_sites *sites, int site,
                          const as_rule *rule, const as_rule_variant *variant,
                          const as_addition_opts *opts, as_adducts **out, as_error *err);

/* Places variant's groups on one orientation of one site: `first` on carbon
 * sites->site[site].end[first_end].atom, `second` on the other end (or a bridge / the same
 * group on both ends for AS_REGIO_NONE; first_end is then ignored), with the stereo mode
 * `mode`. Fills *out (its mol is new; free the list entry with as_adduct_clear). */
as_status as_addition_place(const as_mol *sub, const as_sites *sites, int site, int first_end,
                            const as_rule *rule, const as_rule_variant *variant,
                            as_addmode mode, as_adduct *out, as_error *err);

/* Frees what one adduct owns (its molecule and ranking) and zeroes it. */
void as_adduct_clear(as_adduct *a);
void as_adducts_free(as_adducts *l);

#ifdef __cplusplus
}
#endif
#endif
