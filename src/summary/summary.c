/* summary: accumulator set, merge, and the file format (docs/summary-format.md).
 *
 * File layout (all integers little-endian):
 *   magic    8 bytes  89 'S' 'H' 'F' 0d 0a 1a 0a
 *   version  u32      SUMMARY_FORMAT_VERSION
 *   sections          u32 tag, u64 length, payload, u64 XXH3-64(payload)
 *   trailer           u32 'END.', u64 8, u64 XXH3-64 of every byte before it
 * The trailer checksum covers the whole file, so any single-bit change is
 * detected (a change to the magic or version is reported as such first).
 */
#include "summary/summary.h"

#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/mman.h>
#include <sys/stat.h>
#include <unistd.h>
#include <xxhash.h>

static const uint8_t MAGIC[8] = {0x89, 'S', 'H', 'F', 0x0d, 0x0a, 0x1a, 0x0a};

#define TAG(a, b, c, d) ((uint32_t)(a) | (uint32_t)(b) << 8 | (uint32_t)(c) << 16 | (uint32_t)(d) << 24)
#define TAG_SCHEMA TAG('S', 'C', 'H', 'M')
#define TAG_SOURCES TAG('S', 'R', 'C', 'S')
#define TAG_TABLE TAG('T', 'A', 'B', 'L')
#define TAG_COLUMNS TAG('C', 'O', 'L', 'S')
#define TAG_TARGET TAG('T', 'R', 'G', 'T')
#define TAG_COMOMENTS TAG('C', 'O', 'M', 'O')
#define TAG_END TAG('E', 'N', 'D', '.')

#define MAX_NAME_BYTES 65536
#define MAX_COLUMNS 1000000

static const char *const DEFAULT_MISSING[] = {"NA", "N/A", "null", "NULL", "None", "-", "?"};

void summary_options_defaults(summary_options *o)
{
    memset(o, 0, sizeof *o);
    o->max_levels = 1024;
    o->label_bytes = 32;
    o->bucket_budget = 2048;
    o->n_missing = sizeof DEFAULT_MISSING / sizeof *DEFAULT_MISSING;
    for (uint32_t i = 0; i < o->n_missing; i++) o->missing[i] = strdup(DEFAULT_MISSING[i]);
    o->max_classes = 256;
}

void summary_options_free(summary_options *o)
{
    for (uint32_t i = 0; i < o->n_missing; i++) free(o->missing[i]);
    o->n_missing = 0;
    free(o->target);
    o->target = NULL;
}

int summary_options_copy(summary_options *dst, const summary_options *src)
{
    *dst = *src;
    dst->target = NULL;
    for (uint32_t i = 0; i < src->n_missing; i++) {
        dst->missing[i] = strdup(src->missing[i]);
        if (!dst->missing[i]) { dst->n_missing = i; return -1; }
    }
    if (src->target && !(dst->target = strdup(src->target))) return -1;
    return 0;
}

/* ---- accumulator set ---------------------------------------------------- */

static int column_alloc(summary_column *c, const summary_options *o, int with_classes)
{
    moments_init(&c->mom);
    c->vals = values_create(o->max_levels, o->label_bytes);
    c->distinct = malloc(sizeof *c->distinct);
    c->bins = buckets_create(o->bucket_budget);
    if (!c->vals || !c->distinct || !c->bins) return -1;
    hll_init(c->distinct);
    if (o->target) {
        c->cross = crosstab_create(o->max_levels);
        if (!c->cross) return -1;
    }
    if (with_classes) {
        c->cls = calloc(o->max_classes, sizeof *c->cls);
        if (!c->cls) return -1;
    }
    return 0;
}

static void column_free(summary_column *c)
{
    free(c->name);
    values_free(c->vals);
    free(c->distinct);
    buckets_free(c->bins);
    crosstab_free(c->cross);
    free(c->cls);
}

uint64_t summary_comoment_bytes(size_t ncomo)
{
    return comoment_bytes(ncomo, SUMMARY_BLOCK_ROWS);
}

static int class_reserve(summary *s, uint32_t need)
{
    if (need <= s->class_cap) return 0;
    uint32_t cap = s->class_cap ? s->class_cap * 2 : 8;
    while (cap < need) cap *= 2;
    uint64_t *h = realloc(s->class_hash, cap * sizeof *h);
    if (h) s->class_hash = h;
    char **l = realloc(s->class_label, cap * sizeof *l);
    if (l) s->class_label = l;
    uint64_t *r = realloc(s->class_rows, cap * sizeof *r);
    if (r) s->class_rows = r;
    number_decimal *d = realloc(s->class_dec, cap * sizeof *d);
    if (d) s->class_dec = d;
    unsigned char *n = realloc(s->class_numeric, cap);
    if (n) s->class_numeric = n;
    if (!h || !l || !r || !d || !n) return -1;
    s->class_cap = cap;
    return 0;
}

uint32_t summary_target_cell(double y)
{
    return SUMMARY_TARGET_CELL_BASE +
           (uint32_t)(int32_t)buckets_key_at(buckets_key(y), SUMMARY_TARGET_LEVEL);
}

uint32_t summary_class_of(summary *s, uint64_t h, const char *text, size_t len,
                          const number_decimal *dec)
{
    for (uint32_t c = 0; c < s->nclasses; c++)
        if (s->class_hash[c] == h) return c + 1;
    if (s->nclasses >= s->opt.max_classes || class_reserve(s, s->nclasses + 1) != 0) return 0;
    char *label = malloc(len + 1);
    if (!label) return 0;
    memcpy(label, text, len);
    label[len] = '\0';
    uint32_t c = s->nclasses++;
    s->class_hash[c] = h;
    s->class_label[c] = label;
    s->class_rows[c] = 0;
    s->class_numeric[c] = dec != NULL;
    if (dec) s->class_dec[c] = *dec;
    else memset(&s->class_dec[c], 0, sizeof s->class_dec[c]);
    return c + 1;
}

summary *summary_create(const summary_options *opt, size_t ncols, char *const *names,
                        const column_mode *modes, int with_comoments)
{
    summary *s = calloc(1, sizeof *s);
    if (!s) return NULL;
    s->target = -1;
    if (summary_options_copy(&s->opt, opt) != 0) goto fail;
    if (opt->target) {
        for (size_t i = 0; i < ncols && s->target < 0; i++)
            if (strcmp(names[i], opt->target) == 0) s->target = (int)i;
        if (s->target < 0) goto fail;
        s->has_classes = opt->task != TASK_REGRESS;
    }
    s->cols = calloc(ncols ? ncols : 1, sizeof *s->cols);
    s->como_of = calloc(ncols ? ncols : 1, sizeof *s->como_of);
    s->como_col = calloc(ncols ? ncols : 1, sizeof *s->como_col);
    if (!s->cols || !s->como_of || !s->como_col) goto fail;
    s->ncols = ncols;
    for (size_t i = 0; i < ncols; i++) {
        summary_column *c = &s->cols[i];
        c->name = strdup(names[i]);
        c->mode = modes ? modes[i] : COLUMN_AUTO;
        if (!c->name || column_alloc(c, opt, s->has_classes) != 0) goto fail;
        s->como_of[i] = -1;
        if (c->mode != COLUMN_CATEGORICAL) {
            s->como_of[i] = (int)s->ncomo;
            s->como_col[s->ncomo++] = i;
        }
    }
    s->como_ref = calloc(s->ncomo ? s->ncomo : 1, sizeof *s->como_ref);
    s->como_ref_set = calloc(s->ncomo ? s->ncomo : 1, 1);
    if (!s->como_ref || !s->como_ref_set) goto fail;
    if (with_comoments && !(s->como = comoment_create(s->ncomo, SUMMARY_BLOCK_ROWS))) goto fail;
    return s;
fail:
    summary_free(s);
    return NULL;
}

summary *summary_clone_empty(const summary *s)
{
    char **names = malloc((s->ncols ? s->ncols : 1) * sizeof *names);
    column_mode *modes = malloc((s->ncols ? s->ncols : 1) * sizeof *modes);
    summary *c = NULL;
    if (names && modes) {
        for (size_t i = 0; i < s->ncols; i++) {
            names[i] = s->cols[i].name;
            modes[i] = s->cols[i].mode;
        }
        c = summary_create(&s->opt, s->ncols, names, modes, 0);
    }
    free(names);
    free(modes);
    return c;
}

void summary_free(summary *s)
{
    if (!s) return;
    for (size_t i = 0; i < s->ncols; i++) column_free(&s->cols[i]);
    free(s->cols);
    for (size_t i = 0; i < s->nsources; i++) free(s->sources[i].path);
    free(s->sources);
    for (uint32_t c = 0; c < s->nclasses; c++) free(s->class_label[c]);
    free(s->class_hash);
    free(s->class_label);
    free(s->class_rows);
    free(s->class_dec);
    free(s->class_numeric);
    free(s->como_col);
    free(s->como_of);
    comoment_free(s->como);
    free(s->como_ref);
    free(s->como_ref_set);
    summary_options_free(&s->opt);
    free(s);
}

void summary_reset(summary *s)
{
    for (size_t i = 0; i < s->ncols; i++) {
        summary_column *c = &s->cols[i];
        c->missing = c->non_numeric = c->non_finite = c->zeros = c->integers = 0;
        moments_init(&c->mom);
        values_reset(c->vals);
        hll_init(c->distinct);
        buckets_reset(c->bins);
        if (c->cross) crosstab_reset(c->cross);
        if (c->cls) memset(c->cls, 0, s->opt.max_classes * sizeof *c->cls);
        c->n_examples = 0;
    }
    for (uint32_t c = 0; c < s->nclasses; c++) s->class_rows[c] = 0;
    s->target_text = 0;
    if (s->como) comoment_reset(s->como);
    memset(s->como_ref_set, 0, s->ncomo ? s->ncomo : 1);
    s->rows = s->bytes = s->short_rows = s->long_rows = 0;
    s->n_bad_lines = 0;
}

int summary_add_source(summary *s, const summary_source *src)
{
    summary_source *p = realloc(s->sources, (s->nsources + 1) * sizeof *p);
    if (!p) return -1;
    s->sources = p;
    p[s->nsources] = *src;
    p[s->nsources].path = strdup(src->path ? src->path : "");
    if (!p[s->nsources].path) return -1;
    s->nsources++;
    return 0;
}

/* The target's frame (its moments reference); NULL when it has none. */
static const number_decimal *target_frame(const summary *s)
{
    if (s->target < 0 || !s->cols[s->target].mom.has_ref) return NULL;
    return &s->cols[s->target].mom.ref;
}

int summary_drop_classes(summary *s, const summary *dict)
{
    if (!s->has_classes) return 0;
    for (uint32_t c = 0; c < dict->nclasses; c++)
        if (!dict->class_numeric[c]) return -1; /* a text target cannot become numeric */
    uint32_t k = dict->nclasses;
    uint32_t *map = malloc((k + 1) * sizeof *map);
    double *y = malloc((k + 1) * sizeof *y);
    if (!map || !y) { free(map); free(y); return -1; }
    const number_decimal *frame = target_frame(s);
    map[0] = 0;
    y[0] = 0;
    for (uint32_t c = 0; c < k; c++) {
        map[c + 1] = summary_target_cell(dict->class_dec[c].value);
        y[c + 1] = frame ? number_difference(&dict->class_dec[c], frame, NULL)
                         : dict->class_dec[c].value;
    }
    int rc = 0;
    for (size_t i = 0; i < s->ncols && rc == 0; i++) {
        summary_column *col = &s->cols[i];
        buckets *nb = buckets_create(s->opt.bucket_budget);
        if (!nb || buckets_merge(nb, col->bins, map, k + 1) != 0) { buckets_free(nb); rc = -1; break; }
        buckets_free(col->bins);
        col->bins = nb;
        if (col->cross) {
            crosstab *nx = crosstab_counts_to_values(col->cross, y, map, k + 1);
            if (!nx) { rc = -1; break; }
            crosstab_free(col->cross);
            col->cross = nx;
        }
        free(col->cls);
        col->cls = NULL;
    }
    free(map);
    free(y);
    if (rc == 0) {
        s->has_classes = 0;
        s->classes_dropped = 1;
        for (uint32_t c = 0; c < s->nclasses; c++) free(s->class_label[c]);
        s->nclasses = 0;
    }
    return rc;
}

/* ---- compatibility and merge -------------------------------------------- */

static void add_diff(char *msg, size_t msglen, size_t *used, const char *fmt, ...)
    __attribute__((format(printf, 4, 5)));

static void add_diff(char *msg, size_t msglen, size_t *used, const char *fmt, ...)
{
    if (*used >= msglen) return;
    if (*used) *used += (size_t)snprintf(msg + *used, msglen - *used, "; ");
    if (*used >= msglen) return;
    va_list ap;
    va_start(ap, fmt);
    *used += (size_t)vsnprintf(msg + *used, msglen - *used, fmt, ap);
    va_end(ap);
}

int summary_compatible(const summary *a, const summary *b, char *msg, size_t msglen)
{
    size_t used = 0;
    if (msglen) msg[0] = '\0';
    if (a->ncols != b->ncols) add_diff(msg, msglen, &used, "%zu columns vs %zu", a->ncols, b->ncols);
    size_t n = a->ncols < b->ncols ? a->ncols : b->ncols;
    int shown = 0;
    for (size_t i = 0; i < n && shown < 5; i++) {
        if (strcmp(a->cols[i].name, b->cols[i].name) != 0) {
            add_diff(msg, msglen, &used, "column %zu is '%s' vs '%s'", i + 1, a->cols[i].name,
                     b->cols[i].name);
            shown++;
        } else if (a->cols[i].mode != b->cols[i].mode) {
            static const char *m[] = {"auto", "numeric", "categorical"};
            add_diff(msg, msglen, &used, "column '%s' declared %s vs %s", a->cols[i].name,
                     m[a->cols[i].mode], m[b->cols[i].mode]);
            shown++;
        }
    }
    if (a->opt.max_levels != b->opt.max_levels)
        add_diff(msg, msglen, &used, "max levels %u vs %u", a->opt.max_levels, b->opt.max_levels);
    if (a->opt.label_bytes != b->opt.label_bytes)
        add_diff(msg, msglen, &used, "label bytes %u vs %u", a->opt.label_bytes, b->opt.label_bytes);
    if (a->opt.bucket_budget != b->opt.bucket_budget)
        add_diff(msg, msglen, &used, "bucket budget %u vs %u", a->opt.bucket_budget,
                 b->opt.bucket_budget);
    int same_missing = a->opt.n_missing == b->opt.n_missing;
    for (uint32_t i = 0; same_missing && i < a->opt.n_missing; i++)
        same_missing = strcmp(a->opt.missing[i], b->opt.missing[i]) == 0;
    if (!same_missing) add_diff(msg, msglen, &used, "different missing-value lists");
    const char *ta = a->opt.target ? a->opt.target : "(none)";
    const char *tb = b->opt.target ? b->opt.target : "(none)";
    if (strcmp(ta, tb) != 0) add_diff(msg, msglen, &used, "target '%s' vs '%s'", ta, tb);
    static const char *tasks[] = {"auto", "classify", "regress"};
    if (a->opt.task != b->opt.task)
        add_diff(msg, msglen, &used, "task %s vs %s", tasks[a->opt.task], tasks[b->opt.task]);
    if (a->opt.max_classes != b->opt.max_classes)
        add_diff(msg, msglen, &used, "max classes %u vs %u", a->opt.max_classes, b->opt.max_classes);
    return used == 0;
}

/* Maps from's classes onto into's (adding new ones).  Returns 0, 1 when
 * into would pass max_classes, -1 on OOM. */
static int map_classes(summary *into, const summary *from, uint32_t *map)
{
    map[0] = 0;
    for (uint32_t c = 0; c < from->nclasses; c++) {
        const number_decimal *dec = from->class_numeric[c] ? &from->class_dec[c] : NULL;
        uint32_t k = summary_class_of(into, from->class_hash[c], from->class_label[c],
                                      strlen(from->class_label[c]), dec);
        if (k == 0) return into->nclasses >= into->opt.max_classes ? 1 : -1;
        map[c + 1] = k;
    }
    return 0;
}

/* Combines two class moments; shift = from's frame minus into's. */
static void class_merge(class_moments *a, const class_moments *b, double shift)
{
    if (b->n == 0) return;
    if (a->n == 0) { *a = *b; a->mean += shift; return; }
    double na = (double)a->n, nb = (double)b->n, n = na + nb, d = b->mean + shift - a->mean;
    a->mean += d * nb / n;
    a->m2 += b->m2 + d * d * na * nb / n;
    a->n += b->n;
}

static summary_status merge_fail(char *err, size_t errlen, const char *what)
{
    snprintf(err, errlen, "%s", what);
    return SUMMARY_ERR_MEMORY;
}

summary_status summary_merge(summary *into, summary *from, char *err, size_t errlen)
{
    if (!summary_compatible(into, from, err, errlen)) return SUMMARY_ERR_INCOMPATIBLE;
    /* Classes: both kept, or neither (a side that dropped them wins). */
    if (into->has_classes != from->has_classes) {
        summary *keeper = into->has_classes ? into : from;
        if (summary_drop_classes(keeper, keeper) != 0) {
            snprintf(err, errlen, "target '%s': one summary has more than %u classes and the "
                     "target is not numeric", into->opt.target, into->opt.max_classes);
            return SUMMARY_ERR_INCOMPATIBLE;
        }
    }
    uint32_t *map = NULL;
    if (into->has_classes) {
        map = malloc((from->nclasses + 1) * sizeof *map);
        if (!map) return merge_fail(err, errlen, "out of memory while merging");
        int rc = map_classes(into, from, map);
        if (rc < 0) { free(map); return merge_fail(err, errlen, "out of memory while merging"); }
        if (rc > 0) {
            free(map);
            map = NULL;
            if (summary_drop_classes(into, into) != 0 || summary_drop_classes(from, from) != 0) {
                snprintf(err, errlen, "target '%s': together the summaries have more than %u "
                         "classes; rescan with a larger --max-classes or --task regress",
                         into->opt.target, into->opt.max_classes);
                return SUMMARY_ERR_INCOMPATIBLE;
            }
        }
    }
    int same_classes = map != NULL;
    for (uint32_t c = 0; same_classes && c <= from->nclasses; c++) same_classes = map[c] == c;
    /* Target frame shift for the regression tables. */
    const number_decimal *fa = target_frame(into), *fb = target_frame(from);
    double yshift = fa && fb ? number_difference(fb, fa, NULL) : 0;
    for (size_t i = 0; i < into->ncols; i++) {
        summary_column *a = &into->cols[i];
        const summary_column *b = &from->cols[i];
        /* Column frame shift (before the moments merge sets a's reference). */
        double shift = a->mom.has_ref && b->mom.has_ref ? number_difference(&b->mom.ref, &a->mom.ref, NULL) : 0;
        if (a->cls && b->cls) {
            /* A chunk-local set numbers classes like the running one (same_classes). */
            uint32_t k = same_classes ? into->opt.max_classes : from->nclasses;
            for (uint32_t c = 0; c < k; c++)
                class_merge(&a->cls[same_classes ? c : map[c + 1] - 1], &b->cls[c], shift);
        }
        a->missing += b->missing;
        a->non_numeric += b->non_numeric;
        a->non_finite += b->non_finite;
        a->zeros += b->zeros;
        a->integers += b->integers;
        moments_merge(&a->mom, &b->mom);
        hll_merge(a->distinct, b->distinct);
        int was_overflowed = values_overflowed(a->vals);
        uint32_t mlen = map ? from->nclasses + 1 : 0;
        if (values_merge(a->vals, b->vals) != 0 ||
            buckets_merge(a->bins, b->bins, same_classes ? NULL : map, mlen) != 0 ||
            (a->cross && b->cross &&
             crosstab_merge(a->cross, b->cross, same_classes ? NULL : map, mlen, yshift) != 0)) {
            free(map);
            return merge_fail(err, errlen, "out of memory while merging");
        }
        /* Sketches hold only what arrived after their table overflowed. */
        if (values_overflowed(a->vals)) {
            if (!was_overflowed) summary_column_fold_keys(a->distinct, a->vals);
            summary_column_fold_keys(a->distinct, b->vals);
        }
        /* The per-value table is void once the value table overflowed. */
        if (a->cross && values_overflowed(a->vals) && crosstab_entries(a->cross))
            crosstab_reset(a->cross);
        for (uint32_t e = 0; e < b->n_examples && a->n_examples < SUMMARY_EXAMPLES; e++) {
            int dup = 0;
            for (uint32_t k = 0; k < a->n_examples; k++)
                dup |= strcmp(a->examples[k], b->examples[e]) == 0;
            if (!dup) memcpy(a->examples[a->n_examples++], b->examples[e], SUMMARY_EXAMPLE_BYTES + 1);
        }
    }
    if (map)
        for (uint32_t c = 0; c < from->nclasses; c++) into->class_rows[map[c + 1] - 1] += from->class_rows[c];
    free(map);
    into->classes_dropped |= from->classes_dropped;
    into->target_text += from->target_text;
    /* Co-moments: shift from's frame into into's. */
    if (into->como && from->como) {
        double *shift = calloc(into->ncomo ? into->ncomo : 1, sizeof *shift);
        if (!shift) return merge_fail(err, errlen, "out of memory while merging");
        for (size_t k = 0; k < into->ncomo; k++) {
            if (!from->como_ref_set[k]) continue;
            if (!into->como_ref_set[k]) {
                into->como_ref[k] = from->como_ref[k];
                into->como_ref_set[k] = 1;
            } else {
                shift[k] = number_difference(&from->como_ref[k], &into->como_ref[k], NULL);
            }
        }
        int rc = comoment_merge(into->como, from->como, shift);
        free(shift);
        if (rc != 0) return merge_fail(err, errlen, "out of memory while merging");
    }
    into->rows += from->rows;
    into->bytes += from->bytes;
    into->short_rows += from->short_rows;
    into->long_rows += from->long_rows;
    for (uint32_t i = 0; i < from->n_bad_lines && into->n_bad_lines < SUMMARY_BAD_LINES; i++)
        into->bad_lines[into->n_bad_lines++] = from->bad_lines[i];
    for (size_t i = 0; i < from->nsources; i++)
        if (summary_add_source(into, &from->sources[i]) != 0)
            return merge_fail(err, errlen, "out of memory while merging");
    return SUMMARY_OK;
}

/* ---- reading back ------------------------------------------------------- */

uint64_t summary_column_present(const summary_column *c)
{
    return c->mom.n + c->non_numeric + c->non_finite;
}

column_kind summary_column_kind(const summary_column *c, double numeric_share)
{
    if (c->mode == COLUMN_NUMERIC) return KIND_NUMERIC;
    if (c->mode == COLUMN_CATEGORICAL) return KIND_CATEGORICAL;
    uint64_t present = summary_column_present(c);
    if (present == 0) return KIND_NUMERIC;
    double share = (double)(c->mom.n + c->non_finite) / (double)present;
    return share >= numeric_share ? KIND_NUMERIC : KIND_CATEGORICAL;
}

target_task summary_target_task(const summary *s, double numeric_share)
{
    if (s->target < 0) return TASK_AUTO;
    if (s->opt.task != TASK_AUTO) return s->opt.task;
    if (!s->has_classes) return TASK_REGRESS;
    if (summary_column_kind(&s->cols[s->target], numeric_share) == KIND_CATEGORICAL)
        return TASK_CLASSIFY;
    if (s->nclasses > SUMMARY_CLASSIFY_MAX_INTEGERS) return TASK_REGRESS;
    for (uint32_t c = 0; c < s->nclasses; c++) {
        double v = s->class_dec[c].value;
        if (!s->class_numeric[c] || v != nearbyint(v)) return TASK_REGRESS;
    }
    return TASK_CLASSIFY;
}

void summary_column_fold_keys(hll *h, const values *v)
{
    uint32_t n = values_levels(v);
    for (uint32_t i = 0; i < n; i++) hll_add(h, values_entry_at(v, i).hash);
}

double summary_column_distinct(const summary_column *c, int *exact)
{
    int ok = !values_overflowed(c->vals);
    if (exact) *exact = ok;
    return ok ? (double)values_levels(c->vals) : hll_estimate(c->distinct);
}

/* ---- encoding ----------------------------------------------------------- */


static void encode_schema(const summary *s, wire_writer *w)
{
    wire_put_u32(w, s->opt.max_levels);
    wire_put_u32(w, s->opt.label_bytes);
    wire_put_u32(w, s->opt.bucket_budget);
    wire_put_u32(w, s->opt.n_missing);
    for (uint32_t i = 0; i < s->opt.n_missing; i++)
        wire_put_str(w, s->opt.missing[i], strlen(s->opt.missing[i]));
    const char *t = s->opt.target ? s->opt.target : "";
    wire_put_str(w, t, strlen(t));
    wire_put_u8(w, (uint8_t)s->opt.task);
    wire_put_u32(w, s->opt.max_classes);
    wire_put_u64(w, s->ncols);
    for (size_t i = 0; i < s->ncols; i++) {
        wire_put_str(w, s->cols[i].name, strlen(s->cols[i].name));
        wire_put_u8(w, (uint8_t)s->cols[i].mode);
    }
}

static void put_decimal(wire_writer *w, const number_decimal *d)
{
    wire_put_f64(w, d->value);
    wire_put_u64(w, d->mantissa);
    wire_put_i64(w, d->exp10);
    wire_put_u8(w, d->negative);
    wire_put_u8(w, d->exact);
}

static void get_decimal(wire_reader *r, number_decimal *d)
{
    d->value = wire_get_f64(r);
    d->mantissa = wire_get_u64(r);
    int64_t e = wire_get_i64(r);
    if (e < INT32_MIN || e > INT32_MAX) r->failed = 1;
    d->exp10 = (int32_t)e;
    d->negative = wire_get_u8(r);
    d->exact = wire_get_u8(r);
    if (d->negative > 1 || d->exact > 1) r->failed = 1;
}

static void encode_target(const summary *s, wire_writer *w)
{
    wire_put_u8(w, (uint8_t)s->has_classes);
    wire_put_u8(w, (uint8_t)s->classes_dropped);
    wire_put_u64(w, s->target_text);
    wire_put_u32(w, s->nclasses);
    for (uint32_t c = 0; c < s->nclasses; c++) {
        wire_put_u64(w, s->class_hash[c]);
        wire_put_str(w, s->class_label[c], strlen(s->class_label[c]));
        wire_put_u64(w, s->class_rows[c]);
        wire_put_u8(w, s->class_numeric[c]);
        put_decimal(w, &s->class_dec[c]);
    }
}

static void encode_comoments(const summary *s, wire_writer *w)
{
    wire_put_u64(w, s->ncomo);
    for (size_t k = 0; k < s->ncomo; k++) {
        wire_put_u8(w, s->como_ref_set[k]);
        put_decimal(w, &s->como_ref[k]);
    }
    wire_put_u8(w, s->como != NULL);
    if (s->como) comoment_write(s->como, w);
}

static void encode_sources(const summary *s, wire_writer *w)
{
    wire_put_u64(w, s->nsources);
    for (size_t i = 0; i < s->nsources; i++) {
        const summary_source *src = &s->sources[i];
        wire_put_str(w, src->path, strlen(src->path));
        wire_put_str(w, src->format, strlen(src->format));
        wire_put_u64(w, src->size_bytes);
        wire_put_i64(w, src->mtime);
        wire_put_u64(w, src->fingerprint);
        wire_put_u64(w, src->raw_bytes);
        wire_put_u64(w, src->start_byte);
        wire_put_u64(w, src->end_byte);
        wire_put_u64(w, src->rows);
    }
}

static void encode_table(const summary *s, wire_writer *w)
{
    wire_put_u64(w, s->rows);
    wire_put_u64(w, s->bytes);
    wire_put_u64(w, s->short_rows);
    wire_put_u64(w, s->long_rows);
    wire_put_u32(w, s->n_bad_lines);
    for (uint32_t i = 0; i < s->n_bad_lines; i++) wire_put_u64(w, s->bad_lines[i]);
}

static void encode_columns(const summary *s, wire_writer *w)
{
    for (size_t i = 0; i < s->ncols; i++) {
        const summary_column *c = &s->cols[i];
        wire_put_u64(w, c->missing);
        wire_put_u64(w, c->non_numeric);
        wire_put_u64(w, c->non_finite);
        wire_put_u64(w, c->zeros);
        wire_put_u64(w, c->integers);
        moments_write(&c->mom, w);
        wire_put_u32(w, c->n_examples);
        for (uint32_t e = 0; e < c->n_examples; e++)
            wire_put_str(w, c->examples[e], strlen(c->examples[e]));
        values_write(c->vals, w);
        hll_write(c->distinct, w);
        buckets_write(c->bins, w);
        wire_put_u8(w, c->cross != NULL);
        if (c->cross) crosstab_write(c->cross, w);
        wire_put_u8(w, c->cls != NULL);
        if (c->cls)
            for (uint32_t k = 0; k < s->nclasses; k++) {
                wire_put_u64(w, c->cls[k].n);
                wire_put_f64(w, c->cls[k].mean);
                wire_put_f64(w, c->cls[k].m2);
            }
    }
}


/* ---- decoding ----------------------------------------------------------- */

static char *dup_str(wire_reader *r, size_t max)
{
    size_t n;
    const char *p = wire_get_str(r, &n, max);
    if (!p) return NULL;
    char *s = malloc(n + 1);
    if (!s) { r->failed = 1; return NULL; }
    memcpy(s, p, n);
    s[n] = '\0';
    return s;
}

static summary *decode_schema(wire_reader *r)
{
    summary_options o;
    memset(&o, 0, sizeof o);
    o.max_levels = wire_get_u32(r);
    o.label_bytes = wire_get_u32(r);
    o.bucket_budget = wire_get_u32(r);
    uint32_t nm = wire_get_u32(r);
    if (nm > SUMMARY_MAX_MISSING || o.max_levels == 0 || o.max_levels > (1u << 26) ||
        o.label_bytes > 65536 || o.bucket_budget == 0 || o.bucket_budget > (1u << 26))
        r->failed = 1;
    for (uint32_t i = 0; i < nm && !r->failed; i++) {
        o.missing[i] = dup_str(r, 1024);
        if (o.missing[i]) o.n_missing = i + 1;
    }
    char *target = dup_str(r, MAX_NAME_BYTES);
    if (target && *target) o.target = target;
    else free(target);
    uint8_t task = wire_get_u8(r);
    if (task > TASK_REGRESS) r->failed = 1;
    o.task = (target_task)task;
    o.max_classes = wire_get_u32(r);
    if (o.max_classes == 0 || o.max_classes > SUMMARY_MAX_CLASSES) r->failed = 1;
    uint64_t ncols = wire_get_u64(r);
    if (ncols > MAX_COLUMNS || !wire_need(r, ncols * 5)) r->failed = 1;
    summary *s = NULL;
    char **names = NULL;
    column_mode *modes = NULL;
    if (!r->failed) {
        names = calloc(ncols ? ncols : 1, sizeof *names);
        modes = calloc(ncols ? ncols : 1, sizeof *modes);
        if (!names || !modes) r->failed = 1;
    }
    for (uint64_t i = 0; i < ncols && !r->failed; i++) {
        names[i] = dup_str(r, MAX_NAME_BYTES);
        uint8_t m = wire_get_u8(r);
        if (m > COLUMN_CATEGORICAL) r->failed = 1;
        modes[i] = (column_mode)m;
    }
    if (!r->failed) {
        s = summary_create(&o, ncols, names, modes, 0); /* COMO section brings the matrix */
        if (!s) r->failed = 1;
    }
    if (names)
        for (uint64_t i = 0; i < ncols; i++) free(names[i]);
    free(names);
    free(modes);
    summary_options_free(&o);
    return s;
}

static void decode_sources(summary *s, wire_reader *r)
{
    uint64_t n = wire_get_u64(r);
    if (n > (1u << 30) || !wire_need(r, n * 64)) { r->failed = 1; return; }
    for (uint64_t i = 0; i < n && !r->failed; i++) {
        summary_source src;
        memset(&src, 0, sizeof src);
        src.path = dup_str(r, 1 << 20);
        size_t flen;
        const char *f = wire_get_str(r, &flen, sizeof src.format - 1);
        if (f) memcpy(src.format, f, flen);
        src.size_bytes = wire_get_u64(r);
        src.mtime = wire_get_i64(r);
        src.fingerprint = wire_get_u64(r);
        src.raw_bytes = wire_get_u64(r);
        src.start_byte = wire_get_u64(r);
        src.end_byte = wire_get_u64(r);
        src.rows = wire_get_u64(r);
        if (!r->failed && summary_add_source(s, &src) != 0) r->failed = 1;
        free(src.path);
    }
}

static void decode_table(summary *s, wire_reader *r)
{
    s->rows = wire_get_u64(r);
    s->bytes = wire_get_u64(r);
    s->short_rows = wire_get_u64(r);
    s->long_rows = wire_get_u64(r);
    s->n_bad_lines = wire_get_u32(r);
    if (s->n_bad_lines > SUMMARY_BAD_LINES) { r->failed = 1; s->n_bad_lines = 0; return; }
    for (uint32_t i = 0; i < s->n_bad_lines; i++) s->bad_lines[i] = wire_get_u64(r);
}

static void decode_target(summary *s, wire_reader *r)
{
    uint8_t has = wire_get_u8(r), dropped = wire_get_u8(r);
    s->target_text = wire_get_u64(r);
    uint32_t n = wire_get_u32(r);
    if (has > 1 || dropped > 1 || (has && s->target < 0) || n > s->opt.max_classes ||
        (!has && n > 0) || (has && !s->has_classes)) {
        r->failed = 1;
        return;
    }
    if (!has && s->has_classes) {
        /* Classes were dropped at scan time: free the per-class arrays. */
        for (size_t i = 0; i < s->ncols; i++) { free(s->cols[i].cls); s->cols[i].cls = NULL; }
        s->has_classes = 0;
    }
    s->classes_dropped = dropped;
    for (uint32_t c = 0; c < n && !r->failed; c++) {
        uint64_t h = wire_get_u64(r);
        size_t len;
        const char *label = wire_get_str(r, &len, 1 << 20);
        uint64_t rows = wire_get_u64(r);
        uint8_t numeric = wire_get_u8(r);
        number_decimal d;
        get_decimal(r, &d);
        if (r->failed || numeric > 1) { r->failed = 1; return; }
        uint32_t k = summary_class_of(s, h, label, len, numeric ? &d : NULL);
        if (k != c + 1) { r->failed = 1; return; } /* duplicate class */
        s->class_rows[c] = rows;
    }
}

static void decode_comoments(summary *s, wire_reader *r)
{
    if (wire_get_u64(r) != s->ncomo) { r->failed = 1; return; }
    for (size_t k = 0; k < s->ncomo && !r->failed; k++) {
        s->como_ref_set[k] = wire_get_u8(r);
        if (s->como_ref_set[k] > 1) r->failed = 1;
        get_decimal(r, &s->como_ref[k]);
    }
    uint8_t present = wire_get_u8(r);
    if (present != 1 || r->failed) { r->failed = 1; return; }
    comoment *c = comoment_read(r, 0); /* read or merged, never fed blocks */
    if (!c || comoment_columns(c) != s->ncomo) { comoment_free(c); r->failed = 1; return; }
    comoment_free(s->como);
    s->como = c;
}

static void decode_columns(summary *s, wire_reader *r)
{
    for (size_t i = 0; i < s->ncols && !r->failed; i++) {
        summary_column *c = &s->cols[i];
        c->missing = wire_get_u64(r);
        c->non_numeric = wire_get_u64(r);
        c->non_finite = wire_get_u64(r);
        c->zeros = wire_get_u64(r);
        c->integers = wire_get_u64(r);
        moments_read(&c->mom, r);
        c->n_examples = wire_get_u32(r);
        if (c->n_examples > SUMMARY_EXAMPLES) { r->failed = 1; c->n_examples = 0; break; }
        for (uint32_t e = 0; e < c->n_examples; e++) {
            size_t n;
            const char *p = wire_get_str(r, &n, SUMMARY_EXAMPLE_BYTES);
            if (p) memcpy(c->examples[e], p, n);
            c->examples[e][n] = '\0';
        }
        values *v = values_read(r);
        if (!v) { r->failed = 1; break; }
        values_free(c->vals);
        c->vals = v;
        if (hll_read(c->distinct, r) != 0) { r->failed = 1; break; }
        buckets *b = buckets_read(r);
        if (!b) { r->failed = 1; break; }
        buckets_free(c->bins);
        c->bins = b;
        uint8_t has_cross = wire_get_u8(r);
        if (has_cross != (c->cross != NULL)) { r->failed = 1; break; }
        if (has_cross) {
            crosstab *x = crosstab_read(r);
            if (!x) { r->failed = 1; break; }
            crosstab_free(c->cross);
            c->cross = x;
        }
        uint8_t has_cls = wire_get_u8(r);
        if (has_cls != (c->cls != NULL)) { r->failed = 1; break; }
        for (uint32_t k = 0; has_cls && k < s->nclasses; k++) {
            c->cls[k].n = wire_get_u64(r);
            c->cls[k].mean = wire_get_f64(r);
            c->cls[k].m2 = wire_get_f64(r);
        }
    }
}

summary_status summary_decode(const uint8_t *data, size_t len, summary **out, char *err,
                              size_t errlen)
{
    *out = NULL;
    if (len < sizeof MAGIC || memcmp(data, MAGIC, sizeof MAGIC) != 0) {
        snprintf(err, errlen, "not a sheaf summary (wrong magic bytes)");
        return SUMMARY_ERR_CORRUPT;
    }
    if (len < sizeof MAGIC + 4 + 20) {
        snprintf(err, errlen, "truncated summary (%zu bytes)", len);
        return SUMMARY_ERR_CORRUPT;
    }
    wire_reader r;
    wire_reader_init(&r, data, len);
    r.pos = sizeof MAGIC;
    uint32_t version = wire_get_u32(&r);
    if (version > SUMMARY_FORMAT_VERSION) {
        snprintf(err, errlen, "summary format version %u is newer than this sheaf reads (%u)",
                 version, SUMMARY_FORMAT_VERSION);
        return SUMMARY_ERR_CORRUPT;
    }
    /* The trailer: tag, length 8, checksum of everything before it. */
    wire_reader t;
    wire_reader_init(&t, data + len - 20, 20);
    uint32_t ttag = wire_get_u32(&t);
    uint64_t tlen = wire_get_u64(&t);
    uint64_t tsum = wire_get_u64(&t);
    if (ttag != TAG_END || tlen != 8) {
        snprintf(err, errlen, "truncated or damaged summary (no end marker)");
        return SUMMARY_ERR_CORRUPT;
    }
    if (XXH3_64bits(data, len - 8) != tsum) {
        snprintf(err, errlen, "damaged summary (file checksum mismatch)");
        return SUMMARY_ERR_CORRUPT;
    }
    if (version != SUMMARY_FORMAT_VERSION) {
        snprintf(err, errlen, "unsupported summary format version %u", version);
        return SUMMARY_ERR_CORRUPT;
    }
    const uint32_t want[] = {TAG_SCHEMA, TAG_SOURCES, TAG_TABLE, TAG_TARGET, TAG_COLUMNS,
                             TAG_COMOMENTS};
    summary *s = NULL;
    for (int k = 0; k < 6; k++) {
        uint32_t tag = wire_get_u32(&r);
        uint64_t plen = wire_get_u64(&r);
        if (r.failed || tag != want[k] || plen > len - r.pos - 8 - 20) {
            snprintf(err, errlen, "damaged summary (section %d)", k + 1);
            summary_free(s);
            return SUMMARY_ERR_CORRUPT;
        }
        const uint8_t *payload = data + r.pos;
        r.pos += plen;
        if (XXH3_64bits(payload, plen) != wire_get_u64(&r)) {
            snprintf(err, errlen, "damaged summary (section %d checksum mismatch)", k + 1);
            summary_free(s);
            return SUMMARY_ERR_CORRUPT;
        }
        wire_reader p;
        wire_reader_init(&p, payload, plen);
        if (k == 0) s = decode_schema(&p);
        else if (k == 1) decode_sources(s, &p);
        else if (k == 2) decode_table(s, &p);
        else if (k == 3) decode_target(s, &p);
        else if (k == 4) decode_columns(s, &p);
        else decode_comoments(s, &p);
        if (p.failed || p.pos != p.len || !s) {
            snprintf(err, errlen, "damaged summary (section %d does not parse)", k + 1);
            summary_free(s);
            return SUMMARY_ERR_CORRUPT;
        }
    }
    if (r.pos != len - 20) {
        snprintf(err, errlen, "damaged summary (unexpected bytes before the end marker)");
        summary_free(s);
        return SUMMARY_ERR_CORRUPT;
    }
    *out = s;
    return SUMMARY_OK;
}

/* ---- files -------------------------------------------------------------- */

/* Streaming write: each section's payload is drained to the file as it is
 * encoded, hashed on the way; its length is patched in afterwards, and the
 * trailer checksum is computed over the finished bytes. */
typedef struct {
    int fd;               /* destination */
    XXH3_state_t *hash;   /* payload checksum of the current section */
    uint64_t bytes;       /* payload bytes of the current section */
} section_out;

static int write_all(int fd, const void *data, size_t len)
{
    const uint8_t *p = data;
    while (len) {
        ssize_t n = write(fd, p, len);
        if (n < 0 && errno == EINTR) continue;
        if (n <= 0) return -1;
        p += n;
        len -= (size_t)n;
    }
    return 0;
}

static int section_drain(void *ctx, const uint8_t *data, size_t len)
{
    section_out *o = ctx;
    XXH3_64bits_update(o->hash, data, len);
    o->bytes += len;
    return write_all(o->fd, data, len);
}

static int put_le64(uint8_t *b, uint64_t v)
{
    for (int i = 0; i < 8; i++) b[i] = (uint8_t)(v >> (8 * i));
    return 8;
}

static int write_sections(const summary *s, int fd)
{
    uint8_t head[12];
    memcpy(head, MAGIC, sizeof MAGIC);
    for (int i = 0; i < 4; i++) head[8 + i] = (uint8_t)(SUMMARY_FORMAT_VERSION >> (8 * i));
    if (write_all(fd, head, sizeof head) != 0) return -1;
    void (*enc[])(const summary *, wire_writer *) = {encode_schema, encode_sources, encode_table,
                                                      encode_target, encode_columns,
                                                      encode_comoments};
    const uint32_t tags[] = {TAG_SCHEMA,  TAG_SOURCES, TAG_TABLE,
                             TAG_TARGET, TAG_COLUMNS, TAG_COMOMENTS};
    section_out so = {fd, XXH3_createState(), 0};
    if (!so.hash) return -1;
    int rc = 0;
    off_t pos = (off_t)sizeof head;
    for (int k = 0; k < 6 && rc == 0; k++) {
        uint8_t sh[12];
        for (int i = 0; i < 4; i++) sh[i] = (uint8_t)(tags[k] >> (8 * i));
        put_le64(sh + 4, 0); /* length, patched below */
        if (write_all(fd, sh, sizeof sh) != 0) { rc = -1; break; }
        XXH3_64bits_reset(so.hash);
        so.bytes = 0;
        wire_writer w;
        wire_writer_init(&w);
        w.drain = section_drain;
        w.drain_ctx = &so;
        enc[k](s, &w);
        wire_writer_drain(&w);
        int failed = w.failed;
        wire_writer_free(&w);
        uint8_t sum[8];
        put_le64(sum, XXH3_64bits_digest(so.hash));
        uint8_t lenb[8];
        put_le64(lenb, so.bytes);
        if (failed || write_all(fd, sum, sizeof sum) != 0 ||
            pwrite(fd, lenb, sizeof lenb, pos + 4) != (ssize_t)sizeof lenb) {
            rc = -1;
            break;
        }
        pos += (off_t)(sizeof sh + so.bytes + sizeof sum);
    }
    XXH3_freeState(so.hash);
    if (rc != 0) return -1;
    /* Trailer: the checksum of every byte so far, read back from the file. */
    uint8_t tr[20];
    for (int i = 0; i < 4; i++) tr[i] = (uint8_t)(TAG_END >> (8 * i));
    put_le64(tr + 4, 8);
    if (write_all(fd, tr, 12) != 0) return -1;
    void *map = mmap(NULL, (size_t)pos + 12, PROT_READ, MAP_SHARED, fd, 0);
    if (map == MAP_FAILED) return -1;
    uint64_t h = XXH3_64bits(map, (size_t)pos + 12);
    munmap(map, (size_t)pos + 12);
    put_le64(tr + 12, h);
    return write_all(fd, tr + 12, 8);
}

summary_status summary_write(const summary *s, const char *path, char *err, size_t errlen)
{
    size_t plen = strlen(path);
    char *tmp = malloc(plen + 16);
    if (!tmp) { snprintf(err, errlen, "out of memory"); return SUMMARY_ERR_MEMORY; }
    snprintf(tmp, plen + 16, "%s.tmp.XXXXXX", path);
    int fd = mkstemp(tmp);
    if (fd < 0) {
        snprintf(err, errlen, "%s: cannot create: %s", path, strerror(errno));
        free(tmp);
        return SUMMARY_ERR_IO;
    }
    int ok = write_sections(s, fd) == 0;
    int saved = errno;
    if (ok && fsync(fd) != 0) { ok = 0; saved = errno; }
    if (close(fd) != 0 && ok) { ok = 0; saved = errno; }
    /* mkstemp creates mode 0600; give the summary the usual 0666 & ~umask. */
    mode_t mask = umask(0);
    umask(mask);
    if (ok) chmod(tmp, 0666 & ~mask);
    if (ok && rename(tmp, path) != 0) { ok = 0; saved = errno; }
    if (!ok) {
        unlink(tmp);
        snprintf(err, errlen, "%s: cannot write: %s", path, strerror(saved ? saved : EIO));
    }
    free(tmp);
    return ok ? SUMMARY_OK : SUMMARY_ERR_IO;
}

summary_status summary_read(const char *path, summary **out, char *err, size_t errlen)
{
    *out = NULL;
    int fd = open(path, O_RDONLY | O_CLOEXEC);
    if (fd < 0) {
        snprintf(err, errlen, "%s: cannot open: %s", path, strerror(errno));
        return SUMMARY_ERR_IO;
    }
    struct stat st;
    if (fstat(fd, &st) != 0 || !S_ISREG(st.st_mode)) {
        close(fd);
        snprintf(err, errlen, "%s: not a regular file", path);
        return SUMMARY_ERR_IO;
    }
    size_t len = (size_t)st.st_size;
    /* Mapped, not copied: a summary of thousands of columns is hundreds of MB. */
    void *map = len ? mmap(NULL, len, PROT_READ, MAP_PRIVATE, fd, 0) : NULL;
    close(fd);
    if (len && map == MAP_FAILED) {
        snprintf(err, errlen, "%s: cannot map: %s", path, strerror(errno));
        return SUMMARY_ERR_IO;
    }
    char inner[400];
    summary_status rc = summary_decode(map ? map : "", len, out, inner, sizeof inner);
    if (map) munmap(map, len);
    if (rc != SUMMARY_OK) snprintf(err, errlen, "%s: %s", path, inner);
    return rc;
}
