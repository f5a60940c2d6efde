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

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(canon_should_not_depend_on_atom_order),
        cmocka_unit_test(canon_should_keep_real_stereo),
        cmocka_unit_test(canon_should_drop_marks_that_are_not_stereo),
        cmocka_unit_test(canon_should_be_idempotent),
        cmocka_unit_test(canon_should_drop_maps_on_request),
        cmocka_unit_test(canon_should_not_depend_on_atom_order_on_every_path),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
