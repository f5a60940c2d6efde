/* test_rules.c — tests of lib/rules.c and lib/rules_recog.c: the rule files in reactions/,
 * the embedded copy, reagent recognition and the loader's error reports.
 * Files are found through $AS_SOURCE_DIR (set by ctest). */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>

#include <cmocka.h>

#include <math.h>
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "addsite/rules.h"
#include "addsite/smiles.h"
#include "rules_int.h"

/* ---------------------------------------------------------------- helpers */

static const char *source_dir(void)
{
    const char *s = getenv("AS_SOURCE_DIR");
    if (!s || !s[0]) {
        fail_msg("AS_SOURCE_DIR is not set (run the test through ctest)");
        return ".";
    }
    return s;
}

static char *path_of(const char *rel)
{
    const char *dir = source_dir();
    size_t n = strlen(dir) + strlen(rel) + 2;
    char *p = malloc(n);
    assert_non_null(p);
    snprintf(p, n, "%s/%s", dir, rel);
    return p;
}

static char *slurp(const char *path, size_t *len)
{
    FILE *f = fopen(path, "rb");
    if (!f)
        fail_msg("cannot open %s", path);
    char *buf = NULL;
    size_t cap = 0, n = 0;
    for (;;) {
        if (n + 4096 > cap) {
            cap = cap ? cap * 2 : 8192;
            buf = realloc(buf, cap);
            assert_non_null(buf);
        }
        size_t got = fread(buf + n, 1, cap - n - 1, f);
        n += got;
        if (got == 0)
            break;
    }
    fclose(f);
    buf[n] = '\0';
    *len = n;
    return buf;
}

static as_rules *load_source_table(void)
{
    char *dir = path_of("reactions");
    as_rules *t = NULL;
    as_error err;
    as_status st = as_rules_load_dir(dir, &t, &err);
    if (st != AS_OK)
        fail_msg("loading %s: %s", dir, err.msg);
    free(dir);
    return t;
}

static void assert_contains(const char *hay, const char *needle)
{
    if (!strstr(hay, needle))
        fail_msg("expected \"%s\" in \"%s\"", needle, hay);
}

static int same_str(const char *a, const char *b)
{
    if (!a || !b)
        return a == b;
    return strcmp(a, b) == 0;
}

/* ---------------------------------------------------------------- the table itself */

static const char *const all_ids[] = {
    "hx", "hbr_radical", "acid_hydration", "hydroboration", "hydroboration_9bbn",
    "hydroboration_sia2bh", "oxymercuration", "alkoxymercuration", "halogenation",
    "halohydrin", "epoxidation", "syn_dihydroxylation", "hydrogenation", "ozonolysis",
};
#define NIDS ((int)(sizeof all_ids / sizeof all_ids[0]))

static void rules_should_load_every_reaction_class_from_the_source_dir(void **state)
{
    (void)state;
    as_rules *t = load_source_table();
    assert_int_equal(as_rules_count(t), NIDS);
    for (int i = 0; i < NIDS; i++) {
        const as_rule *r = as_rules_find(t, all_ids[i]);
        if (!r)
            fail_msg("rule %s missing", all_ids[i]);
        assert_string_equal(r->id, all_ids[i]);
        assert_true(r->nvariants > 0);
        assert_true(r->nhazards > 0);
        assert_non_null(r->stereo_source);
        assert_non_null(strstr(r->file, "reactions/"));
    }
    /* sorted by file name */
    assert_string_equal(as_rules_get(t, 0)->id, "acid_hydration");
    assert_null(as_rules_get(t, NIDS));
    assert_null(as_rules_get(t, -1));
    assert_null(as_rules_find(t, "no_such_rule"));
    as_rules_free(t);
}

/* Every field of two tables must agree (the embedded copy is generated from reactions/). */
static void rules_embedded_copy_should_agree_with_the_source_dir(void **state)
{
    (void)state;
    as_rules *a = load_source_table(), *b = NULL;
    as_error err;
    assert_int_equal(as_rules_load_embedded(&b, &err), AS_OK);
    assert_int_equal(as_rules_count(a), as_rules_count(b));
    for (int i = 0; i < as_rules_count(a); i++) {
        const as_rule *x = as_rules_get(a, i), *y = as_rules_get(b, i);
        assert_string_equal(x->id, y->id);
        assert_string_equal(x->title, y->title);
        assert_string_equal(x->summary, y->summary);
        assert_int_equal(x->regio, y->regio);
        assert_int_equal(x->stereo, y->stereo);
        assert_int_equal(x->shifts, y->shifts);
        assert_int_equal(x->conjugate, y->conjugate);
        assert_true(x->bulk == y->bulk);
        assert_int_equal(x->nvariants, y->nvariants);
        for (int v = 0; v < x->nvariants; v++) {
            const as_rule_variant *p = &x->variants[v], *q = &y->variants[v];
            assert_string_equal(p->name, q->name);
            assert_true(same_str(p->first, q->first));
            assert_true(same_str(p->second, q->second));
            assert_true(same_str(p->bridge, q->bridge));
            assert_true(same_str(p->workup, q->workup));
            assert_true(same_str(p->reagent_smiles, q->reagent_smiles));
            assert_int_equal(p->nagents, q->nagents);
            for (int k = 0; k < p->nagents; k++)
                assert_string_equal(p->agents[k], q->agents[k]);
        }
        assert_int_equal(x->nfigures, y->nfigures);
        for (int f = 0; f < x->nfigures; f++) {
            assert_string_equal(x->figures[f].cls, y->figures[f].cls);
            assert_true(x->figures[f].percent == y->figures[f].percent);
            assert_string_equal(x->figures[f].source, y->figures[f].source);
        }
        assert_int_equal(x->nhazards, y->nhazards);
        for (int h = 0; h < x->nhazards; h++)
            assert_string_equal(x->hazards[h], y->hazards[h]);
        assert_int_equal(strncmp(y->file, "<embedded>/", 11), 0);
    }
    as_rules_free(a);
    as_rules_free(b);
}

static void rules_should_state_the_documented_regio_and_stereo_modes(void **state)
{
    (void)state;
    as_rules *t = load_source_table();
    static const struct {
        const char *id;
        as_regio regio;
        as_addmode stereo;
        int shifts, conjugate;
    } want[] = {
        /* DESIGN.md "the science": free cations shift (HX, acid hydration) and only HX adds
         * conjugately; syn for hydroboration, epoxidation, OsO4, H2; anti for X2 and
         * halohydrin. Oxymercuration keeps no stereo after NaBH4 (common practice). */
        {"hx", AS_REGIO_CATION, AS_ADD_NONE, 1, 1},
        {"hbr_radical", AS_REGIO_RADICAL, AS_ADD_NONE, 0, 0},
        {"acid_hydration", AS_REGIO_CATION, AS_ADD_NONE, 1, 0},
        {"hydroboration", AS_REGIO_BORANE, AS_ADD_SYN, 0, 0},
        {"hydroboration_9bbn", AS_REGIO_BORANE, AS_ADD_SYN, 0, 0},
        {"hydroboration_sia2bh", AS_REGIO_BORANE, AS_ADD_SYN, 0, 0},
        {"oxymercuration", AS_REGIO_CATION, AS_ADD_NONE, 0, 0},
        {"alkoxymercuration", AS_REGIO_CATION, AS_ADD_NONE, 0, 0},
        {"halogenation", AS_REGIO_NONE, AS_ADD_ANTI, 0, 0},
        {"halohydrin", AS_REGIO_CATION, AS_ADD_ANTI, 0, 0},
        {"epoxidation", AS_REGIO_NONE, AS_ADD_SYN, 0, 0},
        {"syn_dihydroxylation", AS_REGIO_NONE, AS_ADD_SYN, 0, 0},
        {"hydrogenation", AS_REGIO_NONE, AS_ADD_SYN, 0, 0},
        {"ozonolysis", AS_REGIO_CLEAVE, AS_ADD_NONE, 0, 0},
    };
    for (size_t i = 0; i < sizeof want / sizeof want[0]; i++) {
        const as_rule *r = as_rules_find(t, want[i].id);
        assert_non_null(r);
        if (r->regio != want[i].regio || r->stereo != want[i].stereo ||
            r->shifts != want[i].shifts || r->conjugate != want[i].conjugate)
            fail_msg("%s: regio %d stereo %d shifts %d conjugate %d", r->id, r->regio,
                     r->stereo, r->shifts, r->conjugate);
    }
    /* Steric demand: BH3 is the unit; the dialkylboranes are bulkier, 9-BBN most. */
    double bh3 = as_rules_find(t, "hydroboration")->bulk;
    double sia = as_rules_find(t, "hydroboration_sia2bh")->bulk;
    double bbn = as_rules_find(t, "hydroboration_9bbn")->bulk;
    assert_true(bh3 == 1.0);
    assert_true(sia > bh3 && bbn > sia);
    assert_true(as_rules_find(t, "hx")->bulk == 0.0);
    as_rules_free(t);
}

static const as_rule_variant *variant(const as_rules *t, const char *id, const char *name)
{
    const as_rule *r = as_rules_find(t, id);
    assert_non_null(r);
    for (int i = 0; i < r->nvariants; i++)
        if (strcmp(r->variants[i].name, name) == 0)
            return &r->variants[i];
    fail_msg("%s has no variant %s", id, name);
    return NULL;
}

static void rules_variants_should_carry_the_product_groups(void **state)
{
    (void)state;
    as_rules *t = load_source_table();
    static const struct {
        const char *id, *name, *first, *second, *bridge, *workup, *reagent;
    } want[] = {
        {"hx", "HBr", "[H]", "Br", NULL, NULL, "Br"},
        {"hx", "HCl", "[H]", "Cl", NULL, NULL, "Cl"},
        {"hx", "HI", "[H]", "I", NULL, NULL, "I"},
        {"hbr_radical", "HBr/ROOR", "Br", "[H]", NULL, NULL, "Br"},
        {"acid_hydration", "H2O/H2SO4", "[H]", "O", NULL, NULL, "O"},
        {"hydroboration", "BH3; H2O2/NaOH", "O", "[H]", NULL, NULL, "O"},
        {"hydroboration_9bbn", "9-BBN; H2O2/NaOH", "O", "[H]", NULL, NULL, "O"},
        {"hydroboration_sia2bh", "Sia2BH; H2O2/NaOH", "O", "[H]", NULL, NULL, "O"},
        {"oxymercuration", "Hg(OAc)2/H2O; NaBH4", "[H]", "O", NULL, NULL, "O"},
        {"alkoxymercuration", "Hg(II)/MeOH; NaBH4", "[H]", "OC", NULL, NULL, "CO"},
        {"alkoxymercuration", "Hg(II)/EtOH; NaBH4", "[H]", "OCC", NULL, NULL, "CCO"},
        {"alkoxymercuration", "Hg(II)/i-PrOH; NaBH4", "[H]", "OC(C)C", NULL, NULL, "CC(C)O"},
        {"halogenation", "Br2", "Br", "Br", NULL, NULL, "BrBr"},
        {"halogenation", "Cl2", "Cl", "Cl", NULL, NULL, "ClCl"},
        {"halohydrin", "Br2/H2O", "Br", "O", NULL, NULL, "OBr"},
        {"halohydrin", "NBS/H2O", "Br", "O", NULL, NULL, "OBr"},
        {"halohydrin", "Cl2/H2O", "Cl", "O", NULL, NULL, "OCl"},
        {"halohydrin", "NBS/MeOH", "Br", "OC", NULL, NULL, "COBr"},
        {"epoxidation", "mCPBA", NULL, NULL, "O", NULL, "[O]"},
        {"syn_dihydroxylation", "OsO4/NMO", "O", "O", NULL, NULL, "OO"},
        {"hydrogenation", "H2/Pd", "[H]", "[H]", NULL, NULL, "[H][H]"},
        {"ozonolysis", "O3; Me2S", NULL, NULL, NULL, "reductive", "O=O"},
        {"ozonolysis", "O3; H2O2", NULL, NULL, NULL, "oxidative", NULL},
    };
    for (size_t i = 0; i < sizeof want / sizeof want[0]; i++) {
        const as_rule_variant *v = variant(t, want[i].id, want[i].name);
        if (!same_str(v->first, want[i].first) || !same_str(v->second, want[i].second) ||
            !same_str(v->bridge, want[i].bridge) || !same_str(v->workup, want[i].workup) ||
            !same_str(v->reagent_smiles, want[i].reagent))
            fail_msg("%s / %s: groups differ", want[i].id, want[i].name);
    }
    as_rules_free(t);
}

static const as_rule_figure *figure(const as_rule *r, const char *cls, const char *example)
{
    for (int i = 0; i < r->nfigures; i++)
        if (strcmp(r->figures[i].cls, cls) == 0 &&
            (!example || same_str(r->figures[i].example, example)))
            return &r->figures[i];
    fail_msg("%s has no figure for %s", r->id, cls);
    return NULL;
}

static void rules_figures_should_match_the_published_borane_ratios(void **state)
{
    (void)state;
    as_rules *t = load_source_table();
    /* Brown & Zweifel, J. Am. Chem. Soc. 1960, 82, 4708 (from memory): BH3 puts boron on
     * C1 of 1-hexene 94:6, on the CH2 of styrene 80:20, on C3 of 2-methyl-2-butene 98:2. */
    const as_rule *bh3 = as_rules_find(t, "hydroboration");
    assert_true(figure(bh3, "monosubstituted", "C=CCCCC")->percent == 94.0);
    assert_true(figure(bh3, "styrene", NULL)->percent == 80.0);
    assert_true(figure(bh3, "trisubstituted", NULL)->percent == 98.0);
    assert_string_equal(figure(bh3, "styrene", NULL)->first_end, "less_substituted");
    /* Brown, Knights & Scouten 1974 (9-BBN, styrene 98.5:1.5) and Brown & Zweifel 1961
     * (Sia2BH, styrene 98:2), both from memory, as in the reference cases C073/C074. */
    assert_true(figure(as_rules_find(t, "hydroboration_9bbn"), "styrene", NULL)->percent == 98.5);
    assert_true(figure(as_rules_find(t, "hydroboration_sia2bh"), "styrene", NULL)->percent ==
                98.0);
    /* Every figure names a source and stays in 0..100. */
    for (int i = 0; i < as_rules_count(t); i++) {
        const as_rule *r = as_rules_get(t, i);
        for (int f = 0; f < r->nfigures; f++) {
            assert_true(r->figures[f].percent >= 0.0 && r->figures[f].percent <= 100.0);
            assert_true(strlen(r->figures[f].source) > 10);
        }
    }
    as_rules_free(t);
}

/* ---------------------------------------------------------------- recognition */

typedef struct text_case {
    char *text, *rule, *variant, *temp, *equiv, *source;
} text_case;

/* Reads tests/data/rules/reagent_texts.tsv; returns the rows (caller frees buf and rows). */
static text_case *read_cases(char **buf_out, int *n_out)
{
    char *path = path_of("tests/data/rules/reagent_texts.tsv");
    size_t len = 0;
    char *buf = slurp(path, &len);
    free(path);
    int cap = 128, n = 0;
    text_case *rows = calloc((size_t)cap, sizeof *rows);
    assert_non_null(rows);
    int header = 1;
    for (char *line = buf; line && *line;) {
        char *nl = strchr(line, '\n');
        if (nl)
            *nl = '\0';
        if (line[0] && line[0] != '#') {
            if (header) {
                header = 0;
            } else {
                char *f[6] = {0};
                char *p = line;
                for (int k = 0; k < 6; k++) {
                    f[k] = p;
                    char *tab = p ? strchr(p, '\t') : NULL;
                    if (tab) {
                        *tab = '\0';
                        p = tab + 1;
                    } else {
                        p = NULL;
                    }
                }
                assert_non_null(f[5]);
                assert_true(n < cap);
                rows[n++] = (text_case){f[0], f[1], f[2], f[3], f[4], f[5]};
            }
        }
        line = nl ? nl + 1 : NULL;
    }
    *buf_out = buf;
    *n_out = n;
    return rows;
}

static void rules_should_recognise_every_reagent_text_of_the_reference_list(void **state)
{
    (void)state;
    as_rules *t = load_source_table();
    char *buf = NULL;
    int n = 0;
    text_case *rows = read_cases(&buf, &n);
    assert_true(n >= 70);
    int seen[NIDS] = {0};
    for (int i = 0; i < n; i++) {
        as_reagent_match m;
        as_error err;
        as_status st = as_rules_recognise(t, rows[i].text, strlen(rows[i].text), &m, &err);
        if (st != AS_OK)
            fail_msg("\"%s\" (%s): %s", rows[i].text, rows[i].source, err.msg);
        if (strcmp(m.rule->id, rows[i].rule) != 0 || strcmp(m.variant->name, rows[i].variant))
            fail_msg("\"%s\" (%s): got %s / %s, want %s / %s", rows[i].text, rows[i].source,
                     m.rule->id, m.variant->name, rows[i].rule, rows[i].variant);
        if (rows[i].temp[0]) {
            if (!m.has_temp || fabs(m.temp_c - atof(rows[i].temp)) > 1e-9)
                fail_msg("\"%s\": temperature %g (has %d), want %s", rows[i].text, m.temp_c,
                         m.has_temp, rows[i].temp);
        } else if (m.has_temp || !isnan(m.temp_c)) {
            fail_msg("\"%s\": no temperature expected, got %g", rows[i].text, m.temp_c);
        }
        double eq = rows[i].equiv[0] ? atof(rows[i].equiv) : 0.0;
        if (fabs(m.equiv - eq) > 1e-9)
            fail_msg("\"%s\": equiv %g, want %g", rows[i].text, m.equiv, eq);
        for (int k = 0; k < NIDS; k++)
            if (strcmp(all_ids[k], m.rule->id) == 0)
                seen[k]++;
    }
    /* every rule is reached by at least two usual texts */
    for (int k = 0; k < NIDS; k++)
        if (seen[k] < 2)
            fail_msg("rule %s recognised from %d texts only", all_ids[k], seen[k]);
    free(rows);
    free(buf);
    as_rules_free(t);
}

static void rules_should_list_the_table_when_nothing_is_recognised(void **state)
{
    (void)state;
    as_rules *t = load_source_table();
    as_reagent_match m;
    as_error err;
    const char *text = "NaCl, acetone";
    assert_int_equal(as_rules_recognise(t, text, strlen(text), &m, &err), AS_ERR_REAGENT);
    assert_int_equal(err.code, AS_ERR_REAGENT);
    assert_null(m.rule);
    assert_contains(err.msg, "not recognised");
    assert_contains(err.msg, "hx");
    assert_contains(err.msg, "hydroboration_9bbn");
    assert_contains(err.msg, "ozonolysis");
    assert_contains(err.msg, "syn_dihydroxylation");   /* the last id still fits */
    /* a variant veto: hot or acidic permanganate cleaves the C=C instead */
    const char *hot = "KMnO4, H2SO4, heat";
    assert_int_equal(as_rules_recognise(t, hot, strlen(hot), &m, &err), AS_ERR_REAGENT);
    /* a rule veto: "no peroxide" keeps HBr with the ionic rule even when peroxides appear */
    const char *ionic = "HBr, no peroxides";
    assert_int_equal(as_rules_recognise(t, ionic, strlen(ionic), &m, &err), AS_OK);
    assert_string_equal(m.rule->id, "hx");
    /* NBS alone is allylic bromination, not an addition in this table */
    assert_int_equal(as_rules_recognise(t, "NBS, CCl4, hv", 13, &m, &err), AS_ERR_REAGENT);
    as_rules_free(t);
}

static void rules_should_name_the_competitors_when_texts_are_ambiguous(void **state)
{
    (void)state;
    as_rules *t = load_source_table();
    as_reagent_match m;
    as_error err;
    const char *text = "HBr, Br2";
    assert_int_equal(as_rules_recognise(t, text, strlen(text), &m, &err), AS_ERR_REAGENT);
    assert_contains(err.msg, "ambiguous");
    assert_contains(err.msg, "hx (HBr)");
    assert_contains(err.msg, "halogenation (Br2)");
    text = "mCPBA; OsO4, NMO";
    assert_int_equal(as_rules_recognise(t, text, strlen(text), &m, &err), AS_ERR_REAGENT);
    assert_contains(err.msg, "epoxidation");
    assert_contains(err.msg, "syn_dihydroxylation");
    as_rules_free(t);
}

static void rules_should_ask_for_the_ozonolysis_workup(void **state)
{
    (void)state;
    as_rules *t = load_source_table();
    as_reagent_match m;
    as_error err;
    const char *text = "O3, CH2Cl2, -78 °C";
    assert_int_equal(as_rules_recognise(t, text, strlen(text), &m, &err), AS_ERR_REAGENT);
    assert_contains(err.msg, "work-up");
    assert_contains(err.msg, "Me2S");
    as_rules_free(t);
}

static void rules_should_refuse_blank_and_malformed_text(void **state)
{
    (void)state;
    as_rules *t = load_source_table();
    as_reagent_match m;
    as_error err;
    assert_int_equal(as_rules_recognise(t, " \t\n", 3, &m, &err), AS_ERR_EMPTY);
    assert_int_equal(as_rules_recognise(t, "", 0, &m, &err), AS_ERR_EMPTY);
    assert_int_equal(as_rules_recognise(t, "HBr\xff", 4, &m, &err), AS_ERR_ENCODING);
    assert_int_equal(err.offset, 3);
    assert_int_equal(as_rules_recognise(t, "HB\0r", 4, &m, &err), AS_ERR_ENCODING);
    assert_int_equal(err.offset, 2);
    /* overlong encoding of '/' and a lone continuation byte */
    assert_int_equal(as_rules_recognise(t, "H\xc0\xaf", 3, &m, &err), AS_ERR_ENCODING);
    assert_int_equal(as_rules_recognise(t, "\x80", 1, &m, &err), AS_ERR_ENCODING);
    /* a truncated multi-byte sequence at the end */
    assert_int_equal(as_rules_recognise(t, "HBr \xe2\x82", 6, &m, &err), AS_ERR_ENCODING);
    assert_int_equal(err.offset, 4);
    assert_int_equal(as_rules_recognise(NULL, "HBr", 3, &m, &err), AS_ERR_ARG);
    /* a whole document is not a reagent text; the longest accepted one still works */
    char *big = malloc(AS_REAGENT_TEXT_MAX + 2);
    assert_non_null(big);
    memset(big, ' ', AS_REAGENT_TEXT_MAX + 1);
    memcpy(big + AS_REAGENT_TEXT_MAX - 3, "HBr", 3);
    assert_int_equal(as_rules_recognise(t, big, AS_REAGENT_TEXT_MAX + 1, &m, &err),
                     AS_ERR_LIMIT);
    assert_int_equal(as_rules_recognise(t, big, AS_REAGENT_TEXT_MAX, &m, &err), AS_OK);
    assert_string_equal(m.rule->id, "hx");
    free(big);
    /* only len bytes are read: "HBr" inside a longer buffer */
    assert_int_equal(as_rules_recognise(t, "HBrXYZ", 3, &m, &err), AS_OK);
    assert_string_equal(m.rule->id, "hx");
    as_rules_free(t);
}

static void rules_normalise_should_fold_unicode_and_whitespace(void **state)
{
    (void)state;
    static const struct {
        const char *in, *out;
    } cases[] = {
        {"BH\xe2\x82\x83\xc2\xb7THF", "BH3.THF"},
        {"  H\xe2\x82\x82O\xe2\x82\x82 ,\t\tNaOH \n", "H2O2 , NaOH"},
        {"\xe2\x88\x92" "78 \xe2\x84\x83", "-78 \xc2\xb0" "C"},
        {"borane\xe2\x80\x93THF", "borane-THF"},
        {"H\xe2\x82\x83O\xe2\x81\xba", "H3O+"},
        {"\xef\xbb\xbfHBr\xc2\xa0(gas)", "HBr (gas)"},
        {"BH3\xe2\x88\x99SMe2", "BH3.SMe2"},
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        char *out = NULL;
        as_error err;
        assert_int_equal(as_rules_normalise(cases[i].in, strlen(cases[i].in), &out, &err),
                         AS_OK);
        assert_string_equal(out, cases[i].out);
        free(out);
    }
}

/* ---------------------------------------------------------------- malformed rule files */

static void expect_bad_file(const char *rel, const char *needle1, const char *needle2)
{
    char *path = path_of(rel);
    size_t len = 0;
    char *json = slurp(path, &len);
    as_rules *t = NULL;
    as_error err;
    as_status st = as_rules_add_json(&t, path, json, len, &err);
    if (st != AS_ERR_RULE)
        fail_msg("%s: expected a rule error, got %s (%s)", rel, as_status_name(st), err.msg);
    assert_null(t);
    assert_contains(err.msg, needle1);
    if (needle2)
        assert_contains(err.msg, needle2);
    free(json);
    free(path);
}

static void rules_loader_should_accept_the_smallest_valid_file(void **state)
{
    (void)state;
    char *path = path_of("tests/data/rules/good_min.json");
    size_t len = 0;
    char *json = slurp(path, &len);
    as_rules *t = NULL;
    as_error err;
    assert_int_equal(as_rules_add_json(&t, "good_min.json", json, len, &err), AS_OK);
    assert_int_equal(as_rules_count(t), 1);
    as_reagent_match m;
    assert_int_equal(as_rules_recognise(t, "demoreagent", 11, &m, &err), AS_OK);
    assert_string_equal(m.rule->id, "demo_min");
    /* adding the same file again is a duplicate id */
    assert_int_equal(as_rules_add_json(&t, "again.json", json, len, &err), AS_ERR_RULE);
    assert_contains(err.msg, "again.json: $.id: duplicate rule id \"demo_min\"");
    assert_contains(err.msg, "good_min.json");
    assert_int_equal(as_rules_count(t), 1);
    as_rules_free(t);
    free(json);
    free(path);
}

static void rules_loader_should_reject_a_missing_key(void **state)
{
    (void)state;
    expect_bad_file("tests/data/rules/bad_missing_key.json",
                    "bad_missing_key.json: $: missing required key \"stereo_source\"", NULL);
}

static void rules_loader_should_reject_a_wrong_type(void **state)
{
    (void)state;
    expect_bad_file("tests/data/rules/bad_wrong_type.json",
                    "bad_wrong_type.json: $.shifts: expected a boolean, found a string", NULL);
}

static void rules_loader_should_reject_a_bad_enum(void **state)
{
    (void)state;
    expect_bad_file("tests/data/rules/bad_enum.json",
                    "bad_enum.json: $.regio: \"markovnikov\" is not one of", "cation");
}

static void rules_loader_should_name_a_pattern_that_does_not_compile(void **state)
{
    (void)state;
    expect_bad_file("tests/data/rules/bad_regex.json",
                    "bad_regex.json: $.variants[1].patterns[1]: pattern \"(unclosed\"",
                    "offset 9");
}

static void rules_loader_should_reject_a_percent_out_of_range(void **state)
{
    (void)state;
    expect_bad_file("tests/data/rules/bad_percent.json",
                    "bad_percent.json: $.figures[0].percent: 120 is outside 0..100", NULL);
}

static void rules_loader_should_reject_an_unknown_key(void **state)
{
    (void)state;
    expect_bad_file("tests/data/rules/bad_unknown_key.json",
                    "bad_unknown_key.json: $: unknown key \"prioirty\"", NULL);
}

static void rules_loader_should_reject_a_missing_group(void **state)
{
    (void)state;
    expect_bad_file("tests/data/rules/bad_group.json", "bad_group.json: $.variants[0]: needs both",
                    NULL);
}

static void rules_loader_should_give_line_and_column_of_a_syntax_error(void **state)
{
    (void)state;
    char *path = path_of("tests/data/rules/bad_syntax.json");
    size_t len = 0;
    char *json = slurp(path, &len);
    as_rules *t = NULL;
    as_error err;
    assert_int_equal(as_rules_add_json(&t, path, json, len, &err), AS_ERR_RULE);
    /* the comma after the "summary" value (line 4) is missing: the parser stops at the
     * next key, line 5 column 3 */
    assert_int_equal(err.line, 5);
    assert_int_equal(err.column, 3);
    assert_contains(err.msg, "bad_syntax.json:5:3: JSON syntax error");
    /* truncated text and trailing garbage */
    assert_int_equal(as_rules_add_json(&t, "cut.json", json, 40, &err), AS_ERR_RULE);
    assert_contains(err.msg, "cut.json:");
    assert_int_equal(as_rules_add_json(&t, "two.json", "{}\n{}", 5, &err), AS_ERR_RULE);
    assert_int_equal(err.line, 2);
    assert_int_equal(err.column, 1);
    /* a byte-order mark is skipped and takes no column */
    assert_int_equal(as_rules_add_json(&t, "bom.json", "\xEF\xBB\xBF{,}", 6, &err),
                     AS_ERR_RULE);
    assert_int_equal(err.line, 1);
    assert_true(err.offset >= 4);                 /* byte offsets count the mark ... */
    assert_int_equal(err.column, err.offset - 2); /* ... columns do not */
    assert_int_equal(as_rules_add_json(&t, "nul.json", "{\0}", 3, &err), AS_ERR_ENCODING);
    assert_int_equal(err.offset, 1);
    assert_int_equal(as_rules_add_json(&t, "empty.json", NULL, 0, &err), AS_ERR_RULE);
    assert_int_equal(as_rules_add_json(&t, "list.json", "[1]", 3, &err), AS_ERR_RULE);
    assert_contains(err.msg, "list.json: $: expected an object, found an array");
    assert_null(t);
    free(json);
    free(path);
}

static void rules_load_dir_should_reject_a_duplicate_id_across_files(void **state)
{
    (void)state;
    char *dir = path_of("tests/data/rules/dup");
    as_rules *t = NULL;
    as_error err;
    assert_int_equal(as_rules_load_dir(dir, &t, &err), AS_ERR_RULE);
    assert_null(t);
    assert_contains(err.msg, "b_second.json: $.id: duplicate rule id \"demo_min\" (first "
                             "defined in a_first.json)");
    free(dir);
    assert_int_equal(as_rules_load_dir("no/such/dir", &t, &err), AS_ERR_IO);
    assert_contains(err.msg, "no/such/dir");
}

static void rules_loader_should_reject_an_agent_set_that_is_not_smiles(void **state)
{
    (void)state;
    expect_bad_file("tests/data/rules/bad_agent.json",
                    "bad_agent.json: $.variants[0].agents[1]: agent set \"C1CC\" is not valid "
                    "SMILES", NULL);
}

static void rules_loader_should_reject_a_product_group_that_is_not_smiles(void **state)
{
    (void)state;
    expect_bad_file("tests/data/rules/bad_group_smiles.json",
                    "bad_group_smiles.json: $.variants[0].second: \"B(r\" is not valid SMILES",
                    NULL);
}

/* Bad input gets an error value, never a crash: every truncation of a real rule file and
 * a few thousand byte substitutions (fixed seed) either load or fail with a rule/encoding
 * error. Run under AddressSanitizer this also checks that failures free everything. */
static void rules_loader_should_survive_truncated_and_mutated_files(void **state)
{
    (void)state;
    char *path = path_of("reactions/hbr_radical.json");
    size_t len = 0;
    char *json = slurp(path, &len);
    int ok = 0;
    for (size_t cut = 0; cut <= len; cut++) {
        as_rules *t = NULL;
        as_error err;
        as_status st = as_rules_add_json(&t, "cut.json", json, cut, &err);
        assert_true(st == AS_OK || st == AS_ERR_RULE);
        assert_true(st != AS_ERR_RULE || (err.msg[0] && !t));
        ok += st == AS_OK;
        as_rules_free(t);
    }
    /* only the whole file and the file without (part of) its final newline load */
    assert_true(ok >= 1 && ok <= 2);
    char *copy = malloc(len);
    assert_non_null(copy);
    static const char alphabet[] = "{}[]\",:0-9 \\e.(?nul\x01\xc3\xff";
    unsigned long seed = 12345;
    for (int k = 0; k < 3000; k++) {
        memcpy(copy, json, len);
        for (int j = 0; j < 1 + k % 3; j++) {
            seed = seed * 6364136223846793005UL + 1442695040888963407UL;
            size_t at = (size_t)(seed >> 33) % len;
            copy[at] = alphabet[(seed >> 17) % (sizeof alphabet - 1)];
        }
        as_rules *t = NULL;
        as_error err;
        as_status st = as_rules_add_json(&t, "mutated.json", copy, len, &err);
        assert_true(st == AS_OK || st == AS_ERR_RULE || st == AS_ERR_ENCODING);
        as_rules_free(t);
    }
    free(copy);
    free(json);
    free(path);
}

/* ---------------------------------------------------------------- agent recognition */

static as_status recognise_smiles(const as_rules *t, const char *smi, as_reagent_match *m,
                                  as_error *err)
{
    as_mol *mol = NULL;
    as_status st = as_smiles_parse(smi, strlen(smi), &mol, err);
    if (st != AS_OK)
        fail_msg("test SMILES %s: %s", smi, err->msg);
    st = as_rules_recognise_agents(t, mol, m, err);
    as_mol_free(mol);
    return st;
}

static void rules_should_recognise_agent_sets_from_reaction_smiles(void **state)
{
    (void)state;
    as_rules *t = load_source_table();
    /* agent sets as they appear in reaction SMILES (common practice in reaction data):
     * solvents and counter-ions may come along, atom maps and component order do not
     * matter */
    static const char *const cases[][3] = {
        {"B.C1CCOC1", "hydroboration", "BH3; H2O2/NaOH"},
        {"B.OO.[Na+].[OH-]", "hydroboration", "BH3; H2O2/NaOH"},
        {"C[S+](C)[BH3-]", "hydroboration", "BH3; H2O2/NaOH"},
        {"C1CCOC1.B1C2CCCC1CCC2", "hydroboration_9bbn", "9-BBN; H2O2/NaOH"},
        {"CC(C)C(C)BC(C)C(C)C.OO.[OH-].[Na+]", "hydroboration_sia2bh", "Sia2BH; H2O2/NaOH"},
        {"CC(=O)O[Hg]OC(C)=O.O", "oxymercuration", "Hg(OAc)2/H2O; NaBH4"},
        {"O.CC(=O)O[Hg]OC(C)=O.[BH4-].[Na+].C1CCOC1", "oxymercuration", "Hg(OAc)2/H2O; NaBH4"},
        {"CC(=O)O[Hg]OC(C)=O.CO.[BH4-].[Na+]", "alkoxymercuration", "Hg(II)/MeOH; NaBH4"},
        {"Br", "hx", "HBr"},
        {"[BrH:4]", "hx", "HBr"},
        {"Cl", "hx", "HCl"},
        {"I", "hx", "HI"},
        {"Br.OO", "hbr_radical", "HBr/ROOR"},
        {"CC(C)(C)OOC(C)(C)C.Br", "hbr_radical", "HBr/ROOR"},
        {"O.OS(=O)(=O)O", "acid_hydration", "H2O/H2SO4"},
        {"BrBr", "halogenation", "Br2"},
        {"ClCl.ClCCl", "halogenation", "Cl2"},
        {"BrBr.O", "halohydrin", "Br2/H2O"},
        {"O=C1CCC(=O)N1Br.O.CS(C)=O", "halohydrin", "NBS/H2O"},
        {"OOC(=O)c1cccc(Cl)c1.ClCCl", "epoxidation", "mCPBA"},
        {"CC(=O)OO", "epoxidation", "peracetic acid"},
        {"O=[Os](=O)(=O)=O.C[N+]1([O-])CCOCC1", "syn_dihydroxylation", "OsO4/NMO"},
        {"[H][H].[Pd]", "hydrogenation", "H2/Pd"},
        {"[Pt].[H][H].CC(=O)O", "hydrogenation", "H2/Pt"},
        {"[O-][O+]=O.CSC", "ozonolysis", "O3; Me2S"},
        {"O=[O+][O-].[Zn]", "ozonolysis", "O3; Zn"},
        {"[O-][O+]=O.OO", "ozonolysis", "O3; H2O2"},
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        as_reagent_match m;
        as_error err;
        as_status st = recognise_smiles(t, cases[i][0], &m, &err);
        if (st != AS_OK)
            fail_msg("agents %s: %s", cases[i][0], err.msg);
        if (strcmp(m.rule->id, cases[i][1]) != 0 || strcmp(m.variant->name, cases[i][2]) != 0)
            fail_msg("agents %s: got %s / %s, want %s / %s", cases[i][0], m.rule->id,
                     m.variant->name, cases[i][1], cases[i][2]);
        assert_int_equal(m.has_temp, 0);
    }

    /* the sets are listed on the variant as written in the file */
    const as_rule_variant *hb = &as_rules_find(t, "hydroboration")->variants[0];
    assert_true(hb->nagents >= 2);
    assert_string_equal(hb->agents[0], "B");
    assert_int_equal(as_rules_find(t, "epoxidation")->variants[2].nagents, 0);   /* MMPP */

    /* the agent role of a reaction SMILES, as the reader hands it over */
    as_reaction *rx = NULL;
    as_error err;
    const char *text = "CC=C>Br>CC(C)Br";
    assert_int_equal(as_reaction_parse(text, strlen(text), &rx, &err), AS_OK);
    as_reagent_match m;
    assert_int_equal(as_rules_recognise_agents(t, rx->role[AS_ROLE_AGENTS], &m, &err), AS_OK);
    assert_string_equal(m.rule->id, "hx");
    as_reaction_free(rx);
    text = "CC=C>>CC(C)Br";
    assert_int_equal(as_reaction_parse(text, strlen(text), &rx, &err), AS_OK);
    assert_int_equal(as_rules_recognise_agents(t, rx->role[AS_ROLE_AGENTS], &m, &err),
                     AS_ERR_EMPTY);
    as_reaction_free(rx);

    /* a molecule that was read but not perceived */
    as_mol *raw = NULL;
    assert_int_equal(as_smiles_read("OO.Br", 5, NULL, &raw, &err), AS_OK);
    assert_int_equal(as_rules_recognise_agents(t, raw, &m, &err), AS_OK);
    assert_string_equal(m.rule->id, "hbr_radical");
    as_mol_free(raw);
    as_rules_free(t);
}

static void rules_should_report_unknown_and_ambiguous_agents(void **state)
{
    (void)state;
    as_rules *t = load_source_table();
    as_reagent_match m;
    as_error err;
    assert_int_equal(recognise_smiles(t, "OCC", &m, &err), AS_ERR_REAGENT);
    assert_null(m.rule);
    assert_contains(err.msg, "not recognised");
    assert_contains(err.msg, "CCO");
    assert_contains(err.msg, "syn_dihydroxylation");
    assert_int_equal(recognise_smiles(t, "Br.BrBr", &m, &err), AS_ERR_REAGENT);
    assert_contains(err.msg, "ambiguous");
    assert_contains(err.msg, "hx (HBr)");
    assert_contains(err.msg, "halogenation (Br2)");
    assert_int_equal(as_rules_recognise_agents(t, NULL, &m, &err), AS_ERR_ARG);
    as_rules_free(t);
}

/* ---------------------------------------------------------------- search order */

static void rules_load_should_follow_the_search_order(void **state)
{
    (void)state;
    char *dir = path_of("reactions");
    as_rules *t = NULL;
    as_error err;
    /* explicit directory first */
    setenv("ADDSITE_REACTIONS", "no/such/dir", 1);
    assert_int_equal(as_rules_load(dir, &t, &err), AS_OK);
    assert_non_null(strstr(as_rules_get(t, 0)->file, dir));
    as_rules_free(t);
    /* then the environment variable (a wrong one is an error, not a silent fallback) */
    assert_int_equal(as_rules_load(NULL, &t, &err), AS_ERR_IO);
    setenv("ADDSITE_REACTIONS", dir, 1);
    assert_int_equal(as_rules_load(NULL, &t, &err), AS_OK);
    assert_non_null(strstr(as_rules_get(t, 0)->file, dir));
    as_rules_free(t);
    /* without either: the installed directory when present, else the embedded copy */
    unsetenv("ADDSITE_REACTIONS");
    assert_int_equal(as_rules_load(NULL, &t, &err), AS_OK);
    struct stat sb;
    const char *def = as_rules_default_dir();
    if (!def || stat(def, &sb) != 0)
        assert_int_equal(strncmp(as_rules_get(t, 0)->file, "<embedded>/", 11), 0);
    assert_int_equal(as_rules_count(t), NIDS);
    as_rules_free(t);
    free(dir);
}

/* ---------------------------------------------------------------- threads */

typedef struct thread_arg {
    const as_rules *t;
    int failures;
} thread_arg;

static void *recognise_many(void *p)
{
    thread_arg *a = p;
    static const char *const texts[][2] = {
        {"HBr, ROOR", "hbr_radical"}, {"1) BH3·THF 2) H2O2, NaOH", "hydroboration"},
        {"Hg(OAc)2, H2O; NaBH4", "oxymercuration"}, {"9-BBN; H2O2/NaOH", "hydroboration_9bbn"},
        {"HBr", "hx"}, {"H2SO4, H2O", "acid_hydration"},
    };
    for (int k = 0; k < 300; k++) {
        const char *const *c = texts[k % 6];
        as_reagent_match m;
        as_error err;
        if (as_rules_recognise(a->t, c[0], strlen(c[0]), &m, &err) != AS_OK ||
            strcmp(m.rule->id, c[1]) != 0)
            a->failures++;
    }
    return NULL;
}

static void rules_table_should_be_shared_by_threads(void **state)
{
    (void)state;
    as_rules *t = load_source_table();
    pthread_t th[4];
    thread_arg args[4];
    for (int i = 0; i < 4; i++) {
        args[i] = (thread_arg){t, 0};
        assert_int_equal(pthread_create(&th[i], NULL, recognise_many, &args[i]), 0);
    }
    for (int i = 0; i < 4; i++) {
        pthread_join(th[i], NULL);
        assert_int_equal(args[i].failures, 0);
    }
    as_rules_free(t);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(rules_should_load_every_reaction_class_from_the_source_dir),
        cmocka_unit_test(rules_embedded_copy_should_agree_with_the_source_dir),
        cmocka_unit_test(rules_should_state_the_documented_regio_and_stereo_modes),
        cmocka_unit_test(rules_variants_should_carry_the_product_groups),
        cmocka_unit_test(rules_figures_should_match_the_published_borane_ratios),
        cmocka_unit_test(rules_should_recognise_every_reagent_text_of_the_reference_list),
        cmocka_unit_test(rules_should_list_the_table_when_nothing_is_recognised),
        cmocka_unit_test(rules_should_name_the_competitors_when_texts_are_ambiguous),
        cmocka_unit_test(rules_should_ask_for_the_ozonolysis_workup),
        cmocka_unit_test(rules_should_refuse_blank_and_malformed_text),
        cmocka_unit_test(rules_normalise_should_fold_unicode_and_whitespace),
        cmocka_unit_test(rules_loader_should_accept_the_smallest_valid_file),
        cmocka_unit_test(rules_loader_should_reject_a_missing_key),
        cmocka_unit_test(rules_loader_should_reject_a_wrong_type),
        cmocka_unit_test(rules_loader_should_reject_a_bad_enum),
        cmocka_unit_test(rules_loader_should_name_a_pattern_that_does_not_compile),
        cmocka_unit_test(rules_loader_should_reject_a_percent_out_of_range),
        cmocka_unit_test(rules_loader_should_reject_an_unknown_key),
        cmocka_unit_test(rules_loader_should_reject_a_missing_group),
        cmocka_unit_test(rules_loader_should_give_line_and_column_of_a_syntax_error),
        cmocka_unit_test(rules_loader_should_reject_an_agent_set_that_is_not_smiles),
        cmocka_unit_test(rules_loader_should_reject_a_product_group_that_is_not_smiles),
        cmocka_unit_test(rules_load_dir_should_reject_a_duplicate_id_across_files),
        cmocka_unit_test(rules_loader_should_survive_truncated_and_mutated_files),
        cmocka_unit_test(rules_should_recognise_agent_sets_from_reaction_smiles),
        cmocka_unit_test(rules_should_report_unknown_and_ambiguous_agents),
        cmocka_unit_test(rules_load_should_follow_the_search_order),
        cmocka_unit_test(rules_table_should_be_shared_by_threads),
    };
    return cmocka_run_group_tests_name("rules", tests, NULL, NULL);
}
