/* fuzz_records.c — fuzz target: the record readers of annotate (include/addsite/io.h) on a
 * memory buffer, in every input format. The first byte picks the format (auto, SMILES lines,
 * CSV, TSV, JSON Lines) and a small max_record now and then; the rest is the file. Every
 * record is read to the end. Invariants: records come in order (index 0, 1, 2 ...), none is
 * longer than max_record, every error record carries a code and a message, lines never go
 * backwards, and the reader always reaches the end. */
#include "addsite/io.h"
#include "fuzz.h"

#include <stdio.h>
#include <string.h>

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    if (size < 1)
        return 0;
    as_reader_opts o;
    as_reader_opts_init(&o);
    o.format = (as_format)(data[0] % AS_FMT_COUNT);
    if (data[0] & 0x40)
        o.max_record = AS_IO_MIN_MAX_RECORD;
    if (data[0] & 0x80)
        o.lenient_fields = 1;
    as_reader *r = NULL;
    as_error err;
    as_status st = as_reader_open_buffer((const char *)data + 1, size - 1, &o, &r, &err);
    if (st != AS_OK) {
        if (err.code != st || err.msg[0] == '\0')
            fuzz_fail("as_reader_open_buffer", "failure without a code and message");
        if (r)
            fuzz_fail("as_reader_open_buffer", "failed but returned a reader");
        return 0;
    }
    long expect = 0, last_line = 0;
    for (long guard = 0;; guard++) {
        if (guard > (long)size + 2)
            fuzz_fail("as_reader_next", "more records than input bytes");
        as_record rec;
        st = as_reader_next(r, &rec, &err);
        if (st != AS_OK)
            fuzz_fail("as_reader_next", err.msg);
        if (rec.at_end)
            break;
        char detail[128];
        if (rec.index != expect) {
            snprintf(detail, sizeof detail, "record index %ld, expected %ld", rec.index, expect);
            fuzz_fail("as_reader_next", detail);
        }
        expect++;
        if (rec.line < last_line)
            fuzz_fail("as_reader_next", "line number went backwards");
        last_line = rec.line;
        if (rec.raw_len > (size_t)o.max_record)
            fuzz_fail("as_reader_next", "record longer than max_record");
        if (rec.err.code != AS_OK && rec.err.msg[0] == '\0')
            fuzz_fail("as_reader_next", "error record without a message");
        for (size_t k = 0; k < rec.ncols; k++)
            if (!rec.col_names[k] || !rec.col_values[k])
                fuzz_fail("as_reader_next", "a column without a name or value");
    }
    as_reader_close(r);
    return 0;
}
