/* fuzz_smiles.c — fuzz target: SMILES reader, perception and the canonical writer.
 * Each input is read as one molecule (as_smiles_parse) and as a reaction (as_reaction_parse).
 * Invariants checked beyond "no crash, no leak, no UB":
 *   - a failure carries a status code, a message and an offset inside the input (or -1);
 *   - a molecule that was read gets a canonical SMILES, with and without stereo;
 *   - with AS_FUZZ_ROUNDTRIP=1 in the environment (off by default, and in CI, because open
 *     findings remain: see README "Limits and hardening"): the canonical SMILES reads back and
 *     canonicalises to itself, so the writer never emits text its own reader refuses. */
#include "addsite/canon.h"
#include "addsite/smiles.h"
#include "fuzz.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static void check_error(as_status st, const as_error *err, size_t size, const char *where)
{
    char detail[400];
    if (st == AS_OK)
        return;
    if (err->code != st) {
        snprintf(detail, sizeof detail, "returned %s, err.code %s", as_status_name(st),
                 as_status_name(err->code));
        fuzz_fail(where, detail);
    }
    if (err->msg[0] == '\0')
        fuzz_fail(where, "error without a message");
    if (err->offset < -1 || err->offset > (long)size) {
        snprintf(detail, sizeof detail, "offset %ld outside 0..%zu (%s)", err->offset, size,
                 err->msg);
        fuzz_fail(where, detail);
    }
}

static int roundtrip = -1;   /* AS_FUZZ_ROUNDTRIP=1: check the fixed point */

/* Canonicalises m, then reads the result back and requires the same string again. */
static void canon_fixed_point(const as_mol *m, const as_canon_opts *o, const char *where)
{
    as_error err;
    char *first = NULL;
    as_status st = as_canon_smiles(m, o, &first, &err);
    if (st == AS_ERR_NOMEM || st == AS_ERR_LIMIT)
        return;
    if (st != AS_OK)
        fuzz_fail(where, err.msg);
    if (first[0] != '\0' && roundtrip) {
        as_mol *again = NULL;
        st = as_smiles_parse(first, strlen(first), &again, &err);
        if (st != AS_OK) {
            char detail[600];
            snprintf(detail, sizeof detail, "canonical \"%.200s\" does not read back: %s",
                     first, err.msg);
            fuzz_fail(where, detail);
        }
        char *second = NULL;
        st = as_canon_smiles(again, o, &second, &err);
        if (st != AS_OK)
            fuzz_fail(where, err.msg);
        if (strcmp(first, second) != 0) {
            char detail[600];
            snprintf(detail, sizeof detail, "not a fixed point: \"%.250s\" -> \"%.250s\"",
                     first, second);
            fuzz_fail(where, detail);
        }
        free(second);
        as_mol_free(again);
    }
    free(first);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    if (roundtrip < 0) {
        const char *e = getenv("AS_FUZZ_ROUNDTRIP");
        roundtrip = e && e[0] == '1';
    }
    const char *text = (const char *)data;
    as_canon_opts plain, flat;
    as_canon_opts_init(&plain);
    as_canon_opts_init(&flat);
    flat.stereo = 0;
    flat.atom_maps = 0;

    as_error err;
    as_mol *m = NULL;
    as_status st = as_smiles_parse(text, size, &m, &err);
    check_error(st, &err, size, "as_smiles_parse");
    if (st == AS_OK) {
        canon_fixed_point(m, &plain, "canonical SMILES");
        canon_fixed_point(m, &flat, "canonical SMILES without stereo or maps");
        as_mol_free(m);
    } else if (m) {
        fuzz_fail("as_smiles_parse", "failed but returned a molecule");
    }

    as_reaction *r = NULL;
    st = as_reaction_parse(text, size, &r, &err);
    check_error(st, &err, size, "as_reaction_parse");
    if (st == AS_OK) {
        for (int i = 0; i < 3; i++)
            canon_fixed_point(r->role[i], &plain, "canonical reaction role");
        as_reaction_free(r);
    }
    return 0;
}
