/* drift: what changed between two summaries of one table (last night's, the
 * baseline, and tonight's), from the summaries alone.
 *
 * Columns are matched by name.  For a column numeric in both (by the kind
 * rule, numeric_share):
 *  - Bins.  Both bucket stores (acc/buckets.h) are brought to the coarser of
 *    their two levels L (a key is re-keyed by buckets_key_at of a value it
 *    covers; keys stay monotone), and the counts summed over the target
 *    cells.  The baseline's decile bins end at the buckets that hold its
 *    j/10 quantiles, j = 1..9 (the bucket where its cumulative count first
 *    reaches j n / 10), repeated edges and an edge at its last bucket
 *    dropped: at most 10 bins, none empty for the baseline.  An edge is the
 *    largest value of its bucket (buckets_bounds), so a bin is
 *    (edge[j-1], edge[j]] and the new night's count in it is exact: the
 *    bins are the baseline's deciles moved up to a bucket boundary, within
 *    the level's relative width (1/128 at level 0) of the decile.
 *  - Population stability index over those bins, PSI = sum (q - p) ln(q / p)
 *    with p and q the baseline's and the new night's shares of their
 *    finite numbers; a bin empty in the new night counts as half a value
 *    (q = 0.5 / n), so PSI stays finite.  Given the edges the value is
 *    exact: the same sum over the raw values counted against the edges.
 *    Common practice (no source) reads PSI below 0.1 as no change, 0.1 to
 *    0.25 as moderate and above 0.25 as a major shift.
 *  - Kolmogorov-Smirnov distance.  With F and G the two empirical CDFs,
 *    D = sup |F - G|.  At the largest value of a bucket both CDFs are known
 *    exactly (every value of the bucket is at or below it, every later one
 *    above), so ks = max over bucket ends of |F - G| is a distance reached
 *    by the raw data: ks <= D.  Inside bucket b, with A and B the
 *    cumulative shares before and after it, F lies in [A_F, B_F] and G in
 *    [A_G, B_G], so D <= ks_bound = max over b of max(B_F - A_G, B_G - A_F).
 *    The bucket resolution thus bounds D to [ks, ks_bound], an interval no
 *    wider than the largest share one bucket holds in either night.  When
 *    both value tables hold every number of the column (never overflowed,
 *    no label cut: at most max_levels distinct numbers), D is computed from
 *    them exactly and ks = ks_bound = D.
 *  - The shift of the mean in baseline standard deviations,
 *    (mean_new - mean_base) / sd_base (+-inf when the baseline is constant
 *    and the means differ, 0 when they do not).
 * For every column present in both: the missing share (of rows), the share
 * of non-numeric cells (of present cells) and the distinct count (exact
 * from the value table, else HyperLogLog).  The expected distinct count of
 * a sample is concave in the sample's size and 0 at 0, so d(n)/n never
 * grows: from n present cells to n', the same distribution keeps it within
 * [d min(1, n'/n), d max(1, n'/n)].  The distinct count drifts when it lies
 * beyond that range by max_share_change of the new night's present cells
 * or more (a sensor that starts reporting whole numbers, a column that
 * starts holding IDs); at equal sizes, when it moved by that share.
 * For a column categorical in both, from the value tables: the categories
 * that appeared (held by the new table only, listed when the baseline's
 * table never overflowed) or vanished (the other way round), Pearson's
 * chi-squared test of homogeneity of the 2 x K table of counts (stat.h's
 * test of independence, no continuity correction) when neither table
 * overflowed, and the total-variation distance TV = 1/2 sum |p_i - q_i|
 * of the two shares of present cells: exact when neither overflowed, else
 * over the categories both tables hold exactly plus one "other" category
 * each for the rest, a lower bound of the true TV (merging categories
 * never increases it).
 * Pairs of columns numeric in both and in both co-moment matrices whose
 * Pearson r moved by at least max_r_change.  With the same target in both,
 * the screen (stats/screen.h) is run on each: a column whose q crossed the
 * level fdr (q <= fdr / DRIFT_Q_MARGIN in one night and q > fdr, or
 * untested, in the other: without the margin a column that is not relevant
 * is found relevant in one of two nights about twice the level's rate, and
 * flips), or that is kept in both and moved max_rank_change places or
 * more.  Columns that appeared, vanished or changed kind are flagged.
 *
 * A column drifts when any of its flags is set; the thresholds are the
 * options.  Read-only over both summaries; nothing is printed.
 *
 * Sources (recalled from memory, as in docs/methods.md): Kolmogorov (1933)
 * and Smirnov (1948) for the two-sample distance, Pearson (1900) for the
 * chi-squared test; the PSI and its reading thresholds are common practice
 * without a source.  docs/drift.md has the tests behind every bound.
 */
#ifndef SHEAF_DRIFT_H
#define SHEAF_DRIFT_H

#include <stddef.h>
#include <stdint.h>

#include "summary/summary.h"

#define DRIFT_DECILES 10 /* bins of the PSI at most */
#define DRIFT_LISTED 8   /* categories listed per column that appeared (or vanished) */
#define DRIFT_PSI_MODERATE 0.1 /* common practice (no source): below, no change */
#define DRIFT_PSI_MAJOR 0.25   /* common practice (no source): above, a major shift */
#define DRIFT_Q_MARGIN 10      /* relevance crossed: q <= fdr / 10 in one night, > fdr in the other */

/* Why a column drifts (flags of drift_column). */
enum {
    DRIFT_APPEARED = 1,       /* only in the new summary */
    DRIFT_VANISHED = 2,       /* only in the baseline */
    DRIFT_KIND = 4,           /* numeric in one, categorical in the other */
    DRIFT_PSI = 8,            /* psi >= max_psi */
    DRIFT_KS = 16,            /* ks >= max_ks (the distance reached, not the bound) */
    DRIFT_SHIFT = 32,         /* |mean shift| >= max_shift baseline sd */
    DRIFT_MISSING = 64,       /* |change of the missing share| >= max_share_change */
    DRIFT_NON_NUMERIC = 128,  /* |change of the non-numeric share| >= max_share_change */
    DRIFT_DISTINCT = 256,     /* the distinct count left the range the change of the
                                 present cells explains by >= max_share_change of them */
    DRIFT_CATEGORIES = 512,   /* a category that appeared or vanished holds
                                 >= max_share_change of its night's present cells */
    DRIFT_TV = 1024,          /* total-variation distance >= max_tv */
    DRIFT_RELEVANCE = 2048,   /* q crossed fdr (q <= fdr / DRIFT_Q_MARGIN in one night,
                                 > fdr in the other) */
    DRIFT_RANK = 4096         /* kept in both, rank moved >= max_rank_change */
};
#define DRIFT_NFLAGS 13
/* The flags' names, bit b at index b: appeared, vanished, kind, psi, ks,
 * mean_shift, missing_share, non_numeric_share, distinct, categories,
 * tv, relevance, rank. */
extern const char *const drift_flag_names[DRIFT_NFLAGS];

typedef struct {
    double numeric_share;    /* kind rule (0.99, as screen) */
    double max_psi;          /* 0.25 */
    double max_ks;           /* 0.1 */
    double max_shift;        /* 0.5 baseline standard deviations */
    double max_share_change; /* 0.05: missing and non-numeric shares, distinct count, categories */
    double max_tv;           /* 0.1 */
    double max_r_change;     /* 0.2 */
    double fdr;              /* 0.05: the screen's q level */
    unsigned max_rank_change; /* 3 places among the kept columns */
} drift_options;

/* A category of a text column that is in one night's table only. */
typedef struct {
    const char *label;  /* its text as kept (not terminated), owned by that summary */
    uint32_t label_len; /* bytes of label */
    int cut;            /* the label is the start of a longer text */
    uint64_t count;     /* cells in the night that holds it */
    double share;       /* of that night's present cells */
} drift_category;

/* Per-night figures of one column (NaN where they do not apply). */
typedef struct {
    long col;                /* column index in that summary, -1 when absent */
    column_kind kind;
    double missing_share;    /* missing cells / rows */
    double non_numeric_share; /* non-numeric cells / present cells */
    double distinct;         /* distinct values */
    int distinct_exact;      /* from the value table (1) or HyperLogLog (0) */
    double distinct_share;   /* distinct / present cells */
    double mean, sd;         /* of the numbers */
    uint64_t numbers;        /* finite numbers (the bins' total) */
    uint64_t present;        /* present cells */
    int overflowed;          /* the value table overflowed */
    int ranked;              /* the relevance figures below are set */
    double q;                /* the screen's q-value (NaN: untested) */
    const char *q_test;      /* the test behind q (screen_primary: "anova_f", "corr_f",
                                "chi2"; "" untested); ranked only */
    size_t rank;             /* among kept columns, 0 when dropped */
} drift_side;

typedef struct {
    const char *name;        /* owned by the summary it comes from */
    unsigned flags;          /* DRIFT_* */
    drift_side base, next;   /* the baseline and the new night */
    /* Numeric in both (NaN otherwise). */
    unsigned bins;           /* PSI bins (0: not computed) */
    double edges[DRIFT_DECILES - 1]; /* bins - 1 upper edges, ascending */
    uint64_t base_counts[DRIFT_DECILES], next_counts[DRIFT_DECILES];
    int level;               /* the common bucket level of the bins */
    double psi;
    double ks, ks_bound;     /* ks <= D <= ks_bound */
    int ks_exact;            /* both value tables hold every number: ks = ks_bound = D */
    double mean_shift;       /* in baseline standard deviations */
    /* Categorical in both (counts 0 and NaN otherwise). */
    int text;                /* the text figures below are set */
    size_t appeared, vanished; /* categories in one table only (see listed_*) */
    size_t listed_appeared, listed_vanished; /* of which in the lists, most frequent first */
    drift_category appeared_list[DRIFT_LISTED], vanished_list[DRIFT_LISTED];
    int appeared_known, vanished_known; /* 0: the other table overflowed, lists incomplete */
    double chi2, chi2_df, chi2_p, chi2_log10_p; /* NaN when a table overflowed */
    double tv;               /* total-variation distance */
    int tv_exact;            /* 0: a lower bound (a table overflowed) */
} drift_column;

typedef struct {
    const char *a, *b;       /* column names (baseline's order) */
    double r_base, r_next;   /* Pearson r in each night */
} drift_pair;

typedef struct {
    uint64_t base_rows, next_rows;
    size_t ncolumns;         /* baseline's columns in its order, then the new ones */
    drift_column *columns;
    size_t drifting;         /* columns with a flag */
    size_t pairs_compared;   /* pairs with r in both */
    size_t pairs_imprecise;  /* pairs left out because r is imprecise on a side
                                (summary_pair_imprecise) */
    size_t npairs;           /* pairs that moved */
    drift_pair *pairs;
    int relevance;           /* 1: both have the same target and the screen ran on both */
    const char *target;      /* that target's name, else NULL */
    const char *relevance_note; /* why relevance was not compared (a phrase), or NULL */
} drift_result;

typedef enum {
    DRIFT_OK = 0,
    DRIFT_ERR_INCOMPATIBLE = 1, /* the scans' settings differ: see the message */
    DRIFT_ERR_MEMORY = 2
} drift_status;

void drift_options_defaults(drift_options *o);
/* 1 when the two summaries were scanned with the settings that shape bins
 * and tables alike: the bucket budget, the value-table size and label
 * length, the missing-value spellings (as a set) and their letter-case
 * rule, and the declared mode of every column they share.  Otherwise 0
 * with the differences in msg (one line, "; "-separated). */
int drift_compatible(const summary *base, const summary *next, char *msg, size_t msglen);
/* Compares next with base.  *out is a new result (drift_free) whose names
 * and labels point into the two summaries: keep them alive while it is
 * read.  DRIFT_ERR_INCOMPATIBLE with drift_compatible's message, or
 * DRIFT_ERR_MEMORY; *out NULL then. */
drift_status drift_run(const summary *base, const summary *next, const drift_options *o,
                       drift_result **out, char *err, size_t errlen);
void drift_free(drift_result *r);

#endif
