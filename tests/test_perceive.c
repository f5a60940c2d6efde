/* test_perceive.c — implicit hydrogens, rings, kekulisation, aromaticity and stereo clean-up.
 * H counts follow the OpenSMILES valence table; aromaticity the Hückel 4n+2 rule (common
 * practice); RDKit (Debian python3-rdkit) agrees on every molecule used here. */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>

#include <stdio.h>
#include <string.h>

#include "addsite/mol.h"
#include "addsite/perceive.h"
#include "addsite/smiles.h"

static as_mol *parse_ok(const char *s)
{
    as_mol *m = NULL;
    as_error err;
    if (as_smiles_parse(s, strlen(s), &m, &err) != AS_OK)
        fail_msg("'%s' should parse: %s", s, err.msg);
    return m;
}

static int count_aromatic(const as_mol *m)
{
    int n = 0;
    for (int i = 0; i < m->natoms; i++)
        n += m->atoms[i].aromatic;
    return n;
}

static void perceive_should_give_default_valence_hydrogens(void **state)
{
    (void)state;
    as_mol *m = parse_ok("B");
    assert_int_equal(m->atoms[0].total_h, 3);
    as_mol_free(m);
    m = parse_ok("N(C)(C)(C)C"); /* next normal valence 5: one H (OpenSMILES) */
    assert_int_equal(m->atoms[0].total_h, 1);
    as_mol_free(m);
    m = parse_ok("OS(=O)(=O)O");
    assert_int_equal(m->atoms[1].total_h, 0);
    as_mol_free(m);
    m = parse_ok("c1cc[nH]c1");
    assert_int_equal(m->atoms[3].total_h, 1);
    assert_int_equal(m->atoms[0].total_h, 1);
    as_mol_free(m);
}

static void perceive_should_find_sssr_and_ring_sizes(void **state)
{
    (void)state;
    as_mol *m = parse_ok("C1CC2CCC1C2"); /* norbornane: 2 rings, 5-membered smallest */
    assert_int_equal(m->nrings, 2);
    assert_int_equal(m->atoms[0].ring_size, 5);
    as_mol_free(m);
    m = parse_ok("C12C3C4C1C5C2C3C45"); /* cubane: 5 independent rings of 4 */
    assert_int_equal(m->nrings, 5);
    for (int r = 0; r < m->nrings; r++)
        assert_int_equal(m->ring_start[r + 1] - m->ring_start[r], 4);
    as_mol_free(m);
    m = parse_ok("CCCC");
    assert_int_equal(m->nrings, 0);
    as_mol_free(m);
}

/* Writes the ring list of m as "a,b,c;d,e,f;" (0-based atoms, in stored order). */
static void ring_list(const as_mol *m, char *buf, size_t cap)
{
    size_t used = 0;
    buf[0] = '\0';
    for (int r = 0; r < m->nrings; r++) {
        for (int k = m->ring_start[r]; k < m->ring_start[r + 1]; k++)
            used += (size_t)snprintf(buf + used, cap - used, "%d,", m->ring_atoms[k]);
        used += (size_t)snprintf(buf + used, cap - used, ";");
    }
}

static void perceive_should_list_rings_in_a_fixed_order(void **state)
{
    (void)state;
    /* Order: by size, ties by the lowest bond that found the ring; atoms from that bond's
     * first atom round the ring away from its second. Single rings are walked directly and
     * fused or spiro systems searched in full: the expected lists are the output of the
     * full search on every system (the implementation before the single-ring shortcut). */
    static const struct {
        const char *smiles, *rings;
    } cases[] = {
        {"C1CC1C2CCCC2.c1ccccc1C1CCCCC1", "0,2,1,;3,7,6,5,4,;8,13,12,11,10,9,;14,19,18,17,16,15,;"},
        {"C1CCC2(CC1)CCCC2", "3,9,8,7,6,;0,5,4,3,2,1,;"},
        {"C1CCC1.C1CC1.C1CCCCC1CC1CCC2CCCCC2C1",
         "4,6,5,;0,3,2,1,;7,12,11,10,9,8,;14,23,22,17,16,15,;17,22,21,20,19,18,;"},
        {"C1CC2CCC1C2", "0,5,6,2,1,;2,6,5,4,3,;"},
    };
    char buf[512];
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        as_mol *m = parse_ok(cases[i].smiles);
        ring_list(m, buf, sizeof buf);
        if (strcmp(buf, cases[i].rings) != 0)
            fail_msg("%s: rings %s, expected %s", cases[i].smiles, buf, cases[i].rings);
        as_mol_free(m);
    }
    /* a single ring larger than the search limit: sizes marked, no SSSR entry */
    char big[AS_RING_SEARCH_MAX + 16];
    size_t k = 0;
    big[k++] = 'C';
    big[k++] = '1';
    for (int j = 0; j < AS_RING_SEARCH_MAX; j++)
        big[k++] = 'C';
    big[k++] = '1';
    big[k] = '\0';
    as_mol *m = parse_ok(big);
    assert_int_equal(m->nrings, 0);
    assert_int_equal(m->atoms[0].ring_size, AS_RING_SEARCH_MAX + 1);
    assert_int_equal(m->bonds[m->nbonds - 1].ring_size, AS_RING_SEARCH_MAX + 1);
    as_mol_free(m);
    big[k - 2] = '1'; /* exactly AS_RING_SEARCH_MAX atoms */
    big[k - 1] = '\0';
    m = parse_ok(big);
    assert_int_equal(m->nrings, 1);
    assert_int_equal(m->atoms[5].ring_size, AS_RING_SEARCH_MAX);
    as_mol_free(m);
}

static void perceive_should_make_kekule_benzene_aromatic(void **state)
{
    (void)state;
    const char *arom[] = {"C1=CC=CC=C1", "c1ccncc1", "c1ccoc1", "c1ccsc1", "c1cc[nH]c1",
                          "c1ccc2ccccc2c1", "c1ccc2[nH]ccc2c1", "O=c1cccc[nH]1",
                          "c1ccc2cc3ccccc3cc2c1", "C1=CC=C2C=CC=CC=C12" /* azulene */};
    for (size_t i = 0; i < sizeof arom / sizeof arom[0]; i++) {
        as_mol *m = parse_ok(arom[i]);
        int ring_atoms = 0;
        for (int k = 0; k < m->natoms; k++)
            ring_atoms += m->atoms[k].ring_size > 0;
        if (count_aromatic(m) != ring_atoms)
            fail_msg("%s: %d of %d ring atoms aromatic", arom[i], count_aromatic(m), ring_atoms);
        as_mol_free(m);
    }
    const char *not_arom[] = {"C1=CC=CC1", "C1=CCC=C1", "O=C1C=CC(=O)C=C1", "C1=CC=CC=CC=C1"};
    for (size_t i = 0; i < sizeof not_arom / sizeof not_arom[0]; i++) {
        as_mol *m = parse_ok(not_arom[i]);
        if (count_aromatic(m) != 0)
            fail_msg("%s should not be aromatic", not_arom[i]);
        as_mol_free(m);
    }
}

static void perceive_should_drop_stereo_that_cannot_be_real(void **state)
{
    (void)state;
    as_mol *m = parse_ok("C[C@H2]O"); /* two H: no centre */
    assert_int_equal(m->ntetra, 0);
    as_mol_free(m);
    m = parse_ok("F/C1=C/CCC1"); /* ring double bond in a small ring: no E/Z */
    assert_int_equal(m->ndbs, 0);
    as_mol_free(m);
    m = parse_ok("C/C=C/1.C1"); /* acyclic: kept */
    assert_int_equal(m->ndbs, 1);
    as_mol_free(m);
}

static void perceive_should_report_the_failed_pass(void **state)
{
    (void)state;
    as_mol *m = NULL;
    as_error err;
    assert_int_equal(as_smiles_read("c1cccc1", 7, NULL, &m, &err), AS_OK);
    unsigned failed = 0;
    assert_int_equal(as_perceive(m, AS_PASS_ALL, &failed, &err), AS_ERR_AROMATIC);
    assert_int_equal(failed, AS_PASS_KEKULE);
    as_mol_free(m);
}

static void perceive_should_flag_neutral_four_bonded_nitrogen(void **state)
{
    (void)state;
    as_mol *m = parse_ok("CN(C)(C)C"); /* valence 5 with one H: probably a missing charge */
    assert_int_equal(as_perceive_suspect_atom(m), 1);
    as_mol_free(m);
    m = parse_ok("C[N+](C)(C)C");
    assert_int_equal(as_perceive_suspect_atom(m), -1);
    as_mol_free(m);
}

static void perceive_should_give_the_same_result_pass_by_pass(void **state)
{
    (void)state;
    /* hydrogens and valence run as one sweep when both are asked for; one at a time must
     * give the same H counts, the same refusal and the same message */
    static const char *const smiles[] = {
        "CC(=O)O", "C=CC(Cl)(Br)I", "c1ccccc1C(F)(F)F", "[NH4+]", "C[N+](C)(C)C", "N(=O)(=O)C",
        "OCl(=O)(=O)=O", "ClCl=C", "C(C)(C)(C)(C)C", "FC=O=C", "[CH5]", "O=N(=O)c1ccccc1",
        "[O-][N+](=O)C", "B(C)(C)C", "[B-](F)(F)(F)F", "C=C=C=C", "I(=O)(=O)C", "Br=C",
        "CC(C)=CCCC(C)=CC=O", "[Hg](C)C", "*C=C", "C[S](=O)(=O)C", "S(=O)(=O)(=O)(=O)C",
    };
    for (size_t i = 0; i < sizeof smiles / sizeof smiles[0]; i++) {
        as_mol *a = NULL, *b = NULL;
        as_error ea, eb;
        const char *s = smiles[i];
        assert_int_equal(as_smiles_read(s, strlen(s), NULL, &a, &ea), AS_OK);
        assert_int_equal(as_smiles_read(s, strlen(s), NULL, &b, &eb), AS_OK);
        unsigned fa = 0, fb = 0;
        as_status sa = as_perceive(a, AS_PASS_HYDROGENS | AS_PASS_VALENCE, &fa, &ea);
        as_status sb = as_perceive(b, AS_PASS_HYDROGENS, &fb, &eb);
        assert_int_equal(sb, AS_OK);
        sb = as_perceive(b, AS_PASS_VALENCE, &fb, &eb);
        if (sa != sb)
            fail_msg("%s: status %d together, %d one by one", s, sa, sb);
        for (int k = 0; k < a->natoms; k++)
            if (a->atoms[k].total_h != b->atoms[k].total_h)
                fail_msg("%s: atom %d has %d H together, %d one by one", s, k + 1,
                         a->atoms[k].total_h, b->atoms[k].total_h);
        if (sa != AS_OK) {
            assert_int_equal(fa, AS_PASS_VALENCE);
            assert_int_equal(fb, AS_PASS_VALENCE);
            assert_string_equal(ea.msg, eb.msg);
            assert_int_equal(ea.offset, eb.offset);
            assert_int_equal(ea.atom, eb.atom);
        }
        as_mol_free(a);
        as_mol_free(b);
    }
}

/* Perceives m as it is and a copy with the ring data forgotten; fails when they differ. */
static void rings_match_fresh_search(as_mol *m, const char *what)
{
    as_mol *c = as_mol_copy(m);
    assert_non_null(c);
    c->rings_known = 0;
    as_error err;
    assert_int_equal(as_perceive(m, AS_PASS_ALL, NULL, &err), AS_OK);
    assert_int_equal(as_perceive(c, AS_PASS_ALL, NULL, &err), AS_OK);
    char a[512], b[512];
    ring_list(m, a, sizeof a);
    ring_list(c, b, sizeof b);
    if (strcmp(a, b) != 0)
        fail_msg("%s: rings %s kept, %s searched", what, a, b);
    for (int i = 0; i < m->natoms; i++)
        if (m->atoms[i].ring_size != c->atoms[i].ring_size ||
            m->atoms[i].aromatic != c->atoms[i].aromatic)
            fail_msg("%s: atom %d differs", what, i + 1);
    for (int i = 0; i < m->nbonds; i++)
        if (m->bonds[i].ring_size != c->bonds[i].ring_size)
            fail_msg("%s: bond %d differs", what, i + 1);
    as_mol_free(c);
}

static void perceive_should_keep_rings_only_while_no_edit_can_change_them(void **state)
{
    (void)state;
    as_mol *m = parse_ok("C=CCc1ccccc1C1CCCCC1");
    assert_int_equal(m->rings_known, 1);
    int before = m->nrings;
    /* a new atom, a bond to it, a bond order change: kept */
    int x = as_mol_add_atom(m, 35);
    assert_true(as_mol_add_bond(m, 1, x, AS_BOND_SINGLE) >= 0);
    as_mol_set_bond_order(m, as_mol_bond_between(m, 0, 1), AS_BOND_SINGLE);
    assert_int_equal(m->rings_known, 1);
    rings_match_fresh_search(m, "pendant Br");
    assert_int_equal(m->nrings, before);
    /* removing a chain bond: kept (the bonds after it move down in order) */
    assert_int_equal(as_mol_remove_bond(m, as_mol_bond_between(m, 1, x)), AS_OK);
    assert_int_equal(m->rings_known, 1);
    rings_match_fresh_search(m, "chain bond removed");
    /* a bond between two atoms that have bonds: may close a ring, forgotten */
    assert_true(as_mol_add_bond(m, 0, 2, AS_BOND_SINGLE) >= 0);
    assert_int_equal(m->rings_known, 0);
    rings_match_fresh_search(m, "cyclopropane closed");
    assert_int_equal(m->nrings, before + 1);
    /* removing a ring bond: forgotten */
    assert_int_equal(as_mol_remove_bond(m, as_mol_bond_between(m, 0, 2)), AS_OK);
    assert_int_equal(m->rings_known, 0);
    rings_match_fresh_search(m, "cyclopropane opened");
    assert_int_equal(m->nrings, before);
    /* appending a perceived ring: forgotten */
    as_mol *ring = parse_ok("C1CC1");
    assert_true(as_mol_append(m, ring) >= 0);
    assert_int_equal(m->rings_known, 0);
    rings_match_fresh_search(m, "cyclopropane appended");
    assert_int_equal(m->nrings, before + 1);
    /* removing an atom renumbers the ring list: forgotten */
    assert_int_equal(as_mol_remove_atom(m, 0), AS_OK);
    assert_int_equal(m->rings_known, 0);
    rings_match_fresh_search(m, "atom removed");
    as_mol_free(ring);
    as_mol_free(m);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(perceive_should_give_default_valence_hydrogens),
        cmocka_unit_test(perceive_should_give_the_same_result_pass_by_pass),
        cmocka_unit_test(perceive_should_find_sssr_and_ring_sizes),
        cmocka_unit_test(perceive_should_list_rings_in_a_fixed_order),
        cmocka_unit_test(perceive_should_keep_rings_only_while_no_edit_can_change_them),
        cmocka_unit_test(perceive_should_make_kekule_benzene_aromatic),
        cmocka_unit_test(perceive_should_drop_stereo_that_cannot_be_real),
        cmocka_unit_test(perceive_should_report_the_failed_pass),
        cmocka_unit_test(perceive_should_flag_neutral_four_bonded_nitrogen),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
