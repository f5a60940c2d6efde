/* test_io.c — record readers, writers and the safe output file (lib/io_*.c).
 * Inputs live in tests/data/io/ (a fragrance-lab batch in SMILES lines, CSV and JSON Lines,
 * and six rows of the project's reference cases as TSV); byte-level cases are built here. */
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <cmocka.h>

#include <cjson/cJSON.h>
#include <dirent.h>
#include <errno.h>
#include <fcntl.h>
#include <limits.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <sys/stat.h>
#include <unistd.h>
#include <zlib.h>
#if defined(__GLIBC__)
#include <malloc.h>
#endif

#include "addsite/io.h"

/* ==== Helpers =============================================================================== */

/* A copy of one record, so records can be compared after the reader moved on. */
typedef struct snap {
    long index, line, nlines;
    int skipped, truncated;
    as_status code;
    long eline, ecol, eoff;
    char msg[256];
    char raw[400];
    size_t raw_len;
    char reaction[160], substrate[160], product[160], reagents[160], id[160], cx[40];
    char warning[192];
    size_t ncols;
    char col0[160], last_col[160], last_name[64];
} snap;

static void keep(char *dst, size_t cap, const char *s)
{
    snprintf(dst, cap, "%s", s ? s : "(null)");
}

static void take(snap *s, const as_record *rec)
{
    memset(s, 0, sizeof *s);
    s->index = rec->index;
    s->line = rec->line;
    s->nlines = rec->nlines;
    s->skipped = rec->skipped;
    s->truncated = rec->truncated;
    s->code = rec->err.code;
    s->eline = rec->err.line;
    s->ecol = rec->err.column;
    s->eoff = rec->err.offset;
    keep(s->msg, sizeof s->msg, rec->err.msg);
    s->raw_len = rec->raw_len;
    memcpy(s->raw, rec->raw, rec->raw_len < sizeof s->raw - 1 ? rec->raw_len : sizeof s->raw - 1);
    keep(s->reaction, sizeof s->reaction, rec->reaction);
    keep(s->substrate, sizeof s->substrate, rec->substrate);
    keep(s->product, sizeof s->product, rec->product);
    keep(s->reagents, sizeof s->reagents, rec->reagents);
    keep(s->id, sizeof s->id, rec->id);
    keep(s->cx, sizeof s->cx, rec->cx);
    keep(s->warning, sizeof s->warning, rec->warning);
    s->ncols = rec->ncols;
    if (rec->ncols) {
        keep(s->col0, sizeof s->col0, rec->col_values[0]);
        keep(s->last_col, sizeof s->last_col, rec->col_values[rec->ncols - 1]);
        keep(s->last_name, sizeof s->last_name, rec->col_names[rec->ncols - 1]);
    }
}

/* Reads every record; checks the index runs 0, 1, 2... and that at_end repeats. */
static int drain(as_reader *r, snap *out, int max)
{
    as_record rec;
    as_error err;
    int n = 0;
    for (;;) {
        assert_int_equal(as_reader_next(r, &rec, &err), AS_OK);
        if (rec.at_end)
            break;
        assert_true(n < max);
        assert_int_equal(rec.index, n);
        take(&out[n], &rec);
        n++;
    }
    assert_int_equal(as_reader_next(r, &rec, &err), AS_OK);
    assert_true(rec.at_end);
    return n;
}

static int read_buffer(const char *text, size_t len, const as_reader_opts *o, snap *out, int max)
{
    as_reader *r = NULL;
    as_error err;
    as_status st = as_reader_open_buffer(text, len, o, &r, &err);
    if (st != AS_OK)
        fail_msg("open failed: %s", err.msg);
    int n = drain(r, out, max);
    as_reader_close(r);
    return n;
}

static int read_text(const char *text, const as_reader_opts *o, snap *out, int max)
{
    return read_buffer(text, strlen(text), o, out, max);
}

static int read_path(const char *path, const as_reader_opts *o, snap *out, int max)
{
    as_reader *r = NULL;
    as_error err;
    as_status st = as_reader_open(path, o, &r, &err);
    if (st != AS_OK)
        fail_msg("open %s failed: %s", path, err.msg);
    int n = drain(r, out, max);
    as_reader_close(r);
    return n;
}

static void data_path(char *buf, size_t cap, const char *name)
{
    const char *src = getenv("AS_SOURCE_DIR");
    snprintf(buf, cap, "%s/tests/data/io/%s", src ? src : ".", name);
}

static char *slurp(const char *path, size_t *len)
{
    FILE *f = fopen(path, "rb");
    assert_non_null(f);
    char *buf = malloc(1 << 20);
    assert_non_null(buf);
    *len = fread(buf, 1, 1 << 20, f);
    fclose(f);
    return buf;
}

/* A fresh directory under the build tree (AS_BINARY_DIR), removed by rm_dir. */
static void make_dir(char *buf, size_t cap)
{
    const char *bin = getenv("AS_BINARY_DIR");
    snprintf(buf, cap, "%s/io_test_XXXXXX", bin ? bin : ".");
    assert_non_null(mkdtemp(buf));
}

/* Entries of dir whose name starts with prefix ("" counts all but . and ..). */
static int count_prefixed(const char *dir, const char *prefix)
{
    DIR *d = opendir(dir);
    assert_non_null(d);
    int n = 0;
    struct dirent *e;
    while ((e = readdir(d)) != NULL)
        if (strcmp(e->d_name, ".") != 0 && strcmp(e->d_name, "..") != 0 &&
            strncmp(e->d_name, prefix, strlen(prefix)) == 0)
            n++;
    closedir(d);
    return n;
}

static int count_entries(const char *dir)
{
    DIR *d = opendir(dir);
    assert_non_null(d);
    int n = 0;
    struct dirent *e;
    while ((e = readdir(d)) != NULL)
        if (strcmp(e->d_name, ".") != 0 && strcmp(e->d_name, "..") != 0)
            n++;
    closedir(d);
    return n;
}

static void rm_dir(const char *dir)
{
    DIR *d = opendir(dir);
    if (!d)
        return;
    struct dirent *e;
    char p[PATH_MAX];
    while ((e = readdir(d)) != NULL) {
        if (strcmp(e->d_name, ".") == 0 || strcmp(e->d_name, "..") == 0)
            continue;
        snprintf(p, sizeof p, "%s/%s", dir, e->d_name);
        unlink(p);
    }
    closedir(d);
    rmdir(dir);
}

static void gzip_file(const char *path, const char *data, size_t len)
{
    gzFile g = gzopen(path, "wb");
    assert_non_null(g);
    assert_int_equal(gzwrite(g, data, (unsigned)len), (int)len);
    assert_int_equal(gzclose(g), Z_OK);
}

/* ==== Reaction SMILES lines ================================================================= */

static snap S[64];

static void io_should_read_smiles_lines_with_title_cx_and_tab_columns(void **state)
{
    (void)state;
    char path[PATH_MAX];
    data_path(path, sizeof path, "mixed.smi");
    as_reader_opts o;
    as_reader_opts_init(&o);
    o.max_record = 256;
    int n = read_path(path, &o, S, 64);
    assert_int_equal(n, 11);

    /* SMILES, space, title, TAB reagent text, TAB id. */
    assert_int_equal(S[0].line, 1);
    assert_string_equal(S[0].reaction, "C=Cc1ccccc1>>OCCc1ccccc1");
    assert_string_equal(S[0].substrate, "(null)");
    assert_string_equal(S[0].reagents, "1. BH3\xc2\xb7THF; 2. H2O2, NaOH");
    assert_string_equal(S[0].id, "FF-0001");
    assert_int_equal(S[0].ncols, 5);
    assert_string_equal(S[0].col0, "C=Cc1ccccc1>>OCCc1ccccc1");

    /* CRLF: no CR left in the title. */
    assert_string_equal(S[2].id, "oct-HBr");
    assert_int_equal(S[2].raw_len, strlen("CCCCCCC=C>>CCCCCCC(C)Br oct-HBr"));

    /* A molecule, not a reaction: slash stereo kept as written. */
    assert_string_equal(S[5].substrate, "COc1ccc(/C=C/C)cc1");
    assert_string_equal(S[5].reaction, "(null)");
    assert_string_equal(S[5].id, "trans-anethole");

    /* CXSMILES block kept apart from the title; a trailing TAB is an empty reagent cell. */
    assert_string_equal(S[8].reaction, "C=CC(C)CCC=C(C)C>>C=CC(C)CCCC(C)(C)O");
    assert_string_equal(S[8].cx, "|f:0|");
    assert_string_equal(S[8].id, "dihydromyrcenol");
    assert_string_equal(S[8].reagents, "(null)");
    assert_int_equal(S[8].code, AS_OK);

    /* Last line without a final newline. */
    assert_int_equal(S[10].line, 11);
    assert_string_equal(S[10].substrate, "CC1=CC[C@@H](CC1)C(C)=C");
    assert_string_equal(S[10].id, "(R)-limonene");
}

static void io_should_give_one_record_per_input_line_in_order(void **state)
{
    (void)state;
    char path[PATH_MAX];
    data_path(path, sizeof path, "mixed.smi");
    as_reader_opts o;
    as_reader_opts_init(&o);
    o.max_record = 256;
    int n = read_path(path, &o, S, 64);
    assert_int_equal(n, 11);
    /* ok, blank, ok, indented, NUL, ok, Latin-1, over-long, ok, TAB-led, ok */
    static const as_status want[11] = {AS_OK, AS_OK, AS_OK, AS_OK, AS_ERR_ENCODING, AS_OK,
                                       AS_ERR_ENCODING, AS_ERR_LIMIT, AS_OK, AS_OK, AS_OK};
    static const int skipped[11] = {0, 1, 0, 1, 0, 0, 0, 0, 0, 1, 0};
    for (int i = 0; i < n; i++) {
        assert_int_equal(S[i].line, i + 1);
        assert_int_equal(S[i].code, want[i]);
        assert_int_equal(S[i].skipped, skipped[i]);
        if (want[i] != AS_OK)
            assert_int_equal(S[i].eline, i + 1);
    }
    /* "COc1ccc(/C=C\C)cc1 cis-anethole" is 31 bytes; the NUL is the 32nd. */
    assert_int_equal(S[4].ecol, 32);
    assert_int_equal(S[4].eoff, 31);
    assert_int_equal(S[6].ecol, 21); /* the 0xE9 of "caf\xe9" */
    assert_non_null(strstr(S[6].msg, "0xE9"));
    assert_int_equal(S[7].truncated, 1);
    assert_int_equal(S[7].raw_len, 256);
    assert_int_equal(S[7].ecol, 257);
    assert_string_equal(S[3].reaction, "(null)");
    assert_string_equal(S[3].substrate, "(null)");
    assert_string_equal(S[9].id, "FF-0010");
}

static void io_should_keep_crlf_records_aligned(void **state)
{
    (void)state;
    const char *text = "C=C>>CCBr one\r\n\r\nCC=C>>CC(C)Br two\r\n  lead\r\nC=CC>>CCCO four\r";
    int n = read_text(text, NULL, S, 64);
    assert_int_equal(n, 5);
    assert_string_equal(S[0].id, "one");
    assert_int_equal(S[1].skipped, 1);
    assert_int_equal(S[1].line, 2);
    assert_string_equal(S[2].id, "two");
    assert_int_equal(S[3].skipped, 1);
    assert_int_equal(S[4].line, 5);
    assert_string_equal(S[4].id, "four");
    assert_int_equal(S[4].raw_len, strlen("C=CC>>CCCO four"));

    /* CSV: CRLF ends records; inside quotes it is data. */
    const char *csv = "smiles,note\r\nC=C,\"a\r\nb\"\r\nCC=C,c\r\n";
    n = read_text(csv, NULL, S, 64);
    assert_int_equal(n, 2);
    assert_int_equal(S[0].line, 2);
    assert_int_equal(S[0].nlines, 2);
    assert_string_equal(S[0].last_col, "a\r\nb");
    assert_int_equal(S[1].line, 4);
    assert_string_equal(S[1].last_col, "c");
}

static void io_should_drop_bom_only_at_the_start(void **state)
{
    (void)state;
    const char *text = "\xEF\xBB\xBF" "C=C first\nC=C \xEF\xBB\xBFsecond\nC=C caf\xFF\n";
    int n = read_text(text, NULL, S, 64);
    assert_int_equal(n, 3);
    assert_string_equal(S[0].substrate, "C=C");
    assert_string_equal(S[0].raw, "C=C first");
    assert_string_equal(S[1].id, "\xEF\xBB\xBFsecond"); /* U+FEFF later on is text */
    assert_int_equal(S[2].ecol, 8);

    /* BOM before a CSV header: the first column name must not carry it. */
    const char *csv = "\xEF\xBB\xBFsmiles,id\nC=C,r1\n";
    as_reader *r;
    as_error err;
    assert_int_equal(as_reader_open_buffer(csv, strlen(csv), NULL, &r, &err), AS_OK);
    const char *const *names;
    assert_int_equal(as_reader_columns(r, &names), 2);
    assert_string_equal(names[0], "smiles");
    as_reader_close(r);
}

/* ==== CSV =================================================================================== */

static void io_should_read_csv_quotes_commas_and_line_breaks(void **state)
{
    (void)state;
    char path[PATH_MAX];
    data_path(path, sizeof path, "batch.csv");
    as_reader_opts o;
    as_reader_opts_init(&o);
    o.id_col = "batch_id";
    int n = read_path(path, &o, S, 64);
    assert_int_equal(n, 7);
    assert_int_equal(S[0].line, 2);
    assert_string_equal(S[0].id, "FF-0101");
    assert_string_equal(S[0].reagents, "1. 9-BBN, THF; 2. H2O2, NaOH");
    assert_string_equal(S[1].reaction, "COc1ccc(/C=C/C)cc1>>COc1ccc(cc1)[C@@H](Br)[C@H](C)Br");
    assert_string_equal(S[1].last_col, "anti addition; \"erythro\" expected");
    /* A quoted note over two lines is one record that starts on line 4. */
    assert_int_equal(S[2].line, 4);
    assert_int_equal(S[2].nlines, 2);
    assert_string_equal(S[2].last_col, "two-line note:\r\ncheck for 1-bromooctane");
    assert_int_equal(S[3].line, 6);
    assert_int_equal(S[3].skipped, 1);
    /* Five fields under a four-column header. */
    assert_int_equal(S[4].code, AS_ERR_SYNTAX);
    assert_int_equal(S[4].eline, 7);
    assert_int_equal(S[4].ecol, 63); /* where the fifth field starts */
    assert_string_equal(S[4].reaction, "(null)");
    assert_int_equal(S[4].ncols, 4);
    /* Text after a closing quote. */
    assert_int_equal(S[5].code, AS_ERR_SYNTAX);
    assert_int_equal(S[5].eline, 8);
    assert_int_equal(S[5].ecol, 15);
    assert_int_equal(S[5].ncols, 0);
    /* The last row has no final newline. */
    assert_int_equal(S[6].code, AS_OK);
    assert_int_equal(S[6].line, 9);
    assert_string_equal(S[6].last_col, "last row, no newline");
}

static void io_should_resume_after_an_unclosed_quote_on_the_next_line(void **state)
{
    (void)state;
    const char *csv = "smiles,id\nC=C,\"r1\nC=CC,r2\nC=CCC,r3\n";
    int n = read_text(csv, NULL, S, 64);
    assert_int_equal(n, 3);
    assert_int_equal(S[0].code, AS_ERR_SYNTAX);
    assert_int_equal(S[0].line, 2);
    assert_int_equal(S[0].eline, 2);
    assert_int_equal(S[0].ecol, 5);
    assert_string_equal(S[0].raw, "C=C,\"r1");
    assert_non_null(strstr(S[0].msg, "never closed"));
    assert_int_equal(S[1].code, AS_OK);
    assert_int_equal(S[1].line, 3);
    assert_string_equal(S[1].substrate, "C=CC");
    assert_string_equal(S[1].id, "r2");
    assert_int_equal(S[2].line, 4);
    assert_string_equal(S[2].id, "r3");

    /* On the last line. */
    n = read_text("smiles,id\nC=C,r1\nC=CC,\"r2", NULL, S, 64);
    assert_int_equal(n, 2);
    assert_int_equal(S[1].code, AS_ERR_SYNTAX);
    assert_int_equal(S[1].eline, 3);
    assert_int_equal(S[1].ecol, 6);

    /* A field closed on a later line but followed by text: the first line is the error,
     * the following line is read again on its own (its quote is then literal text). */
    n = read_text("smiles,id\n\"C=C\nx\"y,r2\nCC,r3\n", NULL, S, 64);
    assert_int_equal(n, 3);
    assert_int_equal(S[0].code, AS_ERR_SYNTAX);
    assert_int_equal(S[0].line, 2);
    assert_int_equal(S[0].eline, 3);
    assert_int_equal(S[0].ecol, 3);
    assert_int_equal(S[1].code, AS_OK);
    assert_int_equal(S[1].line, 3);
    assert_string_equal(S[1].col0, "x\"y");
    assert_string_equal(S[2].id, "r3");
}

static void io_should_apply_the_field_count_rule_strict_or_lenient(void **state)
{
    (void)state;
    const char *csv = "smiles,reagents,id\nC=C,HBr\nCC=C,HCl,r2,extra\nC=CC,HI,r3\n";
    int n = read_text(csv, NULL, S, 64);
    assert_int_equal(n, 3);
    assert_int_equal(S[0].code, AS_ERR_SYNTAX);
    assert_int_equal(S[0].ecol, 8); /* just past the end of the short row */
    assert_int_equal(S[1].code, AS_ERR_SYNTAX);
    assert_int_equal(S[1].ecol, 13);
    assert_int_equal(S[2].code, AS_OK);

    as_reader_opts o;
    as_reader_opts_init(&o);
    o.lenient_fields = 1;
    n = read_text(csv, &o, S, 64);
    assert_int_equal(n, 3);
    assert_int_equal(S[0].code, AS_OK);
    assert_string_equal(S[0].reagents, "HBr");
    assert_string_equal(S[0].id, "(null)");
    assert_int_equal(S[0].ncols, 3);
    assert_non_null(strstr(S[0].warning, "missing fields"));
    assert_int_equal(S[1].code, AS_OK);
    assert_string_equal(S[1].id, "r2");
    assert_int_equal(S[1].ncols, 3);
    assert_non_null(strstr(S[1].warning, "extra fields"));
    assert_string_equal(S[2].warning, "");
}

static void io_should_ignore_one_trailing_empty_cell(void **state)
{
    (void)state;
    int n = read_text("smiles\tid\t\nC=C\tr1\t\nCC=C\tr2\n", NULL, S, 64);
    assert_int_equal(n, 2);
    assert_int_equal(S[0].code, AS_OK);
    assert_int_equal(S[0].ncols, 2);
    assert_string_equal(S[0].id, "r1");
    assert_int_equal(S[1].code, AS_OK);
    n = read_text("smiles,id\nC=C,r1,\n", NULL, S, 64);
    assert_int_equal(n, 1);
    assert_int_equal(S[0].code, AS_OK);
}

/* ==== Columns =============================================================================== */

static void io_should_detect_columns_by_common_names(void **state)
{
    (void)state;
    /* USPTO-style extract: TAB-separated with a ReactionSmiles header. */
    const char *uspto = "ReactionSmiles\tPatentNumber\tParagraphNum\tYear\n"
                        "[CH2:1]=[CH:2][CH3:3].[BrH:4]>>[CH3:1][CH:2]([Br:4])[CH3:3]\t"
                        "US0000001\t0042\t2001\n";
    as_reader *r;
    as_error err;
    assert_int_equal(as_reader_open_buffer(uspto, strlen(uspto), NULL, &r, &err), AS_OK);
    assert_int_equal(as_reader_format(r), AS_FMT_TSV);
    as_reader_close(r);
    int n = read_text(uspto, NULL, S, 64);
    assert_int_equal(n, 1);
    assert_string_equal(S[0].reaction,
                        "[CH2:1]=[CH:2][CH3:3].[BrH:4]>>[CH3:1][CH:2]([Br:4])[CH3:3]");
    assert_string_equal(S[0].id, "US0000001");

    /* Spelling variants: "Rxn SMILES", "Reagents", "Name". */
    n = read_text("Name,Rxn SMILES,Reagents\nPH-9,C=C>>CCO,\"H2O, H2SO4\"\n", NULL, S, 64);
    assert_int_equal(n, 1);
    assert_string_equal(S[0].reaction, "C=C>>CCO");
    assert_string_equal(S[0].reagents, "H2O, H2SO4");
    assert_string_equal(S[0].id, "PH-9");

    /* A plain "SMILES" column: '>' decides between reaction and substrate. */
    n = read_text("SMILES,id\nC=CC,a\nC=CC>>CC(O)C,b\nC[N+]([O-])=O,c\n", NULL, S, 64);
    assert_int_equal(n, 3);
    assert_string_equal(S[0].substrate, "C=CC");
    assert_string_equal(S[0].reaction, "(null)");
    assert_string_equal(S[1].reaction, "C=CC>>CC(O)C");
    assert_string_equal(S[2].substrate, "C[N+]([O-])=O");

    /* The project's reference cases: alkene → substrate, major → product, and the
     * "reaction" column (a rule name such as hx) is not mistaken for reaction SMILES. */
    char path[PATH_MAX];
    data_path(path, sizeof path, "cases_sample.tsv");
    n = read_path(path, NULL, S, 64);
    assert_int_equal(n, 6);
    assert_string_equal(S[0].id, "C001");
    assert_string_equal(S[0].substrate, "C=CC");
    assert_string_equal(S[0].product, "CC(C)Br");
    assert_string_equal(S[0].reaction, "(null)");
    assert_string_equal(S[0].reagents, "HBr (no peroxide)");
    assert_string_equal(S[0].last_name, "note");
    assert_int_equal(S[0].ncols, 12);
    /* McMurry, Organic Chemistry, 8th ed. (from memory) is the row's source column. */
    assert_string_equal(S[5].id, "C120");
    assert_string_equal(S[5].substrate, "C/C=C\\C");
    assert_string_equal(S[5].product, "C[C@@H](Br)[C@@H](C)Br");
    assert_string_equal(S[1].reagents, "HBr, ROOR (peroxide), h\xce\xbd or heat");
}

static void io_should_pick_columns_named_in_the_options(void **state)
{
    (void)state;
    const char *csv = "code,alkene_in,reagent set,target\nF1,C=CC,HBr,CC(C)Br\n";
    as_reader_opts o;
    as_reader_opts_init(&o);
    o.id_col = "code";
    o.substrate_col = "2";
    o.reagent_col = "reagent set";
    o.product_col = "4";
    int n = read_text(csv, &o, S, 64);
    assert_int_equal(n, 1);
    assert_string_equal(S[0].id, "F1");
    assert_string_equal(S[0].substrate, "C=CC");
    assert_string_equal(S[0].reagents, "HBr");
    assert_string_equal(S[0].product, "CC(C)Br");

    as_reader *r = NULL;
    as_error err;
    o.product_col = "yield";
    assert_int_equal(as_reader_open_buffer(csv, strlen(csv), &o, &r, &err), AS_ERR_ARG);
    assert_null(r);
    assert_non_null(strstr(err.msg, "'yield'"));
    assert_non_null(strstr(err.msg, "alkene_in"));
    o.product_col = "9";
    assert_int_equal(as_reader_open_buffer(csv, strlen(csv), &o, &r, &err), AS_ERR_ARG);
    assert_non_null(strstr(err.msg, "out of range"));

    /* Nothing that looks like SMILES and nothing named. */
    as_reader_opts_init(&o);
    o.format = AS_FMT_CSV;
    const char *plain = "code,amount\nF1,3\n";
    assert_int_equal(as_reader_open_buffer(plain, strlen(plain), &o, &r, &err), AS_ERR_ARG);
    assert_non_null(strstr(err.msg, "no reaction, substrate or SMILES column"));
}

/* ==== TSV and JSON Lines ==================================================================== */

static void io_should_read_tsv_backslashes_as_data_unless_asked(void **state)
{
    (void)state;
    const char *tsv = "smiles\tnote\nF/C=C\\F\ta\\tb\\\\c\n";
    int n = read_text(tsv, NULL, S, 64);
    assert_int_equal(n, 1);
    assert_string_equal(S[0].substrate, "F/C=C\\F");
    assert_string_equal(S[0].last_col, "a\\tb\\\\c");
    as_reader_opts o;
    as_reader_opts_init(&o);
    o.tsv_unescape = 1;
    n = read_text("smiles\tnote\nF/C=C\\\\F\ta\\tb\\\\c\\n\n", &o, S, 64);
    assert_int_equal(n, 1);
    assert_string_equal(S[0].substrate, "F/C=C\\F");
    assert_string_equal(S[0].last_col, "a\tb\\c\n");
}

static void io_should_read_json_lines_and_locate_bad_lines(void **state)
{
    (void)state;
    char path[PATH_MAX];
    data_path(path, sizeof path, "batch.jsonl");
    int n = read_path(path, NULL, S, 64);
    assert_int_equal(n, 6);
    assert_string_equal(S[0].id, "PH-201");
    assert_string_equal(S[0].substrate, "C=CC(C)(C)C");
    assert_string_equal(S[0].reagents, "1. Hg(OAc)2, H2O; 2. NaBH4");
    assert_string_equal(S[0].last_name, "scale_g");
    assert_string_equal(S[0].last_col, "12.5");
    /* "C/C=C\\C" in JSON is the SMILES C/C=C\C. */
    assert_string_equal(S[1].reaction, "C/C=C\\C>>C[C@@H](Br)[C@@H](C)Br");
    assert_int_equal(S[2].skipped, 1);
    assert_int_equal(S[3].code, AS_ERR_SYNTAX);
    assert_int_equal(S[3].eline, 4);
    assert_int_equal(S[3].ecol, 50); /* cJSON stops inside "tru" */
    assert_int_equal(S[4].code, AS_ERR_SYNTAX);
    assert_non_null(strstr(S[4].msg, "array"));
    assert_int_equal(S[5].code, AS_OK);
    assert_string_equal(S[5].id, "205");
    assert_string_equal(S[5].reaction, "CC(C)=C>>CC(C)(C)Br");
    assert_string_equal(S[5].last_col, "[\"urgent\"]");

    n = read_text("{\"smiles\": \"CC\"} extra\n", NULL, S, 64);
    assert_int_equal(n, 1);
    assert_int_equal(S[0].code, AS_ERR_SYNTAX);
    assert_int_equal(S[0].ecol, 18);
}

/* ==== Bad bytes and limits ================================================================== */

static void io_should_report_nul_and_invalid_utf8_with_column(void **state)
{
    (void)state;
    static const struct {
        const char *text;
        size_t len;
        as_status code;
        long col;
    } cases[] = {
        {"C=C ok\n", 7, AS_OK, 0},
        {"C=C \xF0\x9F\x98\x80 ok\n", 11, AS_OK, 0},          /* 4-byte character */
        {"C=C\0C\n", 6, AS_ERR_ENCODING, 4},                    /* NUL */
        {"C=C x\xC0\xAF\n", 8, AS_ERR_ENCODING, 6},             /* overlong '/' */
        {"C=C x\xED\xA0\x80\n", 9, AS_ERR_ENCODING, 6},         /* surrogate */
        {"C=C x\xF4\x90\x80\x80\n", 10, AS_ERR_ENCODING, 6},    /* above U+10FFFF */
        {"C=C x\xE2\x82\n", 8, AS_ERR_ENCODING, 6},             /* cut short */
        {"C=C x\x80\n", 7, AS_ERR_ENCODING, 6},                 /* lone continuation */
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        int n = read_buffer(cases[i].text, cases[i].len, NULL, S, 4);
        assert_int_equal(n, 1);
        assert_int_equal(S[0].code, cases[i].code);
        if (cases[i].code != AS_OK) {
            assert_int_equal(S[0].ecol, cases[i].col);
            assert_int_equal(S[0].eline, 1);
            assert_int_equal(S[0].ncols, 0);
        }
    }
    /* In a quoted CSV field on the second line of a record. */
    const char csv[] = "smiles,note\nC=C,\"fine\nbad\xFF\"\nCC,ok\n";
    int n = read_buffer(csv, sizeof csv - 1, NULL, S, 4);
    assert_int_equal(n, 2);
    assert_int_equal(S[0].code, AS_ERR_ENCODING);
    assert_int_equal(S[0].eline, 3);
    assert_int_equal(S[0].ecol, 4);
    assert_int_equal(S[1].code, AS_OK);
}

static void io_should_skip_over_long_lines_in_bounded_memory(void **state)
{
    (void)state;
    size_t big = 100000;
    char *text = malloc(big + 64);
    assert_non_null(text);
    strcpy(text, "C=C first\n");
    size_t at = strlen(text);
    memset(text + at, 'C', big);
    at += big;
    strcpy(text + at, "\nCC=C last\n");
    as_reader_opts o;
    as_reader_opts_init(&o);
    o.max_record = 64;
    int n = read_text(text, &o, S, 8);
    assert_int_equal(n, 3);
    assert_int_equal(S[1].code, AS_ERR_LIMIT);
    assert_int_equal(S[1].truncated, 1);
    assert_int_equal(S[1].raw_len, 64);
    assert_int_equal(S[1].eline, 2);
    assert_string_equal(S[2].id, "last");
    assert_int_equal(S[2].line, 3);

    /* The same in CSV, and a quoted field that runs over the limit across lines. */
    memcpy(text, "smiles,id\n", 10);
    n = read_text(text, &o, S, 8);
    assert_int_equal(n, 2);
    assert_int_equal(S[0].code, AS_ERR_LIMIT);
    assert_int_equal(S[0].line, 2);
    free(text);
    const char *runaway = "smiles,id\nC=C,\"a\nbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbbb\n"
                          "cccccccccccccccccccccccccccccccccccccccccccccccccc\nC=CC,r4\n";
    n = read_text(runaway, &o, S, 8);
    assert_int_equal(n, 4);
    assert_int_equal(S[0].code, AS_ERR_LIMIT);
    assert_int_equal(S[0].line, 2);
    assert_string_equal(S[0].raw, "C=C,\"a");
    /* The lines inside the runaway quote are read again as (one-column) rows. */
    assert_int_equal(S[1].line, 3);
    assert_int_equal(S[2].line, 4);
    assert_int_equal(S[3].line, 5);
    assert_int_equal(S[3].code, AS_OK);
    assert_string_equal(S[3].id, "r4");
}

static void io_should_accept_records_of_exactly_the_limit(void **state)
{
    (void)state;
    as_reader_opts o;
    as_reader_opts_init(&o);
    o.max_record = 64;
    char text[512];
    char row[80];
    /* 64 bytes of content, with LF and with CRLF, then 65 bytes. */
    memset(row, 'C', 64);
    row[64] = '\0';
    snprintf(text, sizeof text, "%s\n%s\r\nC%s\n", row, row, row);
    int n = read_text(text, &o, S, 8);
    assert_int_equal(n, 3);
    assert_int_equal(S[0].code, AS_OK);
    assert_int_equal(S[1].code, AS_OK);
    assert_int_equal(S[1].raw_len, 64);
    assert_int_equal(S[2].code, AS_ERR_LIMIT);
    memcpy(row, "C=C,", 4);
    snprintf(text, sizeof text, "smiles,id\n%s\n%s\r\n%s9\n", row, row, row);
    n = read_text(text, &o, S, 8);
    assert_int_equal(n, 3);
    assert_int_equal(S[0].code, AS_OK);
    assert_int_equal(S[1].code, AS_OK);
    assert_int_equal(S[1].raw_len, 64);
    assert_int_equal(S[2].code, AS_ERR_LIMIT);
    assert_int_equal(S[2].raw_len, 64);
    assert_int_equal(S[2].line, 4);
}

static void io_should_pass_over_blank_lines_before_a_header(void **state)
{
    (void)state;
    as_reader_opts o;
    as_reader_opts_init(&o);
    o.format = AS_FMT_CSV;
    o.id_col = "LOT";
    int n = read_text("\r\n\nSMILES,lot\nC=C,L-7\n", &o, S, 4);
    assert_int_equal(n, 1);
    assert_int_equal(S[0].line, 4);
    assert_string_equal(S[0].substrate, "C=C");
    assert_string_equal(S[0].id, "L-7");
}

static void io_should_read_standard_input(void **state)
{
    (void)state;
    char dir[PATH_MAX], p[PATH_MAX + 32];
    make_dir(dir, sizeof dir);
    snprintf(p, sizeof p, "%s/in.jsonl.gz", dir);
    const char *text = "{\"smiles\": \"C=CC\", \"id\": \"S1\"}\n";
    gzip_file(p, text, strlen(text));
    int saved = dup(STDIN_FILENO);
    int fd = open(p, O_RDONLY);
    assert_true(saved >= 0 && fd >= 0);
    assert_int_equal(dup2(fd, STDIN_FILENO), STDIN_FILENO);
    close(fd);
    int n = read_path("-", NULL, S, 4);
    assert_int_equal(dup2(saved, STDIN_FILENO), STDIN_FILENO);
    close(saved);
    assert_int_equal(n, 1);
    assert_string_equal(S[0].substrate, "C=CC");
    assert_string_equal(S[0].id, "S1");
    rm_dir(dir);
}

static void on_alarm(int sig)
{
    (void)sig;
    static const char msg[] = "io test: a piped record was held back waiting for more input\n";
    if (write(STDERR_FILENO, msg, sizeof msg - 1) < 0)
        _exit(3);
    _exit(2);
}

static void io_should_hand_on_piped_records_without_waiting_for_more(void **state)
{
    (void)state;
    int fds[2];
    assert_int_equal(pipe(fds), 0);
    int saved = dup(STDIN_FILENO);
    assert_true(saved >= 0);
    assert_int_equal(dup2(fds[0], STDIN_FILENO), STDIN_FILENO);
    close(fds[0]);
    const char *first = "C=Cc1ccccc1 styrene\n";
    assert_int_equal(write(fds[1], first, strlen(first)), (ssize_t)strlen(first));
    /* The writer stays open: the reader must not wait for EOF or a full buffer. */
    void (*prev)(int) = signal(SIGALRM, on_alarm);
    alarm(10);
    as_reader *r;
    as_error err;
    as_record rec;
    assert_int_equal(as_reader_open("-", NULL, &r, &err), AS_OK);
    assert_int_equal(as_reader_next(r, &rec, &err), AS_OK);
    assert_false(rec.at_end);
    assert_string_equal(rec.substrate, "C=Cc1ccccc1");
    const char *second = "CC(C)=C isobutene\n";
    assert_int_equal(write(fds[1], second, strlen(second)), (ssize_t)strlen(second));
    assert_int_equal(as_reader_next(r, &rec, &err), AS_OK);
    assert_string_equal(rec.id, "isobutene");
    close(fds[1]);
    assert_int_equal(as_reader_next(r, &rec, &err), AS_OK);
    assert_true(rec.at_end);
    alarm(0);
    signal(SIGALRM, prev);
    as_reader_close(r);
    assert_int_equal(dup2(saved, STDIN_FILENO), STDIN_FILENO);
    close(saved);
}

static void io_should_read_concatenated_gzip_members(void **state)
{
    (void)state;
    char dir[PATH_MAX], p[PATH_MAX + 32];
    make_dir(dir, sizeof dir);
    snprintf(p, sizeof p, "%s/two.smi.gz", dir);
    /* Two members, as `cat a.gz b.gz` gives, then bytes that are not a third member. */
    gzip_file(p, "C=C first\n", 10);
    size_t l1;
    char *m1 = slurp(p, &l1);
    gzip_file(p, "CC=C second\nCCC=C third", 23);
    size_t l2;
    char *m2 = slurp(p, &l2);
    FILE *f = fopen(p, "wb");
    assert_non_null(f);
    fwrite(m1, 1, l1, f);
    fwrite(m2, 1, l2, f);
    fwrite("\0\0\0\0", 1, 4, f);
    fclose(f);
    int n = read_path(p, NULL, S, 8);
    assert_int_equal(n, 3);
    assert_string_equal(S[0].id, "first");
    assert_string_equal(S[1].id, "second");
    assert_string_equal(S[2].id, "third");
    assert_int_equal(S[2].code, AS_OK);
    free(m1);
    free(m2);
    rm_dir(dir);
}

/* ==== Files, gzip, detection ================================================================ */

static void io_should_read_gzip_input_transparently(void **state)
{
    (void)state;
    char src[PATH_MAX], dir[PATH_MAX], gz[PATH_MAX + 32];
    data_path(src, sizeof src, "mixed.smi");
    size_t len;
    char *data = slurp(src, &len);
    make_dir(dir, sizeof dir);
    snprintf(gz, sizeof gz, "%s/mixed.smi.gz", dir);
    gzip_file(gz, data, len);
    as_reader_opts o;
    as_reader_opts_init(&o);
    o.max_record = 256;
    static snap plain[16], packed[16];
    int n1 = read_buffer(data, len, &o, plain, 16);
    int n2 = read_path(gz, &o, packed, 16);
    assert_int_equal(n1, 11);
    assert_int_equal(n2, 11);
    for (int i = 0; i < n1; i++) {
        assert_int_equal(plain[i].line, packed[i].line);
        assert_int_equal(plain[i].code, packed[i].code);
        assert_int_equal(plain[i].ecol, packed[i].ecol);
        assert_string_equal(plain[i].reaction, packed[i].reaction);
        assert_string_equal(plain[i].id, packed[i].id);
    }
    /* A gzip CSV is detected by its inner extension. */
    snprintf(gz, sizeof gz, "%s/batch.csv.gz", dir);
    gzip_file(gz, "code,value\nr1,C=C\n", 18);
    o.smiles_col = "value";
    int n = read_path(gz, &o, S, 4);
    assert_int_equal(n, 1);
    assert_string_equal(S[0].substrate, "C=C");
    free(data);
    rm_dir(dir);
}

static void io_should_end_truncated_gzip_with_an_error_record(void **state)
{
    (void)state;
    char dir[PATH_MAX], gz[PATH_MAX + 32];
    make_dir(dir, sizeof dir);
    snprintf(gz, sizeof gz, "%s/cut.smi.gz", dir);
    size_t cap = 20000 * 40, len = 0;
    char *text = malloc(cap);
    assert_non_null(text);
    for (int i = 0; i < 20000; i++)
        len += (size_t)snprintf(text + len, cap - len, "C=CC%d>>CC(Br)C lot-%05d\n", i % 10, i);
    gzip_file(gz, text, len);
    free(text);
    /* Keep the first half of the compressed bytes. */
    size_t glen;
    char *packed = slurp(gz, &glen);
    FILE *f = fopen(gz, "wb");
    assert_non_null(f);
    fwrite(packed, 1, glen / 2, f);
    fclose(f);

    as_reader *r;
    as_error err;
    assert_int_equal(as_reader_open(gz, NULL, &r, &err), AS_OK);
    as_record rec;
    long good = 0, errors = 0, last_line = 0;
    as_status last_code = AS_OK;
    char last_msg[256] = "";
    for (;;) {
        assert_int_equal(as_reader_next(r, &rec, &err), AS_OK);
        if (rec.at_end)
            break;
        if (rec.err.code == AS_OK) {
            good++;
        } else {
            errors++;
            last_code = rec.err.code;
            last_line = rec.err.line;
            snprintf(last_msg, sizeof last_msg, "%s", rec.err.msg);
        }
    }
    assert_true(good > 1000 && good < 20000);
    assert_int_equal(errors, 1);
    assert_int_equal(last_code, AS_ERR_IO);
    assert_int_equal(last_line, good + 1);
    assert_non_null(strstr(last_msg, "truncated"));
    assert_int_equal(as_reader_next(r, &rec, &err), AS_OK);
    assert_true(rec.at_end);
    as_reader_close(r);

    /* Corrupt bytes in the middle: also one error record, then the end. */
    packed[glen / 2] = (char)(packed[glen / 2] ^ 0x5A);
    packed[glen / 2 + 1] = (char)(packed[glen / 2 + 1] ^ 0xA5);
    f = fopen(gz, "wb");
    assert_non_null(f);
    fwrite(packed, 1, glen, f);
    fclose(f);
    assert_int_equal(as_reader_open(gz, NULL, &r, &err), AS_OK);
    errors = 0;
    for (;;) {
        assert_int_equal(as_reader_next(r, &rec, &err), AS_OK);
        if (rec.at_end)
            break;
        if (rec.err.code != AS_OK)
            errors++;
    }
    assert_true(errors >= 1);
    as_reader_close(r);
    free(packed);
    rm_dir(dir);
}

static void io_should_detect_the_format_from_name_and_first_line(void **state)
{
    (void)state;
    static const struct {
        const char *text;
        as_format fmt;
    } cases[] = {
        {"{\"smiles\": \"C=C\"}\n", AS_FMT_JSONL},
        {"\n  \n{\"smiles\": \"C=C\"}\n", AS_FMT_JSONL},
        {"smiles,id\nC=C,1\n", AS_FMT_CSV},
        {"\"Reaction SMILES\",id\nC=C>>CC,1\n", AS_FMT_CSV},
        {"id\tsmiles\n1\tC=C\n", AS_FMT_TSV},
        {"C=C>>CCBr\tHBr\tR1\n", AS_FMT_RSMI},
        {"C=C,CC propene-ethane mix\n", AS_FMT_RSMI},
        {"", AS_FMT_RSMI},
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        as_reader *r;
        as_error err;
        assert_int_equal(
            as_reader_open_buffer(cases[i].text, strlen(cases[i].text), NULL, &r, &err), AS_OK);
        assert_int_equal(as_reader_format(r), cases[i].fmt);
        as_reader_close(r);
    }
    /* A forced format wins over the content. */
    as_reader_opts o;
    as_reader_opts_init(&o);
    o.format = AS_FMT_RSMI;
    int n = read_text("smiles,id\nC=C,1\n", &o, S, 4);
    assert_int_equal(n, 2);
    /* ".csv" decides even when no header name is known; one column is the SMILES. */
    char dir[PATH_MAX], p[PATH_MAX + 32];
    make_dir(dir, sizeof dir);
    snprintf(p, sizeof p, "%s/one.CSV", dir);
    FILE *f = fopen(p, "wb");
    assert_non_null(f);
    fputs("structure\nC=CC\n", f);
    fclose(f);
    n = read_path(p, NULL, S, 4);
    assert_int_equal(n, 1);
    assert_string_equal(S[0].substrate, "C=CC");
    rm_dir(dir);

    as_format fmt;
    assert_int_equal(as_format_parse("ndjson", &fmt, NULL), AS_OK);
    assert_int_equal(fmt, AS_FMT_JSONL);
    assert_int_equal(as_format_parse("smi", &fmt, NULL), AS_OK);
    assert_int_equal(fmt, AS_FMT_RSMI);
    as_error err;
    assert_int_equal(as_format_parse("sdf", &fmt, &err), AS_ERR_ARG);
    assert_string_equal(as_format_name(AS_FMT_TSV), "tsv");
}

static void io_should_fail_to_open_with_a_reason(void **state)
{
    (void)state;
    as_reader *r = (as_reader *)&r;
    as_error err;
    char dir[PATH_MAX], p[PATH_MAX + 32];
    make_dir(dir, sizeof dir);
    snprintf(p, sizeof p, "%s/absent.smi", dir);
    assert_int_equal(as_reader_open(p, NULL, &r, &err), AS_ERR_IO);
    assert_null(r);
    assert_non_null(strstr(err.msg, "absent.smi"));
    assert_non_null(strstr(err.msg, "No such file"));
    assert_int_equal(as_reader_open(dir, NULL, &r, &err), AS_ERR_IO);
    assert_non_null(strstr(err.msg, "directory"));
    as_reader_opts o;
    as_reader_opts_init(&o);
    o.max_record = 10;
    assert_int_equal(as_reader_open_buffer("C", 1, &o, &r, &err), AS_ERR_ARG);
    as_reader_opts_init(&o);
    o.csv_delimiter = '"';
    assert_int_equal(as_reader_open_buffer("C", 1, &o, &r, &err), AS_ERR_ARG);
    assert_int_equal(as_reader_next(NULL, NULL, &err), AS_ERR_ARG);
    /* A broken CSV header fails the open, naming line 1. */
    assert_int_equal(as_reader_open_buffer("smiles,\"id\n", 11, NULL, &r, &err), AS_ERR_SYNTAX);
    assert_int_equal(err.line, 1);
    assert_non_null(strstr(err.msg, "header"));
    rm_dir(dir);
    /* Empty input: no records, no error. */
    assert_int_equal(read_text("", NULL, S, 4), 0);
}

/* ==== Writers =============================================================================== */

static char *write_records(as_format fmt, void (*body)(as_writer *w), size_t *len)
{
    as_outfile *out;
    as_writer *w;
    as_error err;
    as_writer_opts o;
    as_writer_opts_init(&o);
    o.format = fmt;
    assert_int_equal(as_outfile_open_memory(&out, &err), AS_OK);
    assert_int_equal(as_writer_open(out, &o, &w, &err), AS_OK);
    body(w);
    as_writer_free(w);
    size_t n;
    const char *p = as_outfile_memory(out, &n);
    char *copy = malloc(n + 1);
    assert_non_null(copy);
    memcpy(copy, p, n);
    copy[n] = '\0';
    *len = n;
    assert_int_equal(as_outfile_close(out, &err), AS_OK);
    return copy;
}

static const char *const tricky[] = {
    "F/C=C\\F",                          /* SMILES with a backslash */
    "C\\C=C/C>>C[C@@H](Br)[C@@H](C)Br",  /* more of them */
    "say \"anti\", then\ttab\nnewline",  /* quote, comma, TAB, LF */
    " leading and trailing ",
    "back\\\\slashes\\",
    "",
    "h\xce\xbd, BH3\xc2\xb7THF",         /* UTF-8 */
};
#define NTRICKY (sizeof tricky / sizeof tricky[0])

static void body_tricky(as_writer *w)
{
    as_error err;
    for (size_t i = 0; i < NTRICKY; i++) {
        as_kv kv[4] = {as_kv_int("index", (long long)i), as_kv_text("smiles", tricky[i]),
                       as_kv_real("share", 0.75), as_kv_bool("ok", (int)(i % 2))};
        const char *cn[] = {"id", "smiles"};
        const char *cv[] = {"carried-id", tricky[i]};
        assert_int_equal(as_writer_put(w, kv, 4, cn, cv, 2, &err), AS_OK);
    }
}

static void io_should_write_jsonl_that_round_trips_backslashes(void **state)
{
    (void)state;
    size_t len;
    char *out = write_records(AS_FMT_JSONL, body_tricky, &len);
    char *line = out;
    for (size_t i = 0; i < NTRICKY; i++) {
        char *nl = strchr(line, '\n');
        assert_non_null(nl);
        *nl = '\0';
        cJSON *j = cJSON_Parse(line);
        assert_non_null(j);
        assert_int_equal((int)cJSON_GetObjectItemCaseSensitive(j, "index")->valuedouble, (int)i);
        assert_string_equal(cJSON_GetObjectItemCaseSensitive(j, "smiles")->valuestring, tricky[i]);
        assert_true(cJSON_GetObjectItemCaseSensitive(j, "share")->valuedouble == 0.75);
        assert_int_equal(cJSON_IsTrue(cJSON_GetObjectItemCaseSensitive(j, "ok")), (int)(i % 2));
        /* Carried "smiles" collides with a field: it is written as input_smiles. */
        assert_string_equal(cJSON_GetObjectItemCaseSensitive(j, "input_smiles")->valuestring,
                            tricky[i]);
        assert_string_equal(cJSON_GetObjectItemCaseSensitive(j, "id")->valuestring, "carried-id");
        cJSON_Delete(j);
        line = nl + 1;
    }
    assert_string_equal(line, "");
    /* The backslash of F/C=C\F is escaped in the text itself. */
    assert_non_null(strstr(out, "\"F/C=C\\\\F\""));
    free(out);
}

static void body_bad_bytes(as_writer *w)
{
    as_error err;
    as_kv kv[3] = {as_kv_text("raw", "C=C caf\xE9"), as_kv_text("with_nul", "a"),
                   as_kv_text("missing", NULL)};
    kv[1].text = "a\0b";
    kv[1].len = 3;
    assert_int_equal(as_writer_put(w, kv, 3, NULL, NULL, 0, &err), AS_OK);
    as_kv j[2] = {as_kv_text("products", "[\"CC(C)Br\", \"CCCBr\"]"), as_kv_int("n", 2)};
    j[0].kind = AS_KV_JSON;
    assert_int_equal(as_writer_put(w, j, 2, NULL, NULL, 0, &err), AS_OK);
    j[0].text = "[\"unclosed\"";
    assert_int_equal(as_writer_put(w, j, 2, NULL, NULL, 0, &err), AS_ERR_SYNTAX);
    assert_non_null(strstr(err.msg, "products"));
}

static void io_should_write_valid_json_for_invalid_bytes(void **state)
{
    (void)state;
    size_t len;
    char *out = write_records(AS_FMT_JSONL, body_bad_bytes, &len);
    assert_string_equal(out, "{\"raw\":\"C=C caf\xEF\xBF\xBD\",\"with_nul\":\"a\xEF\xBF\xBD" "b\","
                             "\"missing\":null}\n"
                             "{\"products\":[\"CC(C)Br\",\"CCCBr\"],\"n\":2}\n");
    free(out);
}

static void io_should_escape_tsv_values(void **state)
{
    (void)state;
    size_t len;
    char *out = write_records(AS_FMT_TSV, body_tricky, &len);
    char *second = strchr(out, '\n');
    assert_non_null(second);
    *second = '\0';
    assert_string_equal(out, "index\tsmiles\tshare\tok\tid\tinput_smiles");
    char *l1 = second + 1;
    char *l1end = strchr(l1, '\n');
    *l1end = '\0';
    assert_string_equal(l1, "0\tF/C=C\\\\F\t0.75\tfalse\tcarried-id\tF/C=C\\\\F");
    char *l3 = strchr(strchr(l1end + 1, '\n') + 1, '\n');
    (void)l3;
    assert_non_null(strstr(l1end + 1,
                           "2\tsay \"anti\", then\\ttab\\nnewline\t0.75\tfalse\tcarried-id\t"));
    /* Every record is exactly one line. */
    int lines = 0;
    for (char *p = l1end + 1; *p; p++)
        lines += *p == '\n';
    assert_int_equal(lines, (int)NTRICKY - 1);
    free(out);

    /* Read back with tsv_unescape: the values come back as written. */
    out = write_records(AS_FMT_TSV, body_tricky, &len);
    as_reader_opts o;
    as_reader_opts_init(&o);
    o.tsv_unescape = 1;
    int n = read_buffer(out, len, &o, S, 16);
    assert_int_equal(n, (int)NTRICKY);
    for (size_t i = 0; i < NTRICKY; i++)
        assert_string_equal(S[i].last_col, tricky[i]);
    free(out);
}

static void io_should_quote_csv_values_and_read_them_back(void **state)
{
    (void)state;
    size_t len;
    char *out = write_records(AS_FMT_CSV, body_tricky, &len);
    assert_non_null(strstr(out, "index,smiles,share,ok,id,input_smiles\n"));
    assert_non_null(strstr(out, "\"say \"\"anti\"\", then\ttab\nnewline\""));
    assert_non_null(strstr(out, "\" leading and trailing \""));
    int n = read_buffer(out, len, NULL, S, 16);
    assert_int_equal(n, (int)NTRICKY);
    for (size_t i = 0; i < NTRICKY; i++) {
        assert_int_equal(S[i].code, AS_OK);
        assert_string_equal(S[i].last_col, tricky[i]);
        assert_int_equal(S[i].ncols, 6);
    }
    free(out);
}

static void body_by_name(as_writer *w)
{
    as_error err;
    as_kv a[2] = {as_kv_text("id", "r1"), as_kv_text("status", "ok")};
    const char *cn[] = {"note"};
    const char *cv[] = {"first"};
    assert_int_equal(as_writer_put(w, a, 2, cn, cv, 1, &err), AS_OK);
    /* Fields in another order, one missing, a carried column the header does not have. */
    as_kv b[1] = {as_kv_text("status", "error")};
    const char *cn2[] = {"other", "note"};
    const char *cv2[] = {"x", "second"};
    assert_int_equal(as_writer_put(w, b, 1, cn2, cv2, 2, &err), AS_OK);
    assert_int_equal(as_writer_dropped(w), 1);
    as_kv c[1] = {as_kv_text("verdict", "agrees")};
    assert_int_equal(as_writer_put(w, c, 1, NULL, NULL, 0, &err), AS_ERR_ARG);
    assert_non_null(strstr(err.msg, "verdict"));
}

static void io_should_write_the_header_once_and_place_fields_by_name(void **state)
{
    (void)state;
    size_t len;
    char *out = write_records(AS_FMT_CSV, body_by_name, &len);
    assert_string_equal(out, "id,status,note\nr1,ok,first\n,error,second\n");
    free(out);
    as_writer *w;
    as_error err;
    as_writer_opts o;
    as_writer_opts_init(&o);
    o.format = AS_FMT_RSMI;
    as_outfile *mem;
    assert_int_equal(as_outfile_open_memory(&mem, &err), AS_OK);
    assert_int_equal(as_writer_open(mem, &o, &w, &err), AS_ERR_ARG);
    as_outfile_abort(mem);
}

/* ==== Safe output file ====================================================================== */

static void io_should_leave_no_file_when_the_disk_is_full(void **state)
{
    (void)state;
    if (access("/dev/full", W_OK) != 0)
        skip();
    as_outfile *f;
    as_error err;
    assert_int_equal(as_outfile_open("/dev/full", &f, &err), AS_OK);
    char block[4096];
    memset(block, 'C', sizeof block);
    as_status st = AS_OK;
    for (int i = 0; i < 64 && st == AS_OK; i++)
        st = as_outfile_write(f, block, sizeof block, &err);
    if (st == AS_OK)
        st = as_outfile_close(f, &err);
    else
        assert_int_equal(as_outfile_close(f, &err), AS_ERR_IO);
    assert_int_equal(st, AS_ERR_IO);
    assert_non_null(strstr(err.msg, "/dev/full"));
    assert_non_null(strstr(err.msg, strerror(ENOSPC)));
    assert_int_equal(count_prefixed("/dev", ".full"), 0);
}

static void io_should_remove_the_temporary_file_when_a_write_fails(void **state)
{
    (void)state;
    char dir[PATH_MAX], p[PATH_MAX + 32];
    make_dir(dir, sizeof dir);
    snprintf(p, sizeof p, "%s/annotated.jsonl", dir);
    struct rlimit old, small;
    assert_int_equal(getrlimit(RLIMIT_FSIZE, &old), 0);
    void (*prev)(int) = signal(SIGXFSZ, SIG_IGN);
    small = old;
    small.rlim_cur = 10000;
    assert_int_equal(setrlimit(RLIMIT_FSIZE, &small), 0);
    as_outfile *f;
    as_error err;
    assert_int_equal(as_outfile_open(p, &f, &err), AS_OK);
    assert_int_equal(count_entries(dir), 1); /* the temporary file */
    char block[1000];
    memset(block, 'C', sizeof block);
    as_status st = AS_OK;
    for (int i = 0; i < 200 && st == AS_OK; i++)
        st = as_outfile_write(f, block, sizeof block, &err);
    as_status cst = as_outfile_close(f, &err);
    assert_int_equal(setrlimit(RLIMIT_FSIZE, &old), 0);
    signal(SIGXFSZ, prev);
    assert_int_equal(st == AS_OK ? cst : st, AS_ERR_IO);
    assert_int_equal(cst, AS_ERR_IO);
    assert_non_null(strstr(err.msg, "annotated.jsonl"));
    assert_int_equal(count_entries(dir), 0);
    rm_dir(dir);
}

static void io_should_rename_into_place_only_on_success(void **state)
{
    (void)state;
    char dir[PATH_MAX], p[PATH_MAX + 32];
    make_dir(dir, sizeof dir);
    snprintf(p, sizeof p, "%s/out.tsv", dir);
    FILE *old = fopen(p, "wb");
    assert_non_null(old);
    fputs("previous run\n", old);
    fclose(old);
    assert_int_equal(chmod(p, 0640), 0);

    as_outfile *f;
    as_error err;
    assert_int_equal(as_outfile_open(p, &f, &err), AS_OK);
    assert_int_equal(as_outfile_write(f, "new\n", 4, &err), AS_OK);
    assert_int_equal(count_entries(dir), 2);
    size_t n;
    char *now = slurp(p, &n);
    assert_int_equal(n, 13); /* still the previous content */
    free(now);
    assert_int_equal(as_outfile_close(f, &err), AS_OK);
    assert_int_equal(count_entries(dir), 1);
    now = slurp(p, &n);
    assert_int_equal(n, 4);
    assert_memory_equal(now, "new\n", 4);
    free(now);
    struct stat sb;
    assert_int_equal(stat(p, &sb), 0);
    assert_int_equal(sb.st_mode & 0777, 0640);

    /* Abort: the target keeps its content and no temporary file remains. */
    assert_int_equal(as_outfile_open(p, &f, &err), AS_OK);
    assert_int_equal(as_outfile_write(f, "discarded\n", 10, &err), AS_OK);
    as_outfile_abort(f);
    assert_int_equal(count_entries(dir), 1);
    now = slurp(p, &n);
    assert_int_equal(n, 4);
    free(now);

    /* A directory that does not exist. */
    snprintf(p, sizeof p, "%s/no/such/dir/out.tsv", dir);
    assert_int_equal(as_outfile_open(p, &f, &err), AS_ERR_IO);
    assert_non_null(strstr(err.msg, "No such file"));
    rm_dir(dir);
}

/* ==== Memory and robustness ================================================================= */

static void io_should_keep_memory_flat_over_many_records(void **state)
{
    (void)state;
#if defined(__SANITIZE_ADDRESS__) || !defined(__GLIBC__) || !defined(__GLIBC_MINOR__) ||       \
    (__GLIBC__ == 2 && __GLIBC_MINOR__ < 33)
    skip(); /* the sanitiser's allocator keeps its own books; mallinfo2 needs glibc 2.33 */
#else
    char dir[PATH_MAX], gz[PATH_MAX + 32];
    make_dir(dir, sizeof dir);
    snprintf(gz, sizeof gz, "%s/many.csv.gz", dir);
    gzFile g = gzopen(gz, "wb");
    assert_non_null(g);
    gzputs(g, "id,reaction_smiles,reagents\n");
    for (int i = 0; i < 200000; i++)
        gzprintf(g, "FF-%06d,C=CC(C)CCC=C(C)C>>C=CC(C)CCCC(C)(C)O,\"H2O, H2SO4 (%d)\"\n", i, i);
    gzclose(g);
    as_reader *r;
    as_error err;
    assert_int_equal(as_reader_open(gz, NULL, &r, &err), AS_OK);
    as_record rec;
    size_t after_warmup = 0, peak = 0;
    long count = 0;
    for (;;) {
        assert_int_equal(as_reader_next(r, &rec, &err), AS_OK);
        if (rec.at_end)
            break;
        assert_int_equal(rec.err.code, AS_OK);
        count++;
        if (count == 1000)
            after_warmup = mallinfo2().uordblks;
        if (count > 1000 && count % 1000 == 0 && mallinfo2().uordblks > peak)
            peak = mallinfo2().uordblks;
    }
    as_reader_close(r);
    assert_int_equal(count, 200000);
    assert_true(peak <= after_warmup + 4096);
    rm_dir(dir);
#endif
}

static uint32_t rng(uint32_t *s)
{
    *s = *s * 1664525u + 1013904223u;
    return *s >> 8;
}

static void io_should_survive_random_bytes_in_every_format(void **state)
{
    (void)state;
    static const char alphabet[] = "\"\",,\t\n\n\r{}[]:C=>|\\ \xFF\xC3\xA9\0a1";
    char buf[300];
    uint32_t seed = 12345;
    as_reader_opts o;
    for (int iter = 0; iter < 3000; iter++) {
        size_t len = rng(&seed) % sizeof buf;
        for (size_t i = 0; i < len; i++)
            buf[i] = alphabet[rng(&seed) % (sizeof alphabet - 1)];
        if (iter % 5 == 0 && len > 10)
            memcpy(buf, "smiles,id\n", 10);
        long lines = 1;
        for (size_t i = 0; i < len; i++)
            lines += buf[i] == '\n';
        as_reader_opts_init(&o);
        o.format = (as_format)(iter % AS_FMT_COUNT);
        o.max_record = 64;
        o.lenient_fields = iter % 2;
        as_reader *r;
        as_error err;
        if (as_reader_open_buffer(buf, len, &o, &r, &err) != AS_OK) {
            assert_true(err.code == AS_ERR_ARG || err.code == AS_ERR_SYNTAX ||
                        err.code == AS_ERR_ENCODING || err.code == AS_ERR_LIMIT);
            continue;
        }
        as_record rec;
        long prev_line = 0, n = 0;
        for (;;) {
            assert_int_equal(as_reader_next(r, &rec, &err), AS_OK);
            if (rec.at_end)
                break;
            assert_true(rec.line > prev_line);
            assert_true(rec.line <= lines);
            assert_true(rec.raw_len <= 64);
            for (size_t k = 0; k < rec.ncols; k++)
                assert_non_null(rec.col_values[k]);
            prev_line = rec.line;
            n++;
        }
        assert_true(n <= lines);
        as_reader_close(r);
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(io_should_read_smiles_lines_with_title_cx_and_tab_columns),
        cmocka_unit_test(io_should_give_one_record_per_input_line_in_order),
        cmocka_unit_test(io_should_keep_crlf_records_aligned),
        cmocka_unit_test(io_should_drop_bom_only_at_the_start),
        cmocka_unit_test(io_should_read_csv_quotes_commas_and_line_breaks),
        cmocka_unit_test(io_should_resume_after_an_unclosed_quote_on_the_next_line),
        cmocka_unit_test(io_should_apply_the_field_count_rule_strict_or_lenient),
        cmocka_unit_test(io_should_ignore_one_trailing_empty_cell),
        cmocka_unit_test(io_should_detect_columns_by_common_names),
        cmocka_unit_test(io_should_pick_columns_named_in_the_options),
        cmocka_unit_test(io_should_read_tsv_backslashes_as_data_unless_asked),
        cmocka_unit_test(io_should_read_json_lines_and_locate_bad_lines),
        cmocka_unit_test(io_should_report_nul_and_invalid_utf8_with_column),
        cmocka_unit_test(io_should_skip_over_long_lines_in_bounded_memory),
        cmocka_unit_test(io_should_accept_records_of_exactly_the_limit),
        cmocka_unit_test(io_should_pass_over_blank_lines_before_a_header),
        cmocka_unit_test(io_should_read_standard_input),
        cmocka_unit_test(io_should_hand_on_piped_records_without_waiting_for_more),
        cmocka_unit_test(io_should_read_concatenated_gzip_members),
        cmocka_unit_test(io_should_read_gzip_input_transparently),
        cmocka_unit_test(io_should_end_truncated_gzip_with_an_error_record),
        cmocka_unit_test(io_should_detect_the_format_from_name_and_first_line),
        cmocka_unit_test(io_should_fail_to_open_with_a_reason),
        cmocka_unit_test(io_should_write_jsonl_that_round_trips_backslashes),
        cmocka_unit_test(io_should_write_valid_json_for_invalid_bytes),
        cmocka_unit_test(io_should_escape_tsv_values),
        cmocka_unit_test(io_should_quote_csv_values_and_read_them_back),
        cmocka_unit_test(io_should_write_the_header_once_and_place_fields_by_name),
        cmocka_unit_test(io_should_leave_no_file_when_the_disk_is_full),
        cmocka_unit_test(io_should_remove_the_temporary_file_when_a_write_fails),
        cmocka_unit_test(io_should_rename_into_place_only_on_success),
        cmocka_unit_test(io_should_keep_memory_flat_over_many_records),
        cmocka_unit_test(io_should_survive_random_bytes_in_every_format),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
