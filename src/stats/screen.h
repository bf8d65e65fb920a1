/* screen: which columns to keep and why, from a summary alone.
 *
 * Every column gets flags (no_information: one value; little_information:
 * nearly one value; names_rows: ID-like; too_sparse: mostly missing;
 * too_many_levels: past the exact value table); flagged columns are dropped
 * with the flag as reason and not tested.  With a target, every other column is tested for relevance:
 *   classification, numeric feature    one-way ANOVA F and Welch's F (per-class moments)
 *   classification, categorical        chi-squared of levels x classes (per-value table)
 *   regression, numeric feature        F test of Pearson r with the target (co-moments)
 *   regression, categorical            one-way ANOVA F of the target across levels
 * and mutual information from its contingency table (numeric features and
 * regression targets coarsened into about equal-frequency bins from the
 * fine buckets), which also gives a chi-squared test for numeric features.
 * Benjamini-Hochberg q-values across the tested features decide relevance;
 * they are formed from log10 p (src/stats/logp.h), so that p-values below
 * the double range (1e-308) keep their size and their order.
 * A test that fails its validity rule (Cochran's rule for chi-squared, the
 * level-size rule for the ANOVA across levels; stats/validity.h) takes no
 * part in the q-values and never keeps a column.  Mutual information is
 * also given adjusted for chance (AMI, Vinh et al. 2010), which ranks by
 * --rank-by mi.  A column that mirrors the target (classes apart, |r| or
 * AMI near 1) is flagged mirrors_target after its tests, as a possible leak
 * of the outcome, and left out of the selection unless keep_mirrors.
 * Kept numeric features with |r| >= a threshold are pruned greedily, the
 * more relevant member of each pair staying.  Kept columns are ranked by
 * log10 q, then log10 p, then the tie-breaks of docs/methods.md.
 */
#ifndef SHEAF_SCREEN_H
#define SHEAF_SCREEN_H

#include <stddef.h>

#include "stats/stat.h"
#include "stats/validity.h"
#include "summary/summary.h"

enum {
    SCREEN_CONSTANT = 1,
    SCREEN_NEAR_CONSTANT = 2,
    SCREEN_ID_LIKE = 4,
    SCREEN_MOSTLY_MISSING = 8,
    SCREEN_HIGH_CARDINALITY = 16,
    SCREEN_MIRRORS_TARGET = 32   /* set after the tests: a possible leak of the outcome */
};
#define SCREEN_NFLAGS 6
/* The flags' names, bit b at index b: no_information, little_information,
 * names_rows, too_sparse, too_many_levels, mirrors_target. */
extern const char *const screen_flag_names[SCREEN_NFLAGS];

typedef enum { RANK_Q = 0, RANK_MI, RANK_STAT } screen_rank;

typedef struct {
    double numeric_share;    /* kind rule (default 0.99) */
    double missing_share;    /* mostly missing at or above (0.5) */
    double near_constant;    /* top value share for near-constant (0.99) */
    double id_share;         /* distinct share for ID-like (0.95) */
    double min_variance;     /* near-constant below this variance (0: off) */
    double q_level;          /* relevance level (0.05) */
    double redundancy;       /* |r| threshold (0.95) */
    unsigned bins;           /* equal-frequency bins for MI (10) */
    size_t top;              /* keep at most this many (0: no limit) */
    screen_rank rank_by;     /* ranking key */
    int keep_mirrors;        /* keep columns flagged mirrors_target in the selection */
    long target_col;         /* -1: the summary's own target; else a numeric column of the
                                co-moment matrix taken as a continuous target (see
                                screen_target_problem): only the F test of r applies */
} screen_options;

typedef struct {
    int present;             /* computed */
    double stat, df1, df2;   /* df2 NaN when the test has one df */
    double p;                /* p-value (0 with p_below set when it underflows) */
    int p_below;             /* p below the smallest positive double */
    double log10_p;          /* log10 p, finite where p underflows (-inf: p = 0 exactly) */
    double extra;            /* r (corr_f) or Cramer's V (chi2) */
} screen_test;

typedef struct {
    int present;
    double nats, nats_corrected, normalized;
    unsigned bins_feature, bins_target; /* non-empty bins used */
    double expected_nats;    /* E[I] under the hypergeometric model (validity.h) */
    double adjusted;         /* AMI_max = (I - E) / (max(H) - E); NaN when undefined */
    size_t approximated_cells; /* cells of E[I] taken from the expansion, not summed */
} screen_mi;

/* The test behind a feature's q. */
typedef enum { SCREEN_BY_NONE, SCREEN_BY_ANOVA_F, SCREEN_BY_CORR_F, SCREEN_BY_CHI2 } screen_by;

typedef struct {
    size_t col;              /* summary column */
    column_kind kind;
    unsigned flags;
    screen_test anova_f, welch_f, corr_f, chi2;
    screen_by by;            /* which of them q comes from (SCREEN_BY_NONE: untested) */
    screen_mi mi;
    validity_check chi2_check;  /* Cochran's rule on the chi-squared table (chi2 present) */
    validity_check anova_check; /* level sizes of the ANOVA across levels (regression, text) */
    int unreliable;          /* the test behind q fails its rule: no q, never kept on it */
    double p;                /* the p-value behind q (primary test), NaN if untested */
    double q;                /* Benjamini-Hochberg q-value, NaN if untested, 0 below DBL_MIN */
    double log10_p;          /* log10 of p, finite where p underflows; NaN if untested */
    double log10_q;          /* log10 of q from log10_p (logp_benjamini_hochberg) */
    int keep;                /* decision */
    char reasons[256];       /* "; "-separated */
    size_t rank;             /* 1.. among kept, 0 when dropped */
} screen_feature;

typedef struct {
    size_t a, b;             /* feature indices */
    double r;                /* pairwise-complete r */
} screen_pair;

typedef struct {
    target_task task;        /* TASK_AUTO when there is no target */
    long target;             /* the target column, -1 without one */
    int from_comoments;      /* the target is not the scan's: tests from the co-moments only */
    size_t nfeatures;        /* every column but the target */
    screen_feature *features;
    size_t npairs;
    screen_pair *pairs;
    size_t kept;
} screen_result;

void screen_options_defaults(screen_options *o);
/* NULL when column col can be screen_options.target_col of s; otherwise why
 * not (a phrase for a message).  The summary's own target always can; another
 * column must be numeric and in the co-moment matrix. */
const char *screen_target_problem(const summary *s, size_t col, double numeric_share);
/* The column a screen target named `name` is: one column of that exact name
 * that screen_target_problem accepts.  0 with *col set, or -1 with why not
 * in msg (nearest names added when there is no such column). */
int screen_target_lookup(const summary *s, const char *name, double numeric_share, long *col,
                         char *msg, size_t msglen);
/* NULL on OOM, or when o->target_col is refused by screen_target_problem. */
screen_result *screen_run(const summary *s, const screen_options *o);
void screen_free(screen_result *r);

/* The test behind f's q and its name ("anova_f", "corr_f", "chi2"), as
 * screen's outputs name it; NULL and "" when f is untested. */
const screen_test *screen_primary(const screen_feature *f, const char **name);

#endif
