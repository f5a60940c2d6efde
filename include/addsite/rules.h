/* addsite/rules.h — the reaction rule table: reactions/<id>.json loaded once, reagents recognised.
 * Owns: loading and validating rule files (cJSON), compiled reagent patterns (PCRE2), reagent
 * recognition from text and from agent SMILES. Must not: build molecules.
 *
 * Memory: as_rules_load* return a new table; the caller frees it with as_rules_free. Every
 * as_rule pointer and string reached from the table borrows from it and stays valid until
 * as_rules_free. A loaded table is read-only and may be shared by threads. */
#ifndef ADDSITE_RULES_H
#define ADDSITE_RULES_H

#include <stddef.h>

#include "addsite/mol.h"
#include "addsite/status.h"

#ifdef __cplusplus
extern "C" {
#endif

/* How the rule picks the carbon that takes the `first` group (see as_rule_variant). */
typedef enum as_regio {
    AS_REGIO_CATION = 0,  /* first (H+, X+, Hg) to the end whose partner is the better cation
                             site; second (nucleophile) to that cation carbon. Markovnikov. */
    AS_REGIO_RADICAL,     /* first (Br•) to the end whose partner is the better radical site */
    AS_REGIO_BORANE,      /* first (B, later OH) to the less hindered, more electron-poor end */
    AS_REGIO_NONE,        /* the same group (or a bridge) goes to both ends: X2, diol, H2 */
    AS_REGIO_CLEAVE       /* the C=C is cut (ozonolysis) */
} as_regio;

typedef enum as_addmode {
    AS_ADD_NONE = 0,      /* no stereo control (free cation, radical): both faces */
    AS_ADD_SYN,           /* both groups from one face */
    AS_ADD_ANTI           /* groups from opposite faces */
} as_addmode;

/* One reagent set the rule knows (e.g. hx has HCl, HBr, HI). Groups are SMILES fragments of
 * the final product (after any work-up), bonded through their first atom; "[H]" is a
 * hydrogen. */
typedef struct as_rule_variant {
    const char *name;     /* "HBr", "Br2/H2O", "mCPBA" */
    const char *first;    /* group on the carbon the regio mode selects, or NULL */
    const char *second;   /* group on the partner carbon, or NULL */
    const char *bridge;   /* one atom bonded to both carbons (epoxide "O"), or NULL */
    const char *workup;   /* AS_REGIO_CLEAVE only: "reductive" or "oxidative"; else NULL */
    const char *reagent_smiles; /* the atoms added, as SMILES ("Br", "O", "[H][H]") for the
                                   formula check; may be NULL */
    int nagents;
    const char *const *agents;  /* agent sets recognised in reaction SMILES, as written in the
                                   rule file ("B.C1CCOC1"); nagents entries */
} as_rule_variant;

/* A published selectivity figure: for substrates of class `cls` the product with `first` on
 * the `first_end` carbon ("less_substituted" or "more_substituted") forms in percent share. */
typedef struct as_rule_figure {
    const char *cls;      /* substrate class: "monosubstituted", "1,1-disubstituted",
                             "cis-1,2-disubstituted", "trans-1,2-disubstituted",
                             "trisubstituted", "tetrasubstituted", "styrene",
                             "styrene:p-OMe", "styrene:p-Cl", ... */
    const char *first_end;/* "less_substituted" | "more_substituted" */
    double percent;       /* share of that regioisomer, 0..100 */
    const char *example;  /* the substrate measured, SMILES, or NULL */
    const char *source;   /* citation, with "(from memory)" where not re-checked */
} as_rule_figure;

typedef struct as_rule {
    const char *id;           /* "hydroboration" */
    const char *title;        /* "Hydroboration–oxidation (BH3, then H2O2/NaOH)" */
    const char *summary;      /* one sentence on what it does */
    as_regio regio;
    as_addmode stereo;
    const char *stereo_source;/* citation for the stereo outcome */
    int shifts;               /* 1: the free cation may undergo 1,2-H / 1,2-alkyl shifts */
    int conjugate;            /* 1: 1,4-addition to dienes / acceptor-conjugated alkenes */
    double bulk;              /* AS_REGIO_BORANE: steric demand, 1.0 = BH3 */
    const char *intermediate; /* "carbocation", "bromine radical adduct", "mercurinium ion",
                                 "four-centre borane transition state", ... */
    const char *conditions;   /* typical conditions as text */
    int nvariants;
    const as_rule_variant *variants;
    int nfigures;
    const as_rule_figure *figures;
    int nhazards;
    const char *const *hazards;   /* one caution sentence each */
    const char *file;         /* file it was loaded from ("<embedded>/hx.json") */
    const char *facial;       /* C=C in the two-carbon bridge of a bicyclo[2.2.1] system:
                                 "exo" (the groups arrive from the exo face, syn to the
                                 one-carbon bridge), "not_predicted" (facial_source says why),
                                 or NULL (not stated: not predicted) */
    const char *facial_source;/* citation for `facial`, or the reason it is not predicted */
} as_rule;

typedef struct as_rules as_rules;   /* opaque table */

/* Loads every *.json in dir (sorted by name). Returns new table in *out or an error naming the
 * file, the JSON path and the reason (err->line/column for syntax errors). */
as_status as_rules_load_dir(const char *dir, as_rules **out, as_error *err);
/* Loads the table compiled into the library (generated from reactions/ at build time). */
as_status as_rules_load_embedded(as_rules **out, as_error *err);
/* Finds the table in fixed order: dir when not NULL, else $ADDSITE_REACTIONS, else the
 * installed default directory when it exists, else the embedded copy. */
as_status as_rules_load(const char *dir, as_rules **out, as_error *err);
/* Validates one rule file held in memory (name is used in messages). Appends to *tab (a new
 * table is made when *tab is NULL). */
as_status as_rules_add_json(as_rules **tab, const char *name, const char *json, size_t len,
                            as_error *err);
void as_rules_free(as_rules *t);

int as_rules_count(const as_rules *t);
const as_rule *as_rules_get(const as_rules *t, int i);
/* Rule by id, or NULL. */
const as_rule *as_rules_find(const as_rules *t, const char *id);

/* What a reagent text or agent set was recognised as. */
typedef struct as_reagent_match {
    const as_rule *rule;
    const as_rule_variant *variant;
    double temp_c;        /* temperature found in the text (°C), or NAN when none */
    int has_temp;         /* 1 when temp_c holds a value */
    double equiv;         /* equivalents found in the text ("1 equiv", "2.2 eq"), 0 when none */
} as_reagent_match;

/* Recognises reagent text as chemists write it ("HBr, ROOR", "1) BH3·THF 2) H2O2, NaOH",
 * Unicode middle dot and subscript digits included). AS_ERR_REAGENT when nothing or more
 * than one rule of equal priority matches; the message lists what the table recognises or
 * the rules that compete. */
as_status as_rules_recognise(const as_rules *t, const char *text, size_t len,
                             as_reagent_match *out, as_error *err);
/* Recognises a set of agent molecules (the middle part of a reaction SMILES, or reactant
 * components other than the alkene), compared by canonical SMILES without atom maps. */
as_status as_rules_recognise_agents(const as_rules *t, const as_mol *agents,
                                    as_reagent_match *out, as_error *err);

#ifdef __cplusplus
}
#endif
#endif
