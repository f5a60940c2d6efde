/* test_canon.c — canonical SMILES: one string per molecule whatever the input order, stereo
 * kept where real and dropped where not. Identities are chemistry facts (common practice);
 * the large cross-check against RDKit is tests/check_rdkit_canon.py. */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>

#include <stdlib.h>
#include <string.h>

#include "addsite/canon.h"
#include "addsite/smiles.h"

#include <stdio.h>

static char *canon(const char *s)
{
    char *out = NULL;
    as_error err;
    if (as_canon_from_text(s, strlen(s), NULL, &out, &err) != AS_OK)
        fail_msg("'%s' should canonicalise: %s", s, err.msg);
    return out;
}

static void expect_same(const char *a, const char *b)
{
    char *x = canon(a), *y = canon(b);
    if (strcmp(x, y) != 0)
        fail_msg("'%s' -> '%s' but '%s' -> '%s'", a, x, b, y);
    free(x);
    free(y);
}

static void expect_differ(const char *a, const char *b)
{
    char *x = canon(a), *y = canon(b);
    if (strcmp(x, y) == 0)
        fail_msg("'%s' and '%s' both -> '%s'", a, b, x);
    free(x);
    free(y);
}

static void canon_should_not_depend_on_atom_order(void **state)
{
    (void)state;
    expect_same("OCC", "CCO");
    expect_same("c1ccccc1", "C1=CC=CC=C1");
    expect_same("Oc1ccccc1C", "Cc1c(O)cccc1");
    expect_same("C1CCCCC1C(=O)O", "OC(=O)C1CCCCC1");
    expect_same("[H]C([H])([H])O", "CO");
    expect_same("[Na+].[O-]C(C)=O", "CC(=O)[O-].[Na+]");
}

static void canon_should_keep_real_stereo(void **state)
{
    (void)state;
    expect_same("N[C@](Br)(O)C", "N[C@@](Br)(C)O");
    expect_same("F/C=C/F", "C(\\F)=C/F");
    expect_differ("F/C=C/F", "F/C=C\\F");
    expect_differ("N[C@](Br)(O)C", "N[C@@](Br)(O)C");
    /* meso 2,3-dibromobutane written from either end */
    expect_same("C[C@@H](Br)[C@H](C)Br", "C[C@H](Br)[C@@H](C)Br");
    /* cis-1,4-dimethylcyclohexane: ring stereo without a classic stereocentre */
    expect_differ("C[C@H]1CC[C@@H](C)CC1", "C[C@H]1CC[C@H](C)CC1");
}

static void canon_should_drop_marks_that_are_not_stereo(void **state)
{
    (void)state;
    char *s = canon("C[C@H](C)O");
    assert_string_equal(s, "CC(C)O");
    free(s);
    s = canon("C/C(C)=C/C");
    assert_null(strchr(s, '/'));
    free(s);
}

static void canon_should_be_idempotent(void **state)
{
    (void)state;
    const char *in[] = {"C[C@H]1CC[C@@H](O)CC1", "O=C(O)/C=C\\C(=O)O", "c1ccc2[nH]ccc2c1",
                        "[13CH3][C@@H](N)C(=O)O", "C[N+](C)(C)C.[Cl-]"};
    for (size_t i = 0; i < sizeof in / sizeof in[0]; i++) {
        char *a = canon(in[i]);
        char *b = canon(a);
        assert_string_equal(a, b);
        free(a);
        free(b);
    }
}

static void canon_should_drop_maps_on_request(void **state)
{
    (void)state;
    as_canon_opts o;
    as_canon_opts_init(&o);
    o.atom_maps = 0;
    char *out = NULL;
    as_error err;
    assert_int_equal(as_canon_from_text("[CH3:1][CH2:2][OH:3]", 20, &o, &out, &err), AS_OK);
    assert_string_equal(out, "CCO");
    free(out);
}

/* "head" + n × "C" + "tail" in a new string. */
static char *chain(const char *head, int n, const char *tail)
{
    size_t lh = strlen(head), lt = strlen(tail);
    char *s = malloc(lh + (size_t)n + lt + 1);
    assert_non_null(s);
    memcpy(s, head, lh);
    memset(s + lh, 'C', (size_t)n);
    memcpy(s + lh + (size_t)n, tail, lt + 1);
    return s;
}

/* The ranking has a one-word key path for molecules of up to 64 atoms without differing
 * isotopes or map numbers, a stack buffer for small molecules and a shortcut for one-piece
 * molecules of up to 256 atoms; the other paths must give one string per molecule too. */
static void canon_should_not_depend_on_atom_order_on_every_path(void **state)
{
    (void)state;
    expect_same("OC[13CH2]C", "C[13CH2]CO");
    expect_same("[CH3:2]C[OH:1]", "[OH:1]C[CH3:2]");
    expect_differ("[13CH3]CCO", "C[13CH2]CO");
    const int len[] = {58, 60, 61, 66, 150, 300}; /* 62 to 304 atoms */
    for (size_t i = 0; i < sizeof len / sizeof len[0]; i++) {
        char *a = chain("OC(C)", len[i], "N"), *b = chain("N", len[i], "C(C)O");
        char *c = chain("[Na+].[O-]C(C)", len[i], "N"), *d = chain("N", len[i], "C(C)[O-].[Na+]");
        expect_same(a, b);
        expect_same(c, d);
        free(a);
        free(b);
        free(c);
        free(d);
    }
}

static as_mol *parse(const char *s)
{
    as_mol *m = NULL;
    as_error err;
    if (as_smiles_parse(s, strlen(s), &m, &err) != AS_OK)
        fail_msg("'%s' should parse: %s", s, err.msg);
    return m;
}

/* m's string through as_canon_smiles and through as_canon_smiles_ranked with r must match. */
static void expect_ranked_same(const as_mol *m, const as_canon_opts *o, const as_canon_ranking *r,
                               const char *what)
{
    char *plain = NULL, *ranked = NULL;
    as_error err;
    assert_int_equal(as_canon_smiles(m, o, &plain, &err), AS_OK);
    assert_int_equal(as_canon_smiles_ranked(m, o, r, &ranked, &err), AS_OK);
    if (strcmp(plain, ranked) != 0)
        fail_msg("%s: written fresh '%s', from the kept ranking '%s'", what, plain, ranked);
    free(plain);
    free(ranked);
}

/* Keeps the ranking of m and checks, for m, its mirror image (every @/@@ inverted) and m
 * without any stereo record, under the default, no-stereo and no-isotope options, that the
 * ranking fits and gives the string written from scratch. Returns 1 when a ranking was kept. */
static int check_kept_ranking(as_mol *m, const char *what)
{
    int *cls = malloc((size_t)(m->natoms ? m->natoms : 1) * sizeof(int));
    assert_non_null(cls);
    as_canon_ranking *r = NULL;
    as_error err;
    assert_int_equal(as_canon_classes_keep(m, cls, &r, &err), AS_OK);
    /* the classes are those of as_canon_classes */
    int *cls2 = malloc((size_t)(m->natoms ? m->natoms : 1) * sizeof(int));
    assert_non_null(cls2);
    assert_int_equal(as_canon_classes(m, cls2, &err), AS_OK);
    assert_memory_equal(cls, cls2, (size_t)m->natoms * sizeof(int));
    free(cls);
    free(cls2);
    if (!r)
        return 0;
    as_canon_opts o[3];
    for (int k = 0; k < 3; k++)
        as_canon_opts_init(&o[k]);
    o[1].stereo = 0;
    o[2].isotopes = 0;
    as_mol *mirror = as_mol_copy(m), *flat = as_mol_copy(m);
    assert_non_null(mirror);
    assert_non_null(flat);
    for (int i = 0; i < mirror->ntetra; i++)
        mirror->tetra[i].parity = mirror->tetra[i].parity == AS_CCW ? AS_CW : AS_CCW;
    for (int i = 0; i < mirror->ndbs; i++)
        mirror->dbs[i].cis = !mirror->dbs[i].cis;
    flat->ntetra = flat->ndbs = 0;
    const as_mol *forms[3] = {m, mirror, flat};
    for (int f = 0; f < 3; f++)
        for (int k = 0; k < 3; k++) {
            if (!as_canon_ranking_fits(r, forms[f], &o[k]))
                fail_msg("%s: the kept ranking should fit form %d, options %d", what, f, k);
            expect_ranked_same(forms[f], &o[k], r, what);
        }
    as_mol_free(mirror);
    as_mol_free(flat);
    as_canon_ranking_free(r);
    return 1;
}

/* Every molecule of the RDKit cross-check set (tests/data/canon_set.smi: stereocentres,
 * E/Z bonds, meso and ring stereo, fused and bridged rings, charges, isotopes). */
static void kept_ranking_should_write_the_same_string_as_a_fresh_one(void **state)
{
    (void)state;
    const char *src = getenv("AS_SOURCE_DIR");
    if (!src)
        fail_msg("AS_SOURCE_DIR is not set (run the test through ctest)");
    char path[4096];
    snprintf(path, sizeof path, "%s/tests/data/canon_set.smi", src);
    FILE *f = fopen(path, "r");
    if (!f)
        fail_msg("cannot open %s", path);
    char line[8192];
    int n = 0, kept = 0, lineno = 0;
    while (fgets(line, sizeof line, f)) {
        lineno++;
        if (line[0] == '#' || line[0] == '\n')
            continue;
        line[strcspn(line, "\t\r\n")] = '\0';
        as_mol *m = parse(line);
        char what[64];
        snprintf(what, sizeof what, "canon_set.smi line %d", lineno);
        kept += check_kept_ranking(m, what);
        n++;
        as_mol_free(m);
    }
    fclose(f);
    /* the file holds 3,166 molecules; rankings are not kept for salts (several pieces) */
    print_message("%d molecules, %d rankings kept\n", n, kept);
    assert_true(n >= 3000);
    assert_true(kept >= n * 9 / 10);
}

/* The other ranking paths: over 64 atoms (two-word keys), a differing isotope, a heap block
 * (past the stack buffer) and over 256 atoms (connectivity found by components). */
static void kept_ranking_should_fit_on_every_ranking_path(void **state)
{
    (void)state;
    const int len[] = {3, 60, 66, 150, 300};
    for (size_t i = 0; i < sizeof len / sizeof len[0]; i++) {
        char *a = chain("O[C@@H](C)", len[i], "[C@H](N)C=C/C=C/[13CH3]");
        as_mol *m = parse(a);
        assert_int_equal(check_kept_ranking(m, a), 1);
        as_mol_free(m);
        free(a);
    }
}

/* No ranking is kept where the writer would not use it: salts are written piece by piece,
 * and explicit [H] atoms are folded into their neighbour first. */
static void kept_ranking_should_be_absent_where_unused(void **state)
{
    (void)state;
    const char *in[] = {"[Na+].[O-]C(C)=O", "[H]C([H])([H])O", "CCO.O"};
    for (size_t i = 0; i < sizeof in / sizeof in[0]; i++) {
        as_mol *m = parse(in[i]);
        assert_int_equal(check_kept_ranking(m, in[i]), 0);
        expect_ranked_same(m, NULL, NULL, in[i]);
        as_mol_free(m);
    }
}

/* A ranking kept for one molecule must not be used for another with as many atoms (other
 * element, charge, H count, bond order, connection, isotope, map number, atom order), nor
 * when map numbers are dropped (they are part of the ranking's initial key). */
static void kept_ranking_of_another_molecule_should_not_be_used(void **state)
{
    (void)state;
    const struct {
        const char *kept, *other;
    } pair[] = {
        {"CCO", "CCN"},
        {"CCO", "CC[O-]"},
        {"CCO", "OCC"},
        {"CC=CC", "C=CCC"},
        {"CC(C)CC", "CCCCC"},
        {"C1CCCC1C", "CC1CCCC1"},
        {"C[C@H](O)CC", "C[C@H](O)C[13CH3]"},
        {"[CH3:1]CO", "[CH3:2]CO"},
        {"c1ccccc1C", "C1=CC=CC=C1C"}, /* same molecule, atoms in the same order: fits */
    };
    for (size_t i = 0; i < sizeof pair / sizeof pair[0]; i++) {
        as_mol *a = parse(pair[i].kept), *b = parse(pair[i].other);
        int *cls = malloc((size_t)a->natoms * sizeof(int));
        assert_non_null(cls);
        as_canon_ranking *r = NULL;
        as_error err;
        assert_int_equal(as_canon_classes_keep(a, cls, &r, &err), AS_OK);
        assert_non_null(r);
        assert_int_equal(a->natoms, b->natoms);
        int same = i == sizeof pair / sizeof pair[0] - 1;
        if (as_canon_ranking_fits(r, b, NULL) != same)
            fail_msg("ranking of %s %s %s", pair[i].kept, same ? "should fit" : "should not fit",
                     pair[i].other);
        expect_ranked_same(b, NULL, r, pair[i].other);
        assert_true(as_canon_ranking_fits(r, a, NULL));
        as_canon_opts o;
        as_canon_opts_init(&o);
        o.atom_maps = 0;
        assert_false(as_canon_ranking_fits(r, a, &o));
        expect_ranked_same(a, &o, r, pair[i].kept);
        assert_false(as_canon_ranking_fits(NULL, a, NULL));
        as_canon_ranking_free(r);
        free(cls);
        as_mol_free(a);
        as_mol_free(b);
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(canon_should_not_depend_on_atom_order),
        cmocka_unit_test(canon_should_keep_real_stereo),
        cmocka_unit_test(canon_should_drop_marks_that_are_not_stereo),
        cmocka_unit_test(canon_should_be_idempotent),
        cmocka_unit_test(canon_should_drop_maps_on_request),
        cmocka_unit_test(canon_should_not_depend_on_atom_order_on_every_path),
        cmocka_unit_test(kept_ranking_should_write_the_same_string_as_a_fresh_one),
        cmocka_unit_test(kept_ranking_should_fit_on_every_ranking_path),
        cmocka_unit_test(kept_ranking_should_be_absent_where_unused),
        cmocka_unit_test(kept_ranking_of_another_molecule_should_not_be_used),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
