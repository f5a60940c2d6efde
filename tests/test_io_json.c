/* test_io_json.c — JSON Lines strings: escapes, UTF-8 repair and explicit lengths.
 * Expected bytes: RFC 8259 escaping as the writer documents it (short escapes for " \ and
 * \b \f \n \r \t, \u00xx for other controls, invalid UTF-8 bytes as U+FFFD); the lines were
 * checked to be identical to the writer's output before its string path was rewritten. */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>

#include <string.h>

#include "addsite/io.h"

static void json_writer_should_escape_and_repair_strings(void **state)
{
    (void)state;
    as_outfile *f = NULL;
    as_writer *w = NULL;
    as_error e;
    assert_int_equal(as_outfile_open_memory(&f, &e), AS_OK);
    assert_int_equal(as_writer_open(f, NULL, &w, &e), AS_OK);
    static const char *vals[] = {"plain", "q\"uote\\back", "ctl\x01\x1f\t\n\r\b\f end",
                                 "caf\xc3\xa9", "bad\xff\xfe utf", "\xe2\x82\xac euro", "",
                                 "tail\xc3", "C=CC(C)=O>>CC(Br)C"};
    for (size_t i = 0; i < sizeof vals / sizeof vals[0]; i++) {
        as_kv kv[3] = {as_kv_text("name\"x", vals[i]), as_kv_text("v", vals[i]),
                       as_kv_real("d", 99.95)};
        kv[1].len = strlen(vals[i]);
        const char *cn[1] = {"carry\x02"}, *cv[1] = {vals[i]};
        assert_int_equal(as_writer_put(w, kv, 3, cn, cv, 1, &e), AS_OK);
    }
    as_kv nul = as_kv_text("nul", "ab\0cd"); /* an explicit length with a NUL inside */
    nul.len = 5;
    assert_int_equal(as_writer_put(w, &nul, 1, NULL, NULL, 0, &e), AS_OK);
    static const char want[] =
        "{\"name\\\"x\":\"plain\",\"v\":\"plain\",\"d\":99.95,\"carry\\u0002\":\"plain\"}\n"
        "{\"name\\\"x\":\"q\\\"uote\\\\back\",\"v\":\"q\\\"uote\\\\back\",\"d\":99.95,\"carry\\u0002\":\"q\\\"uote\\\\back\"}\n"
        "{\"name\\\"x\":\"ctl\\u0001\\u001f\\t\\n\\r\\b\\f end\",\"v\":\"ctl\\u0001\\u001f\\t\\n\\r\\b\\f end\",\"d\":99.95,\"carry\\u0002\":\"ctl\\u0001\\u001f\\t\\n\\r\\b\\f end\"}\n"
        "{\"name\\\"x\":\"caf\xc3""\xa9""\",\"v\":\"caf\xc3""\xa9""\",\"d\":99.95,\"carry\\u0002\":\"caf\xc3""\xa9""\"}\n"
        "{\"name\\\"x\":\"bad\xef""\xbf""\xbd""\xef""\xbf""\xbd"" utf\",\"v\":\"bad\xef""\xbf""\xbd""\xef""\xbf""\xbd"" utf\",\"d\":99.95,\"carry\\u0002\":\"bad\xef""\xbf""\xbd""\xef""\xbf""\xbd"" utf\"}\n"
        "{\"name\\\"x\":\"\xe2""\x82""\xac"" euro\",\"v\":\"\xe2""\x82""\xac"" euro\",\"d\":99.95,\"carry\\u0002\":\"\xe2""\x82""\xac"" euro\"}\n"
        "{\"name\\\"x\":\"\",\"v\":\"\",\"d\":99.95,\"carry\\u0002\":\"\"}\n"
        "{\"name\\\"x\":\"tail\xef""\xbf""\xbd""\",\"v\":\"tail\xef""\xbf""\xbd""\",\"d\":99.95,\"carry\\u0002\":\"tail\xef""\xbf""\xbd""\"}\n"
        "{\"name\\\"x\":\"C=CC(C)=O>>CC(Br)C\",\"v\":\"C=CC(C)=O>>CC(Br)C\",\"d\":99.95,\"carry\\u0002\":\"C=CC(C)=O>>CC(Br)C\"}\n"
        "{\"nul\":\"ab\xef""\xbf""\xbd""cd\"}\n";
    size_t len = 0;
    const char *got = as_outfile_memory(f, &len);
    assert_int_equal(len, sizeof want - 1);
    assert_memory_equal(got, want, len);
    as_writer_free(w);
    assert_int_equal(as_outfile_close(f, &e), AS_OK);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(json_writer_should_escape_and_repair_strings),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
