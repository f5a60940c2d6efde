/* fuzz_predict.c — fuzz target: the prediction engine (sites, addition, outcome, JSON) on any
 * molecule the reader accepts. The first input byte picks the reagent set (rule and variant of
 * the built-in table, in table order), the second the equivalents (1–4) and temperature; the
 * rest is the substrate SMILES. Invariants: a success has at least one product, shares in
 * 0..100 summing to at most 100 (products under min_share or past max_products are left out), product SMILES that read back, and JSON output; a failure has
 * a code and a message. */
#include "addsite/outcome.h"
#include "addsite/rules.h"
#include "addsite/smiles.h"
#include "fuzz.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static as_rules *table;
static int nsets;
static int roundtrip;   /* AS_FUZZ_ROUNDTRIP=1: product SMILES must read back */

static void release_table(void)
{
    as_rules_free(table);
    table = NULL;
}

/* The k-th (rule, variant) pair of the table, k taken modulo the number of pairs. */
static void pick(int k, as_reagent_match *m)
{
    k %= nsets;
    for (int i = 0; i < as_rules_count(table); i++) {
        const as_rule *r = as_rules_get(table, i);
        if (k < r->nvariants) {
            m->rule = r;
            m->variant = &r->variants[k];
            return;
        }
        k -= r->nvariants;
    }
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    as_error err;
    if (!table) {
        if (as_rules_load_embedded(&table, &err) != AS_OK)
            fuzz_fail("as_rules_load_embedded", err.msg);
        for (int i = 0; i < as_rules_count(table); i++)
            nsets += as_rules_get(table, i)->nvariants;
        atexit(release_table);
        const char *e = getenv("AS_FUZZ_ROUNDTRIP");
        roundtrip = e && e[0] == '1';
    }
    /* molecules past a few hundred atoms only slow the search down */
    if (size < 3 || size > 512)
        return 0;
    as_reagent_match m;
    memset(&m, 0, sizeof m);
    m.temp_c = NAN;
    pick(data[0], &m);
    as_predict_opts opts;
    as_predict_opts_init(&opts);
    opts.equiv = (double)(1 + (data[1] & 3));
    if (data[1] & 4)
        opts.temp_c = -78.0;
    else if (data[1] & 8)
        opts.temp_c = 60.0;

    as_mol *mol = NULL;
    if (as_smiles_parse((const char *)data + 2, size - 2, &mol, &err) != AS_OK)
        return 0;
    as_outcome *o = NULL;
    as_status st = as_predict(table, mol, &m, &opts, &o, &err);
    if (st != AS_OK) {
        if (err.code != st || err.msg[0] == '\0')
            fuzz_fail("as_predict", "failure without a code and message");
        if (o)
            fuzz_fail("as_predict", "failed but returned an outcome");
        as_mol_free(mol);
        return 0;
    }
    if (o->nproducts < 1)
        fuzz_fail("as_predict", "success without products");
    double sum = 0;
    for (int i = 0; i < o->nproducts; i++) {
        const as_product *p = &o->products[i];
        char detail[300];
        if (!(p->share >= 0.0 && p->share <= 100.0)) {
            snprintf(detail, sizeof detail, "share %g", p->share);
            fuzz_fail("as_predict", detail);
        }
        sum += p->share;
        as_mol *back = NULL;
        if (!p->smiles)
            fuzz_fail("as_predict", "a product without SMILES");
        if (roundtrip && as_smiles_parse(p->smiles, strlen(p->smiles), &back, &err) != AS_OK) {
            snprintf(detail, sizeof detail, "product \"%.200s\" does not read back",
                     p->smiles ? p->smiles : "(null)");
            fuzz_fail("as_predict", detail);
        }
        as_mol_free(back);
    }
    if (getenv("AS_FUZZ_VERBOSE")) {
        char *pretty = NULL;
        if (as_outcome_json(o, 1, &pretty, &err) == AS_OK)
            fprintf(stderr, "%s\n", pretty);
        free(pretty);
    }
    /* products under min_share and past max_products are left out, so the listed shares may
     * sum to less than 100, never to more */
    if (sum > 101.0 || sum < opts.min_share) {
        char detail[64];
        snprintf(detail, sizeof detail, "shares of %d products sum to %g", o->nproducts, sum);
        fuzz_fail("as_predict", detail);
    }
    char *json = NULL;
    if (as_outcome_json(o, 0, &json, &err) != AS_OK)
        fuzz_fail("as_outcome_json", err.msg);
    free(json);
    as_outcome_free(o);
    as_mol_free(mol);
    return 0;
}
