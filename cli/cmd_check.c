/* cmd_check.c — `addsite check`: is a recorded product the one the conditions give?
 * Owns: the check subcommand's arguments, its text and JSON layouts and exit status.
 * Must not: hold chemistry (as_check_record judges, as_predict predicts). */
#include "addsite/outcome.h"
#include "addsite/rules.h"
#include "addsite/workflow.h"
#include "cli.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static void help(FILE *f)
{
    fputs("usage: addsite check 'SUBSTRATE>>PRODUCT' --reagents TEXT [options]\n"
          "       addsite check 'SUBSTRATE>AGENTS>PRODUCT' [options]\n"
          "       addsite check SUBSTRATE PRODUCT --reagents TEXT [options]\n"
          "\n"
          "Judges a product written in a notebook, report or database against the prediction\n"
          "for its substrate and reagents, and names the verdict:\n"
          "  agrees        the predicted major product (or one of a predicted mixture)\n"
          "  minor         a predicted minor product\n"
          "  stereo        right constitution, relative stereo the conditions do not give\n"
          "  regioisomer   the other orientation of the major, expected at most in traces\n"
          "  skeleton      needs a skeleton change the conditions do not cause, or lacks the\n"
          "                one they do\n"
          "  not_addition  not an addition product of these reagents to this substrate\n"
          "  no_alkene     the substrate has no C=C\n"
          "\n"
          "  --reagents TEXT   reagents as written (\"HBr\", \"1) 9-BBN 2) H2O2, NaOH\"); without\n"
          "                    it the agents of the reaction SMILES (and reactant components\n"
          "                    that are reagents, as in 'C=CC.Br>>CC(C)Br') are used\n"
          "  --strict-stereo   the product must draw exactly the stereo the conditions fix\n"
          "                    (default: one enantiomer may stand for a racemate, marks on\n"
          "                    uncontrolled centres and missing marks agree with a note)\n"
          "  --equiv N         equivalents of reagent (default: from the text, else 1)\n"
          "  --temp C          temperature in °C (default: from the text, else 25)\n"
          "  --format F        text (default) or json (verdict and the full prediction)\n"
          "  --rules DIR       rule table directory\n"
          "\n"
          "Spectators in the product (counter-ions, inorganic by-products, reactants, smaller\n"
          "co-products) are set aside with a note. Identity is by canonical SMILES; atom maps\n"
          "are ignored.\n"
          "Exit status: 0 agrees, 1 any other verdict, 2 usage or input error.\n",
          f);
}

static int has_space(const char *s)
{
    return strchr(s, ' ') || strchr(s, '\t');
}

static void print_text(FILE *f, const as_check *c)
{
    const as_outcome *o = c->outcome;
    const as_product *major = o && o->nproducts ? &o->products[0] : NULL;
    if (c->has_product) {
        fprintf(f, "Verdict     %s — %s\n", as_verdict_name(c->verdict), c->reason);
        fprintf(f, "Recorded    %s\n", c->proposed[0] ? c->proposed : "(nothing judged)");
    }
    if (major)
        fprintf(f, "Predicted   %s (%s, %.1f%%, %s%s)\n", major->smiles,
                as_product_role_name(major->role), major->share, major->regio,
                major->rearranged ? ", rearranged" : "");
    for (int i = 1; o && i < o->nproducts; i++)
        fprintf(f, "            %s (%s, %.1f%%, %s%s)\n", o->products[i].smiles,
                as_product_role_name(o->products[i].role), o->products[i].share,
                o->products[i].regio, o->products[i].rearranged ? ", rearranged" : "");
    fprintf(f, "Substrate   %s\n", c->substrate);
    fprintf(f, "Reaction    %s — %s\n", c->match.rule->id, c->match.rule->title);
    fprintf(f, "Reagents    %s (from the %s)\n", c->match.variant->name,
            c->reagent_source == AS_REAGENTS_AGENTS ? "agents" : "reagent text");
    if (c->nnotes) {
        fputs("Notes\n", f);
        for (int i = 0; i < c->nnotes; i++)
            fprintf(f, "  - %s\n", c->notes[i]);
    }
    const as_rule *r = c->match.rule;
    if (r->nhazards) {
        fputs("Cautions\n", f);
        for (int i = 0; i < r->nhazards; i++)
            fprintf(f, "  ! %s\n", r->hazards[i]);
    }
    fprintf(f, "\n%s\n", as_cli_safety_footer);
}

int as_cli_check(int argc, char **argv)
{
    const char *pos[2] = {NULL, NULL}, *reagents = NULL, *rules_dir = NULL;
    const char *format = "text";
    int npos = 0;
    as_check_opts opts;
    as_check_opts_init(&opts);
    for (int i = 1; i < argc; i++) {
        const char *a = argv[i];
        int has_val = i + 1 < argc, shared;
        if (!strcmp(a, "--help") || !strcmp(a, "-h")) {
            help(stdout);
            return 0;
        } else if (!strcmp(a, "--reagents")) {
            if (!has_val)
                return as_cli_usage_error("check", "--reagents needs a value", NULL);
            reagents = argv[++i];
        } else if (!strcmp(a, "--strict-stereo")) {
            opts.strict_stereo = 1;
        } else if (!strcmp(a, "--equiv")) {
            if (!has_val || !as_cli_parse_number(argv[i + 1], &opts.predict.equiv) ||
                opts.predict.equiv <= 0)
                return as_cli_usage_error("check", "--equiv needs a positive number", NULL);
            i++;
        } else if ((shared = as_cli_shared_option("check", argc, argv, &i, &opts.predict.temp_c, &format,
                                                  &rules_dir)) != 0) {
            if (shared < 0)
                return 2;
        } else if (a[0] == '-' && a[1] == '-') {
            return as_cli_usage_error("check", "unknown option", a);
        } else if (npos < 2) {
            pos[npos++] = a;
        } else {
            return as_cli_usage_error("check", "at most two SMILES are taken; extra argument", a);
        }
    }
    if (!npos)
        return as_cli_usage_error("check", "a reaction SMILES 'SUBSTRATE>>PRODUCT' is required", NULL);
    as_check_input in;
    memset(&in, 0, sizeof in);
    if (npos == 1) {
        in.reaction = pos[0];
        if (!strchr(pos[0], '>'))
            return as_cli_usage_error("check", "give 'SUBSTRATE>>PRODUCT' or SUBSTRATE PRODUCT; no '>' in",
                               pos[0]);
    } else {
        in.substrate = pos[0];
        in.product = pos[1];
    }
    in.reagents = reagents;
    for (int k = 0; k < npos; k++) {
        if (has_space(pos[k])) {
            as_error e;
            as_error_clear(&e);
            e.code = AS_ERR_SYNTAX;
            e.offset = (long)strcspn(pos[k], " \t");
            snprintf(e.msg, sizeof e.msg,
                     "white space inside a SMILES argument (quote each SMILES as one word)");
            as_cli_print_error(stderr, "check", 0, pos[k], strlen(pos[k]), &e);
            return 2;
        }
    }

    as_error err;
    as_error_clear(&err);
    as_rules *rules = NULL;
    as_check *c = NULL;
    int rc = 2;
    if (as_rules_load(rules_dir, &rules, &err) != AS_OK) {
        as_cli_print_error(stderr, "check", 0, NULL, 0, &err);
        goto done;
    }
    const char *field = NULL;
    if (as_check_record(rules, &in, &opts, &c, &field, &err) != AS_OK) {
        const char *text = NULL;
        if (field && !strcmp(field, "reaction"))
            text = in.reaction;
        else if (field && !strcmp(field, "substrate"))
            text = in.substrate;
        else if (field && !strcmp(field, "product"))
            text = in.product;
        as_cli_print_error(stderr, "check", 0, text, text ? strlen(text) : 0, &err);
        goto done;
    }
    if (!c->has_product) {
        fputs("addsite check: no product recorded: nothing to judge (use 'addsite predict' "
              "for a prediction alone)\n",
              stderr);
        goto done;
    }
    if (!strcmp(format, "json")) {
        char *json = NULL;
        if (as_check_json(c, 1, &json, &err) != AS_OK) {
            as_cli_print_error(stderr, "check", 0, NULL, 0, &err);
            goto done;
        }
        puts(json);
        free(json);
    } else {
        print_text(stdout, c);
    }
    rc = c->verdict == AS_VERDICT_AGREES ? 0 : 1;
done:
    as_check_free(c);
    as_rules_free(rules);
    return rc;
}
