/* number_simd_calls: the SIMD parsers of io/number_simd.h as functions a
 * test can call.  They are inline and compiled for SSSE3 only where a caller
 * is, so each is wrapped in a function of that target here; shared by
 * tests/test_number.c and tests/fuzz/fuzz_number.c.  Call them only where
 * number_simd_usable() says the CPU runs them. */
#ifndef SHEAF_TEST_NUMBER_SIMD_CALLS_H
#define SHEAF_TEST_NUMBER_SIMD_CALLS_H

#include "io/number_simd.h"

#if defined(NUMBER_SIMD)
__attribute__((target("ssse3"), unused)) static number_kind
parse_padded(const char *s, size_t len, number_decimal *out)
{
    return number_parse_padded(s, len, out);
}

__attribute__((target("ssse3"), unused)) static int parse_simd(const char *s, size_t len,
                                                               number_decimal *out)
{
    return number_parse_ssse3(s, len, out);
}

__attribute__((target("ssse3"), unused)) static int
parse_fixed(const char *s, size_t len, unsigned decimals, number_decimal *out)
{
    return number_parse_fixed_ssse3(s, len, decimals, out);
}

__attribute__((target("ssse3"), unused)) static int parse_whole(const char *s, size_t len,
                                                                number_decimal *out)
{
    return number_parse_integer_ssse3(s, len, out);
}
#endif

#endif
