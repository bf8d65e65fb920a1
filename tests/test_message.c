/* message: long messages cut in their middle, so that the reason at their
 * end survives a long path.  Expected strings are worked by hand. */
#include <criterion/criterion.h>
#include <string.h>

#include "io/message.h"

Test(message, short_messages_are_whole)
{
    char b[32];
    cr_expect_eq(message_printf(b, sizeof b, "%s: cannot open", "a.csv"), 18);
    cr_expect_str_eq(b, "a.csv: cannot open");
    /* 31 bytes fit in 32 exactly. */
    cr_expect_eq(message_printf(b, sizeof b, "%s", "0123456789012345678901234567890"), 31);
    cr_expect_str_eq(b, "0123456789012345678901234567890");
}

Test(message, long_messages_keep_head_and_tail)
{
    char path[2000], b[64];
    memset(path, 'd', sizeof path - 1);
    path[sizeof path - 1] = '\0';
    size_t k = message_printf(b, sizeof b, "%s: line 2: unterminated quote", path);
    /* 63 bytes: room 58 (less " ... "), a quarter (14) for the head, 44 for
     * the tail, which holds the whole reason. */
    cr_expect_eq(k, 63);
    cr_expect_eq(strlen(b), 63);
    cr_expect_eq(strncmp(b, "dddddddddddddd ... ", 19), 0, "%s", b);
    cr_expect_str_eq(b + 63 - 28, ": line 2: unterminated quote");
}

Test(message, cuts_between_utf8_characters)
{
    /* "é" is two bytes (C3 A9): no cut may leave half of one. */
    char src[400] = "", b[40];
    for (int i = 0; i < 150; i++) strcat(src, "\xc3\xa9");
    strcat(src, ": gone");
    message_printf(b, sizeof b, "%s", src);
    size_t n = strlen(b);
    cr_expect(n <= 39);
    for (size_t i = 0; i < n; i++) /* every continuation byte follows a lead or another */
        if (((unsigned char)b[i] & 0xC0) == 0x80)
            cr_expect(i > 0 && ((unsigned char)b[i - 1] & 0x80), "byte %zu of %s", i, b);
    const char *gap = strstr(b, " ... ");
    cr_assert(gap != NULL, "%s", b);
    cr_expect_neq((unsigned char)gap[5] & 0xC0, 0x80, "the tail starts a character: %s", b);
    cr_expect_eq(strcmp(b + n - 6, ": gone"), 0, "%s", b);
}

Test(message, fits_in_place_and_tiny_buffers)
{
    char b[200];
    memset(b, 'x', 150);
    strcpy(b + 150, ": why");
    cr_expect_eq(message_fit(b, 40, b, strlen(b)), 39);
    cr_expect_eq(strcmp(b + 39 - 5, ": why"), 0, "%s", b);
    char t[8];
    message_printf(t, sizeof t, "%s", "abcdefghijkl"); /* too small to cut in the middle */
    cr_expect_str_eq(t, "abcdefg");
}
