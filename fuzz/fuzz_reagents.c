/* fuzz_reagents.c — fuzz target: reagent recognition against the built-in rule table.
 * The input is read as reagent text (as_rules_recognise) and, when it is a SMILES, as an agent
 * set (as_rules_recognise_agents). A match names a rule and a reagent set of the table; a
 * failure carries a code and a message. The table is loaded once per process. */
#include "addsite/rules.h"
#include "addsite/smiles.h"
#include "fuzz.h"

#include <stdlib.h>
#include <string.h>

static as_rules *table;

static void release_table(void)
{
    as_rules_free(table);
    table = NULL;
}

static void check(as_status st, const as_reagent_match *m, const as_error *err,
                  const char *where)
{
    if (st == AS_OK) {
        if (!m->rule || !m->variant)
            fuzz_fail(where, "AS_OK without a rule and reagent set");
        if (m->variant < m->rule->variants || m->variant >= m->rule->variants + m->rule->nvariants)
            fuzz_fail(where, "the reagent set is not one of the rule's");
        if (m->equiv < 0)
            fuzz_fail(where, "negative equivalents");
    } else if (err->code != st || err->msg[0] == '\0') {
        fuzz_fail(where, "failure without a code and message");
    }
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    as_error err;
    if (!table) {
        if (as_rules_load_embedded(&table, &err) != AS_OK)
            fuzz_fail("as_rules_load_embedded", err.msg);
        atexit(release_table);
    }
    as_reagent_match m;
    memset(&m, 0, sizeof m);
    as_status st = as_rules_recognise(table, (const char *)data, size, &m, &err);
    check(st, &m, &err, "as_rules_recognise");

    as_mol *agents = NULL;
    if (size <= 4096 && as_smiles_parse((const char *)data, size, &agents, &err) == AS_OK) {
        memset(&m, 0, sizeof m);
        st = as_rules_recognise_agents(table, agents, &m, &err);
        check(st, &m, &err, "as_rules_recognise_agents");
        as_mol_free(agents);
    }
    return 0;
}
