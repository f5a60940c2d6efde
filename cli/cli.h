/* cli.h — the command-line front end: one function per subcommand, wired by cli/main.c.
 * Owns: argument parsing and printing. Must not: hold chemistry (it calls the library). */
#ifndef ADDSITE_CLI_H
#define ADDSITE_CLI_H

#include <stdio.h>

#include "addsite/status.h"

/* Each subcommand gets argv with argv[0] = its own name. Exit status: 0 ok, 1 some input
 * failed (or a check disagreed), 2 usage or input error; each command documents its own. */
int as_cli_canon(int argc, char **argv);
int as_cli_predict(int argc, char **argv);
int as_cli_rules(int argc, char **argv);
int as_cli_check(int argc, char **argv);
int as_cli_plan(int argc, char **argv);
int as_cli_annotate(int argc, char **argv);

/* Prints "addsite <cmd>: line L, column C: <code>: <message>" and, when text is given, the
 * text and a caret under err->offset (columns are 1-based: column = offset + 1). */
void as_cli_print_error(FILE *f, const char *cmd, long line, const char *text, size_t len,
                        const as_error *err);

/* Prints "addsite CMD: MSG [ARG]" and a pointer to --help on stderr; returns 2 (usage). */
int as_cli_usage_error(const char *cmd, const char *msg, const char *arg);

/* Parses a whole string as a finite number; returns 1 on success. */
int as_cli_parse_number(const char *s, double *v);

/* Options shared by predict, check and plan: --temp C, --format text|json, --rules DIR.
 * Looks at argv[*i]; when it is one of them, stores the value (temp_c may be NULL when the
 * command takes no temperature), advances *i past the value and returns 1; returns 0 when
 * argv[*i] is not a shared option; prints a usage error and returns -1 on a bad value. */
int as_cli_shared_option(const char *cmd, int argc, char **argv, int *i, double *temp_c,
                         const char **format, const char **rules_dir);

/* The closing line of every human-readable report that mentions reagents. */
extern const char as_cli_safety_footer[];

#endif
