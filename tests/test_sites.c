/* test_sites.c — C=C sites and carbon scores (lib/sites.c).
 * Molecules are built with the mol.h API and "perceived" by hand (H counts, aromatic flags,
 * ring lists) so these tests depend on nothing but mol and sites. Expected values are the
 * published constants quoted in lib/sites.c: hydride ion affinities (secondary sources),
 * Blanksby & Ellison 2003 C–H BDEs, Brown–Okamoto σ+. */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include "addsite/mol.h"
#include "addsite/sites.h"

/* ---------------------------------------------------------------- builder */

/* Adds a heavy atom with h hydrogens. */
static int atom(as_mol *m, int elem, int h)
{
    int i = as_mol_add_atom(m, elem);
    assert_true(i >= 0);
    m->atoms[i].total_h = h;
    return i;
}

static void bond(as_mol *m, int a, int b, int order)
{
    assert_true(as_mol_add_bond(m, a, b, order) >= 0);
}

/* Adds a benzene ring (Kekulé orders, aromatic flags, SSSR entry) bonded at its first atom
 * to `at`; returns the index of the ipso atom. subst[k] (k = 1..5 round the ring from ipso)
 * are element numbers of substituents (0 = H); an O substituent gets a methyl (OMe). */
static int phenyl(as_mol *m, int at, const int subst[6])
{
    int r[6];
    for (int k = 0; k < 6; k++) {
        r[k] = atom(m, 6, (k == 0 || (subst && subst[k])) ? 0 : 1);
        m->atoms[r[k]].aromatic = 1;
        m->atoms[r[k]].ring_size = 6;
    }
    for (int k = 0; k < 6; k++) {
        int b = as_mol_add_bond(m, r[k], r[(k + 1) % 6], k % 2 ? 1 : 2);
        assert_true(b >= 0);
        m->bonds[b].aromatic = 1;
        m->bonds[b].ring_size = 6;
    }
    bond(m, at, r[0], 1);
    for (int k = 1; subst && k < 6; k++) {
        if (!subst[k])
            continue;
        int s = atom(m, subst[k], subst[k] == 8 ? 0 : subst[k] == 6 ? 3 : 0);
        bond(m, r[k], s, 1);
        if (subst[k] == 8)
            bond(m, s, atom(m, 6, 3), 1);
    }
    int nr = m->nrings;
    m->ring_start = realloc(m->ring_start, (size_t)(nr + 2) * sizeof(int));
    int start = nr ? m->ring_start[nr] : 0;
    m->ring_atoms = realloc(m->ring_atoms, (size_t)(start + 6) * sizeof(int));
    m->ring_start[nr] = start;
    for (int k = 0; k < 6; k++)
        m->ring_atoms[start + k] = r[k];
    m->ring_start[nr + 1] = start + 6;
    m->nrings = nr + 1;
    return r[0];
}

static as_sites *find(as_mol *m)
{
    m->perceived = 1;
    as_sites *s = NULL;
    as_error err;
    assert_int_equal(as_sites_find(m, &s, &err), AS_OK);
    assert_non_null(s);
    return s;
}

/* Returns the end of site 0 whose atom is a. */
static const as_site_end *end_of(const as_sites *s, int site, int a)
{
    for (int k = 0; k < 2; k++)
        if (s->site[site].end[k].atom == a)
            return &s->site[site].end[k];
    fail_msg("atom %d is not an end of site %d", a, site);
    return NULL;
}

/* ---------------------------------------------------------------- tests */

static void sites_should_score_propene_secondary_end(void **state)
{
    (void)state;
    as_mol *m = as_mol_new(); /* C=CC */
    int c1 = atom(m, 6, 2), c2 = atom(m, 6, 1), c3 = atom(m, 6, 3);
    bond(m, c1, c2, 2);
    bond(m, c2, c3, 1);
    as_sites *s = find(m);
    assert_int_equal(s->n, 1);
    /* (CH3)2CH+ 246 vs C2H5+ 273, kcal/mol (secondary sources, constants.md) */
    assert_true(end_of(s, 0, c2)->cation_hia == 246.0);
    assert_true(end_of(s, 0, c1)->cation_hia == 273.0);
    assert_string_equal(end_of(s, 0, c2)->cation_kind, "secondary");
    /* Blanksby & Ellison 2003: (CH3)2CH–H 98.6, C2H5–H 101.1 */
    assert_true(end_of(s, 0, c2)->radical_bde == 98.6);
    assert_true(end_of(s, 0, c1)->radical_bde == 101.1);
    assert_true(end_of(s, 0, c1)->steric < end_of(s, 0, c2)->steric);
    assert_string_equal(s->site[0].cls, "monosubstituted");
    assert_int_equal(s->site[0].geometry, AS_GEOM_NONE);
    as_sites_free(s);
    as_mol_free(m);
}

static void sites_should_score_styrene_benzylic_end(void **state)
{
    (void)state;
    as_mol *m = as_mol_new(); /* C=Cc1ccccc1 */
    int c1 = atom(m, 6, 2), c2 = atom(m, 6, 1);
    bond(m, c1, c2, 2);
    phenyl(m, c2, NULL);
    as_sites *s = find(m);
    assert_int_equal(s->n, 1); /* the Kekulé ring bonds are aromatic, not sites */
    const as_site_end *b = end_of(s, 0, c2);
    /* 1-phenylethyl cation: secondary 246 plus the aryl correction benzyl − ethyl =
     * 238 − 273 = −35 (benzyl HIA from memory): 211 */
    assert_true(b->cation_hia > 210.99 && b->cation_hia < 211.01);
    assert_int_equal(b->n_aryl, 1);
    assert_string_equal(s->site[0].cls, "styrene");
    /* secondary C–H 98.6 plus benzyl − ethyl = 89.7 − 101.1 (benzyl from memory): 87.2 */
    assert_true(b->radical_bde > 87.19 && b->radical_bde < 87.21);
    assert_true(strstr(b->cation_kind, "benzylic") != NULL);
    as_sites_free(s);
    as_mol_free(m);
}

static void sites_should_lower_benzylic_hia_for_para_methoxy(void **state)
{
    (void)state;
    as_mol *m = as_mol_new(); /* C=Cc1ccc(OC)cc1 */
    int c1 = atom(m, 6, 2), c2 = atom(m, 6, 1);
    bond(m, c1, c2, 2);
    int sub[6] = {0, 0, 0, 8, 0, 0};
    phenyl(m, c2, sub);
    as_sites *s = find(m);
    const as_site_end *b = end_of(s, 0, c2);
    /* σ+(p-OMe) = −0.78, ρ = −4.54: 211 + 6.19 × (−0.78) ≈ 206.2 */
    assert_true(b->sigma_plus > -0.781 && b->sigma_plus < -0.779);
    assert_true(b->cation_hia > 206.0 && b->cation_hia < 206.4);
    assert_string_equal(b->aryl_note, "p-OMe");
    assert_string_equal(s->site[0].cls, "styrene:p-OMe");
    as_sites_free(s);
    as_mol_free(m);
}

static void sites_should_read_meta_chloro_sigma(void **state)
{
    (void)state;
    as_mol *m = as_mol_new(); /* C=Cc1cccc(Cl)c1 */
    int c1 = atom(m, 6, 2), c2 = atom(m, 6, 1);
    bond(m, c1, c2, 2);
    int sub[6] = {0, 0, 17, 0, 0, 0};
    phenyl(m, c2, sub);
    as_sites *s = find(m);
    const as_site_end *b = end_of(s, 0, c2);
    assert_true(b->sigma_plus > 0.399 && b->sigma_plus < 0.401); /* m-Cl +0.40, from memory */
    assert_string_equal(b->aryl_note, "m-Cl");
    assert_true(b->cation_hia > 211.0);
    as_sites_free(s);
    as_mol_free(m);
}

static void sites_should_favour_oxygen_end_of_enol_ether(void **state)
{
    (void)state;
    as_mol *m = as_mol_new(); /* C=COCC */
    int c1 = atom(m, 6, 2), c2 = atom(m, 6, 1), o = atom(m, 8, 0), c4 = atom(m, 6, 2),
        c5 = atom(m, 6, 3);
    bond(m, c1, c2, 2);
    bond(m, c2, o, 1);
    bond(m, o, c4, 1);
    bond(m, c4, c5, 1);
    as_sites *s = find(m);
    const as_site_end *b = end_of(s, 0, c2);
    assert_int_equal(b->donor_elem, 8);
    assert_string_equal(b->cation_kind, "oxocarbenium");
    assert_true(b->cation_hia < end_of(s, 0, c1)->cation_hia - 20.0);
    as_sites_free(s);
    as_mol_free(m);
}

static void sites_should_mark_acrylic_acid_acceptor_end(void **state)
{
    (void)state;
    as_mol *m = as_mol_new(); /* C=CC(=O)O */
    int c1 = atom(m, 6, 2), c2 = atom(m, 6, 1), c3 = atom(m, 6, 0), o1 = atom(m, 8, 0),
        o2 = atom(m, 8, 1);
    bond(m, c1, c2, 2);
    bond(m, c2, c3, 1);
    bond(m, c3, o1, 2);
    bond(m, c3, o2, 1);
    as_sites *s = find(m);
    assert_int_equal(s->n, 1); /* C=O is not a C=C site */
    assert_int_equal(s->site[0].acceptor_end, 1);
    assert_int_equal(end_of(s, 0, c2)->acceptor, AS_ACC_CARBONYL);
    /* α-C=O raises the secondary cation above 246 */
    assert_true(end_of(s, 0, c2)->cation_hia > 246.0);
    as_sites_free(s);
    as_mol_free(m);
}

static void sites_should_link_conjugated_diene(void **state)
{
    (void)state;
    as_mol *m = as_mol_new(); /* C=CC=C */
    int a = atom(m, 6, 2), b = atom(m, 6, 1), c = atom(m, 6, 1), d = atom(m, 6, 2);
    bond(m, a, b, 2);
    bond(m, b, c, 1);
    bond(m, c, d, 2);
    as_sites *s = find(m);
    assert_int_equal(s->n, 2);
    assert_int_equal(s->site[0].conj_site, 1);
    assert_int_equal(s->site[1].conj_site, 0);
    /* internal carbon of the diene: secondary allylic cation, 246 plus allyl − ethyl =
     * 256 − 273 = −17 (allyl from memory): 229 */
    assert_true(end_of(s, 0, b)->cation_hia == 229.0);
    assert_string_equal(end_of(s, 0, b)->cation_kind, "secondary allylic");
    assert_int_equal(end_of(s, 0, b)->vinyl_atom, c);
    as_sites_free(s);
    as_mol_free(m);
}

static void sites_should_class_trans_2_butene_from_marks(void **state)
{
    (void)state;
    as_mol *m = as_mol_new(); /* C/C=C/C */
    int a = atom(m, 6, 3), b = atom(m, 6, 1), c = atom(m, 6, 1), d = atom(m, 6, 3);
    bond(m, a, b, 1);
    int db = as_mol_add_bond(m, b, c, 2);
    bond(m, c, d, 1);
    as_dbstereo st = {db, a, d, 0};
    assert_true(as_mol_add_dbstereo(m, &st) >= 0);
    as_sites *s = find(m);
    assert_int_equal(s->site[0].geometry, AS_GEOM_TRANS);
    assert_string_equal(s->site[0].cls, "trans-1,2-disubstituted");
    /* both ends alike: equal scores, no end preferred */
    assert_true(s->site[0].end[0].cation_hia == s->site[0].end[1].cation_hia);
    as_sites_free(s);
    as_mol_free(m);
}

static void sites_should_treat_cyclohexene_as_ring_cis(void **state)
{
    (void)state;
    as_mol *m = as_mol_new(); /* C1=CCCCC1 */
    int r[6];
    for (int k = 0; k < 6; k++) {
        r[k] = atom(m, 6, k < 2 ? 1 : 2);
        m->atoms[r[k]].ring_size = 6;
    }
    for (int k = 0; k < 6; k++) {
        int b = as_mol_add_bond(m, r[k], r[(k + 1) % 6], k == 0 ? 2 : 1);
        m->bonds[b].ring_size = 6;
    }
    as_sites *s = find(m);
    assert_int_equal(s->n, 1);
    assert_int_equal(s->site[0].ring_size, 6);
    assert_int_equal(s->site[0].geometry, AS_GEOM_RING);
    assert_string_equal(s->site[0].cls, "cis-1,2-disubstituted");
    as_sites_free(s);
    as_mol_free(m);
}

static void sites_should_rank_tertiary_below_secondary_for_isobutylene(void **state)
{
    (void)state;
    as_mol *m = as_mol_new(); /* C=C(C)C */
    int c1 = atom(m, 6, 2), c2 = atom(m, 6, 0), c3 = atom(m, 6, 3), c4 = atom(m, 6, 3);
    bond(m, c1, c2, 2);
    bond(m, c2, c3, 1);
    bond(m, c2, c4, 1);
    as_sites *s = find(m);
    assert_true(end_of(s, 0, c2)->cation_hia == 231.0); /* (CH3)3C+ 231, secondary source */
    assert_true(end_of(s, 0, c2)->radical_bde == 96.5); /* tertiary C–H, Blanksby & Ellison */
    assert_string_equal(s->site[0].cls, "1,1-disubstituted");
    assert_true(end_of(s, 0, c1)->steric == 0.0);
    assert_true(end_of(s, 0, c2)->steric == 2.0);
    as_sites_free(s);
    as_mol_free(m);
}

static void sites_should_raise_cation_hia_next_to_perfluoroalkyl(void **state)
{
    (void)state;
    as_mol *m = as_mol_new(); /* C=CC(F)(F)F */
    int c1 = atom(m, 6, 2), c2 = atom(m, 6, 1), c3 = atom(m, 6, 0);
    bond(m, c1, c2, 2);
    bond(m, c2, c3, 1);
    for (int k = 0; k < 3; k++)
        bond(m, c3, atom(m, 9, 0), 1);
    as_sites *s = find(m);
    assert_int_equal(end_of(s, 0, c2)->acceptor, AS_ACC_PERFLUORO);
    assert_true(end_of(s, 0, c2)->cation_hia > 246.0);
    as_sites_free(s);
    as_mol_free(m);
}

static void sites_should_refuse_unperceived_molecule(void **state)
{
    (void)state;
    as_mol *m = as_mol_new();
    int a = atom(m, 6, 2), b = atom(m, 6, 2);
    bond(m, a, b, 2);
    m->perceived = 0;
    as_sites *s = (as_sites *)1;
    as_error err;
    assert_int_equal(as_sites_find(m, &s, &err), AS_ERR_ARG);
    assert_null(s);
    assert_int_equal(err.code, AS_ERR_ARG);
    as_mol_free(m);
}

static void sites_should_find_none_in_saturated_molecule(void **state)
{
    (void)state;
    as_mol *m = as_mol_new();
    int a = atom(m, 6, 3), b = atom(m, 6, 3);
    bond(m, a, b, 1);
    as_sites *s = find(m);
    assert_int_equal(s->n, 0);
    as_sites_free(s);
    as_mol_free(m);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(sites_should_score_propene_secondary_end),
        cmocka_unit_test(sites_should_score_styrene_benzylic_end),
        cmocka_unit_test(sites_should_lower_benzylic_hia_for_para_methoxy),
        cmocka_unit_test(sites_should_read_meta_chloro_sigma),
        cmocka_unit_test(sites_should_favour_oxygen_end_of_enol_ether),
        cmocka_unit_test(sites_should_mark_acrylic_acid_acceptor_end),
        cmocka_unit_test(sites_should_link_conjugated_diene),
        cmocka_unit_test(sites_should_class_trans_2_butene_from_marks),
        cmocka_unit_test(sites_should_treat_cyclohexene_as_ring_cis),
        cmocka_unit_test(sites_should_rank_tertiary_below_secondary_for_isobutylene),
        cmocka_unit_test(sites_should_raise_cation_hia_next_to_perfluoroalkyl),
        cmocka_unit_test(sites_should_refuse_unperceived_molecule),
        cmocka_unit_test(sites_should_find_none_in_saturated_molecule),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
