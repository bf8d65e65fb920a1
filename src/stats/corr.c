/* corr: see corr.h.  Everything is read through summary/access.h. */
#include "stats/corr.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "io/message.h"
#include "io/namelist.h"
#include "summary/access.h"

long corr_columns(const summary *s, double numeric_share, const char *names, size_t *cols,
                  char *err, size_t errlen)
{
    size_t nnames = 0;
    char **each = names ? namelist_split(names, &nnames) : NULL;
    if (names && !each) {
        snprintf(err, errlen, "out of memory");
        return -1;
    }
    size_t n = 0;
    for (size_t j = 0; j < summary_columns(s); j++) {
        if (!summary_has_pairs(s, j) || summary_kind(s, j, numeric_share) != KIND_NUMERIC ||
            summary_numbers(s, j) == 0)
            continue;
        size_t k = 0;
        while (k < nnames && strcmp(each[k], summary_name(s, j)) != 0) k++;
        if (!names || k < nnames) cols[n++] = j;
    }
    /* Every non-empty name must be one of the chosen columns. */
    long rc = (long)n;
    for (size_t i = 0; i < nnames && rc >= 0; i++) {
        const char *p = each[i];
        size_t l = strlen(p), k = 0;
        while (l && k < n && strcmp(summary_name(s, cols[k]), p) != 0) k++;
        size_t named = 0;
        for (size_t j = 0; l && j < summary_columns(s); j++) named += strcmp(summary_name(s, j), p) == 0;
        if (l && k == n) {
            message_printf(err, errlen, "'%s' is not a numeric column", p);
            if (summary_find_column_n(s, p, l) < 0) summary_suggest_columns(s, p, l, err, errlen);
            rc = -1;
        } else if (named > 1) {
            message_printf(err, errlen, "'%s' names %zu columns (duplicate header names)", p, named);
            rc = -1;
        }
    }
    free(each);
    return rc;
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
