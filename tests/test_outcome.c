/* test_outcome.c — as_predict end to end with the built-in rule table (lib/outcome.c):
 * roles, shares and their sources, mixtures, temperature, equivalents, rationale, cautions,
 * JSON. Sources of the expected outcomes are named beside each test. */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>
#include <cmocka.h>

#include "addsite/canon.h"
#include "addsite/outcome.h"
#include "addsite/rules.h"
#include "addsite/smiles.h"

static as_rules *table;

static int setup(void **state)
{
    (void)state;
    as_error err;
    return as_rules_load_embedded(&table, &err) == AS_OK ? 0 : -1;
}

static int teardown(void **state)
{
    (void)state;
    as_rules_free(table);
    return 0;
}

/* Predicts smi with reagent text; opts may be NULL. */
static as_outcome *predict(const char *smi, const char *reagents, const as_predict_opts *opts)
{
    as_mol *m = NULL;
    as_error err;
    as_reagent_match match;
    as_outcome *o = NULL;
    assert_int_equal(as_smiles_parse(smi, strlen(smi), &m, &err), AS_OK);
    assert_int_equal(as_rules_recognise(table, reagents, strlen(reagents), &match, &err), AS_OK);
    as_status st = as_predict(table, m, &match, opts, &o, &err);
    if (st != AS_OK)
        fail_msg("as_predict(%s, %s): %s", smi, reagents, err.msg);
    as_mol_free(m);
    return o;
}

static int same_smiles(const char *got, const char *want)
{
    char *ref = NULL;
    as_error err;
    assert_int_equal(as_canon_from_text(want, strlen(want), NULL, &ref, &err), AS_OK);
    int eq = strcmp(got, ref) == 0;
    free(ref);
    return eq;
}

static int rationale_has(const as_outcome *o, const char *text)
{
    for (int i = 0; i < o->nrationale; i++)
        if (strstr(o->rationale[i], text))
            return 1;
    return 0;
}

/* McMurry, Organic Chemistry, 8th ed., Ch. 7 (from memory). */
static void outcome_should_report_markovnikov_major_for_propene_hbr(void **state)
{
    (void)state;
    as_outcome *o = predict("C=CC", "HBr", NULL);
    assert_string_equal(o->rule->id, "hx");
    assert_true(o->nproducts >= 1);
    assert_int_equal(o->products[0].role, AS_PRODUCT_MAJOR);
    assert_true(same_smiles(o->products[0].smiles, "CC(C)Br"));
    assert_true(o->products[0].share > 90.0);
    assert_string_equal(o->products[0].regio, "markovnikov");
    assert_false(o->products[0].share_published);
    assert_non_null(strstr(o->products[0].share_source, "estimate"));
    assert_true(rationale_has(o, "C2"));
    assert_true(rationale_has(o, "secondary"));
    assert_true(o->ncautions >= 1);
    assert_false(o->mixture);
    as_outcome_free(o);
}

/* Halohydrin orientation: OH to the more substituted carbon, Br to the CH2 — the
 * Markovnikov sense (McMurry, Organic Chemistry, 8th ed., Ch. 8, from memory); the methyl
 * ether from NBS in methanol likewise; Br2 alone adds the same group to both ends (n/a). */
static void outcome_should_call_halohydrin_orientation_markovnikov(void **state)
{
    (void)state;
    as_outcome *o = predict("CC(C)=C", "NBS, H2O", NULL);
    assert_true(same_smiles(o->products[0].smiles, "CC(C)(O)CBr"));
    assert_string_equal(o->products[0].regio, "markovnikov");
    as_outcome_free(o);
    o = predict("C=CC", "NBS, MeOH", NULL);
    assert_true(same_smiles(o->products[0].smiles, "CC(CBr)OC"));
    assert_string_equal(o->products[0].regio, "markovnikov");
    assert_true(o->nproducts >= 2);
    assert_string_equal(o->products[1].regio, "anti-markovnikov");
    as_outcome_free(o);
    o = predict("C=CC", "Br2, CH2Cl2", NULL);
    assert_string_equal(o->products[0].regio, "n/a");
    as_outcome_free(o);
}

/* Brown & Zweifel 1960 (from memory), the rule table's styrene figure: 80:20. */
static void outcome_should_use_published_figure_for_styrene_hydroboration(void **state)
{
    (void)state;
    as_outcome *o = predict("C=Cc1ccccc1", "1. BH3·THF; 2. H2O2, NaOH", NULL);
    assert_true(same_smiles(o->products[0].smiles, "OCCc1ccccc1"));
    assert_true(o->products[0].share > 79.9 && o->products[0].share < 80.1);
    assert_true(o->products[0].share_published);
    assert_non_null(strstr(o->products[0].share_source, "Brown"));
    assert_true(o->nproducts >= 2);
    assert_int_equal(o->products[1].role, AS_PRODUCT_MINOR);
    assert_string_equal(o->products[0].regio, "anti-markovnikov");
    assert_true(rationale_has(o, "boron bonds to C1"));
    as_outcome_free(o);
}

static void outcome_should_report_mixture_for_hex_2_ene(void **state)
{
    (void)state;
    as_outcome *o = predict("CCCC=CC", "HBr", NULL);
    assert_true(o->mixture);
    assert_int_equal(o->nproducts, 2);
    assert_int_equal(o->products[0].role, AS_PRODUCT_MIXTURE);
    assert_int_equal(o->products[1].role, AS_PRODUCT_MIXTURE);
    assert_true(o->products[0].share > 49.0 && o->products[0].share < 51.0);
    assert_true(rationale_has(o, "no major"));
    as_outcome_free(o);
}

/* OpenStax Organic Chemistry §14.3: 71:29 at 0 °C, 15:85 at 40 °C. */
static void outcome_should_follow_temperature_for_butadiene(void **state)
{
    (void)state;
    as_outcome *o = predict("C=CC=C", "HBr, 0 °C", NULL);
    assert_true(same_smiles(o->products[0].smiles, "C=CC(C)Br"));
    assert_true(o->products[0].share > 70.0 && o->products[0].share < 72.0);
    assert_true(o->products[0].share_published);
    as_outcome_free(o);
    as_predict_opts opts;
    as_predict_opts_init(&opts);
    opts.temp_c = 40.0;
    o = predict("C=CC=C", "HBr", &opts);
    assert_true(same_smiles(o->products[0].smiles, "CC=CCBr"));
    assert_true(o->products[0].share > 84.0 && o->products[0].share < 86.0);
    assert_true(o->temp_given);
    as_outcome_free(o);
}

/* Brown, Knights & Scouten 1974 (from memory): 9-BBN takes the vinyl group first. */
static void outcome_should_react_less_hindered_alkene_first_with_9bbn(void **state)
{
    (void)state;
    as_outcome *o = predict("C=CC1CCC=CC1", "9-BBN; H2O2, NaOH", NULL);
    assert_int_equal(o->nreact, 1);
    assert_true(same_smiles(o->products[0].smiles, "OCCC1CCC=CC1"));
    assert_true(rationale_has(o, "least hindered"));
    as_outcome_free(o);
    as_predict_opts opts;
    as_predict_opts_init(&opts);
    opts.equiv = 2;
    o = predict("C=CC1CCC=CC1", "9-BBN; H2O2, NaOH", &opts);
    assert_int_equal(o->nreact, 2);
    assert_null(strchr(o->products[0].smiles, '='));
    as_outcome_free(o);
}

/* Klein, Organic Chemistry, 3rd ed., Ch. 8 (from memory): rearranged alcohol major. */
static void outcome_should_mark_rearranged_major_for_acid_hydration(void **state)
{
    (void)state;
    as_outcome *o = predict("C=CC(C)(C)C", "H2O, H2SO4", NULL);
    assert_true(same_smiles(o->products[0].smiles, "CC(C)C(C)(C)O"));
    assert_true(o->products[0].rearranged);
    assert_int_equal(o->products[0].path, AS_PATH_SHIFT_ALKYL);
    assert_true(o->nproducts >= 2);
    assert_false(o->products[1].rearranged);
    assert_true(rationale_has(o, "1,2-alkyl shift"));
    as_outcome_free(o);
}

/* Brown & Geoghegan 1967 (from memory): oxymercuration does not rearrange. */
static void outcome_should_not_shift_through_mercurinium(void **state)
{
    (void)state;
    as_outcome *o = predict("C=CC(C)(C)C", "Hg(OAc)2, H2O; NaBH4", NULL);
    for (int i = 0; i < o->nproducts; i++)
        assert_false(o->products[i].rearranged);
    assert_true(same_smiles(o->products[0].smiles, "CC(O)C(C)(C)C"));
    assert_true(rationale_has(o, "does not rearrange"));
    as_outcome_free(o);
}

static void outcome_should_refuse_substrate_without_alkene(void **state)
{
    (void)state;
    as_mol *m = NULL;
    as_error err;
    as_reagent_match match;
    as_outcome *o = NULL;
    assert_int_equal(as_smiles_parse("c1ccccc1", 8, &m, &err), AS_OK);
    assert_int_equal(as_rules_recognise(table, "HBr", 3, &match, &err), AS_OK);
    assert_int_equal(as_predict(table, m, &match, NULL, &o, &err), AS_ERR_NO_SITE);
    assert_null(o);
    assert_non_null(strstr(err.msg, "no C=C"));
    as_mol_free(m);
}

/* Norbornene hydroboration: one racemic product, exo (Brown & Zweifel, J. Am. Chem. Soc.
 * 1961, 83, 2544, from memory). */
static void outcome_should_give_one_racemic_exo_alcohol_for_norbornene(void **state)
{
    (void)state;
    as_outcome *o = predict("C1CC2CC1C=C2", "1. BH3-THF; 2. H2O2, NaOH", NULL);
    assert_int_equal(o->nproducts, 1);
    assert_int_equal(o->products[0].role, AS_PRODUCT_MAJOR);
    assert_true(o->products[0].share > 99.0);
    assert_int_equal(o->products[0].stereo, AS_STEREO_RACEMIC);
    assert_string_equal(o->products[0].face, "exo");
    assert_true(o->products[0].enantiomers_merged);
    assert_true(rationale_has(o, "exo face"));
    assert_true(rationale_has(o, "Brown & Zweifel"));
    assert_false(rationale_has(o, "two alcohols form in similar amounts"));
    as_outcome_free(o);
}

/* Br2 and norbornene rearrange (Wagner-Meerwein): the rule says it is not predicted. */
static void outcome_should_say_norbornene_bromination_is_not_predicted(void **state)
{
    (void)state;
    as_outcome *o = predict("C1CC2CC1C=C2", "Br2, CH2Cl2", NULL);
    assert_string_equal(o->products[0].face, "not predicted");
    assert_true(rationale_has(o, "not predicted"));
    assert_true(rationale_has(o, "Wagner-Meerwein"));
    assert_true(o->ncautions >= 1);
    as_outcome_free(o);
}

/* Each rule of the toolbox shows its cautions with a prediction (issue 6). */
static void outcome_should_carry_cautions_of_each_toolbox_rule(void **state)
{
    (void)state;
    static const struct {
        const char *reagents, *word;
    } c[] = {
        {"Br2, CH2Cl2", "Bromine"},        {"NBS, H2O", "NBS"},
        {"mCPBA", "Peroxy acids"},         {"OsO4 (cat.), NMO", "Osmium tetroxide"},
        {"H2, Pd/C", "Hydrogen"},          {"1. O3; 2. Me2S", "Ozone"},
    };
    for (size_t i = 0; i < sizeof c / sizeof c[0]; i++) {
        as_outcome *o = predict("C1=CCCCC1", c[i].reagents, NULL);
        int found = 0;
        for (int k = 0; k < o->ncautions; k++)
            found |= strstr(o->cautions[k], c[i].word) != NULL;
        if (!found)
            fail_msg("%s: no caution naming %s", c[i].reagents, c[i].word);
        as_outcome_free(o);
    }
}

static void outcome_should_render_json_with_required_keys(void **state)
{
    (void)state;
    as_outcome *o = predict("C=C(C)C", "HBr", NULL);
    char *text = NULL;
    as_error err;
    assert_int_equal(as_outcome_json(o, 0, &text, &err), AS_OK);
    cJSON *j = cJSON_Parse(text);
    assert_non_null(j);
    assert_string_equal(cJSON_GetObjectItem(j, "substrate")->valuestring, o->substrate);
    assert_string_equal(cJSON_GetObjectItem(j, "reaction")->valuestring, "hx");
    cJSON *p = cJSON_GetArrayItem(cJSON_GetObjectItem(j, "products"), 0);
    assert_non_null(p);
    const char *keys[] = {"smiles", "role", "share", "share_source", "stereo", "rearranged",
                          "face"};
    for (size_t i = 0; i < sizeof keys / sizeof keys[0]; i++)
        assert_non_null(cJSON_GetObjectItem(p, keys[i]));
    assert_string_equal(cJSON_GetObjectItem(p, "role")->valuestring, "major");
    assert_true(cJSON_IsArray(cJSON_GetObjectItem(j, "rationale")));
    assert_true(cJSON_GetArraySize(cJSON_GetObjectItem(j, "cautions")) >= 1);
    cJSON_Delete(j);
    free(text);
    as_outcome_free(o);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(outcome_should_report_markovnikov_major_for_propene_hbr),
        cmocka_unit_test(outcome_should_call_halohydrin_orientation_markovnikov),
        cmocka_unit_test(outcome_should_use_published_figure_for_styrene_hydroboration),
        cmocka_unit_test(outcome_should_report_mixture_for_hex_2_ene),
        cmocka_unit_test(outcome_should_follow_temperature_for_butadiene),
        cmocka_unit_test(outcome_should_react_less_hindered_alkene_first_with_9bbn),
        cmocka_unit_test(outcome_should_mark_rearranged_major_for_acid_hydration),
        cmocka_unit_test(outcome_should_not_shift_through_mercurinium),
        cmocka_unit_test(outcome_should_refuse_substrate_without_alkene),
        cmocka_unit_test(outcome_should_give_one_racemic_exo_alcohol_for_norbornene),
        cmocka_unit_test(outcome_should_say_norbornene_bromination_is_not_predicted),
        cmocka_unit_test(outcome_should_carry_cautions_of_each_toolbox_rule),
        cmocka_unit_test(outcome_should_render_json_with_required_keys),
    };
    return cmocka_run_group_tests(tests, setup, teardown);
}
