/* test_smiles.c — the SMILES reader: atoms, bonds, rings, stereo records and every error
 * with its byte offset. Expected values follow the OpenSMILES specification (opensmiles.org)
 * unless marked "common practice". */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>

#include <string.h>

#include "addsite/mol.h"
#include "addsite/perceive.h"
#include "addsite/smiles.h"

static as_mol *parse_ok(const char *s)
{
    as_mol *m = NULL;
    as_error err;
    as_status st = as_smiles_parse(s, strlen(s), &m, &err);
    if (st != AS_OK)
        fail_msg("'%s' should parse: %s", s, err.msg);
    return m;
}

static void expect_error(const char *s, size_t len, as_status code, long offset)
{
    as_mol *m = NULL;
    as_error err;
    as_status st = as_smiles_parse(s, len, &m, &err);
    if (st != code || err.offset != offset)
        fail_msg("'%s': expected %s at %ld, got %s at %ld (%s)", s, as_status_name(code), offset,
                 as_status_name(st), err.offset, err.msg);
    assert_null(m);
    assert_true(strlen(err.msg) > 0);
}

static void smiles_should_read_organic_subset_and_halogens_greedily(void **state)
{
    (void)state;
    as_mol *m = parse_ok("ClCBr");
    assert_int_equal(m->natoms, 3);
    assert_int_equal(m->atoms[0].elem, 17);
    assert_int_equal(m->atoms[2].elem, 35);
    assert_int_equal(m->atoms[1].total_h, 2);
    as_mol_free(m);
}

static void smiles_should_read_bracket_atom_fields_in_order(void **state)
{
    (void)state;
    as_mol *m = parse_ok("[13CH3:7][NH3+].[O-2].[Cu++]");
    assert_int_equal(m->atoms[0].isotope, 13);
    assert_int_equal(m->atoms[0].total_h, 3);
    assert_int_equal(m->atoms[0].mapnum, 7);
    assert_int_equal(m->atoms[1].charge, 1);
    assert_int_equal(m->atoms[2].charge, -2);
    assert_int_equal(m->atoms[3].charge, 2); /* "++" is the deprecated +2 */
    as_mol_free(m);
    m = parse_ok("[Sc]");
    assert_int_equal(m->atoms[0].elem, 21);
    as_mol_free(m);
    m = parse_ok("[O]");
    assert_int_equal(m->atoms[0].total_h, 0); /* bracket atom = listed H only */
    as_mol_free(m);
    m = parse_ok("[0S]");
    assert_int_equal(m->atoms[0].isotope, 0); /* isotope 0 differs from unspecified */
    as_mol_free(m);
}

static void smiles_should_close_rings_with_percent_and_zero(void **state)
{
    (void)state;
    const char *same[] = {"C%12CCCCC%12", "C0CCCCC0", "C1CCCCC%01", "C=1CCCCC=1", "C=1CCCCC1"};
    for (size_t i = 0; i < sizeof same / sizeof same[0]; i++) {
        as_mol *m = parse_ok(same[i]);
        assert_int_equal(m->natoms, 6);
        assert_int_equal(m->nbonds, 6);
        assert_int_equal(m->nrings, 1);
        as_mol_free(m);
    }
    as_mol *m = parse_ok("C%123CCC3CCCCC%12"); /* %12 and 3 are two ring numbers */
    assert_int_equal(m->nrings, 2);
    as_mol_free(m);
    m = parse_ok("C1.C1"); /* ring bond across a dot: ethane */
    assert_int_equal(m->nbonds, 1);
    as_mol_free(m);
}

static void smiles_should_keep_title_after_whitespace(void **state)
{
    (void)state;
    as_mol *m = parse_ok("CCO ethanol, absolute\r\n");
    assert_string_equal(m->title, "ethanol, absolute");
    as_mol_free(m);
}

static void smiles_should_record_tetrahedral_order_with_implicit_h(void **state)
{
    (void)state;
    as_mol *m = parse_ok("N[C@H](O)C");
    assert_int_equal(m->ntetra, 1);
    assert_int_equal(m->tetra[0].center, 1);
    assert_int_equal(m->tetra[0].nbr[0], 0);
    assert_int_equal(m->tetra[0].nbr[1], AS_IMPLICIT_H);
    assert_int_equal(m->tetra[0].nbr[2], 2);
    assert_int_equal(m->tetra[0].nbr[3], 3);
    assert_int_equal(m->tetra[0].parity, AS_CCW);
    as_mol_free(m);
    /* ring digit counts where it is written on the centre */
    m = parse_ok("C[C@@]1(F)CCCC1");
    assert_int_equal(m->tetra[0].nbr[1], 6);
    assert_int_equal(m->tetra[0].nbr[2], 2);
    as_mol_free(m);
}

static void smiles_should_read_double_bond_marks_relative_to_atom(void **state)
{
    (void)state;
    struct { const char *s; int cis; } cases[] = {
        {"F/C=C/F", 0}, {"F\\C=C/F", 1}, {"C(\\F)=C/F", 0}, {"F/C=C\\F", 1},
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        as_mol *m = parse_ok(cases[i].s);
        assert_int_equal(m->ndbs, 1);
        assert_int_equal(m->dbs[0].cis, cases[i].cis);
        as_mol_free(m);
    }
    as_mol *m = parse_ok("C/C=C"); /* one side marked: no geometry */
    assert_int_equal(m->ndbs, 0);
    as_mol_free(m);
}

static void smiles_should_read_reaction_roles_with_empty_parts(void **state)
{
    (void)state;
    as_reaction *r = NULL;
    as_error err;
    assert_int_equal(as_reaction_parse("CC=C.Br>>CC(C)Br t1", 19, &r, &err), AS_OK);
    assert_int_equal(r->role[0]->natoms, 4);
    assert_int_equal(r->role[1]->natoms, 0);
    assert_int_equal(r->role[2]->natoms, 4);
    assert_string_equal(r->title, "t1");
    as_reaction_free(r);
    assert_int_equal(as_reaction_parse(">>", 2, &r, &err), AS_OK);
    as_reaction_free(r);
    /* '>' inside a bracket is not a separator; dative '->' neither */
    assert_int_equal(as_reaction_parse("C=C>[Na+]>CC", 12, &r, &err), AS_OK);
    assert_int_equal(r->role[1]->natoms, 1);
    as_reaction_free(r);
    assert_int_equal(as_reaction_parse("A>B>C>D", 7, &r, &err), AS_ERR_REACTION);
    assert_int_equal(err.offset, 5);
    assert_int_equal(as_reaction_parse("CC=C>>CC |f:0.1| note", 21, &r, &err), AS_OK);
    assert_int_equal(r->cx_stripped, 1);
    assert_string_equal(r->title, "note");
    as_reaction_free(r);
}

static void smiles_should_report_each_error_with_its_offset(void **state)
{
    (void)state;
    struct { const char *s; as_status code; long off; } cases[] = {
        {"C1CCC", AS_ERR_RING, 1},          /* unclosed ring bond: at its opening digit */
        {"C11", AS_ERR_RING, 2},            /* ring bond to itself */
        {"C12CCCCC12", AS_ERR_RING, 9},     /* duplicate bond between the same atoms */
        {"C-1CCCCC=1", AS_ERR_RING, 8},     /* conflicting ring-bond orders: the second symbol */
        {"C.1CC1", AS_ERR_SYNTAX, 2},       /* ring digit after '.' */
        {"CC(C", AS_ERR_BRANCH, 2},         /* unclosed branch: at '(' */
        {"CC)C", AS_ERR_BRANCH, 2},         /* extra ')' */
        {"C()C", AS_ERR_BRANCH, 2},         /* empty branch */
        {"(C)C", AS_ERR_BRANCH, 0},
        {"CC=", AS_ERR_SYNTAX, 2},          /* bond at the end */
        {"C==C", AS_ERR_SYNTAX, 2},         /* two bonds */
        {"C(C=)C", AS_ERR_SYNTAX, 3},       /* bond before ')' */
        {"[Xx]", AS_ERR_ELEMENT, 1},        /* unknown element */
        {"CHg", AS_ERR_ELEMENT, 1},         /* Hg outside brackets */
        {"[C+16]", AS_ERR_CHARGE, 2},       /* charge out of range */
        {"[C-H3]", AS_ERR_SYNTAX, 3},       /* H count after charge */
        {"[HH1]", AS_ERR_SYNTAX, 2},        /* H count on hydrogen */
        {"[CH4", AS_ERR_SYNTAX, 0},         /* unterminated bracket */
        {"[]", AS_ERR_SYNTAX, 1},           /* empty bracket */
        {"C(C)(C)(C)(C)C", AS_ERR_VALENCE, 0}, /* pentavalent carbon */
        {"Cc", AS_ERR_AROMATIC, 1},         /* aromatic atom outside a ring */
        {"c1cccc1", AS_ERR_AROMATIC, 0},    /* cannot be kekulised */
        {"c1ccnc1", AS_ERR_AROMATIC, 4},    /* pyrrole N needs [nH]: points at the n */
        {"C/C(\\F)=C/F", AS_ERR_STEREO, 4}, /* conflicting marks: the second */
        {"C[C@AL1]", AS_ERR_UNSUPPORTED, 3},
        {"[C@SP1](F)(Cl)(Br)I", AS_ERR_UNSUPPORTED, 2},
        {"C%1C", AS_ERR_SYNTAX, 1},         /* % needs two digits */
        {".C", AS_ERR_SYNTAX, 0},
        {"C..C", AS_ERR_SYNTAX, 2},
        {"C.", AS_ERR_SYNTAX, 1},
        {"C>C", AS_ERR_SYNTAX, 1},
        {"[C H4]", AS_ERR_SYNTAX, 2},
        {"C\xc3\xa9", AS_ERR_ENCODING, 1},
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++)
        expect_error(cases[i].s, strlen(cases[i].s), cases[i].code, cases[i].off);
    expect_error("CC\0C", 4, AS_ERR_ENCODING, 2);
    expect_error("", 0, AS_ERR_EMPTY, 0);
}

static void smiles_should_refuse_overlong_input_at_the_limit(void **state)
{
    (void)state;
    size_t n = AS_SMILES_MAX_LEN + 1;
    char *s = test_malloc(n);
    memset(s, 'C', n);
    expect_error(s, n, AS_ERR_LIMIT, AS_SMILES_MAX_LEN);
    test_free(s);
}

static void smiles_should_survive_deep_branches_and_long_chains(void **state)
{
    (void)state;
    /* 10,000 nested branches: an explicit stack, no recursion */
    size_t depth = 10000, n = depth * 3 + 2;
    char *s = test_malloc(n);
    size_t k = 0;
    s[k++] = 'C';
    for (size_t i = 0; i < depth; i++) {
        s[k++] = '(';
        s[k++] = 'C';
    }
    for (size_t i = 0; i < depth; i++)
        s[k++] = ')';
    as_mol *m = NULL;
    as_error err;
    assert_int_equal(as_smiles_parse(s, k, &m, &err), AS_OK);
    assert_int_equal(m->natoms, (int)depth + 1);
    as_mol_free(m);
    test_free(s);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(smiles_should_read_organic_subset_and_halogens_greedily),
        cmocka_unit_test(smiles_should_read_bracket_atom_fields_in_order),
        cmocka_unit_test(smiles_should_close_rings_with_percent_and_zero),
        cmocka_unit_test(smiles_should_keep_title_after_whitespace),
        cmocka_unit_test(smiles_should_record_tetrahedral_order_with_implicit_h),
        cmocka_unit_test(smiles_should_read_double_bond_marks_relative_to_atom),
        cmocka_unit_test(smiles_should_read_reaction_roles_with_empty_parts),
        cmocka_unit_test(smiles_should_report_each_error_with_its_offset),
        cmocka_unit_test(smiles_should_refuse_overlong_input_at_the_limit),
        cmocka_unit_test(smiles_should_survive_deep_branches_and_long_chains),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
