/* fuzz_fail.c — the common failure report of the fuzz targets (abort so the harness sees it). */
#include "fuzz.h"

#include <stdio.h>
#include <stdlib.h>

void fuzz_fail(const char *what, const char *detail)
{
    fprintf(stderr, "fuzz invariant broken: %s%s%s\n", what, detail ? ": " : "",
            detail ? detail : "");
    abort();
}
