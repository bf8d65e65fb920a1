/* Tests for io/closest: the banded optimal string alignment distance against
 * a full-table reference, the threshold, and the suggestions kept.
 * Reference values: "kitten" -> "sitting" is 3 (the usual example of the
 * Levenshtein distance), "ca" -> "abc" is 3 under optimal string alignment
 * and 2 under the unrestricted Damerau-Levenshtein distance (the usual
 * example telling the two apart); both from memory.  Names are invented.
 */
#include <criterion/criterion.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "io/closest.h"

/* The whole optimal string alignment table, case folded, no band. */
static size_t reference(const char *a, const char *b)
{
    size_t n = strlen(a), m = strlen(b);
    size_t d[40][40];
    for (size_t i = 0; i <= n; i++) d[i][0] = i;
    for (size_t j = 0; j <= m; j++) d[0][j] = j;
    for (size_t i = 1; i <= n; i++)
        for (size_t j = 1; j <= m; j++) {
            int x = a[i - 1] | 0x20, y = b[j - 1] | 0x20; /* letters only below */
            size_t v = d[i - 1][j - 1] + (x != y);
            if (d[i - 1][j] + 1 < v) v = d[i - 1][j] + 1;
            if (d[i][j - 1] + 1 < v) v = d[i][j - 1] + 1;
            if (i > 1 && j > 1 && x == (b[j - 2] | 0x20) && (a[i - 2] | 0x20) == y &&
                d[i - 2][j - 2] + 1 < v)
                v = d[i - 2][j - 2] + 1;
            d[i][j] = v;
        }
    return d[n][m];
}

static size_t dist(const char *a, const char *b, size_t limit)
{
    return closest_distance(a, strlen(a), b, strlen(b), limit);
}

Test(closest, known_distances)
{
    cr_assert_eq(dist("kitten", "sitting", 5), 3);
    cr_assert_eq(dist("ca", "abc", 5), 3);
    cr_assert_eq(dist("sacn", "scan", 3), 1); /* one swap */
    cr_assert_eq(dist("Battery_V", "battery_v", 3), 0);
    cr_assert_eq(dist("", "abc", 5), 3);
}

Test(closest, over_the_limit_is_limit_plus_one)
{
    cr_assert_eq(dist("kitten", "sitting", 2), 3);
    cr_assert_eq(dist("a", "abcdef", 2), 3);
}

Test(closest, banded_equals_full_table_on_random_words)
{
    srand(7);
    for (int t = 0; t < 20000; t++) {
        char a[32], b[32];
        size_t n = (size_t)rand() % 12, m = (size_t)rand() % 12;
        for (size_t i = 0; i < n; i++) a[i] = (char)('a' + rand() % 4);
        for (size_t i = 0; i < m; i++) b[i] = (char)('a' + rand() % 4);
        a[n] = b[m] = '\0';
        size_t limit = (size_t)rand() % 5, want = reference(a, b);
        size_t got = dist(a, b, limit);
        if (want <= limit) cr_assert_eq(got, want, "%s %s limit %zu", a, b, limit);
        else cr_assert_eq(got, limit + 1, "%s %s limit %zu: %zu", a, b, limit, want);
    }
}

Test(closest, threshold_by_length)
{
    cr_assert_eq(closest_limit(3), 1);
    cr_assert_eq(closest_limit(4), 2);
    cr_assert_eq(closest_limit(6), 2);
    cr_assert_eq(closest_limit(7), 3);
}

Test(closest, keeps_nearest_first_and_lists_some)
{
    const char *names[] = {"drone_id", "battery_v", "motor_temp_c", "altitude_m",
                           "payload_kg", "status", "battery_a"};
    closest c;
    closest_init(&c, "batery_v", 8);
    for (size_t i = 0; i < 7; i++) closest_offer(&c, names[i], strlen(names[i]));
    char msg[256] = "no column named 'batery_v'";
    closest_append(&c, "columns", msg, sizeof msg);
    cr_assert_str_eq(msg, "no column named 'batery_v'; did you mean 'battery_v' or 'battery_a'? "
                          "(columns: drone_id, battery_v, motor_temp_c, altitude_m, payload_kg, "
                          "... 7 in all)");
}

Test(closest, prefix_counts_and_far_names_do_not)
{
    closest c;
    closest_init(&c, "alt", 3);
    closest_offer(&c, "altitude_m", 10);
    closest_offer(&c, "status", 6);
    cr_assert_eq(c.nbest, 1);
    cr_assert_str_eq(c.best[0].text, "altitude_m");
    char msg[64] = "x";
    closest_init(&c, "zzzzzz", 6);
    closest_offer(&c, "status", 6);
    closest_append(&c, NULL, msg, sizeof msg);
    cr_assert_str_eq(msg, "x");
}

Test(closest, long_names_do_not_overflow)
{
    char big[1000];
    memset(big, 'q', sizeof big - 1);
    big[sizeof big - 1] = '\0';
    cr_assert_eq(dist(big, big, 3), 4);
    closest c;
    closest_init(&c, big, strlen(big));
    closest_offer(&c, big, strlen(big) - 1);
    cr_assert_eq(c.nbest, 0);
}
