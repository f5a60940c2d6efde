/* addsite/workflow.h — the jobs around one prediction: check a recorded product, plan a route.
 * Owns: resolving one record (substrate, reagents from text, agents or reactant components,
 * recorded products minus spectators), the check verdict from comparing canonical SMILES
 * with the prediction, and the plan ranking over every rule of the table.
 * Must not: hold chemistry of its own (every product comes from as_predict) or do I/O.
 *
 * Memory: as_check_record and as_plan_run return new results; the caller frees them with
 * as_check_free / as_plan_free. Results borrow rules, variants and hazard strings from the
 * rule table, which must outlive them; everything else is owned by the result.
 *
 * ==== Comparing a recorded product with the prediction ====================================
 * Identity is by canonical SMILES without atom maps. A recorded product is compared first by
 * constitution (canonical SMILES without stereo), then by stereo:
 *   - the relative configuration the mechanism fixes (the @/@@ and / \ marks of the
 *     predicted product) must be drawn the same, or as the mirror image when the prediction
 *     is racemic (the substrate has no defined stereocentre): a single enantiomer drawn for
 *     a racemate is normal notebook practice and agrees, with a note;
 *   - a mark on a centre the conditions leave uncontrolled (a lone new centre of a racemate,
 *     a centre formed without stereo control) stands for one member of what forms: it agrees,
 *     with a note;
 *   - a product drawn without marks where the prediction fixes a relative configuration
 *     agrees, with a note giving the configuration;
 *   - with strict_stereo set, the last three cases give AS_VERDICT_STEREO instead.
 * Centres are matched across the two molecules by their graph symmetry classes, so partly
 * drawn stereo is compared on the centres both drawings mark. */
#ifndef ADDSITE_WORKFLOW_H
#define ADDSITE_WORKFLOW_H

#include <stddef.h>

#include "addsite/mol.h"
#include "addsite/outcome.h"
#include "addsite/rules.h"
#include "addsite/status.h"

#ifdef __cplusplus
extern "C" {
#endif

/* ORDER VERDICT: keep in step with the name table in lib/workflow.c. Ordered from the best
 * agreement to the worst; when several recorded products are judged, the best one counts. */
typedef enum as_verdict {
    AS_VERDICT_AGREES = 0,    /* the predicted major product (or one of a predicted mixture) */
    AS_VERDICT_MINOR,         /* a predicted minor product */
    AS_VERDICT_STEREO,        /* right constitution, relative stereo the conditions do not give */
    AS_VERDICT_REGIOISOMER,   /* the other orientation of the major, expected at most in traces */
    AS_VERDICT_SKELETON,      /* needs a skeleton change the conditions do not cause, or lacks
                                 the one they do */
    AS_VERDICT_NOT_ADDITION,  /* not an addition product of these reagents to this substrate */
    AS_VERDICT_NO_ALKENE,     /* the substrate has no C=C */
    AS_VERDICT_COUNT
} as_verdict;

/* Stable short name: "agrees", "minor", "stereo", "regioisomer", "skeleton",
 * "not_addition", "no_alkene"; "?" when out of range. */
const char *as_verdict_name(as_verdict v);

/* A memo of reagent texts already recognised, for one thread at a time (annotate keeps one
 * per worker): reaction files repeat the same few reagent texts, and recognising one runs
 * every rule's patterns. Results are the same with or without it. */
typedef struct as_check_cache as_check_cache;

/* Returns new (NULL when out of memory); caller frees with as_check_cache_free. */
as_check_cache *as_check_cache_new(void);
void as_check_cache_free(as_check_cache *c);

typedef struct as_check_opts {
    as_predict_opts predict;  /* prediction options (defaults of as_predict_opts_init) */
    int strict_stereo;        /* 0 (default): the notebook rules above; 1: a recorded product
                                 must draw exactly the stereo the prediction fixes, no more,
                                 no less (up to the mirror image of a racemate) */
    as_check_cache *cache;    /* NULL (default), or a memo used by this thread only (borrowed;
                                 it must serve one rule table) */
} as_check_opts;

void as_check_opts_init(as_check_opts *o);

/* One record to resolve. Text fields are borrowed; NULL or empty means absent. Lengths of 0
 * mean "up to the NUL". */
typedef struct as_check_input {
    const char *reaction;         /* reaction SMILES "reactants>agents>products" */
    const char *substrate;        /* substrate SMILES, used when reaction is absent */
    const char *product;          /* recorded product SMILES, used when reaction is absent */
    const char *reagents;         /* reagent text of this record */
    const char *default_reagents; /* reagent text used when the record names none */
} as_check_input;

/* Where the reagents of a record came from. */
typedef enum as_reagent_source {
    AS_REAGENTS_TEXT = 0,     /* the record's reagent text */
    AS_REAGENTS_AGENTS,       /* agent SMILES (middle part and/or reactant components) */
    AS_REAGENTS_DEFAULT       /* the default reagent text */
} as_reagent_source;

/* "text", "agents", "default". */
const char *as_reagent_source_name(as_reagent_source s);

typedef struct as_check {
    char *substrate;          /* canonical SMILES of the substrate as recorded (owned) */
    as_reagent_match match;   /* the recognised rule and reagent set (borrowed from rules) */
    as_reagent_source reagent_source;
    as_outcome *outcome;      /* the prediction (owned); NULL when no_site */
    int no_site;              /* 1: the substrate has no C=C; nothing was predicted */
    int has_product;          /* 1: a product was recorded and judged (verdict is set) */
    as_verdict verdict;
    char *reason;             /* one line (owned); NULL without a product */
    char *proposed;           /* canonical SMILES of the recorded product judged, no maps
                                 (owned); NULL without a product */
    int matched;              /* index in outcome->products of the product it matched, or -1 */
    double matched_share;     /* share of the matched product (also for trace products found
                                 only in the full candidate list), NAN when none */
    int nnotes;
    char **notes;             /* remarks: spectators ignored, reagent components, stereo (owned) */
} as_check;

void as_check_free(as_check *c);

/* Resolves and judges one record:
 *  - substrate: the reaction's reactant component with a C=C (other reactant components are
 *    taken as reagents, e.g. "C=CC.Br>>CC(C)Br"), else the substrate field;
 *  - reagents: the record's reagent text, else the agents (middle part plus reactant reagent
 *    components), else default_reagents;
 *  - recorded product: the product role (or product field); components without carbon,
 *    components that are reactants or agents, and — except for cleavage rules — components
 *    with fewer carbons than the substrate are ignored with a note; each remaining one is
 *    judged and the best verdict counts.
 * Returns AS_OK and a new result in *out (a substrate without C=C is AS_OK with no_site set
 * and, when a product was recorded, verdict AS_VERDICT_NO_ALKENE). On a bad record returns
 * the error (AS_ERR_SYNTAX/RING/... for SMILES, AS_ERR_REACTION, AS_ERR_REAGENT, AS_ERR_EMPTY)
 * with err->offset into the field named in *field ("reaction", "substrate", "product",
 * "reagents" or "default_reagents"; NULL when no field applies) and *out = NULL. */
as_status as_check_record(const as_rules *rules, const as_check_input *in,
                          const as_check_opts *opts, as_check **out, const char **field,
                          as_error *err);

/* Judges one recorded product (a perceived molecule, maps ignored; several components are
 * treated as in as_check_record) against a prediction already made for substrate with match.
 * Returns AS_OK and fills verdict, reason, proposed, matched, matched_share and notes of
 * *c (c->outcome and c->match must be set). */
as_status as_check_judge(const as_rules *rules, const as_mol *substrate, const as_mol *product,
                         const as_mol *reactant_like, const as_check_opts *opts, as_check *c,
                         as_error *err);

/* Renders the result as JSON: verdict, agrees, reason, proposed, predicted_major, substrate,
 * reaction, reagents, reagent_source, notes [], prediction {as_outcome_json}. Returns a new
 * string in *out (caller frees with free()); pretty = 1 indents it. */
as_status as_check_json(const as_check *c, int pretty, char **out, as_error *err);

/* ==== plan ================================================================================*/

/* How a rule relates to the wanted product. */
typedef enum as_plan_tier {
    AS_PLAN_MAJOR = 0,        /* the target is the major product */
    AS_PLAN_MINOR,            /* the target is a minor product or one of a mixture */
    AS_PLAN_NONE              /* the rule does not give the target (or cannot run) */
} as_plan_tier;

/* "major", "minor", "none". */
const char *as_plan_tier_name(as_plan_tier t);

typedef struct as_plan_entry {
    const as_rule *rule;              /* borrowed */
    const as_rule_variant *variant;   /* borrowed */
    as_outcome *outcome;      /* the prediction (owned); NULL when status != AS_OK */
    as_status status;         /* AS_OK, AS_ERR_NO_SITE, or another failure of as_predict */
    as_plan_tier tier;
    int product;              /* index in outcome->products of the target, or -1 */
    double share;             /* its share, percent; 0 when none */
    int stereo_differs;       /* 1: the rule gives the target's constitution with other
                                 stereo (tier none) */
    char *note;               /* stereo remark (owned) or NULL */
} as_plan_entry;

typedef struct as_plan {
    char *substrate;          /* canonical SMILES (owned) */
    char *target;             /* canonical SMILES, no maps (owned) */
    int n;
    as_plan_entry *v;         /* major tier by share, then minor by share, then the rest in
                                 table order (owned) */
    int nmajor, nminor;
} as_plan;

void as_plan_free(as_plan *p);

/* Predicts every reagent set of every rule on substrate and ranks them for target (both
 * perceived; target maps ignored, its stereo compared as for check with opts). Ties in
 * share put published figures first, then table order. Returns AS_OK and a new plan. */
as_status as_plan_run(const as_rules *rules, const as_mol *substrate, const as_mol *target,
                      const as_check_opts *opts, as_plan **out, as_error *err);

#ifdef __cplusplus
}
#endif
#endif
