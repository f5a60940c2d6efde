/* cmd_rules.c — `addsite rules`: the reaction rule table, as text or JSON.
 * Owns: the rules subcommand's arguments and layouts. Must not: hold chemistry. */
#include "addsite/rules.h"
#include "cli.h"

#include <cjson/cJSON.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static void help(FILE *f)
{
    fputs("usage: addsite rules [--format text|json] [--rules DIR] [ID ...]\n"
          "\n"
          "Lists the reaction rules: id, what each recognises, which end takes which group,\n"
          "stereo behaviour, whether cations may shift, published figures with their sources,\n"
          "and the cautions. With ids, only those rules.\n"
          "\n"
          "Exit status: 0 listed, 1 an id is not in the table, 2 usage error.\n",
          f);
}

static const char *regio_text(as_regio r)
{
    switch (r) {
    case AS_REGIO_CATION:
        return "cation (first group to the end whose partner is the better cation site; "
               "Markovnikov)";
    case AS_REGIO_RADICAL:
        return "radical (first group to the end whose partner is the better radical site; "
               "anti-Markovnikov for HBr)";
    case AS_REGIO_BORANE:
        return "borane (boron, later OH, to the less hindered end; anti-Markovnikov)";
    case AS_REGIO_NONE:
        return "none (the same group or a bridge on both ends)";
    default:
        return "cleave (the C=C is cut)";
    }
}

static const char *regio_word(as_regio r)
{
    static const char *const w[] = {"cation", "radical", "borane", "none", "cleave"};
    return (unsigned)r < 5 ? w[r] : "?";
}

static const char *stereo_word(as_addmode m)
{
    return m == AS_ADD_SYN ? "syn" : m == AS_ADD_ANTI ? "anti" : "none";
}

static void text_one(FILE *f, const as_rule *r)
{
    fprintf(f, "%s — %s\n", r->id, r->title);
    fprintf(f, "  what      %s\n", r->summary);
    fprintf(f, "  regio     %s\n", regio_text(r->regio));
    fprintf(f, "  stereo    %s (%s)\n",
            r->stereo == AS_ADD_SYN    ? "syn addition"
            : r->stereo == AS_ADD_ANTI ? "anti addition"
                                       : "no stereo control",
            r->stereo_source);
    fprintf(f, "  shifts    %s;  conjugate/1,4 %s;  via %s\n", r->shifts ? "yes" : "no",
            r->conjugate ? "yes" : "no", r->intermediate);
    if (r->regio == AS_REGIO_BORANE)
        fprintf(f, "  bulk      %.1f (BH3 = 1.0)\n", r->bulk);
    fprintf(f, "  reagents ");
    for (int i = 0; i < r->nvariants; i++)
        fprintf(f, " %s%s", r->variants[i].name, i + 1 < r->nvariants ? "  |" : "");
    fputc('\n', f);
    fprintf(f, "  typical   %s\n", r->conditions);
    for (int i = 0; i < r->nfigures; i++) {
        const as_rule_figure *g = &r->figures[i];
        fprintf(f, "  figure    %s: %.1f%% with the first group on the %s end — %s\n", g->cls,
                g->percent, strcmp(g->first_end, "less_substituted") ? "more substituted"
                                                                      : "less substituted",
                g->source);
    }
    for (int i = 0; i < r->nhazards; i++)
        fprintf(f, "  caution   %s\n", r->hazards[i]);
    fputc('\n', f);
}

static cJSON *json_one(const as_rule *r)
{
    cJSON *o = cJSON_CreateObject();
    if (!o)
        return NULL;
    cJSON_AddStringToObject(o, "id", r->id);
    cJSON_AddStringToObject(o, "title", r->title);
    cJSON_AddStringToObject(o, "summary", r->summary);
    cJSON_AddStringToObject(o, "regio", regio_word(r->regio));
    cJSON_AddStringToObject(o, "stereo", stereo_word(r->stereo));
    cJSON_AddStringToObject(o, "stereo_source", r->stereo_source);
    cJSON_AddBoolToObject(o, "shifts", r->shifts);
    cJSON_AddBoolToObject(o, "conjugate", r->conjugate);
    if (r->regio == AS_REGIO_BORANE)
        cJSON_AddNumberToObject(o, "bulk", r->bulk);
    cJSON_AddStringToObject(o, "intermediate", r->intermediate);
    cJSON_AddStringToObject(o, "conditions", r->conditions);
    cJSON *vs = cJSON_AddArrayToObject(o, "reagents");
    for (int i = 0; vs && i < r->nvariants; i++)
        cJSON_AddItemToArray(vs, cJSON_CreateString(r->variants[i].name));
    cJSON *fs = cJSON_AddArrayToObject(o, "figures");
    for (int i = 0; fs && i < r->nfigures; i++) {
        const as_rule_figure *g = &r->figures[i];
        cJSON *jf = cJSON_CreateObject();
        if (!jf)
            continue;
        cJSON_AddStringToObject(jf, "class", g->cls);
        cJSON_AddStringToObject(jf, "first_end", g->first_end);
        cJSON_AddNumberToObject(jf, "percent", g->percent);
        cJSON_AddStringToObject(jf, "source", g->source);
        cJSON_AddItemToArray(fs, jf);
    }
    cJSON *hs = cJSON_AddArrayToObject(o, "cautions");
    for (int i = 0; hs && i < r->nhazards; i++)
        cJSON_AddItemToArray(hs, cJSON_CreateString(r->hazards[i]));
    cJSON_AddStringToObject(o, "file", r->file);
    return o;
}

int as_cli_rules(int argc, char **argv)
{
    const char *format = "text", *dir = NULL;
    int first_id = argc;
    for (int i = 1; i < argc; i++) {
        if (!strcmp(argv[i], "--help") || !strcmp(argv[i], "-h")) {
            help(stdout);
            return 0;
        } else if (!strcmp(argv[i], "--format") && i + 1 < argc) {
            format = argv[++i];
            if (strcmp(format, "text") && strcmp(format, "json")) {
                fprintf(stderr, "addsite rules: --format must be text or json\n");
                return 2;
            }
        } else if (!strcmp(argv[i], "--rules") && i + 1 < argc) {
            dir = argv[++i];
        } else if (argv[i][0] == '-') {
            fprintf(stderr, "addsite rules: unknown option %s\nTry 'addsite rules --help'.\n",
                    argv[i]);
            return 2;
        } else {
            if (first_id == argc)
                first_id = i;
        }
    }
    as_error err;
    as_error_clear(&err);
    as_rules *t = NULL;
    if (as_rules_load(dir, &t, &err) != AS_OK) {
        as_cli_print_error(stderr, "rules", 0, NULL, 0, &err);
        return 2;
    }
    int rc = 0;
    cJSON *arr = !strcmp(format, "json") ? cJSON_CreateArray() : NULL;
    for (int i = 0; i < as_rules_count(t); i++) {
        const as_rule *r = as_rules_get(t, i);
        if (first_id < argc) {
            int want = 0;
            for (int k = first_id; k < argc; k++)
                want |= argv[k][0] != '-' && !strcmp(argv[k], r->id);
            if (!want)
                continue;
        }
        if (arr)
            cJSON_AddItemToArray(arr, json_one(r));
        else
            text_one(stdout, r);
    }
    for (int k = first_id; k < argc; k++) {
        if (argv[k][0] == '-' || (k > 0 && !strcmp(argv[k - 1], "--format")) ||
            (k > 0 && !strcmp(argv[k - 1], "--rules")))
            continue;
        if (!as_rules_find(t, argv[k])) {
            fprintf(stderr, "addsite rules: no rule '%s'\n", argv[k]);
            rc = 1;
        }
    }
    if (arr) {
        char *s = cJSON_Print(arr);
        if (s)
            puts(s);
        free(s);
        cJSON_Delete(arr);
    } else {
        fputs(as_cli_safety_footer, stdout);
        fputc('\n', stdout);
    }
    as_rules_free(t);
    return rc;
}
