/* cmd_plan.c — `addsite plan`: which reagent sets give a wanted product, best first.
 * Owns: the plan subcommand's arguments and its text and JSON layouts.
 * Must not: hold chemistry (as_plan_run predicts every rule through as_predict). */
#include "addsite/outcome.h"
#include "addsite/rules.h"
#include "addsite/smiles.h"
#include "addsite/workflow.h"
#include "cli.h"

#include <cjson/cJSON.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static void help(FILE *f)
{
    fputs("usage: addsite plan SUBSTRATE TARGET [--format text|json] [--strict-stereo]\n"
          "                     [--temp C] [--rules DIR]\n"
          "\n"
          "Predicts every reagent set of the rule table on SUBSTRATE and lists those whose\n"
          "major product is TARGET, ranked by expected share (published figures first among\n"
          "equals), then those that give it only as a minor product or in a mixture. Each\n"
          "entry gives the share and where it comes from, the stereo outcome, the risk of a\n"
          "rearranged skeleton and the reagents' cautions. When no reagent set gives TARGET,\n"
          "it says so and shows what each gives instead.\n"
          "\n"
          "  --format F        text (default) or json\n"
          "  --strict-stereo   TARGET must draw exactly the stereo a route fixes\n"
          "  --temp C          temperature in °C for every rule (default: 25)\n"
          "  --rules DIR       rule table directory\n"
          "\n"
          "Exit status: 0 some reagent set gives TARGET, 1 none does, 2 usage or input error.\n",
          f);
}

/* A short phrase on the risk of a rearranged skeleton. */
static void rearrangement(const as_plan_entry *e, char *buf, size_t cap)
{
    double shifted = 0.0;
    for (int i = 0; i < e->outcome->nproducts; i++)
        if (e->outcome->products[i].rearranged)
            shifted += e->outcome->products[i].share;
    if (shifted > 0.0)
        snprintf(buf, cap, "yes: rearranged products %.1f%% (free %s)", shifted,
                 e->rule->intermediate);
    else if (e->rule->shifts)
        snprintf(buf, cap, "low: free %s, but no more stable cation is one shift away",
                 e->rule->intermediate);
    else
        snprintf(buf, cap, "none: no free carbocation; via %s", e->rule->intermediate);
}

static void print_entry(FILE *f, int rank, const as_plan_entry *e)
{
    const as_product *p = &e->outcome->products[e->product];
    char re[160];
    rearrangement(e, re, sizeof re);
    fprintf(f, "  %d. %-20s %-28s %5.1f%%  (%s)\n", rank, e->rule->id, e->variant->name, p->share,
            as_product_role_name(p->role));
    fprintf(f, "       share       %s%s\n", p->share_published ? "published: " : "",
            p->share_source);
    fprintf(f, "       stereo      %s\n", as_stereo_name(p->stereo));
    fprintf(f, "       rearranged  %s\n", re);
    if (e->tier != AS_PLAN_MAJOR)
        fprintf(f, "       major       %s (%.1f%%)\n", e->outcome->products[0].smiles,
                e->outcome->products[0].share);
    if (e->note)
        fprintf(f, "       note        %s\n", e->note);
    fprintf(f, "       conditions  %s\n", e->rule->conditions);
    for (int i = 0; i < e->rule->nhazards; i++)
        fprintf(f, "       ! %s\n", e->rule->hazards[i]);
}

static void print_text(FILE *f, const as_plan *p)
{
    fprintf(f, "Substrate   %s\nTarget      %s\n\n", p->substrate, p->target);
    int rank = 0;
    if (p->nmajor) {
        fputs("Gives the target as the major product (best first)\n", f);
        for (int i = 0; i < p->nmajor; i++)
            print_entry(f, ++rank, &p->v[i]);
        fputc('\n', f);
    }
    if (p->nminor) {
        fputs("Gives it only as a minor product or in a mixture\n", f);
        for (int i = p->nmajor; i < p->nmajor + p->nminor; i++)
            print_entry(f, ++rank, &p->v[i]);
        fputc('\n', f);
    }
    if (!p->nmajor && !p->nminor)
        fprintf(f, "No single reagent set in the table gives %s. What each gives instead:\n",
                p->target);
    else
        fputs("Does not give it\n", f);
    for (int i = p->nmajor + p->nminor; i < p->n; i++) {
        const as_plan_entry *e = &p->v[i];
        if (e->status == AS_ERR_NO_SITE) {
            fprintf(f, "  %-20s %-28s nothing: no C=C to react\n", e->rule->id, e->variant->name);
        } else if (e->status != AS_OK || !e->outcome->nproducts) {
            fprintf(f, "  %-20s %-28s no prediction (%s)\n", e->rule->id, e->variant->name,
                    as_status_name(e->status));
        } else {
            const as_product *q = &e->outcome->products[0];
            fprintf(f, "  %-20s %-28s %s (%s %.1f%%)%s%s\n", e->rule->id, e->variant->name,
                    q->smiles, as_product_role_name(q->role), q->share,
                    e->stereo_differs ? "; " : "", e->stereo_differs ? e->note : "");
        }
    }
    fprintf(f, "\n%s\n", as_cli_safety_footer);
}

static cJSON *entry_json(const as_plan_entry *e, int rank)
{
    cJSON *o = cJSON_CreateObject();
    if (!o)
        return NULL;
    int ok = 1;
    if (rank > 0)
        ok &= cJSON_AddNumberToObject(o, "rank", rank) != NULL;
    ok &= cJSON_AddStringToObject(o, "tier", as_plan_tier_name(e->tier)) != NULL;
    ok &= cJSON_AddStringToObject(o, "reaction", e->rule->id) != NULL;
    ok &= cJSON_AddStringToObject(o, "reagents", e->variant->name) != NULL;
    if (e->status != AS_OK) {
        ok &= cJSON_AddStringToObject(o, "status", as_status_name(e->status)) != NULL;
        if (!ok) {
            cJSON_Delete(o);
            return NULL;
        }
        return o;
    }
    const as_outcome *oc = e->outcome;
    ok &= cJSON_AddStringToObject(o, "major", oc->nproducts ? oc->products[0].smiles : "") !=
          NULL;
    if (e->product >= 0) {
        const as_product *p = &oc->products[e->product];
        char re[160];
        rearrangement(e, re, sizeof re);
        ok &= cJSON_AddNumberToObject(o, "share", p->share) != NULL;
        ok &= cJSON_AddStringToObject(o, "share_source", p->share_source) != NULL;
        ok &= cJSON_AddBoolToObject(o, "share_published", p->share_published) != NULL;
        ok &= cJSON_AddStringToObject(o, "stereo", as_stereo_name(p->stereo)) != NULL;
        ok &= cJSON_AddStringToObject(o, "rearrangement", re) != NULL;
        ok &= cJSON_AddStringToObject(o, "conditions", e->rule->conditions) != NULL;
        cJSON *hz = cJSON_AddArrayToObject(o, "hazards");
        ok &= hz != NULL;
        for (int i = 0; ok && i < e->rule->nhazards; i++)
            ok &= cJSON_AddItemToArray(hz, cJSON_CreateString(e->rule->hazards[i]));
    }
    if (e->note)
        ok &= cJSON_AddStringToObject(o, "note", e->note) != NULL;
    if (!ok) {
        cJSON_Delete(o);
        return NULL;
    }
    return o;
}

static char *plan_json(const as_plan *p)
{
    cJSON *o = cJSON_CreateObject();
    if (!o)
        return NULL;
    int ok = cJSON_AddStringToObject(o, "substrate", p->substrate) != NULL;
    ok &= cJSON_AddStringToObject(o, "target", p->target) != NULL;
    ok &= cJSON_AddBoolToObject(o, "found", p->nmajor + p->nminor > 0) != NULL;
    cJSON *routes = cJSON_AddArrayToObject(o, "routes");
    cJSON *others = cJSON_AddArrayToObject(o, "others");
    ok &= routes && others;
    for (int i = 0; ok && i < p->n; i++) {
        int route = i < p->nmajor + p->nminor;
        cJSON *e = entry_json(&p->v[i], route ? i + 1 : 0);
        ok &= e != NULL && cJSON_AddItemToArray(route ? routes : others, e);
    }
    ok &= cJSON_AddStringToObject(o, "safety", as_cli_safety_footer) != NULL;
    char *s = ok ? cJSON_Print(o) : NULL;
    cJSON_Delete(o);
    return s;
}

int as_cli_plan(int argc, char **argv)
{
    const char *pos[2] = {NULL, NULL}, *rules_dir = NULL, *format = "text";
    int npos = 0;
    as_check_opts opts;
    as_check_opts_init(&opts);
    for (int i = 1; i < argc; i++) {
        const char *a = argv[i];
        int shared;
        if (!strcmp(a, "--help") || !strcmp(a, "-h")) {
            help(stdout);
            return 0;
        } else if (!strcmp(a, "--strict-stereo")) {
            opts.strict_stereo = 1;
        } else if ((shared = as_cli_shared_option("plan", argc, argv, &i, &opts.predict.temp_c, &format,
                                                  &rules_dir)) != 0) {
            if (shared < 0)
                return 2;
        } else if (a[0] == '-' && a[1] == '-') {
            return as_cli_usage_error("plan", "unknown option", a);
        } else if (npos < 2) {
            pos[npos++] = a;
        } else {
            return as_cli_usage_error("plan", "give SUBSTRATE and TARGET only; extra argument", a);
        }
    }
    if (npos != 2)
        return as_cli_usage_error("plan", "a substrate SMILES and a target SMILES are required", NULL);
    as_error err;
    as_error_clear(&err);
    as_rules *rules = NULL;
    as_mol *mols[2] = {NULL, NULL};
    as_plan *plan = NULL;
    int rc = 2;
    if (as_rules_load(rules_dir, &rules, &err) != AS_OK) {
        as_cli_print_error(stderr, "plan", 0, NULL, 0, &err);
        goto done;
    }
    for (int k = 0; k < 2; k++) {
        size_t len = strlen(pos[k]);
        size_t sp = strcspn(pos[k], " \t");
        if (sp < len) {
            err.code = AS_ERR_SYNTAX;
            err.offset = (long)sp;
            snprintf(err.msg, sizeof err.msg,
                     "white space inside a SMILES argument (quote each SMILES as one word)");
            as_cli_print_error(stderr, "plan", 0, pos[k], len, &err);
            goto done;
        }
        if (as_smiles_parse(pos[k], len, &mols[k], &err) != AS_OK) {
            fprintf(stderr, "addsite plan: in the %s:\n", k ? "target" : "substrate");
            as_cli_print_error(stderr, "plan", 0, pos[k], len, &err);
            goto done;
        }
    }
    if (as_plan_run(rules, mols[0], mols[1], &opts, &plan, &err) != AS_OK) {
        as_cli_print_error(stderr, "plan", 0, NULL, 0, &err);
        goto done;
    }
    if (!strcmp(format, "json")) {
        char *s = plan_json(plan);
        if (!s) {
            fputs("addsite plan: out of memory\n", stderr);
            goto done;
        }
        puts(s);
        free(s);
    } else {
        print_text(stdout, plan);
    }
    rc = plan->nmajor + plan->nminor > 0 ? 0 : 1;
done:
    as_plan_free(plan);
    as_mol_free(mols[0]);
    as_mol_free(mols[1]);
    as_rules_free(rules);
    return rc;
}
