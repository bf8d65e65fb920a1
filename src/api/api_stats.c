/* api_stats: the screen and PCA handles of the public API (include/sheaf.h)
 * over stats/screen.h and stats/pca.h.  Each handle keeps the internal
 * result and copies of the column names it reports, so it may outlive the
 * summary it came from. */
#include "api/api.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "stats/validity.h"
#include "summary/access.h"

struct sheaf_screen {
    screen_result *r;  /* owned */
    char **names;      /* r->nfeatures names, owned */
    char *target;      /* the name of the column screened against, owned; NULL: none */
};

struct sheaf_pca {
    pca_result *r;     /* owned */
    char **names;      /* r->p names, owned */
    char **left_names; /* r->nleft names of the columns left out, owned */
};

static void free_names(char **names, size_t n)
{
    if (!names) return;
    for (size_t i = 0; i < n; i++) free(names[i]);
    free(names);
}

/* Copies of the names of the n columns cols[i]; NULL when out of memory. */
static char **copy_names(const summary *s, const size_t *cols, size_t n)
{
    char **names = calloc(n ? n : 1, sizeof *names);
    if (!names) return NULL;
    for (size_t i = 0; i < n; i++)
        if (!(names[i] = strdup(summary_name(s, cols[i])))) {
            free_names(names, n);
            return NULL;
        }
    return names;
}

/* ---- screen ---------------------------------------------------------------- */

/* The column sheaf_options_set_screen_target named, into so->target_col, as
 * `sheaf screen -t` finds it (screen_target_lookup).  0, or SHEAF_ERR_USAGE. */
static int screen_target_col(const summary *s, const char *name, screen_options *so,
                             sheaf_error *err)
{
    char problem[1024];
    if (screen_target_lookup(s, name, so->numeric_share, &so->target_col, problem,
                             sizeof problem) == 0)
        return 0;
    return api_fail(err, SHEAF_ERR_USAGE, "sheaf_screen_run: screen target '%s': %s", name,
                    problem);
}

sheaf_screen *sheaf_screen_run(const sheaf_summary *s, const sheaf_options *o, sheaf_error *err)
{
    if (!s) {
        api_fail(err, SHEAF_ERR_USAGE, "sheaf_screen_run: no summary (NULL)");
        return NULL;
    }
    screen_options so;
    if (o) so = o->screen;
    else screen_options_defaults(&so);
    char msg[SHEAF_ERROR_BYTES] = "";
    if (validity_task_fits(s->s, so.numeric_share, msg, sizeof msg) != 0) {
        api_fail(err, SHEAF_ERR_USAGE, "%s", msg); /* as `sheaf screen` refuses it */
        return NULL;
    }
    if (o && o->screen_target && screen_target_col(s->s, o->screen_target, &so, err) != 0)
        return NULL;
    sheaf_screen *w = calloc(1, sizeof *w);
    if (!w || !(w->r = screen_run(s->s, &so))) goto oom;
    size_t n = w->r->nfeatures;
    w->names = calloc(n ? n : 1, sizeof *w->names);
    if (!w->names) goto oom;
    for (size_t i = 0; i < n; i++)
        if (!(w->names[i] = strdup(summary_name(s->s, w->r->features[i].col)))) goto oom;
    if (w->r->target >= 0 && !(w->target = strdup(summary_name(s->s, (size_t)w->r->target))))
        goto oom;
    return w;
oom:
    sheaf_screen_free(w);
    api_fail(err, SHEAF_ERR_MEMORY, "out of memory");
    return NULL;
}

void sheaf_screen_free(sheaf_screen *r)
{
    if (!r) return;
    if (r->r) free_names(r->names, r->r->nfeatures);
    free(r->target);
    screen_free(r->r);
    free(r);
}

int sheaf_screen_task(const sheaf_screen *r)
{
    if (!r) return SHEAF_TASK_AUTO;
    return r->r->task == TASK_CLASSIFY ? SHEAF_TASK_CLASSIFY
           : r->r->task == TASK_REGRESS ? SHEAF_TASK_REGRESS : SHEAF_TASK_AUTO;
}

size_t sheaf_screen_row_count(const sheaf_screen *r) { return r ? r->r->nfeatures : 0; }
size_t sheaf_screen_kept_count(const sheaf_screen *r) { return r ? r->r->kept : 0; }

/* Row i, or NULL out of range. */
static const screen_feature *row(const sheaf_screen *r, size_t i)
{
    return r && i < r->r->nfeatures ? &r->r->features[i] : NULL;
}


size_t sheaf_screen_column(const sheaf_screen *r, size_t i)
{
    const screen_feature *f = row(r, i);
    return f ? f->col : (size_t)-1;
}

const char *sheaf_screen_name(const sheaf_screen *r, size_t i)
{
    return row(r, i) ? r->names[i] : NULL;
}

int sheaf_screen_kept(const sheaf_screen *r, size_t i)
{
    const screen_feature *f = row(r, i);
    return f ? f->keep != 0 : 0;
}

size_t sheaf_screen_rank(const sheaf_screen *r, size_t i)
{
    const screen_feature *f = row(r, i);
    return f ? f->rank : 0;
}

const char *sheaf_screen_test(const sheaf_screen *r, size_t i)
{
    const screen_feature *f = row(r, i);
    if (!f) return NULL;
    const char *name;
    const screen_test *t = screen_primary(f, &name);
    return t && t->present ? name : "";
}

double sheaf_screen_statistic(const sheaf_screen *r, size_t i)
{
    const screen_feature *f = row(r, i);
    if (!f) return NAN;
    const char *name;
    const screen_test *t = screen_primary(f, &name);
    return t && t->present ? t->stat : NAN;
}

double sheaf_screen_p(const sheaf_screen *r, size_t i)
{
    const screen_feature *f = row(r, i);
    return f ? f->p : NAN;
}

double sheaf_screen_log10_p(const sheaf_screen *r, size_t i)
{
    const screen_feature *f = row(r, i);
    return f ? f->log10_p : NAN;
}

double sheaf_screen_q(const sheaf_screen *r, size_t i)
{
    const screen_feature *f = row(r, i);
    return f ? f->q : NAN;
}

double sheaf_screen_log10_q(const sheaf_screen *r, size_t i)
{
    const screen_feature *f = row(r, i);
    return f ? f->log10_q : NAN;
}

const char *sheaf_screen_reason(const sheaf_screen *r, size_t i)
{
    const screen_feature *f = row(r, i);
    return f ? f->reasons : NULL;
}

const char *sheaf_screen_target(const sheaf_screen *r) { return r ? r->target : NULL; }

int sheaf_screen_from_comoments(const sheaf_screen *r) { return r && r->r->from_comoments; }

int sheaf_screen_kind(const sheaf_screen *r, size_t i)
{
    const screen_feature *f = row(r, i);
    if (!f) return -1;
    return f->kind == KIND_NUMERIC ? SHEAF_KIND_NUMERIC : SHEAF_KIND_CATEGORICAL;
}

unsigned sheaf_screen_flags(const sheaf_screen *r, size_t i)
{
    const screen_feature *f = row(r, i);
    return f ? f->flags : 0;
}

const char *sheaf_screen_flag_name(unsigned b)
{
    return b < SCREEN_NFLAGS ? screen_flag_names[b] : NULL;
}

int sheaf_screen_test_holds(const sheaf_screen *r, size_t i)
{
    const screen_feature *f = row(r, i);
    return f ? !f->unreliable : 0;
}

double sheaf_screen_adjusted_mi(const sheaf_screen *r, size_t i)
{
    const screen_feature *f = row(r, i);
    return f && f->mi.present ? f->mi.adjusted : NAN;
}

int sheaf_screen_test_at(const sheaf_screen *r, size_t i, int test, sheaf_test_figures *out)
{
    const screen_feature *f = row(r, i);
    if (!f || !out) return SHEAF_ERR_USAGE;
    /* The tests and the validity check each carries, as `sheaf screen -f
     * json` prints them (src/cli/screen.c, json_test). */
    const screen_test *t;
    const validity_check *check = NULL;
    int with_extra = 0;
    switch (test) {
    case SHEAF_TEST_ANOVA_F: t = &f->anova_f; check = &f->anova_check; break;
    case SHEAF_TEST_WELCH_F: t = &f->welch_f; break;
    case SHEAF_TEST_CORR_F: t = &f->corr_f; with_extra = 1; break;
    case SHEAF_TEST_CHI2: t = &f->chi2; check = &f->chi2_check; with_extra = 1; break;
    default: return SHEAF_ERR_USAGE;
    }
    *out = (sheaf_test_figures){.present = 0, .stat = NAN, .df1 = NAN, .df2 = NAN, .p = NAN,
                                .log10_p = NAN, .extra = NAN, .rule = SHEAF_RULE_NONE,
                                .holds = 1, .small_share = NAN, .smallest = NAN};
    if (!t->present) return SHEAF_OK;
    out->present = 1;
    out->stat = t->stat;
    out->df1 = t->df1;
    out->df2 = test == SHEAF_TEST_CHI2 ? NAN : t->df2;
    out->p = t->p;
    out->log10_p = t->log10_p;
    if (with_extra) out->extra = t->extra;
    if (check && check->rule != VALIDITY_NONE) {
        out->rule = check->rule == VALIDITY_COCHRAN ? SHEAF_RULE_COCHRAN : SHEAF_RULE_LEVEL_SIZES;
        out->holds = check->holds != 0;
        out->units = check->units;
        out->small = check->small;
        out->small_share = check->small_share;
        out->smallest = check->smallest;
    }
    return SHEAF_OK;
}

int sheaf_screen_mi_at(const sheaf_screen *r, size_t i, sheaf_mi_figures *out)
{
    const screen_feature *f = row(r, i);
    if (!f || !out) return SHEAF_ERR_USAGE;
    const screen_mi *m = &f->mi;
    if (!m->present) {
        *out = (sheaf_mi_figures){0, NAN, NAN, NAN, 0, 0, NAN, NAN, 0};
        return SHEAF_OK;
    }
    *out = (sheaf_mi_figures){1, m->nats, m->nats_corrected, m->normalized, m->bins_feature,
                              m->bins_target, m->expected_nats, m->adjusted,
                              m->approximated_cells};
    return SHEAF_OK;
}

size_t sheaf_screen_pair_count(const sheaf_screen *r) { return r ? r->r->npairs : 0; }

int sheaf_screen_pair_at(const sheaf_screen *r, size_t i, size_t *row_a, size_t *row_b,
                         double *pearson_r)
{
    if (!r || i >= r->r->npairs) return SHEAF_ERR_USAGE;
    const screen_pair *p = &r->r->pairs[i];
    if (row_a) *row_a = p->a;
    if (row_b) *row_b = p->b;
    if (pearson_r) *pearson_r = p->r;
    return SHEAF_OK;
}

/* ---- PCA ------------------------------------------------------------------- */

sheaf_pca *sheaf_pca_fit(const sheaf_summary *s, const sheaf_options *o, sheaf_error *err)
{
    if (!s) {
        api_fail(err, SHEAF_ERR_USAGE, "sheaf_pca_fit: no summary (NULL)");
        return NULL;
    }
    pca_options po;
    if (o) po = o->pca;
    else pca_options_defaults(&po);
    char msg[SHEAF_ERROR_BYTES] = "";
    pca_result *r = NULL;
    pca_status st = pca_fit(s->s, &po, &r, msg, sizeof msg);
    if (st != PCA_OK) {
        api_fail(err, st == PCA_ERR_MEMORY ? SHEAF_ERR_MEMORY
                      : st == PCA_ERR_LAPACK ? SHEAF_ERR_NUMERIC : SHEAF_ERR_USAGE,
                 "%s", msg);
        return NULL;
    }
    sheaf_pca *w = calloc(1, sizeof *w);
    size_t *left = w ? malloc((r->nleft ? r->nleft : 1) * sizeof *left) : NULL;
    for (size_t i = 0; left && i < r->nleft; i++) left[i] = r->left[i].column;
    if (!w || !left || !(w->names = copy_names(s->s, r->cols, r->p)) ||
        !(w->left_names = copy_names(s->s, left, r->nleft))) {
        if (w) free_names(w->names, r->p);
        free(left);
        free(w);
        pca_result_free(r);
        api_fail(err, SHEAF_ERR_MEMORY, "out of memory");
        return NULL;
    }
    free(left);
    w->r = r;
    return w;
}

void sheaf_pca_free(sheaf_pca *f)
{
    if (!f) return;
    if (f->r) {
        free_names(f->names, f->r->p);
        free_names(f->left_names, f->r->nleft);
    }
    pca_result_free(f->r);
    free(f);
}

size_t sheaf_pca_column_count(const sheaf_pca *f) { return f ? f->r->p : 0; }

size_t sheaf_pca_column(const sheaf_pca *f, size_t j)
{
    return f && j < f->r->p ? f->r->cols[j] : (size_t)-1;
}

const char *sheaf_pca_column_name(const sheaf_pca *f, size_t j)
{
    return f && j < f->r->p ? f->names[j] : NULL;
}

double sheaf_pca_eigenvalue(const sheaf_pca *f, size_t k)
{
    return f && k < f->r->p ? f->r->eigenvalues[k] : NAN;
}

double sheaf_pca_share(const sheaf_pca *f, size_t k)
{
    return f && k < f->r->p ? f->r->share[k] : NAN;
}

double sheaf_pca_cumulative(const sheaf_pca *f, size_t k)
{
    return f && k < f->r->p ? f->r->cumulative[k] : NAN;
}

double sheaf_pca_loading(const sheaf_pca *f, size_t k, size_t j)
{
    return f && k < f->r->p && j < f->r->p ? f->r->loadings[k * f->r->p + j] : NAN;
}

const pca_result *api_pca_result(const sheaf_pca *fit) { return fit->r; }
const char *api_pca_name(const sheaf_pca *fit, size_t j) { return fit->names[j]; }

size_t sheaf_pca_left_out_count(const sheaf_pca *f) { return f ? f->r->nleft : 0; }

size_t sheaf_pca_left_out_column(const sheaf_pca *f, size_t i)
{
    return f && i < f->r->nleft ? f->r->left[i].column : (size_t)-1;
}

const char *sheaf_pca_left_out_name(const sheaf_pca *f, size_t i)
{
    return f && i < f->r->nleft ? f->left_names[i] : NULL;
}

const char *sheaf_pca_left_out_reason(const sheaf_pca *f, size_t i)
{
    return f && i < f->r->nleft ? pca_reason_name(f->r->left[i].reason) : NULL;
}

size_t sheaf_pca_clamped_negative(const sheaf_pca *f) { return f ? f->r->clamped_negative : 0; }

double sheaf_pca_most_negative_eigenvalue(const sheaf_pca *f)
{
    /* As `sheaf pca -f json` prints it: null when nothing was clamped. */
    return f && f->r->clamped_negative ? f->r->most_negative : NAN;
}

size_t sheaf_pca_undefined_pairs(const sheaf_pca *f) { return f ? f->r->undefined_pairs : 0; }
