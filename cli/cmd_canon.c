/* cmd_canon.c — `addsite canon`: canonical SMILES, one output line per input line.
 * Owns: the canon subcommand's arguments and streaming. Must not: hold chemistry. */
#include "addsite/canon.h"
#include "addsite/perceive.h"
#include "addsite/smiles.h"
#include "cli.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static void help(FILE *f)
{
    fputs("usage: addsite canon [--no-stereo] [--no-maps] [SMILES ...]\n"
          "\n"
          "Writes the canonical SMILES of each argument, or with no arguments of each line of\n"
          "standard input (SMILES, then optional white space and a title, kept after a TAB).\n"
          "One output line per input line, in order; a line that cannot be read gives an empty\n"
          "output line and an error on standard error with its line and column.\n"
          "Reaction SMILES (two '>') are canonicalised role by role.\n"
          "\n"
          "  --no-stereo   drop @/@@ and / \\ marks\n"
          "  --no-maps     drop atom classes (:n)\n"
          "\n"
          "Exit status: 0 all lines read, 1 some lines failed, 2 usage error or the input\n"
          "could not be read or the output not written (full disk).\n",
          f);
}

/* Canonicalises one record; returns 0 ok, 1 failed. Writes the output line. */
static int one(const char *text, size_t len, long line, const as_canon_opts *o)
{
    as_error err;
    as_error_clear(&err);
    /* strip a trailing CR and a UTF-8 BOM */
    if (len && text[len - 1] == '\r')
        len--;
    if (line == 1 && len >= 3 && (unsigned char)text[0] == 0xEF &&
        (unsigned char)text[1] == 0xBB && (unsigned char)text[2] == 0xBF) {
        text += 3;
        len -= 3;
    }
    /* is it a reaction? look for '>' before the first white space, outside brackets */
    int depth = 0, reaction = 0;
    for (size_t i = 0; i < len; i++) {
        char c = text[i];
        if (c == ' ' || c == '\t')
            break;
        if (c == '[')
            depth++;
        else if (c == ']')
            depth--;
        else if (c == '>' && depth == 0 && !(i > 0 && text[i - 1] == '-'))
            reaction = 1;
    }
    if (reaction) {
        as_reaction *r = NULL;
        if (as_reaction_parse(text, len, &r, &err) != AS_OK) {
            as_cli_print_error(stderr, "canon", line, text, len, &err);
            putchar('\n');
            return 1;
        }
        for (int i = 0; i < 3; i++) {
            char *s = NULL;
            if (as_canon_smiles(r->role[i], o, &s, &err) != AS_OK) {
                as_cli_print_error(stderr, "canon", line, NULL, 0, &err);
                as_reaction_free(r);
                putchar('\n');
                return 1;
            }
            fputs(s, stdout);
            free(s);
            if (i < 2)
                putchar('>');
        }
        if (r->title)
            printf("\t%s", r->title);
        putchar('\n');
        as_reaction_free(r);
        return 0;
    }
    as_mol *m = NULL;
    char *s = NULL;
    if (as_smiles_parse(text, len, &m, &err) != AS_OK ||
        as_canon_smiles(m, o, &s, &err) != AS_OK) {
        as_cli_print_error(stderr, "canon", line, text, len, &err);
        putchar('\n');
        as_mol_free(m);
        return 1;
    }
    int suspect = as_perceive_suspect_atom(m);
    if (suspect >= 0)
        fprintf(stderr,
                "addsite canon: line %ld, column %d: warning: atom %d (N) has four single bonds "
                "and no charge; read as N with valence 5 and one H (probably a missing charge: "
                "[N+])\n",
                line, m->atoms[suspect].src_offset + 1, suspect + 1);
    fputs(s, stdout);
    if (m->title)
        printf("\t%s", m->title);
    putchar('\n');
    free(s);
    as_mol_free(m);
    return 0;
}

int as_cli_canon(int argc, char **argv)
{
    as_canon_opts o;
    as_canon_opts_init(&o);
    int first = 1;
    for (; first < argc && argv[first][0] == '-' && argv[first][1] == '-'; first++) {
        if (!strcmp(argv[first], "--help")) {
            help(stdout);
            return 0;
        } else if (!strcmp(argv[first], "--no-stereo")) {
            o.stereo = 0;
        } else if (!strcmp(argv[first], "--no-maps")) {
            o.atom_maps = 0;
        } else if (!strcmp(argv[first], "--")) {
            first++;
            break;
        } else {
            fprintf(stderr, "addsite canon: unknown option '%s'\n", argv[first]);
            help(stderr);
            return 2;
        }
    }
    int failed = 0;
    if (first < argc) {
        for (int i = first; i < argc; i++)
            failed |= one(argv[i], strlen(argv[i]), i - first + 1, &o);
        return failed ? 1 : 0;
    }
    char *line = NULL;
    size_t cap = 0;
    ssize_t n;
    long lineno = 0;
    while ((n = getline(&line, &cap, stdin)) >= 0) {
        lineno++;
        size_t len = (size_t)n;
        if (len && line[len - 1] == '\n')
            len--;
        if (len == 0 || (len == 1 && line[0] == '\r')) {
            /* blank line: keep alignment, report it */
            as_error err;
            as_error_clear(&err);
            err.code = AS_ERR_EMPTY;
            snprintf(err.msg, sizeof err.msg, "blank line");
            as_cli_print_error(stderr, "canon", lineno, NULL, 0, &err);
            putchar('\n');
            failed = 1;
            continue;
        }
        failed |= one(line, len, lineno, &o);
    }
    free(line);
    if (ferror(stdin)) {
        /* a read error (a directory, a failing device) must not look like the end of input */
        fprintf(stderr, "addsite canon: io: cannot read standard input after line %ld\n",
                lineno);
        return 2;
    }
    fflush(stdout);
    return failed ? 1 : 0;
}
