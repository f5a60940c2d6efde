/* test_numfmt.c — the number formatters of the output paths against printf itself.
 * Reference: the C library's snprintf in the C locale (the bytes the formatters replace). */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "io_int.h"

/* xorshift64*: a fixed, repeatable stream of test values */
static uint64_t rng_next(uint64_t *s)
{
    *s ^= *s >> 12;
    *s ^= *s << 25;
    *s ^= *s >> 27;
    return *s * 2685821657736338717ull;
}

static double rng_unit(uint64_t *s)
{
    return (double)(rng_next(s) >> 11) / 9007199254740992.0;
}

static void check_one(double x)
{
    char want[512], got[512];
    for (int prec = 0; prec <= 3; prec++) {
        int wn = snprintf(want, sizeof want, "%.*f", prec, x);
        int gn = as_fmt_fixed(got, sizeof got, x, prec);
        if (wn != gn || strcmp(want, got) != 0)
            fail_msg("%%.%df of %.17g: printf %s, as_fmt_fixed %s", prec, x, want, got);
    }
    int wn = snprintf(want, sizeof want, "%.6g", x);
    int gn = as_fmt_g6(got, sizeof got, x);
    if (wn != gn || strcmp(want, got) != 0)
        fail_msg("%%.6g of %.17g: printf %s, as_fmt_g6 %s", x, want, got);
}

static void numfmt_should_match_printf_on_edge_values(void **state)
{
    (void)state;
    static const double edge[] = {
        0.0, 1.0, 0.5, 1.5, 2.5, 0.25, 0.125, 0.375, 0.05, 0.15, 0.25, 0.35, 0.45, 0.0005,
        0.0015, 0.0025, 99.95, 99.9, 99.99, 99.999, 50.0, 2.0, 94.0, 6.0, 0.3, 1e-4, 9.99995e-5,
        1e-5, 0.000099999949, 999999.0, 999999.4, 999999.5, 1e6, 123456.5, 123456.49999,
        9.999995, 9.9999949, 99999.95, 0.1, 0.7, 1e15, 1e15 - 1, 1e14 + 0.5, 4503599627370495.5,
        1e300, 1e-300, 5e-324, 1.7976931348623157e308, 2.675, 1.005, 0.045, 8.345, -0.0,
        -0.04, -0.5, -1.5, -99.95, -1e-4, -123.456, 25.0, -78.0, 3.0e-5, 0.00012345678,
    };
    for (size_t i = 0; i < sizeof edge / sizeof edge[0]; i++) {
        check_one(edge[i]);
        check_one(-edge[i]);
        check_one(nextafter(edge[i], 0.0));
        check_one(nextafter(edge[i], INFINITY));
    }
    check_one(INFINITY);
    check_one(-INFINITY);
    check_one(NAN);
}

static void numfmt_should_match_printf_on_many_values(void **state)
{
    (void)state;
    uint64_t s = 0x9e3779b97f4a7c15ull;
    for (int i = 0; i < 100000; i++) {
        /* magnitudes 1e-7 .. 1e16, uniform in the exponent */
        double e = -7.0 + 23.0 * rng_unit(&s);
        check_one(pow(10.0, e) * (rng_next(&s) & 1 ? 1 : -1));
        /* decimal ties and near-ties: k / 10^d, k / 2^d and their neighbours */
        double k = (double)(rng_next(&s) % 2000000);
        int d = (int)(rng_next(&s) % 8);
        double t = k / pow(10.0, d);
        check_one(t);
        check_one(nextafter(t, 0.0));
        check_one(nextafter(t, INFINITY));
        check_one(k / (double)(1u << (d + 1)));
    }
    /* shares as the predictor computes them: 100 / (1 + exp(-g / RT)) */
    for (int i = 0; i < 20000; i++) {
        double g = 6.0 * rng_unit(&s), rt = 0.0019872 * (273.15 + 100.0 * rng_unit(&s));
        check_one(100.0 / (1.0 + exp(-g / rt)));
    }
}

/* Formats with as_fmt_v and vsnprintf into buffers of cap bytes; fails when they differ. */
static void check_v(size_t cap, const char *fmt, ...)
{
    char want[600], got[600];
    va_list ap, cp;
    va_start(ap, fmt);
    va_copy(cp, ap);
    memset(want, 'x', sizeof want);
    memset(got, 'x', sizeof got);
    int wn = vsnprintf(want, cap, fmt, ap);
    int gn = as_fmt_v(got, cap, fmt, cp);
    va_end(cp);
    va_end(ap);
    if (wn != gn || memcmp(want, got, cap < sizeof want ? cap + 1 : sizeof want) != 0)
        fail_msg("'%s' into %zu bytes: vsnprintf %d '%.*s', as_fmt_v %d '%.*s'", fmt, cap, wn,
                 (int)(cap ? cap - 1 : 0), want, gn, (int)(cap ? cap - 1 : 0), got);
}

static void numfmt_should_format_like_vsnprintf(void **state)
{
    (void)state;
    static const size_t caps[] = {0, 1, 2, 5, 17, 40, 512};
    for (size_t i = 0; i < sizeof caps / sizeof caps[0]; i++) {
        size_t c = caps[i];
        check_v(c, "estimate: Boltzmann factor at %.0f \xc2\xb0" "C for %.1f kcal/mol (0.3 x the "
                   "%.1f kcal/mol %s of the two cations)",
                25.0, 0.45, 1.5, "hydride-affinity gap");
        check_v(c, "%s; then %s", "first part", "second part");
        check_v(c, "share %.2f%% of %d, %.3f and %d", 99.995, -2147483647 - 1, -0.0005, 42);
        check_v(c, "no conversions at all");
        check_v(c, "");
        check_v(c, "%s", "");
        check_v(c, "%5.1f|%-4d|%x|%ld", 2.25, 7, 255u, 12345678901L); /* handed to vsnprintf */
        check_v(c, "%.1f %.1f %.0f %.0f", 0.05, 0.25, 0.5, 1.5);
    }
}

static void numfmt_should_write_integers_like_printf(void **state)
{
    (void)state;
    static const long long v[] = {0, 1, -1, 9, 10, -10, 99, 100, 12345, -987654321,
                                  2147483647LL, -2147483648LL, 9223372036854775807LL,
                                  -9223372036854775807LL - 1};
    char want[32], got[32];
    for (size_t i = 0; i < sizeof v / sizeof v[0]; i++) {
        int wn = snprintf(want, sizeof want, "%lld", v[i]);
        int gn = as_fmt_ll(got, v[i]);
        assert_int_equal(wn, gn);
        assert_string_equal(want, got);
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(numfmt_should_match_printf_on_edge_values),
        cmocka_unit_test(numfmt_should_match_printf_on_many_values),
        cmocka_unit_test(numfmt_should_format_like_vsnprintf),
        cmocka_unit_test(numfmt_should_write_integers_like_printf),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
