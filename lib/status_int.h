/* status_int.h — library-internal error helpers (never installed). */
#ifndef ADDSITE_STATUS_INT_H
#define ADDSITE_STATUS_INT_H

#include "addsite/status.h"

#if defined(__GNUC__)
#define AS_INTERNAL __attribute__((visibility("hidden")))
#define AS_PRINTF(a, b) __attribute__((format(printf, a, b)))
#else
#define AS_INTERNAL
#define AS_PRINTF(a, b)
#endif

/* Fills err (may be NULL) and returns code, so callers can write `return as_error_set(...)`. */
AS_INTERNAL as_status as_error_set(as_error *err, as_status code, long offset, int atom,
                                   const char *fmt, ...) AS_PRINTF(5, 6);

#endif
