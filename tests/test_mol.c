/* test_mol.c — the molecule graph: building, editing, components, formula and the
 * consistency check. Formulas are Hill order (common practice). */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>

#include <string.h>

#include "addsite/mol.h"
#include "addsite/smiles.h"

static as_mol *parse_ok(const char *s)
{
    as_mol *m = NULL;
    as_error err;
    if (as_smiles_parse(s, strlen(s), &m, &err) != AS_OK)
        fail_msg("'%s' should parse: %s", s, err.msg);
    return m;
}

static void mol_should_refuse_self_and_duplicate_bonds(void **state)
{
    (void)state;
    as_mol *m = as_mol_new();
    int a = as_mol_add_atom(m, 6), b = as_mol_add_atom(m, 8);
    assert_int_equal(as_mol_add_bond(m, a, b, AS_BOND_SINGLE), 0);
    assert_int_equal(as_mol_add_bond(m, a, b, AS_BOND_SINGLE), -1);
    assert_int_equal(as_mol_add_bond(m, a, a, AS_BOND_SINGLE), -1);
    assert_int_equal(as_mol_bond_between(m, b, a), 0);
    assert_int_equal(as_mol_check(m, NULL), AS_OK);
    as_mol_free(m);
}

static void mol_should_write_hill_formulas(void **state)
{
    (void)state;
    struct { const char *smi, *formula; } cases[] = {
        {"CC(C)Br", "C3H7Br"}, {"OCCc1ccccc1", "C8H10O"}, {"[NH4+]", "H4N+"},
        {"CC(=O)[O-].[Na+]", "C2H3NaO2"}, {"O", "H2O"},
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        as_mol *m = parse_ok(cases[i].smi);
        char buf[64];
        assert_int_equal(as_mol_formula(m, buf, sizeof buf), AS_OK);
        assert_string_equal(buf, cases[i].formula);
        as_mol_free(m);
    }
}

static void mol_should_split_and_join_components(void **state)
{
    (void)state;
    as_mol *m = parse_ok("CCO.[Na+].C1CC1");
    int comp[16];
    assert_int_equal(as_mol_components(m, comp), 3);
    as_mol *ring = as_mol_extract(m, comp, comp[4]);
    assert_int_equal(ring->natoms, 3);
    assert_int_equal(ring->nbonds, 3);
    as_mol *joined = as_mol_new();
    assert_int_equal(as_mol_append(joined, ring), 0);
    assert_int_equal(as_mol_append(joined, ring), 3);
    assert_int_equal(joined->nbonds, 6);
    assert_int_equal(as_mol_check(joined, NULL), AS_OK);
    as_mol_free(joined);
    as_mol_free(ring);
    as_mol_free(m);
}

static void mol_should_renumber_after_removing_an_atom(void **state)
{
    (void)state;
    as_mol *m = parse_ok("N[C@H](O)C(F)/C=C/Cl");
    /* remove the O (atom 2): the centre loses its record, the double-bond record stays */
    assert_int_equal(as_mol_remove_atom(m, 2), AS_OK);
    assert_int_equal(m->natoms, 7);
    assert_int_equal(m->ntetra, 0);
    assert_int_equal(m->ndbs, 1);
    assert_int_equal(as_mol_check(m, NULL), AS_OK);
    as_mol *c = as_mol_copy(m);
    assert_int_equal(c->natoms, m->natoms);
    assert_int_equal(as_mol_check(c, NULL), AS_OK);
    as_mol_free(c);
    as_mol_free(m);
}

static void mol_should_know_element_symbols(void **state)
{
    (void)state;
    assert_string_equal(as_element_symbol(35), "Br");
    assert_int_equal(as_element_number("Cl", 2), 17);
    assert_int_equal(as_element_number("Xx", 2), -1);
    assert_null(as_element_symbol(200));
    assert_true(as_element_mass(6) > 12.0 && as_element_mass(6) < 12.1);
}

static void mol_should_grow_copies_and_sized_molecules_past_their_block(void **state)
{
    (void)state;
    /* a copy keeps its arrays in one block; adding past it moves them out intact */
    as_mol *m = parse_ok("C1CCCCC1/C=C/[C@H](F)Cl");
    as_mol *c = as_mol_copy(m);
    assert_non_null(c);
    assert_int_equal(c->natoms, m->natoms);
    assert_int_equal(c->nrings, 1);
    assert_int_equal(c->ndbs, m->ndbs);
    assert_int_equal(c->ntetra, m->ntetra);
    int prev = 0;
    for (int i = 0; i < 100; i++) {
        int a = as_mol_add_atom(c, 6);
        assert_true(a >= 0);
        assert_true(as_mol_add_bond(c, prev, a, AS_BOND_SINGLE) >= 0);
        prev = a;
    }
    for (int i = 0; i < 20; i++) {
        as_tetra t = c->tetra[0];
        assert_true(as_mol_add_tetra(c, &t) >= 0);
        as_dbstereo d = c->dbs[0];
        assert_true(as_mol_add_dbstereo(c, &d) >= 0);
    }
    assert_int_equal(c->natoms, m->natoms + 100);
    for (int i = 0; i < m->natoms; i++)
        assert_int_equal(c->atoms[i].elem, m->atoms[i].elem);
    for (int i = 0; i < m->nbonds; i++)
        assert_int_equal(c->bonds[i].order, m->bonds[i].order);
    assert_int_equal(as_mol_check(c, NULL), AS_OK);
    /* replacing the ring list of a copy frees nothing that is not its own */
    as_mol_set_rings(c, 0, NULL, NULL);
    assert_int_equal(c->nrings, 0);
    as_mol *cc = as_mol_copy(c);
    assert_non_null(cc);
    assert_int_equal(cc->natoms, c->natoms);
    as_mol_free(cc);
    as_mol_free(c);
    as_mol_free(m);
    /* sized for 2, given 50 */
    m = as_mol_new_sized(2, 1);
    assert_non_null(m);
    for (int i = 0; i < 50; i++) {
        assert_int_equal(as_mol_add_atom(m, 8), i);
        if (i)
            assert_true(as_mol_add_bond(m, i - 1, i, AS_BOND_SINGLE) >= 0);
    }
    assert_int_equal(as_mol_check(m, NULL), AS_OK);
    as_mol_free(m);
    m = as_mol_new_sized(0, 0);
    assert_non_null(m);
    assert_int_equal(m->natoms, 0);
    as_mol_free(m);
}

static void mol_should_read_molecules_larger_than_the_reader_block(void **state)
{
    (void)state;
    /* 1,800 atoms in 200 rings: the reader's tables move to the heap */
    static char s[8000];
    size_t k = 0;
    for (int i = 0; i < 200; i++) {
        memcpy(s + k, "C1CCCCCCCC1", 11);
        k += 11;
        if (i + 1 < 200)
            s[k++] = '.';
    }
    s[k] = '\0';
    as_mol *m = parse_ok(s);
    assert_int_equal(m->natoms, 1800);
    assert_int_equal(m->nbonds, 1800);
    assert_int_equal(m->nrings, 200);
    as_mol_free(m);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(mol_should_refuse_self_and_duplicate_bonds),
        cmocka_unit_test(mol_should_write_hill_formulas),
        cmocka_unit_test(mol_should_split_and_join_components),
        cmocka_unit_test(mol_should_renumber_after_removing_an_atom),
        cmocka_unit_test(mol_should_know_element_symbols),
        cmocka_unit_test(mol_should_grow_copies_and_sized_molecules_past_their_block),
        cmocka_unit_test(mol_should_read_molecules_larger_than_the_reader_block),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
