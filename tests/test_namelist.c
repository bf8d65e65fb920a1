/* namelist: the one rule for lists of names in an option value.  Expected
 * pieces are worked by hand from the rule in io/namelist.h. */
#include <criterion/criterion.h>
#include <stdlib.h>
#include <string.h>

#include "io/namelist.h"

static void expect_split(const char *list, size_t n, const char *const *want)
{
    size_t got = 0;
    char **names = namelist_split(list, &got);
    cr_assert_not_null(names);
    cr_expect_eq(got, n, "'%s': %zu names, want %zu", list, got, n);
    for (size_t i = 0; i < n && i < got; i++)
        cr_expect_str_eq(names[i], want[i], "'%s' name %zu", list, i);
    free(names);
}

Test(namelist, commas_separate)
{
    expect_split("a,b,c", 3, (const char *[]){"a", "b", "c"});
    expect_split("one", 1, (const char *[]){"one"});
}

Test(namelist, backslash_comma_is_a_comma)
{
    expect_split("fare\\, usd,tip", 2, (const char *[]){"fare, usd", "tip"});
    expect_split("a\\,", 1, (const char *[]){"a,"});
    expect_split("\\,", 1, (const char *[]){","});
}

Test(namelist, two_backslashes_are_one_other_backslashes_stay)
{
    /* "tip\\" then "," separates: the name ends in one backslash. */
    expect_split("tip\\\\,a\\b", 2, (const char *[]){"tip\\", "a\\b"});
    /* Three backslashes and a comma: one backslash, then a comma. */
    expect_split("x\\\\\\,y", 1, (const char *[]){"x\\,y"});
    /* A lone backslash at the end is itself. */
    expect_split("end\\", 1, (const char *[]){"end\\"});
}

Test(namelist, empty_names_are_kept)
{
    expect_split("", 1, (const char *[]){""});
    expect_split(",x", 2, (const char *[]){"", "x"});
    expect_split("x,,y", 3, (const char *[]){"x", "", "y"});
    expect_split("x,", 2, (const char *[]){"x", ""});
    cr_expect(namelist_has_empty(""));
    cr_expect(namelist_has_empty("x,"));
    cr_expect(namelist_has_empty("x,,y"));
    cr_expect(!namelist_has_empty("x\\,"));
    cr_expect(!namelist_has_empty("a,b"));
}
