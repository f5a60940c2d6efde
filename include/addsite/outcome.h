/* addsite/outcome.h — one prediction: ranked products, shares, stereo, rationale, cautions.
 * Owns: choosing which C=C reacts (per rule, per equivalent), turning candidate adducts
 * into ranked products with shares (published figures where the substrate class matches,
 * else a stated model estimate), rationale sentences, cautions and the JSON rendering.
 * Must not: parse user input (SMILES and reagent text are read by the caller).
 *
 * Memory: as_predict returns a new outcome; the caller frees it with as_outcome_free. The
 * outcome borrows the rule, variant and hazard strings from the rule table, which must
 * outlive it; everything else (SMILES, molecules, sentences) is owned by the outcome. */
#ifndef ADDSITE_OUTCOME_H
#define ADDSITE_OUTCOME_H

#include "addsite/addition.h"
#include "addsite/mol.h"
#include "addsite/rules.h"
#include "addsite/sites.h"
#include "addsite/status.h"

#ifdef __cplusplus
extern "C" {
#endif

/* Options for as_predict; as_predict_opts_init sets the defaults. */
typedef struct as_predict_opts {
    double equiv;         /* equivalents of reagent per molecule; 0 (default): the number
                             found in the reagent text, else 1. With N equivalents the N most
                             reactive C=C react; with at least as many as there are C=C, all */
    double temp_c;        /* reaction temperature, °C; NAN (default): the temperature found in
                             the reagent text, else 25 °C (stated in the rationale) */
    double min_share;     /* products estimated below this percent are left out (default 0.5;
                             published minor products are always kept) */
    int max_products;     /* at most this many products (default 8) */
    int rationale;        /* 1 (default): write the rationale sentences; 0: leave them out
                             (nrationale = 0), for callers that never show them */
    const char *substrate_smiles; /* the substrate's canonical SMILES (as_canon_smiles with
                             default options) when the caller already has it, borrowed and
                             copied; NULL (default): computed here */
} as_predict_opts;

void as_predict_opts_init(as_predict_opts *o);

typedef enum as_product_role {
    AS_PRODUCT_MAJOR = 0,  /* the main product */
    AS_PRODUCT_MINOR,      /* formed in smaller amount */
    AS_PRODUCT_MIXTURE     /* one of two or more formed in similar amounts: no major */
} as_product_role;

/* "major", "minor", "mixture". */
const char *as_product_role_name(as_product_role r);

typedef struct as_product {
    char *smiles;          /* canonical SMILES (owned) */
    as_mol *mol;           /* the perceived product (owned) */
    as_product_role role;
    double share;          /* percent of the products listed, 0..100 */
    int share_published;   /* 1 when the share is a published figure */
    char *share_source;    /* the citation, or "estimate: how it was computed" (owned) */
    as_stereo stereo;
    int rearranged;        /* 1 when it came from a 1,2-shift */
    as_path path;
    const char *regio;     /* "markovnikov", "anti-markovnikov", "conjugate", "n/a" */
    int site;              /* index in the outcome's site list of the C=C that reacted
                              first for this product */
    int first_atom;        /* 0-based substrate atom that took the rule's first group */
    int second_atom;       /* 0-based substrate atom that took the second group, or -1 */
    const char *face;      /* face of attack on a bridged bicyclic C=C: "exo" (placed with
                              @/@@), "not predicted", or "n/a" (no bridged ring system);
                              a static string */
    int enantiomers_merged;/* 1 when the two orientations gave the two enantiomers, listed
                              as one racemic product */
} as_product;

typedef struct as_outcome {
    char *substrate;       /* canonical SMILES of the substrate (owned) */
    const as_rule *rule;   /* borrowed from the table */
    const as_rule_variant *variant;
    as_sites *sites;       /* the substrate's C=C sites and their scores (owned) */
    int nreact;            /* how many C=C react */
    int *react;            /* their site indices, in the order they react (owned) */
    int mixture;           /* 1 when no product is a confident major */
    double temp_c;         /* temperature used, °C */
    int temp_given;        /* 1 when it came from the caller or the reagent text */
    double equiv;          /* equivalents used */
    int nproducts;
    as_product *products;  /* ranked by share, largest first (owned) */
    int nrationale;
    char **rationale;      /* sentences (owned) */
    int ncautions;
    const char *const *cautions;  /* borrowed from the rule */
} as_outcome;

/* Predicts what `match` (a recognised rule and variant) does to the perceived substrate.
 * rules may be NULL (the match carries its rule). Returns AS_OK and a new outcome in *out
 * (caller frees with as_outcome_free); AS_ERR_NO_SITE when the substrate has no
 * non-aromatic C=C; AS_ERR_ARG for bad arguments. */
as_status as_predict(const as_rules *rules, const as_mol *substrate,
                     const as_reagent_match *match, const as_predict_opts *opts,
                     as_outcome **out, as_error *err);

void as_outcome_free(as_outcome *o);

/* Renders the outcome as a JSON object: substrate, reaction, reagents, reagent_smiles (atoms
 * one equivalent adds, or null), temperature_c, temperature_given, equivalents, mixture,
 * sites [{atoms, class, reacts, ends [{atom, cation_hia_kcal, cation_kind, radical_bde_kcal,
 * steric}]}], products [{smiles, role, share, share_source, share_published,
 * stereo, rearranged, regio, path, face}], rationale [], cautions []. Atom numbers are 1-based
 * positions in the input SMILES. Returns a new string in *out (caller frees with free());
 * pretty = 1 indents it. */
as_status as_outcome_json(const as_outcome *o, int pretty, char **out, as_error *err);

#ifdef __cplusplus
}
#endif
#endif
