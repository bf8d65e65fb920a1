/* summary merge: compatibility, the class dictionary's conversion and
 * mapping, and summary_merge (see summary.h).
 *
 * Every accumulator merges by its own rule (see its header); this file maps
 * target classes between the two summaries, shifts frames by the exact
 * difference of their decimal references (number_difference), and seals the
 * result.  Per-class moments combine by the pair rule of Chan, Golub &
 * LeVeque (1979), moments_pair_merge.
 */
#include "summary/column.h"
#include "summary/summary.h"

#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* The target's frame (its moments reference); NULL when it has none. */
static const number_decimal *target_frame(const summary *s)
{
    if (s->target < 0 || !s->cols[s->target].mom.has_ref) return NULL;
    return &s->cols[s->target].mom.ref;
}

int summary_class_conversion(summary *s, const number_decimal *frame, uint32_t **map_out,
                             double **y_out)
{
    uint32_t k = s->nclasses;
    uint32_t *map = malloc((k + 1) * sizeof *map);
    double *y = malloc((k + 1) * sizeof *y);
    if (!map || !y) { free(map); free(y); return -1; }
    map[0] = 0;
    y[0] = 0;
    /* The class values enter the target cell table (which may rise), then
     * the cells are numbered in key order and each class looks its up. */
    for (uint32_t c = 0; c < k; c++)
        if (s->class_numeric[c] && !summary_target_cell(s, s->class_dec[c].value)) {
            free(map);
            free(y);
            return -1;
        }
    if (tcells_canonical(&s->tcells) != 0) { free(map); free(y); return -1; }
    for (uint32_t c = 0; c < k; c++) {
        if (!s->class_numeric[c]) { /* infinity or NaN: no target cell, as such a row */
            map[c + 1] = 0;
            y[c + 1] = 0;
            continue;
        }
        map[c + 1] = summary_target_cell(s, s->class_dec[c].value);
        y[c + 1] = frame ? number_difference(&s->class_dec[c], frame, NULL) : s->class_dec[c].value;
    }
    *map_out = map;
    *y_out = y;
    return 0;
}

int summary_drop_classes(summary *s)
{
    if (!s->has_classes) return 0;
    uint32_t *map;
    double *y;
    if (summary_class_conversion(s, target_frame(s), &map, &y) != 0) return -1;
    int rc = 0;
    for (size_t i = 0; i < s->ncols && rc == 0; i++)
        rc = column_drop_classes(&s->cols[i], map, y, s->nclasses + 1, s->opt.bucket_budget);
    free(map);
    free(y);
    tcells_free(&s->tcells); /* outside a scan no column waits on an epoch */
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

/* A summary's columns sorted by name (then index), to find a name in
 * O(log n) without a per-call context for qsort. */
typedef struct {
    const char *name; /* the column's name, owned by the summary */
    size_t index;     /* its index */
} named_column;

typedef struct {
    named_column *cols; /* ncols entries, sorted */
    size_t n;           /* how many */
} name_index;

static int by_name(const void *x, const void *y)
{
    const named_column *a = x, *b = y;
    int c = strcmp(a->name, b->name);
    return c ? c : (a->index > b->index) - (a->index < b->index);
}

static int name_index_make(name_index *ix, const summary *s)
{
    ix->n = s->ncols;
    ix->cols = malloc((s->ncols ? s->ncols : 1) * sizeof *ix->cols);
    if (!ix->cols) return -1;
    for (size_t i = 0; i < s->ncols; i++) ix->cols[i] = (named_column){s->cols[i].name, i};
    qsort(ix->cols, ix->n, sizeof *ix->cols, by_name);
    return 0;
}

/* The first column (by index) named name, or -1. */
static long name_index_find(const name_index *ix, const char *name)
{
    size_t lo = 0, hi = ix->n;
    while (lo < hi) {
        size_t mid = lo + (hi - lo) / 2;
        if (strcmp(ix->cols[mid].name, name) < 0) lo = mid + 1;
        else hi = mid;
    }
    return lo < ix->n && strcmp(ix->cols[lo].name, name) == 0 ? (long)ix->cols[lo].index : -1;
}

#define SHOWN_DIFFS 6 /* columns named in a list, or differences listed, before "N more" */

/* "column 'x' is missing from B" or "columns 'x', 'y' (and N more) are
 * missing from B": the columns of s that the index of the other summary
 * lacks. */
static void missing_from(const summary *s, const name_index *other, const char *other_name,
                         char *msg, size_t msglen, size_t *used)
{
    size_t n = 0, first = 0;
    for (size_t i = 0; i < s->ncols; i++)
        if (name_index_find(other, s->cols[i].name) < 0 && n++ == 0) first = i;
    if (n == 0) return;
    if (n == 1) {
        add_diff(msg, msglen, used, "column '%s' is missing from %s", s->cols[first].name,
                 other_name);
        return;
    }
    add_diff(msg, msglen, used, "columns");
    size_t shown = 0;
    for (size_t i = first; i < s->ncols && shown < SHOWN_DIFFS && *used < msglen; i++)
        if (name_index_find(other, s->cols[i].name) < 0)
            *used += (size_t)snprintf(msg + *used, msglen - *used, "%s '%s'", shown++ ? "," : "",
                                      s->cols[i].name);
    if (n > shown && *used < msglen)
        *used += (size_t)snprintf(msg + *used, msglen - *used, " and %zu more", n - shown);
    if (*used < msglen)
        *used += (size_t)snprintf(msg + *used, msglen - *used, " are missing from %s", other_name);
}

/* The column differences of a and b by name: columns missing from either
 * side, and, when the shared columns are not in the same order, the ones
 * that moved (1-based positions); a column declared differently.  Returns
 * -1 on out of memory (the caller falls back to positions). */
static int column_diffs(const summary *a, const summary *b, const char *name_a,
                        const char *name_b, char *msg, size_t msglen, size_t *used)
{
    name_index ia, ib;
    if (name_index_make(&ia, a) != 0) return -1;
    if (name_index_make(&ib, b) != 0) { free(ia.cols); return -1; }
    missing_from(a, &ib, name_b, msg, msglen, used);
    missing_from(b, &ia, name_a, msg, msglen, used);
    /* Shared columns in the same relative order: every shift of position is
     * explained by the missing ones, and is not listed.  A repeated name
     * counts at its first place only. */
    int reordered = 0;
    long last = -1;
    for (size_t i = 0; i < a->ncols && !reordered; i++) {
        long j = name_index_find(&ib, a->cols[i].name);
        if (j < 0 || (size_t)name_index_find(&ia, a->cols[i].name) != i) continue;
        reordered = j < last;
        last = j;
    }
    size_t shown = 0, more = 0;
    for (size_t i = 0; i < a->ncols; i++) {
        long j = name_index_find(&ib, a->cols[i].name);
        if (j < 0 || (size_t)name_index_find(&ia, a->cols[i].name) != i) continue;
        static const char *m[] = {"auto", "numeric", "categorical"};
        int moved = reordered && (size_t)j != i, declared = a->cols[i].mode != b->cols[j].mode;
        if (!moved && !declared) continue;
        if (shown++ >= SHOWN_DIFFS) { more++; continue; }
        if (moved)
            add_diff(msg, msglen, used, "column '%s' moved from %zu to %zu", a->cols[i].name, i + 1,
                     (size_t)j + 1);
        if (declared)
            add_diff(msg, msglen, used, "column '%s' declared %s vs %s", a->cols[i].name,
                     m[a->cols[i].mode], m[b->cols[j].mode]);
    }
    if (more) add_diff(msg, msglen, used, "and %zu more column%s moved or declared otherwise", more,
                       more > 1 ? "s" : "");
    free(ia.cols);
    free(ib.cols);
    return 0;
}

/* The old positional comparison: for repeated names, which a name alone
 * cannot tell apart, and when memory for the name index runs out. */
static void column_diffs_by_position(const summary *a, const summary *b, char *msg,
                                     size_t msglen, size_t *used)
{
    size_t n = a->ncols < b->ncols ? a->ncols : b->ncols;
    int shown = 0;
    for (size_t i = 0; i < n && shown < 5; i++) {
        if (strcmp(a->cols[i].name, b->cols[i].name) != 0) {
            add_diff(msg, msglen, used, "column %zu is '%s' vs '%s'", i + 1, a->cols[i].name,
                     b->cols[i].name);
            shown++;
        } else if (a->cols[i].mode != b->cols[i].mode) {
            static const char *m[] = {"auto", "numeric", "categorical"};
            add_diff(msg, msglen, used, "column '%s' declared %s vs %s", a->cols[i].name,
                     m[a->cols[i].mode], m[b->cols[i].mode]);
            shown++;
        }
    }
}

int summary_compatible(const summary *a, const summary *b, char *msg, size_t msglen)
{
    return summary_compatible_named(a, b, "the first", "the second", msg, msglen);
}

int summary_compatible_named(const summary *a, const summary *b, const char *name_a,
                             const char *name_b, char *msg, size_t msglen)
{
    size_t used = 0;
    if (msglen) msg[0] = '\0';
    int same = a->ncols == b->ncols;
    for (size_t i = 0; same && i < a->ncols; i++)
        same = strcmp(a->cols[i].name, b->cols[i].name) == 0 && a->cols[i].mode == b->cols[i].mode;
    if (!same) {
        if (a->ncols != b->ncols)
            add_diff(msg, msglen, &used, "%zu columns vs %zu", a->ncols, b->ncols);
        size_t before = used;
        if (column_diffs(a, b, name_a, name_b, msg, msglen, &used) != 0 || used == before) {
            /* Out of memory, or repeated names hide the difference. */
            used = before;
            if (used < msglen) msg[used] = '\0';
            column_diffs_by_position(a, b, msg, msglen, &used);
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
    if (a->opt.missing_any_case != b->opt.missing_any_case)
        add_diff(msg, msglen, &used,
                 "missing-value spellings matched in %s in %s but %s in %s (a summary written "
                 "before 2026-12-03 matched them exactly: rescan its data)",
                 a->opt.missing_any_case ? "any letter case" : "exact case", name_a,
                 b->opt.missing_any_case ? "any letter case" : "exact case", name_b);
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

/* 1 when the classes of a and b can be dropped: the scan's rule at the
 * class limit, over the target cells of both (a text target cannot continue
 * as a regression target).  The target column counts every target cell,
 * whether its summary kept classes or not. */
static int targets_numeric(const summary *a, const summary *b)
{
    const summary_column *x = &a->cols[a->target], *y = &b->cols[b->target];
    return summary_mostly_numbers(x->mom.n + x->non_finite + y->mom.n + y->non_finite,
                                  x->non_numeric + y->non_numeric);
}

static summary_status out_of_memory(char *err, size_t errlen)
{
    snprintf(err, errlen, "out of memory while merging");
    return SUMMARY_ERR_MEMORY;
}

static summary_status fold(summary *into, summary *from, char *err, size_t errlen);

summary_status summary_merge(summary *into, summary *from, char *err, size_t errlen)
{
    summary_status st = fold(into, from, err, errlen);
    if (st != SUMMARY_OK) return st;
    if (summary_seal(into) != 0) return out_of_memory(err, errlen);
    return SUMMARY_OK;
}

/* summary_merge up to its seal. */
static summary_status fold(summary *into, summary *from, char *err, size_t errlen)
{
    if (!summary_compatible(into, from, err, errlen)) return SUMMARY_ERR_INCOMPATIBLE;
    /* Every count of a summary is at most its rows, so rows that add up
     * keep them all from wrapping; past 2^53 the co-moments' counts (doubles)
     * would stop being exact, and no reader would take the file. */
    if (from->rows > SUMMARY_MAX_ROWS || into->rows > SUMMARY_MAX_ROWS - from->rows ||
        from->bytes > UINT64_MAX - into->bytes ||
        from->repeated_headers > UINT64_MAX - into->repeated_headers) {
        snprintf(err, errlen, "together the summaries hold more than 2^53 rows, 2^64 bytes or "
                 "2^64 repeated headers");
        return SUMMARY_ERR_INCOMPATIBLE;
    }
    /* Classes: both kept, or neither (a side that dropped them wins). */
    if (into->has_classes != from->has_classes) {
        summary *keeper = into->has_classes ? into : from;
        if (!targets_numeric(into, from)) {
            snprintf(err, errlen, "target '%s': one summary has more than %u classes and the "
                     "target is not numeric", into->opt.target, into->opt.max_classes);
            return SUMMARY_ERR_INCOMPATIBLE;
        }
        if (summary_drop_classes(keeper) != 0) return out_of_memory(err, errlen);
    }
    uint32_t *map = NULL;
    if (into->has_classes) {
        map = malloc((from->nclasses + 1) * sizeof *map);
        if (!map) return out_of_memory(err, errlen);
        int rc = map_classes(into, from, map);
        if (rc < 0) { free(map); return out_of_memory(err, errlen); }
        if (rc > 0) {
            free(map);
            map = NULL;
            if (!targets_numeric(into, from)) {
                snprintf(err, errlen, "target '%s': together the summaries have more than %u "
                         "classes (the class limit); rescan with a larger {max_classes} or with "
                         "{task=regress}",
                         into->opt.target, into->opt.max_classes);
                return SUMMARY_ERR_INCOMPATIBLE;
            }
            if (summary_drop_classes(into) != 0 || summary_drop_classes(from) != 0)
                return out_of_memory(err, errlen);
        }
    }
    int same_classes = map != NULL;
    for (uint32_t c = 0; same_classes && c <= from->nclasses; c++) same_classes = map[c] == c;
    /* A continuous target: the two cell tables united (summary/tcells.h), the
     * cells of both sides renumbered into the union. */
    uint32_t into_cells[SUMMARY_TARGET_CELLS + 2], from_cells[SUMMARY_TARGET_CELLS + 2];
    uint32_t into_len = into->tcells.n + 1, from_len = from->tcells.n + 1;
    int cells = into->target >= 0 && !into->has_classes;
    int into_moves = 0, from_moves = 0;
    if (cells) {
        if (tcells_unite(&into->tcells, &from->tcells, into_cells, from_cells) != 0) {
            free(map);
            return out_of_memory(err, errlen);
        }
        for (uint32_t c = 1; c < into_len; c++) into_moves |= into_cells[c] != c;
        for (uint32_t c = 1; c < from_len; c++) from_moves |= from_cells[c] != c;
    }
    /* Target frame shift for the regression tables. */
    const number_decimal *fa = target_frame(into), *fb = target_frame(from);
    double yshift = fa && fb ? number_difference(fb, fa, NULL) : 0;
    for (size_t i = 0; i < into->ncols; i++) {
        column_merge_map cm = {map, map ? from->nclasses + 1 : 0, same_classes,
                               into->opt.max_classes, from->nclasses, yshift,
                               into_moves ? into_cells : NULL, into_len};
        if (from_moves) {
            cm.map = from_cells;
            cm.map_len = from_len;
        }
        if (column_merge(&into->cols[i], &from->cols[i], &cm) != 0) {
            free(map);
            return out_of_memory(err, errlen);
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
        if (!shift) return out_of_memory(err, errlen);
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
        if (rc != 0) return out_of_memory(err, errlen);
    }
    into->rows += from->rows;
    into->bytes += from->bytes;
    into->short_rows += from->short_rows;
    into->repeated_headers += from->repeated_headers;
    into->copy_prints = into->copy_prints && from->copy_prints;
    into->long_rows += from->long_rows;
    for (uint32_t i = 0; i < from->n_bad_lines && into->n_bad_lines < SUMMARY_BAD_LINES; i++)
        into->bad_lines[into->n_bad_lines++] = from->bad_lines[i];
    for (size_t i = 0; i < from->nsources; i++)
        if (summary_add_source(into, &from->sources[i]) != 0)
            return out_of_memory(err, errlen);
    return SUMMARY_OK;
}

