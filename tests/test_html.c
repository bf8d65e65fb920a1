/* html: the escaping of user text and the number form.
 *
 * References: the XML 1.0 Char production (section 2.2) for what may stand in
 * a document, the five predefined entities (section 4.6), and the UTF-8
 * well-formedness table of Unicode 15, section 3.9 (table 3-7); the cases are
 * worked by hand. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "out/html.h"

static char *escaped(const char *s, size_t n)
{
    html_buf b;
    html_init(&b);
    html_text_n(&b, s, n);
    html_raw_n(&b, "", 1);
    cr_assert(!b.failed);
    return b.data;
}

#define EXPECT(in, want)                                                        \
    do {                                                                        \
        char *got = escaped(in, sizeof in - 1);                                 \
        cr_assert_str_eq(got, want);                                            \
        free(got);                                                              \
    } while (0)

Test(html, markup_characters_become_references)
{
    EXPECT("<script>alert(1)</script>", "&lt;script&gt;alert(1)&lt;/script&gt;");
    EXPECT("\"&<>'", "&quot;&amp;&lt;&gt;&#39;");
    EXPECT("&amp;", "&amp;amp;");
}

Test(html, well_formed_utf8_passes_unchanged)
{
    EXPECT("temp\xc2\xb0" "C \xe2\x88\x92 \xf0\x9f\x93\xa6", "temp\xc2\xb0" "C \xe2\x88\x92 \xf0\x9f\x93\xa6");
    EXPECT("tab\there\nline\r", "tab\there\nline\r");
}

Test(html, what_xml_cannot_hold_becomes_replacement_characters)
{
    EXPECT("a\x01" "b\x1f", "a\xef\xbf\xbd" "b\xef\xbf\xbd");        /* controls */
    EXPECT("\xc0\xaf", "\xef\xbf\xbd\xef\xbf\xbd");                   /* overlong '/' */
    EXPECT("\xed\xa0\x80", "\xef\xbf\xbd\xef\xbf\xbd\xef\xbf\xbd");   /* a surrogate */
    EXPECT("\xef\xbf\xbe", "\xef\xbf\xbd\xef\xbf\xbd\xef\xbf\xbd");   /* U+FFFE */
    EXPECT("\xf4\x90\x80\x80", "\xef\xbf\xbd\xef\xbf\xbd\xef\xbf\xbd\xef\xbf\xbd"); /* past U+10FFFF */
    EXPECT("ab\xe2\x88", "ab\xef\xbf\xbd\xef\xbf\xbd");               /* cut at the end */
}

Test(html, controls_that_could_reorder_or_hide_text_are_replaced)
{
    /* An unclosed right-to-left override in a column name drew the figures
     * after it reversed ("(20.0%)" as "(%0.02)"): the bidirectional
     * embeddings, overrides and isolates become one U+FFFD each, as do DEL
     * and the C1 controls; the marks U+200E/U+200F and other text stay. */
    EXPECT("rtl-\xe2\x80\xaeunclosed", "rtl-\xef\xbf\xbdunclosed");      /* U+202E */
    EXPECT("\xe2\x80\xaa\xe2\x80\xab\xe2\x80\xac\xe2\x80\xad",
           "\xef\xbf\xbd\xef\xbf\xbd\xef\xbf\xbd\xef\xbf\xbd");          /* U+202A..D */
    EXPECT("\xe2\x81\xa6x\xe2\x81\xa9", "\xef\xbf\xbdx\xef\xbf\xbd");  /* U+2066, 2069 */
    EXPECT("a\x7f" "b\xc2\x85" "c\xc2\x9f", "a\xef\xbf\xbd" "b\xef\xbf\xbd" "c\xef\xbf\xbd");
    EXPECT("\xe2\x80\x8e\xe2\x80\xa9\xc2\xa0", "\xe2\x80\x8e\xe2\x80\xa9\xc2\xa0");
}

Test(html, an_embedded_nul_is_replaced)
{
    char *got = escaped("a\0b", 3);
    cr_assert_str_eq(got, "a\xef\xbf\xbd" "b");
    free(got);
}

Test(html, numbers_read_back_exactly)
{
    const double v[] = {0.1, 1.0 / 3, -2.5e-300, 1e22, 5.843333333333333, 0};
    for (size_t i = 0; i < sizeof v / sizeof *v; i++) {
        html_buf b;
        html_init(&b);
        html_number(&b, v[i]);
        html_raw_n(&b, "", 1);
        cr_assert_eq(strtod(b.data, NULL), v[i], "%s", b.data);
        html_free(&b);
    }
    html_buf b;
    html_init(&b);
    html_number(&b, NAN);
    html_raw(&b, " ");
    html_number(&b, -INFINITY);
    html_raw_n(&b, "", 1);
    cr_assert_str_eq(b.data, "nan -inf");
    html_free(&b);
}

Test(html, long_formatted_text_is_whole_and_escaped)
{
    char big[3000];
    memset(big, '<', sizeof big - 1);
    big[sizeof big - 1] = 0;
    html_buf b;
    html_init(&b);
    html_textf(&b, "%s!", big);
    cr_assert_eq(b.len, 4 * (sizeof big - 1) + 1);
    cr_assert_eq(memcmp(b.data, "&lt;", 4), 0);
    cr_assert_eq(b.data[b.len - 1], '!');
    html_free(&b);
}
