/* addsite/io.h — record readers (reaction SMILES lines, CSV/TSV with header, JSON Lines),
 * record writers (JSON Lines, TSV, CSV) and the safe output file.
 * Owns: turning bytes into one record at a time and records into bytes. Must not: hold more
 * than one record, parse SMILES or know chemistry.
 *
 * ==== Input formats ===========================================================================
 * The format is forced with as_reader_opts.format or detected: first from the file name
 * (a trailing ".gz" is ignored: .jsonl/.ndjson → JSON Lines, .csv → CSV, .tsv/.tab → TSV),
 * otherwise from the first line: a line opening with '{' → JSON Lines; a line whose
 * TAB-separated (then comma-separated) cells include a known column name → TSV (then CSV);
 * anything else → reaction SMILES lines. Known column names are compared ignoring case and
 * every character that is not a letter or digit ("Reaction SMILES" = "reaction_smiles"):
 *   reaction  reactionsmiles rxnsmiles rsmiles mappedreactionsmiles
 *             (a bare "reaction" or "rxn" is not taken: it often holds a reaction name)
 *   SMILES    smiles canonicalsmiles isosmiles    (a value holding '>' is a reaction,
 *                                                  otherwise a substrate)
 *   substrate substrate substratesmiles alkene alkenesmiles reactant reactants
 *             reactantsmiles startingmaterial
 *   product   product products productsmiles proposedproduct expectedproduct majorproduct
 *             major
 *   reagents  reagents reagent conditions reagenttext reagentset
 *   id        id recordid reactionid rxnid name title compoundid patentnumber
 * Earlier names in a row win over later ones; among equal names the leftmost column wins.
 *
 * (a) Reaction SMILES lines (OpenSMILES "SMILES file" convention, extended with TABs):
 *       SMILES[ |cx-block|][ title]<TAB>reagent text<TAB>id<TAB>more...
 *     Cell 1 holds the SMILES (up to the first space or TAB), an optional CXSMILES block
 *     "|...|" right after the first space (kept apart, never taken as the title) and a title
 *     (the rest, trimmed). Cell 2 is free reagent text ("1. BH3-THF; 2. H2O2, NaOH"), cell 3
 *     an id; both optional, and an empty cell (a trailing TAB) counts as absent. The id is
 *     cell 3 when given, else the title. A SMILES holding '>' outside brackets (and not as a
 *     dative "->") is a reaction; otherwise it is a substrate. Columns reported: smiles, cx,
 *     title, reagents, id, then extra1, extra2... for further cells. Lines that are empty, hold
 *     only whitespace, or begin with a space or TAB are records marked `skipped`.
 * (b) CSV (RFC 4180) and TSV, first row = header. CSV fields may be quoted; a quoted field may
 *     hold the delimiter, doubled quotes ("") and line breaks (the record then spans several
 *     lines and reports the first). A quote inside an unquoted field is taken literally; text
 *     after a closing quote is an error. TSV has no quoting: every TAB separates cells and
 *     backslashes are data (SMILES use them), unless tsv_unescape is set, which decodes the
 *     \t \n \r \\ escapes our own TSV writer produces. Blank lines before the header are
 *     passed over. Columns are picked by the *_col options (a header name, matched exactly,
 *     then in any letter case; else a 1-based index) or detected from the names above; a
 *     header of one column is taken as SMILES. Every original column is reported so writers
 *     can carry it through. One extra empty cell at the end of a row or of the header (a
 *     trailing TAB or comma) is ignored. Any other row with a different number of fields than
 *     the header is an error record (AS_ERR_SYNTAX), or, with lenient_fields, a record with a
 *     warning: missing cells are empty and extra cells are left out of the columns (they stay
 *     in raw). An empty or whitespace-only line outside quotes is a `skipped` record.
 * (c) JSON Lines: one JSON object per line (cJSON). Columns are the object's top-level keys in
 *     order; strings give their text, numbers and booleans their JSON text, null an empty
 *     value, arrays and objects their compact JSON. The named fields are found in each record
 *     by the *_col options (key names) or the names above. A line that is not a single JSON
 *     object is an error record with the column cJSON stopped at. Blank lines are `skipped`
 *     records.
 *
 * ==== Records, errors and limits ==============================================================
 * Every input record gives exactly one as_record, in input order: good, skipped or in error,
 * never dropped and never merged with a neighbour. Lines end in LF or CRLF; a missing final
 * newline is fine; a UTF-8 byte-order mark at the start is dropped (columns count from after
 * it). Lines and columns are 1-based, columns count bytes. Error records carry err.code,
 * err.msg, err.line, err.column and err.offset (0-based into raw):
 *   AS_ERR_ENCODING  a NUL byte or invalid UTF-8 (overlong forms, surrogates, > U+10FFFF)
 *   AS_ERR_LIMIT     a record longer than max_record bytes (default 1 MiB; its own line
 *                    break is not counted). The reader skips to the next line break keeping
 *                    at most max_record bytes; raw holds that prefix and `truncated` is set.
 *   AS_ERR_SYNTAX    CSV: a quote still open at end of input or text after a closing quote;
 *                    a wrong field count; JSON Lines: not a JSON object.
 *   AS_ERR_IO        the input could not be read further (a read error, or a gzip stream
 *                    that is truncated or corrupt); this is the last record.
 * A malformed CSV record that spans lines never swallows what follows: the error record covers
 * the line where it started (raw = that line) and reading resumes on the next line. The same
 * happens when a quoted field reaches max_record bytes across lines.
 * Input named "-" is standard input. Gzip input (files or stdin, recognised by its magic bytes,
 * several members read as one) is decompressed on the fly; other input passes through
 * unchanged. Each record is handed on as soon as its line has arrived, so a reader on a pipe
 * never waits for a full buffer. Memory stays bounded by about 3 x max_record plus
 * 256 KiB of buffers (record, cells, replay; chunk and zlib windows), however long the input:
 * one million CSV records (71 MB, plain or gzip) were read and rewritten in about 2 MB of
 * resident memory.
 *
 * ==== Output formats ==========================================================================
 * JSON Lines: one compact object per record, written with cJSON, so quotes, backslashes (as
 * in F/C=C\F) and control characters are escaped; invalid UTF-8 and NUL bytes in values are
 * replaced by U+FFFD so every line is valid JSON. TSV: header row, then one line per record;
 * TAB, LF, CR, backslash and NUL in a value are written as \t \n \r \\ \0. CSV (RFC 4180):
 * header row; a value holding the delimiter, a quote, CR, LF, or a leading or trailing space is
 * quoted with quotes doubled; NUL becomes U+FFFD. Lines end in LF unless crlf is set.
 * The header of TSV/CSV is written once, from the first record's field names followed by the
 * carried-through column names; a carried name equal to an earlier one gets "input_" put in
 * front (repeatedly, until unique). */
#ifndef ADDSITE_IO_H
#define ADDSITE_IO_H

#include <stddef.h>

#include "addsite/status.h"

#ifdef __cplusplus
extern "C" {
#endif

#define AS_IO_DEFAULT_MAX_RECORD (1024L * 1024L)  /* bytes in one record, default */
#define AS_IO_MIN_MAX_RECORD 64L                  /* smallest max_record accepted */

/* ORDER FORMAT: keep in step with the name table in lib/io_text.c. */
typedef enum as_format {
    AS_FMT_AUTO = 0,   /* reader: detect; not valid for writers */
    AS_FMT_RSMI,       /* reaction SMILES lines (reader only) */
    AS_FMT_CSV,
    AS_FMT_TSV,
    AS_FMT_JSONL,
    AS_FMT_COUNT
} as_format;

/* Short name ("auto", "smiles", "csv", "tsv", "jsonl"); never NULL. */
const char *as_format_name(as_format f);
/* Parses a short name as written by as_format_name (also "rsmi", "smi", "json", "ndjson").
 * Returns AS_OK or AS_ERR_ARG. */
as_status as_format_parse(const char *name, as_format *out, as_error *err);

/* ==== Reader =================================================================================*/

typedef struct as_reader_opts {
    as_format format;          /* AS_FMT_AUTO (default): detect as described above */
    long max_record;           /* longest record in bytes; default AS_IO_DEFAULT_MAX_RECORD */
    const char *reaction_col;  /* CSV/TSV/JSONL: column holding reaction SMILES; NULL = detect */
    const char *substrate_col; /* column holding substrate SMILES; NULL = detect */
    const char *product_col;   /* column holding product SMILES; NULL = detect */
    const char *reagent_col;   /* column holding reagent text; NULL = detect */
    const char *id_col;        /* column holding the record id; NULL = detect */
    const char *smiles_col;    /* column holding SMILES that may be reactions or molecules
                                  (a value holding '>' is a reaction); NULL = detect */
    char csv_delimiter;        /* CSV field separator; default ',' (0 also means ',') */
    int lenient_fields;        /* 0 (default): a wrong CSV/TSV field count is an error record;
                                  1: a warning on an otherwise good record */
    int tsv_unescape;          /* 0 (default): TSV cells are taken as written; 1: decode
                                  \t \n \r \\ as written by the TSV writer */
} as_reader_opts;

/* Sets the documented defaults. */
void as_reader_opts_init(as_reader_opts *o);

/* One record. Every pointer borrows from the reader and stays valid until the next
 * as_reader_next or as_reader_close on it. Strings are NUL-terminated. */
typedef struct as_record {
    int at_end;                /* 1: input exhausted, no record; all other fields unset */
    long index;                /* 0-based count of records before this one */
    long line;                 /* 1-based line where the record starts */
    long nlines;               /* physical lines it spans (more than 1 only for quoted CSV) */
    const char *raw;           /* the record's bytes without its line ending; may hold NUL */
    size_t raw_len;
    int truncated;             /* 1 when raw keeps only the first max_record bytes */
    int skipped;               /* 1: blank or whitespace-led line; nothing to analyse */
    const char *skip_reason;   /* a sentence when skipped, else NULL */
    /* Named fields: NULL when absent, empty or when the record is in error. */
    const char *reaction;      /* reaction SMILES reactants>agents>products */
    const char *substrate;     /* substrate SMILES */
    const char *product;       /* product SMILES */
    const char *reagents;      /* reagent text as written */
    const char *id;            /* id or title */
    const char *cx;            /* CXSMILES block "|...|" after the SMILES (SMILES lines only) */
    /* All columns of the record, in input order (header names for CSV/TSV, keys for JSONL,
     * the fixed names listed above for SMILES lines). Present on good records, skipped
     * whitespace-led SMILES lines and field-count errors; absent (ncols 0) on blank lines and
     * other errors. */
    size_t ncols;
    const char *const *col_names;
    const char *const *col_values;
    char warning[192];         /* a remark on a good record ("" when none) */
    as_error err;              /* err.code != AS_OK: the record is bad, err says where */
} as_record;

typedef struct as_reader as_reader;

/* Opens path ("-" = standard input; gzip or plain) for reading. opts may be NULL for
 * defaults. On AS_OK *out is a new reader; caller frees with as_reader_close. Fails with
 * AS_ERR_IO (cannot open, a directory), AS_ERR_ARG (bad option, a named column not in the
 * header, no SMILES column found in a CSV/TSV/JSONL header), AS_ERR_ENCODING/AS_ERR_SYNTAX
 * /AS_ERR_LIMIT (a bad CSV/TSV header, err.line = 1) or AS_ERR_NOMEM. */
as_status as_reader_open(const char *path, const as_reader_opts *opts, as_reader **out,
                         as_error *err);

/* As as_reader_open, over len bytes of plain text at data (borrowed until as_reader_close).
 * The format is detected from the first line only. */
as_status as_reader_open_buffer(const char *data, size_t len, const as_reader_opts *opts,
                                as_reader **out, as_error *err);

/* Fills *rec with the next record (good, skipped or bad: see rec->err), or sets rec->at_end.
 * Returns AS_OK in all those cases; only AS_ERR_NOMEM or AS_ERR_ARG (NULL argument) are
 * returned as failures, filling err. After at_end (or an AS_ERR_IO record) every further
 * call sets at_end again. */
as_status as_reader_next(as_reader *r, as_record *rec, as_error *err);

/* The format in use (never AS_FMT_AUTO). */
as_format as_reader_format(const as_reader *r);

/* The header columns for CSV/TSV and the fixed names for SMILES lines; 0 and NULL for JSON
 * Lines (keys vary by record). Borrowed until as_reader_close. */
size_t as_reader_columns(const as_reader *r, const char *const **names);

/* Closes the input and frees the reader. r may be NULL. */
void as_reader_close(as_reader *r);

/* ==== Safe output file =======================================================================*/

typedef struct as_outfile as_outfile;

/* Opens path for writing ("-" = standard output). A regular or new file is written under a
 * temporary name in the same directory and renamed over path by a successful close; a
 * device, pipe or socket (e.g. /dev/null) is written directly. On AS_OK *out is new; the
 * caller ends it with as_outfile_close or as_outfile_abort. AS_ERR_IO names the reason. */
as_status as_outfile_open(const char *path, as_outfile **out, as_error *err);

/* A file that collects everything written in memory (tests, library users). */
as_status as_outfile_open_memory(as_outfile **out, as_error *err);

/* Appends n bytes. AS_ERR_IO with the system's reason on failure; after a failure every
 * later write fails too and close removes the temporary file. */
as_status as_outfile_write(as_outfile *f, const void *data, size_t n, as_error *err);

/* The bytes collected so far by a memory file (NULL, 0 for other kinds); borrowed until the
 * next write or close. Not NUL-terminated. */
const char *as_outfile_memory(const as_outfile *f, size_t *len);

/* Flushes, syncs and, for a temporary file, renames it over the target; frees f (even on
 * failure). On any error returns AS_ERR_IO and removes the temporary file. f may be NULL. */
as_status as_outfile_close(as_outfile *f, as_error *err);

/* Discards: removes the temporary file (if any) and frees f. f may be NULL. */
void as_outfile_abort(as_outfile *f);

/* ==== Writer =================================================================================*/

typedef enum as_kv_kind {
    AS_KV_TEXT = 0,   /* text (len bytes, or up to its NUL when len is 0); NULL text = null */
    AS_KV_INT,        /* i */
    AS_KV_REAL,       /* d (written with up to 6 significant digits; NaN/inf as null) */
    AS_KV_BOOL,       /* i != 0 */
    AS_KV_JSON,       /* text is JSON: embedded as such in JSON Lines (error if invalid),
                         written as text in TSV/CSV */
    AS_KV_JSON_COMPACT /* text is valid JSON exactly as cJSON_PrintUnformatted writes it (the
                         caller vouches for that): copied unchecked into JSON Lines, written
                         as text in TSV/CSV */
} as_kv_kind;

/* One output field. Strings are borrowed for the duration of the call. */
typedef struct as_kv {
    const char *name;
    as_kv_kind kind;
    const char *text;
    size_t len;
    long long i;
    double d;
} as_kv;

static inline as_kv as_kv_text(const char *name, const char *text)
{
    as_kv kv = {name, AS_KV_TEXT, text, 0, 0, 0.0};
    return kv;
}
static inline as_kv as_kv_int(const char *name, long long v)
{
    as_kv kv = {name, AS_KV_INT, NULL, 0, v, 0.0};
    return kv;
}
static inline as_kv as_kv_real(const char *name, double v)
{
    as_kv kv = {name, AS_KV_REAL, NULL, 0, 0, v};
    return kv;
}
static inline as_kv as_kv_bool(const char *name, int v)
{
    as_kv kv = {name, AS_KV_BOOL, NULL, 0, v != 0, 0.0};
    return kv;
}

typedef struct as_writer_opts {
    as_format format;   /* AS_FMT_JSONL (default), AS_FMT_TSV or AS_FMT_CSV */
    int crlf;           /* 0 (default): lines end in LF; 1: CRLF */
    char csv_delimiter; /* default ',' */
} as_writer_opts;

/* Sets the documented defaults. */
void as_writer_opts_init(as_writer_opts *o);

typedef struct as_writer as_writer;

/* A writer onto out (borrowed: it must outlive the writer; the caller closes it after
 * as_writer_free). opts may be NULL for defaults. On AS_OK *w is new; caller frees with
 * as_writer_free. AS_ERR_ARG for a format that cannot be written. */
as_status as_writer_open(as_outfile *out, const as_writer_opts *opts, as_writer **w,
                         as_error *err);

/* Writes one record: the fields in order, then the carried-through columns (names[i],
 * values[i]; a NULL value is empty). For TSV/CSV the first call fixes the header; later calls
 * place fields and carried columns by name (the common case, same names in the same order, is
 * a straight copy), leave absent ones empty, and fail with AS_ERR_ARG on a field name that is
 * not in the header. Carried columns not in the header are not written and are counted (see
 * as_writer_dropped). AS_ERR_IO from the output file, AS_ERR_SYNTAX for invalid AS_KV_JSON. */
as_status as_writer_put(as_writer *w, const as_kv *fields, size_t nfields,
                        const char *const *carry_names, const char *const *carry_values,
                        size_t ncarry, as_error *err);

/* How many carried-through values were left out because their column was not in the header
 * (TSV/CSV only; always 0 for JSON Lines). */
long as_writer_dropped(const as_writer *w);

/* Frees the writer (does not close the output file). w may be NULL. */
void as_writer_free(as_writer *w);

#ifdef __cplusplus
}
#endif
#endif
