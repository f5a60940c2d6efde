/* io_int.h — helpers shared by the io readers, writers and output file (never installed).
 * Owns: growable byte buffers, UTF-8 checks, column-name matching, number formatting.
 * Must not: do I/O. */
#ifndef ADDSITE_IO_INT_H
#define ADDSITE_IO_INT_H

#include <stdarg.h>
#include <stddef.h>

#include "addsite/io.h"
#include "status_int.h"

/* A growable byte buffer; {NULL, 0, 0} is a valid empty buffer. */
typedef struct as_io_buf {
    char *p;
    size_t len;
    size_t cap;
} as_io_buf;

/* Makes room for extra more bytes plus a NUL. Returns 0, or -1 when out of memory. */
AS_INTERNAL int as_io_buf_reserve(as_io_buf *b, size_t extra);
/* Appends n bytes and keeps p NUL-terminated. Returns 0, or -1 when out of memory. */
AS_INTERNAL int as_io_buf_put(as_io_buf *b, const void *data, size_t n);
AS_INTERNAL int as_io_buf_putc(as_io_buf *b, char c);
AS_INTERNAL void as_io_buf_free(as_io_buf *b);

/* Finds the first NUL byte or invalid UTF-8 sequence in s[0..n). Returns 1 and sets *pos (byte
 * offset) and *is_nul when one is found, 0 when all of it is valid UTF-8 without NUL. */
AS_INTERNAL int as_io_utf8_find_bad(const char *s, size_t n, size_t *pos, int *is_nul);

/* Length of the valid UTF-8 sequence (1..4, no NUL) starting at s, or 0 when s[0] starts a
 * NUL byte or an invalid sequence. n is the bytes available. */
AS_INTERNAL size_t as_io_utf8_seq(const unsigned char *s, size_t n);

/* The roles a column can play, in the order of as_io_column_role's tables. */
typedef enum as_io_role {
    AS_IO_ROLE_REACTION = 0,
    AS_IO_ROLE_SMILES,
    AS_IO_ROLE_SUBSTRATE,
    AS_IO_ROLE_PRODUCT,
    AS_IO_ROLE_REAGENTS,
    AS_IO_ROLE_ID,
    AS_IO_ROLE_COUNT
} as_io_role;

/* Rank of a column name for a role: 0 = best match, larger = weaker, -1 = no match. Names are
 * compared ignoring case and every character that is not an ASCII letter or digit. */
AS_INTERNAL int as_io_column_rank(const char *name, size_t len, as_io_role role);

/* 1 when text (len bytes) reads as a reaction: a '>' outside brackets that is not the head of
 * a dative bond "->". */
AS_INTERNAL int as_io_is_reaction(const char *text, size_t len);

/* x as printf("%.*f", prec, x) writes it in the C locale, into buf of cap bytes; returns the
 * length as snprintf does. Fast for prec 0..3 and |x| < 1e15 (else snprintf itself). */
AS_INTERNAL int as_fmt_fixed(char *buf, size_t cap, double x, int prec);
/* x as printf("%.6g", x) writes it in the C locale; as as_fmt_fixed. Fast for 1e-4 <= |x| <
 * 1e6 and 0 (else snprintf itself). */
AS_INTERNAL int as_fmt_g6(char *buf, size_t cap, double x);
/* v as printf("%lld", v) writes it, into buf of at least 21 bytes; returns the length. */
AS_INTERNAL int as_fmt_ll(char *buf, long long v);
/* vsnprintf with the same bytes in the C locale, done here for formats whose conversions are
 * all %s, %d, %.0f to %.3f and %%; any other format goes to vsnprintf whole. */
AS_INTERNAL int as_fmt_v(char *buf, size_t cap, const char *fmt, va_list ap);
/* The text as_fmt_v makes, in a new malloc'ed string (NULL when out of memory). Formats once
 * into a stack buffer and a second time only when the text is longer than that. */
AS_INTERNAL char *as_fmt_alloc_v(const char *fmt, va_list ap);

#endif
