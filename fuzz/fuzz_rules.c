/* fuzz_rules.c — fuzz target: the rule loader on arbitrary bytes (as_rules_add_json).
 * A rejected file must say why; an accepted one must give a table whose every rule can be
 * listed and whose reagent patterns run on a few texts without failing. */
#include "addsite/rules.h"
#include "fuzz.h"

#include <string.h>

static const char *const probe_texts[] = {
    "HBr", "1) BH3.THF 2) H2O2, NaOH", "Hg(OAc)2, H2O; NaBH4", "Br2, CH2Cl2, -78 °C", "",
};

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    as_rules *tab = NULL;
    as_error err;
    as_status st = as_rules_add_json(&tab, "fuzz.json", (const char *)data, size, &err);
    if (st != AS_OK) {
        if (err.code != st || err.msg[0] == '\0')
            fuzz_fail("as_rules_add_json", "failure without a code and message");
        as_rules_free(tab);
        return 0;
    }
    if (!tab)
        fuzz_fail("as_rules_add_json", "AS_OK without a table");
    int n = as_rules_count(tab);
    for (int i = 0; i < n; i++) {
        const as_rule *r = as_rules_get(tab, i);
        if (!r || !r->id || as_rules_find(tab, r->id) == NULL)
            fuzz_fail("loaded table", "a rule cannot be found by its own id");
        for (int v = 0; v < r->nvariants; v++)
            if (!r->variants[v].name)
                fuzz_fail("loaded table", "a reagent set without a name");
    }
    for (size_t k = 0; k < sizeof probe_texts / sizeof probe_texts[0]; k++) {
        as_reagent_match m;
        memset(&m, 0, sizeof m);
        st = as_rules_recognise(tab, probe_texts[k], strlen(probe_texts[k]), &m, &err);
        if (st == AS_OK && (!m.rule || !m.variant))
            fuzz_fail("as_rules_recognise", "AS_OK without a rule and reagent set");
        if (st != AS_OK && (err.code != st || err.msg[0] == '\0'))
            fuzz_fail("as_rules_recognise", "failure without a code and message");
    }
    as_rules_free(tab);
    return 0;
}
