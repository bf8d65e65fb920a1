/* corr: see corr.h.  Everything is read through summary/access.h. */
#include "stats/corr.h"

#include <stdio.h>
#include <string.h>

#include "summary/access.h"

/* Whether name is one of the comma-separated pieces of list (empty pieces
 * included, so an empty name matches an empty piece). */
static int listed(const char *list, const char *name)
{
    size_t len = strlen(name);
    for (const char *p = list; *p;) {
        const char *e = strchr(p, ',');
        size_t l = e ? (size_t)(e - p) : strlen(p);
        if (l == len && strncmp(p, name, l) == 0) return 1;
        p += l + (e != NULL);
    }
    return 0;
}

long corr_columns(const summary *s, double numeric_share, const char *names, size_t *cols,
                  char *err, size_t errlen)
{
    size_t n = 0;
    for (size_t j = 0; j < summary_columns(s); j++) {
        if (!summary_has_pairs(s, j) || summary_kind(s, j, numeric_share) != KIND_NUMERIC ||
            summary_numbers(s, j) == 0)
            continue;
        if (names && !listed(names, summary_name(s, j))) continue;
        cols[n++] = j;
    }
    /* Every non-empty name must be one of the chosen columns. */
    for (const char *p = names; p && *p;) {
        const char *e = strchr(p, ',');
        size_t l = e ? (size_t)(e - p) : strlen(p);
        size_t k = 0;
        while (l && k < n &&
               !(strncmp(summary_name(s, cols[k]), p, l) == 0 && summary_name(s, cols[k])[l] == '\0'))
            k++;
        if (l && k == n) {
            snprintf(err, errlen, "'%.*s' is not a numeric column", (int)l, p);
            if (summary_find_column_n(s, p, l) < 0) summary_suggest_columns(s, p, l, err, errlen);
            return -1;
        }
        size_t named = 0;
        for (size_t j = 0; l && j < summary_columns(s); j++)
            named += strncmp(summary_name(s, j), p, l) == 0 && summary_name(s, j)[l] == '\0';
        if (named > 1) {
            snprintf(err, errlen, "'%.*s' names %zu columns (duplicate header names)", (int)l, p,
                     named);
            return -1;
        }
        p += l + (e != NULL);
    }
    return (long)n;
}

void corr_matrix(const summary *s, const size_t *cols, size_t n, corr_statistic stat, double *out)
{
    for (size_t a = 0; a < n; a++)
        for (size_t b = 0; b < n; b++)
            out[a * n + b] = stat == CORR_COVARIANCE ? summary_covariance(s, cols[a], cols[b])
                                                     : summary_correlation(s, cols[a], cols[b]);
}

void corr_pair_counts(const summary *s, const size_t *cols, size_t n, uint64_t *out)
{
    for (size_t a = 0; a < n; a++)
        for (size_t b = 0; b < n; b++) out[a * n + b] = summary_pair_count(s, cols[a], cols[b]);
}

size_t corr_imprecise_pairs(const summary *s, const size_t *cols, size_t n, size_t *first_a,
                            size_t *first_b)
{
    size_t count = 0;
    for (size_t a = 0; a < n; a++)
        for (size_t b = a + 1; b < n; b++) {
            if (!summary_pair_imprecise(s, cols[a], cols[b])) continue;
            if (!count) { *first_a = a; *first_b = b; }
            count++;
        }
    return count;
}
