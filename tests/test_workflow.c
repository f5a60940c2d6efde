/* test_workflow.c — check verdicts and plan ranking (lib/workflow.c) with the built-in rule
 * table. The chemistry source of each expected verdict is named beside its test. */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdlib.h>
#include <string.h>

#include <cjson/cJSON.h>
#include <cmocka.h>

#include "addsite/rules.h"
#include "addsite/smiles.h"
#include "addsite/workflow.h"

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

/* Checks a reaction with reagent text (may be NULL); strict selects strict stereo. */
static as_check *check(const char *rxn, const char *reagents, int strict)
{
    as_check_input in;
    memset(&in, 0, sizeof in);
    in.reaction = rxn;
    in.reagents = reagents;
    as_check_opts o;
    as_check_opts_init(&o);
    o.strict_stereo = strict;
    as_check *c = NULL;
    as_error err;
    const char *field = NULL;
    assert_int_equal(as_check_record(table, &in, &o, &c, &field, &err), AS_OK);
    assert_non_null(c);
    return c;
}

static void expect(const char *rxn, const char *reagents, int strict, as_verdict v)
{
    as_check *c = check(rxn, reagents, strict);
    assert_true(c->has_product);
    if (c->verdict != v)
        print_error("%s [%s]: %s — %s\n", rxn, reagents ? reagents : "agents",
                    as_verdict_name(c->verdict), c->reason);
    assert_int_equal(c->verdict, v);
    assert_non_null(c->reason);
    as_check_free(c);
}

/* Markovnikov HBr addition (McMurry, Organic Chemistry, 8th ed., Ch. 7, from memory). */
static void check_should_agree_with_markovnikov_bromide(void **state)
{
    (void)state;
    expect("C=CCCCC>>CCCCC(C)Br", "HBr", 0, AS_VERDICT_AGREES);
    expect("[CH2:1]=[CH:2]CCCC.[BrH:3]>>[CH3:1][CH:2]([Br:3])CCCC", NULL, 0, AS_VERDICT_AGREES);
}

static void check_should_call_the_anti_markovnikov_bromide_a_regioisomer(void **state)
{
    (void)state;
    expect("C=CCCCC>>BrCCCCCC", "HBr", 0, AS_VERDICT_REGIOISOMER);
}

/* BH3 on 1-hexene 94:6 (Brown & Zweifel, J. Am. Chem. Soc. 1960, 82, 4708, from memory). */
static void check_should_call_the_six_percent_alcohol_minor(void **state)
{
    (void)state;
    expect("C=CCCCC>>CCCCC(C)O", "BH3.THF; H2O2, NaOH", 0, AS_VERDICT_MINOR);
}

/* Syn addition gives trans-2-methylcyclohexanol (McMurry Ch. 8, from memory). */
static void check_should_compare_relative_stereo_up_to_the_mirror_image(void **state)
{
    (void)state;
    expect("CC1=CCCCC1>>C[C@@H]1CCCC[C@H]1O", "BH3.THF; H2O2, NaOH", 0, AS_VERDICT_AGREES);
    expect("CC1=CCCCC1>>C[C@H]1CCCC[C@@H]1O", "BH3.THF; H2O2, NaOH", 0, AS_VERDICT_AGREES);
    expect("CC1=CCCCC1>>C[C@@H]1CCCC[C@@H]1O", "BH3.THF; H2O2, NaOH", 0, AS_VERDICT_STEREO);
    expect("CC1=CCCCC1>>CC1CCCCC1O", "BH3.THF; H2O2, NaOH", 0, AS_VERDICT_AGREES);
    expect("CC1=CCCCC1>>CC1CCCCC1O", "BH3.THF; H2O2, NaOH", 1, AS_VERDICT_STEREO);
}

/* A single enantiomer drawn for a racemate: agrees with a note, stereo under strict. */
static void check_should_note_one_enantiomer_drawn_for_a_racemate(void **state)
{
    (void)state;
    as_check *c = check("C=CCCCC>>CCCC[C@H](C)Br", "HBr", 0);
    assert_int_equal(c->verdict, AS_VERDICT_AGREES);
    assert_true(c->nnotes >= 1);
    assert_non_null(strstr(c->notes[0], "racemic"));
    as_check_free(c);
    expect("C=CCCCC>>CCCC[C@H](C)Br", "HBr", 1, AS_VERDICT_STEREO);
}

/* Oxymercuration does not rearrange (Brown & Geoghegan, J. Am. Chem. Soc. 1967, 89, 1522,
 * from memory); acid hydration does (Klein, Organic Chemistry, 3rd ed., Ch. 8, from memory). */
static void check_should_flag_skeleton_changes(void **state)
{
    (void)state;
    expect("CC(C)(C)C=C>>CC(C)C(C)(C)O", "Hg(OAc)2, H2O; NaBH4", 0, AS_VERDICT_SKELETON);
    expect("CC(C)(C)C=C>>CC(C)C(C)(C)O", "H2O, H2SO4", 0, AS_VERDICT_AGREES);
    expect("CC(C)(C)C=C>>CC(O)C(C)(C)C", "H2O, H2SO4", 0, AS_VERDICT_MINOR);
}

static void check_should_reject_products_that_are_not_adducts(void **state)
{
    (void)state;
    expect("C=CCCCC>>OCC(O)CCCC", "HBr", 0, AS_VERDICT_NOT_ADDITION);
    expect("C=CCCCC>>CCCC(Br)CC", "HBr", 0, AS_VERDICT_NOT_ADDITION);
}

static void check_should_set_spectators_aside_with_a_note(void **state)
{
    (void)state;
    as_check *c = check("C=CCCCC>>CCCCC(C)Br.[Na+].[Cl-]", "HBr", 0);
    assert_int_equal(c->verdict, AS_VERDICT_AGREES);
    assert_int_equal(c->nnotes, 2);
    assert_string_equal(c->proposed, "CCCCC(C)Br");
    as_check_free(c);
}

static void check_should_give_no_alkene_for_toluene(void **state)
{
    (void)state;
    as_check *c = check("Cc1ccccc1>>BrCc1ccccc1", "HBr", 0);
    assert_true(c->no_site);
    assert_int_equal(c->verdict, AS_VERDICT_NO_ALKENE);
    assert_null(c->outcome);
    as_check_free(c);
}

static void check_should_report_bad_input_with_field_and_offset(void **state)
{
    (void)state;
    as_check_input in;
    memset(&in, 0, sizeof in);
    in.reaction = "C=CC(C>>CC";
    in.reagents = "HBr";
    as_check *c = NULL;
    as_error err;
    const char *field = NULL;
    assert_int_equal(as_check_record(table, &in, NULL, &c, &field, &err), AS_ERR_BRANCH);
    assert_null(c);
    assert_string_equal(field, "reaction");
    assert_int_equal(err.offset, 4);
    in.reaction = "C=CC>>CCC";
    in.reagents = NULL;
    assert_int_equal(as_check_record(table, &in, NULL, &c, &field, &err), AS_ERR_REAGENT);
    assert_non_null(strstr(err.msg, "hydroboration"));
    in.reaction = ">>CCC";
    assert_int_equal(as_check_record(table, &in, NULL, &c, &field, &err), AS_ERR_EMPTY);
}

static void check_should_render_json_with_the_prediction(void **state)
{
    (void)state;
    as_check *c = check("C=CCCCC>>BrCCCCCC", "HBr", 0);
    char *s = NULL;
    as_error err;
    assert_int_equal(as_check_json(c, 0, &s, &err), AS_OK);
    cJSON *j = cJSON_Parse(s);
    assert_non_null(j);
    assert_string_equal(cJSON_GetObjectItem(j, "verdict")->valuestring, "regioisomer");
    assert_string_equal(cJSON_GetObjectItem(j, "predicted_major")->valuestring, "CCCCC(C)Br");
    assert_true(cJSON_IsObject(cJSON_GetObjectItem(j, "prediction")));
    cJSON_Delete(j);
    free(s);
    as_check_free(c);
}

static as_plan *plan(const char *sub, const char *target)
{
    as_mol *a = NULL, *b = NULL;
    as_error err;
    assert_int_equal(as_smiles_parse(sub, strlen(sub), &a, &err), AS_OK);
    assert_int_equal(as_smiles_parse(target, strlen(target), &b, &err), AS_OK);
    as_plan *p = NULL;
    assert_int_equal(as_plan_run(table, a, b, NULL, &p, &err), AS_OK);
    as_mol_free(a);
    as_mol_free(b);
    return p;
}

/* Terminal alcohol: hydroboration first, bulky boranes at least as high as BH3 (Brown's
 * figures, from memory); acid hydration and oxymercuration are Markovnikov (common practice). */
static void plan_should_rank_hydroboration_first_for_the_terminal_alcohol(void **state)
{
    (void)state;
    as_plan *p = plan("C=CCCCC", "CCCCCCO");
    assert_true(p->nmajor >= 3);
    assert_string_equal(p->v[0].rule->id, "hydroboration_9bbn");
    int bh3 = -1;
    for (int i = 0; i < p->nmajor + p->nminor; i++) {
        assert_string_not_equal(p->v[i].rule->id, "acid_hydration");
        assert_string_not_equal(p->v[i].rule->id, "oxymercuration");
        if (!strcmp(p->v[i].rule->id, "hydroboration"))
            bh3 = i;
    }
    assert_true(bh3 >= 2);
    as_plan_free(p);
}

static void plan_should_pick_oxymercuration_for_the_unrearranged_alcohol(void **state)
{
    (void)state;
    as_plan *p = plan("CC(C)(C)C=C", "CC(O)C(C)(C)C");
    assert_string_equal(p->v[0].rule->id, "oxymercuration");
    for (int i = 0; i < p->nmajor; i++)
        assert_string_not_equal(p->v[i].rule->id, "acid_hydration");
    as_plan_free(p);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(check_should_agree_with_markovnikov_bromide),
        cmocka_unit_test(check_should_call_the_anti_markovnikov_bromide_a_regioisomer),
        cmocka_unit_test(check_should_call_the_six_percent_alcohol_minor),
        cmocka_unit_test(check_should_compare_relative_stereo_up_to_the_mirror_image),
        cmocka_unit_test(check_should_note_one_enantiomer_drawn_for_a_racemate),
        cmocka_unit_test(check_should_flag_skeleton_changes),
        cmocka_unit_test(check_should_reject_products_that_are_not_adducts),
        cmocka_unit_test(check_should_set_spectators_aside_with_a_note),
        cmocka_unit_test(check_should_give_no_alkene_for_toluene),
        cmocka_unit_test(check_should_report_bad_input_with_field_and_offset),
        cmocka_unit_test(check_should_render_json_with_the_prediction),
        cmocka_unit_test(plan_should_rank_hydroboration_first_for_the_terminal_alcohol),
        cmocka_unit_test(plan_should_pick_oxymercuration_for_the_unrearranged_alcohol),
    };
    return cmocka_run_group_tests(tests, setup, teardown);
}
