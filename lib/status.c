/* status.c — status names and error-record helpers.
 * Owns: as_status names, as_error setters. Must not: print or keep global state. */
#include "addsite/status.h"
#include "status_int.h"

#include <stdarg.h>
#include <stdio.h>
#include <string.h>

/* ORDER STATUS: one name per as_status value. */
static const char *const status_names[AS_STATUS_COUNT] = {
    "ok",       "nomem",       "syntax", "ring",     "branch",  "element", "charge",
    "valence",  "aromatic",    "stereo", "unsupported", "limit", "reaction", "io",
    "rule",     "reagent",     "no_site", "argument", "empty",  "encoding",
};

void as_error_clear(as_error *err)
{
    if (!err)
        return;
    err->code = AS_OK;
    err->offset = -1;
    err->line = 0;
    err->column = 0;
    err->atom = -1;
    err->msg[0] = '\0';
}

const char *as_status_name(as_status code)
{
    if ((int)code < 0 || code >= AS_STATUS_COUNT)
        return "unknown";
    return status_names[code];
}

as_status as_error_set(as_error *err, as_status code, long offset, int atom, const char *fmt, ...)
{
    if (!err)
        return code;
    as_error_clear(err);
    err->code = code;
    err->offset = offset;
    err->atom = atom;
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(err->msg, sizeof err->msg, fmt, ap);
    va_end(ap);
    return code;
}
