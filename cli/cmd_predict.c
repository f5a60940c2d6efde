/* cmd_predict.c — `addsite predict`: one substrate and one reagent set → ranked products.
 * Owns: the predict subcommand's arguments and its text and JSON layouts.
 * Must not: hold chemistry (as_predict does it all). */
#include "addsite/outcome.h"
#include "addsite/rules.h"
#include "addsite/smiles.h"
#include "cli.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static void help(FILE *f)
{
    fputs("usage: addsite predict SMILES (--reagents TEXT | --reaction ID[:VARIANT])\n"
          "                        [--equiv N] [--temp C] [--format text|json] [--rules DIR]\n"
          "\n"
          "Predicts what a reagent set does to the C=C bonds of one substrate: the products\n"
          "ranked by expected share, their stereochemistry, whether the skeleton rearranges,\n"
          "why, and the cautions for the reagents.\n"
          "\n"
          "  --reagents TEXT   reagents as written in a notebook: \"HBr\", \"HBr, ROOR\",\n"
          "                    \"1) BH3.THF 2) H2O2, NaOH\", \"Hg(OAc)2, H2O; NaBH4\"\n"
          "  --reaction ID     a rule id from 'addsite rules' (first reagent set of the rule,\n"
          "                    or ID:VARIANT, e.g. hx:HBr)\n"
          "  --equiv N         equivalents of reagent (default: from the text, else 1); with N\n"
          "                    the N most reactive C=C react\n"
          "  --temp C          temperature in °C (default: from the text, else 25)\n"
          "  --format F        text (default) or json\n"
          "  --rules DIR       rule table directory (default: $ADDSITE_REACTIONS, the installed\n"
          "                    table, else the built-in copy)\n"
          "\n"
          "Carbons are named by their 1-based position in the input SMILES.\n"
          "Exit status: 0 predicted, 1 nothing to predict (no C=C), 2 usage or input error.\n",
          f);
}

/* Word-wraps text at about width columns with the given indent for following lines. */
static void wrap(FILE *f, const char *text, int first_col, int indent, int width)
{
    int col = first_col;
    const char *p = text;
    while (*p) {
        const char *w = p;
        while (*w && *w != ' ')
            w++;
        int len = (int)(w - p);
        if (col > indent && col + 1 + len > width) {
            fprintf(f, "\n%*s", indent, "");
            col = indent;
        } else if (col > indent) {
            fputc(' ', f);
            col++;
        }
        fwrite(p, 1, (size_t)len, f);
        col += len;
        p = w;
        while (*p == ' ')
            p++;
    }
    fputc('\n', f);
}

static void print_text(FILE *f, const as_outcome *o)
{
    fprintf(f, "Substrate   %s\n", o->substrate);
    fprintf(f, "Reaction    %s — %s\n", o->rule->id, o->rule->title);
    fprintf(f, "Reagents    %s\n", o->variant->name);
    fprintf(f, "Conditions  %.0f °C%s, %.0f equiv\n", o->temp_c, o->temp_given ? "" : " (assumed)",
            o->equiv);
    fputc('\n', f);
    fprintf(f, "Products%s\n", o->mixture ? " (a mixture: no confident major product)" : "");
    for (int i = 0; i < o->nproducts; i++) {
        const as_product *p = &o->products[i];
        fprintf(f, "  %-8s %5.1f%%  %s\n", as_product_role_name(p->role), p->share, p->smiles);
        fprintf(f, "                  stereo %s; regio %s%s\n", as_stereo_name(p->stereo),
                p->regio, p->rearranged ? "; REARRANGED skeleton (1,2-shift)" : "");
        fprintf(f, "                  share: ");
        wrap(f, p->share_source, 25, 25, 96);
    }
    fputc('\n', f);
    fputs("Why\n", f);
    for (int i = 0; i < o->nrationale; i++) {
        fputs("  - ", f);
        wrap(f, o->rationale[i], 4, 4, 96);
    }
    if (o->ncautions) {
        fputc('\n', f);
        fputs("Cautions\n", f);
        for (int i = 0; i < o->ncautions; i++) {
            fputs("  ! ", f);
            wrap(f, o->cautions[i], 4, 4, 96);
        }
    }
    fputc('\n', f);
    wrap(f, as_cli_safety_footer, 0, 0, 96);
}

int as_cli_predict(int argc, char **argv)
{
    const char *smiles = NULL, *reagents = NULL, *reaction = NULL, *rules_dir = NULL;
    const char *format = "text";
    as_predict_opts opts;
    as_predict_opts_init(&opts);
    for (int i = 1; i < argc; i++) {
        const char *a = argv[i];
        if (!strcmp(a, "--help") || !strcmp(a, "-h")) {
            help(stdout);
            return 0;
        }
        int has_val = i + 1 < argc, shared;
        if (!strcmp(a, "--reagents")) {
            if (!has_val)
                return as_cli_usage_error("predict", "--reagents needs a value", NULL);
            reagents = argv[++i];
        } else if (!strcmp(a, "--reaction")) {
            if (!has_val)
                return as_cli_usage_error("predict", "--reaction needs a value", NULL);
            reaction = argv[++i];
        } else if (!strcmp(a, "--equiv")) {
            if (!has_val || !as_cli_parse_number(argv[i + 1], &opts.equiv) || opts.equiv <= 0)
                return as_cli_usage_error("predict", "--equiv needs a positive number", NULL);
            i++;
        } else if ((shared = as_cli_shared_option("predict", argc, argv, &i, &opts.temp_c, &format,
                                                  &rules_dir)) != 0) {
            if (shared < 0)
                return 2;
        } else if (a[0] == '-' && a[1] == '-') {
            return as_cli_usage_error("predict", "unknown option", a);
        } else if (!smiles) {
            smiles = a;
        } else {
            return as_cli_usage_error("predict", "only one SMILES is taken; extra argument", a);
        }
    }
    if (!smiles)
        return as_cli_usage_error("predict", "a substrate SMILES is required", NULL);
    if (!!reagents == !!reaction)
        return as_cli_usage_error("predict", "give exactly one of --reagents TEXT or --reaction ID", NULL);

    as_error err;
    as_error_clear(&err);
    as_rules *rules = NULL;
    as_mol *mol = NULL;
    as_outcome *o = NULL;
    int rc = 2;
    if (as_rules_load(rules_dir, &rules, &err) != AS_OK) {
        as_cli_print_error(stderr, "predict", 0, NULL, 0, &err);
        goto done;
    }
    size_t slen = strlen(smiles);
    for (size_t k = 0; k < slen; k++) {
        if (smiles[k] == ' ' || smiles[k] == '\t') {
            err.code = AS_ERR_SYNTAX;
            err.offset = (long)k;
            snprintf(err.msg, sizeof err.msg,
                     "white space inside the SMILES argument (one SMILES per call; quote it)");
            as_cli_print_error(stderr, "predict", 0, smiles, slen, &err);
            goto done;
        }
    }
    if (as_smiles_parse(smiles, slen, &mol, &err) != AS_OK) {
        as_cli_print_error(stderr, "predict", 0, smiles, slen, &err);
        goto done;
    }
    as_reagent_match m;
    memset(&m, 0, sizeof m);
    m.temp_c = NAN;
    if (reagents) {
        if (as_rules_recognise(rules, reagents, strlen(reagents), &m, &err) != AS_OK) {
            as_cli_print_error(stderr, "predict", 0, NULL, 0, &err);
            goto done;
        }
    } else {
        char id[64];
        const char *colon = strchr(reaction, ':');
        size_t idlen = colon ? (size_t)(colon - reaction) : strlen(reaction);
        if (idlen >= sizeof id)
            idlen = sizeof id - 1;
        memcpy(id, reaction, idlen);
        id[idlen] = '\0';
        m.rule = as_rules_find(rules, id);
        if (!m.rule) {
            fprintf(stderr, "addsite predict: no rule '%s'; the table has:", id);
            for (int i = 0; i < as_rules_count(rules); i++)
                fprintf(stderr, " %s", as_rules_get(rules, i)->id);
            fputc('\n', stderr);
            goto done;
        }
        m.variant = &m.rule->variants[0];
        if (colon) {
            m.variant = NULL;
            for (int i = 0; i < m.rule->nvariants; i++)
                if (!strcmp(m.rule->variants[i].name, colon + 1))
                    m.variant = &m.rule->variants[i];
            if (!m.variant) {
                fprintf(stderr, "addsite predict: rule %s has no reagent set '%s'; it has:", id,
                        colon + 1);
                for (int i = 0; i < m.rule->nvariants; i++)
                    fprintf(stderr, " \"%s\"", m.rule->variants[i].name);
                fputc('\n', stderr);
                goto done;
            }
        }
    }
    as_status st = as_predict(rules, mol, &m, &opts, &o, &err);
    if (st != AS_OK) {
        as_cli_print_error(stderr, "predict", 0, NULL, 0, &err);
        rc = st == AS_ERR_NO_SITE ? 1 : 2;
        goto done;
    }
    if (!strcmp(format, "json")) {
        char *json = NULL;
        if (as_outcome_json(o, 1, &json, &err) != AS_OK) {
            as_cli_print_error(stderr, "predict", 0, NULL, 0, &err);
            rc = 1;
            goto done;
        }
        puts(json);
        free(json);
    } else {
        print_text(stdout, o);
    }
    rc = 0;
done:
    as_outcome_free(o);
    as_mol_free(mol);
    as_rules_free(rules);
    return rc;
}
