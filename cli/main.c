/* main.c — the addsite command: subcommand dispatch, version, help, error printing.
 * Owns: choosing a subcommand and the shared error/caret printer. Must not: hold chemistry. */
#include "cli.h"

#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

const char as_cli_safety_footer[] =
    "Before any bench work: read the safety data sheet of every reagent, follow your "
    "institution's chemical hygiene plan and local regulations.";

typedef struct command {
    const char *name;
    int (*run)(int argc, char **argv);
    const char *summary;
} command;

static const command commands[] = {
    {"canon", as_cli_canon, "write canonical SMILES, one line per input line"},
    {"predict", as_cli_predict, "predict the products of one substrate and reagent set"},
    {"rules", as_cli_rules, "list the reaction rule table"},
    {"check", as_cli_check, "judge a recorded product against the prediction"},
    {"plan", as_cli_plan, "rank the reagent sets that give a wanted product"},
    {"annotate", as_cli_annotate, "annotate a reaction file, one output record per input"},
};

static void usage(FILE *f)
{
    fprintf(f, "addsite %s — where and how reagents add across C=C bonds\n\n", AS_VERSION);
    fprintf(f, "usage: addsite COMMAND [options] [arguments]\n\ncommands:\n");
    for (size_t i = 0; i < sizeof commands / sizeof commands[0]; i++)
        fprintf(f, "  %-10s %s\n", commands[i].name, commands[i].summary);
    fprintf(f, "\n'addsite help COMMAND' or 'addsite COMMAND --help' describes one command.\n");
}

int as_cli_usage_error(const char *cmd, const char *msg, const char *arg)
{
    fprintf(stderr, "addsite %s: %s%s%s\n", cmd, msg, arg ? " " : "", arg ? arg : "");
    fprintf(stderr, "Try 'addsite %s --help'.\n", cmd);
    return 2;
}

int as_cli_parse_number(const char *s, double *v)
{
    char *end = NULL;
    *v = strtod(s, &end);
    return end && end != s && *end == '\0' && isfinite(*v);
}

int as_cli_shared_option(const char *cmd, int argc, char **argv, int *i, double *temp_c,
                         const char **format, const char **rules_dir)
{
    const char *a = argv[*i];
    int has_val = *i + 1 < argc;
    if (temp_c && !strcmp(a, "--temp")) {
        if (!has_val || !as_cli_parse_number(argv[*i + 1], temp_c) || *temp_c < -273.15) {
            as_cli_usage_error(cmd, "--temp needs a temperature in °C", NULL);
            return -1;
        }
    } else if (!strcmp(a, "--format")) {
        if (!has_val) {
            as_cli_usage_error(cmd, "--format needs text or json", NULL);
            return -1;
        }
        if (strcmp(argv[*i + 1], "text") && strcmp(argv[*i + 1], "json")) {
            as_cli_usage_error(cmd, "--format must be text or json, not", argv[*i + 1]);
            return -1;
        }
        *format = argv[*i + 1];
    } else if (!strcmp(a, "--rules")) {
        if (!has_val) {
            as_cli_usage_error(cmd, "--rules needs a directory", NULL);
            return -1;
        }
        *rules_dir = argv[*i + 1];
    } else {
        return 0;
    }
    (*i)++;
    return 1;
}

void as_cli_print_error(FILE *f, const char *cmd, long line, const char *text, size_t len,
                        const as_error *err)
{
    fprintf(f, "addsite %s: ", cmd);
    if (line > 0)
        fprintf(f, "line %ld, ", line);
    if (err->offset >= 0)
        fprintf(f, "column %ld: ", err->offset + 1);
    fprintf(f, "%s: %s\n", as_status_name(err->code), err->msg);
    if (!text || err->offset < 0)
        return;
    /* show at most 70 bytes around the offset, printable ASCII only */
    size_t off = (size_t)err->offset;
    size_t from = off > 35 ? off - 35 : 0;
    size_t to = from + 70 < len ? from + 70 : len;
    if (off >= len && len > 0)
        to = len;
    fputs("  ", f);
    if (from > 0)
        fputs("...", f);
    for (size_t i = from; i < to; i++) {
        unsigned char c = (unsigned char)text[i];
        fputc(c >= 32 && c < 127 ? c : '?', f);
    }
    fputc('\n', f);
    fputs("  ", f);
    if (from > 0)
        fputs("   ", f);
    for (size_t i = from; i < off && i < to + 1; i++)
        fputc(' ', f);
    fputs("^\n", f);
}

/* A full disk or closed pipe on standard output must not pass for a complete result: flush
 * it and turn a write error into exit status 2 with a message. */
static int finish(const char *cmd, int rc)
{
    errno = 0;
    if (fflush(stdout) != 0 || ferror(stdout)) {
        fprintf(stderr, "addsite %s: io: cannot write the output: %s\n", cmd,
                errno ? strerror(errno) : "write error");
        return 2;
    }
    return rc;
}

int main(int argc, char **argv)
{
    if (argc < 2) {
        usage(stderr);
        return 2;
    }
    const char *cmd = argv[1];
    if (!strcmp(cmd, "--version") || !strcmp(cmd, "version")) {
        printf("addsite %s\n", AS_VERSION);
        return 0;
    }
    if (!strcmp(cmd, "--help") || !strcmp(cmd, "-h")) {
        usage(stdout);
        return 0;
    }
    if (!strcmp(cmd, "help")) {
        if (argc < 3) {
            usage(stdout);
            return 0;
        }
        for (size_t i = 0; i < sizeof commands / sizeof commands[0]; i++)
            if (!strcmp(argv[2], commands[i].name)) {
                char *av[] = {argv[2], "--help", NULL};
                return commands[i].run(2, av);
            }
        fprintf(stderr, "addsite: no command '%s'\n", argv[2]);
        return 2;
    }
    for (size_t i = 0; i < sizeof commands / sizeof commands[0]; i++)
        if (!strcmp(cmd, commands[i].name))
            return finish(cmd, commands[i].run(argc - 1, argv + 1));
    fprintf(stderr, "addsite: no command '%s'\n\n", cmd);
    usage(stderr);
    return 2;
}
