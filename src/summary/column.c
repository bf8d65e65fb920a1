/* column: see column.h. */
#include "summary/column.h"

#include <float.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <xxhash.h>

#include "io/number.h"
#include "io/reader.h"

int column_alloc(summary_column *c, const summary_options *o, int with_classes)
{
    if (o->target && c->mode != COLUMN_CATEGORICAL) {
        c->pairs = malloc(sizeof *c->pairs);
        if (!c->pairs) return -1;
        pairsum_init(c->pairs);
    }
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

int column_drop_classes(summary_column *c, const uint32_t *map, const double *y, uint32_t n,
                        uint32_t bucket_budget)
{
    buckets *nb = buckets_create(bucket_budget);
    if (!nb || buckets_merge(nb, c->bins, map, n) != 0) { buckets_free(nb); return -1; }
    buckets_free(c->bins);
    c->bins = nb;
    if (c->cross) {
        crosstab *nx = crosstab_counts_to_values(c->cross, y, map, n);
        if (!nx) return -1;
        crosstab_free(c->cross);
        c->cross = nx;
    }
    free(c->cls);
    c->cls = NULL;
    return 0;
}

int column_remap_target_cells(summary_column *c, const uint32_t *map, uint32_t len)
{
    crosstab *nx = NULL;
    if (c->cross && crosstab_entries(c->cross)) {
        nx = crosstab_create(crosstab_max_keys(c->cross));
        if (!nx || crosstab_merge(nx, c->cross, map, len, 0.0) != 0) {
            crosstab_free(nx);
            return -1;
        }
    }
    if (buckets_map_cells(c->bins, map, len) != 0) { crosstab_free(nx); return -1; }
    if (nx) {
        crosstab_free(c->cross);
        c->cross = nx;
    }
    return 0;
}

void column_free(summary_column *c)
{
    free(c->name);
    values_free(c->vals);
    free(c->distinct);
    buckets_free(c->bins);
    crosstab_free(c->cross);
    free(c->cls);
    free(c->pairs);
}

void column_write(const summary_column *c, uint32_t nclasses, uint32_t version, wire_writer *w)
{
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
        for (uint32_t k = 0; k < nclasses; k++) {
            const class_moments *m = &c->cls[k];
            wire_put_u64(w, m->n | (m->imprecise ? CLASS_IMPRECISE_BIT : 0));
            if (version >= 3) {
                wire_put_f64(w, m->sum);
                wire_put_f64(w, m->sum_low);
            } else { /* never written: a summary with classes is version 3 */
                wire_put_f64(w, m->n ? class_moments_mean(m) : 0);
            }
            wire_put_f64(w, m->m2);
        }
    if (version >= 3) {
        wire_put_u8(w, c->pairs != NULL);
        if (c->pairs) pairsum_write(c->pairs, w);
    }
    if (version >= 7) wire_put_u64(w, c->copy_print);
}

void column_write_common(const summary_column *c, wire_writer *w)
{
    wire_put_str(w, c->name, strlen(c->name));
    wire_put_u8(w, (uint8_t)c->mode);
    wire_put_u64(w, c->missing);
    wire_put_u64(w, c->non_numeric);
    wire_put_u64(w, c->non_finite);
    wire_put_u64(w, c->zeros);
    wire_put_u64(w, c->integers);
    wire_put_u64(w, c->mom.n);
    wire_put_f64(w, c->mom.min);
    wire_put_f64(w, c->mom.max);
    wire_put_u8(w, (uint8_t)c->mom.has_ref);
    wire_put_f64(w, c->mom.ref.value);
    wire_put_u64(w, c->mom.ref.mantissa);
    wire_put_i64(w, c->mom.ref.exp10);
    wire_put_u8(w, c->mom.ref.negative);
    wire_put_u8(w, c->mom.ref.exact);
    wire_put_u32(w, c->n_examples);
    for (uint32_t e = 0; e < c->n_examples; e++)
        wire_put_str(w, c->examples[e], strlen(c->examples[e]));
    values_write(c->vals, w);
    hll_write(c->distinct, w);
    wire_put_u64(w, c->copy_print);
}

int column_read(summary_column *c, uint32_t nclasses, uint32_t version, wire_reader *r,
                const char **part)
{
    *part = "counts";
    c->missing = wire_get_u64(r);
    c->non_numeric = wire_get_u64(r);
    c->non_finite = wire_get_u64(r);
    c->zeros = wire_get_u64(r);
    c->integers = wire_get_u64(r);
    if (r->failed) return -1;
    *part = "moments";
    if (moments_read(&c->mom, r) != 0) return -1;
    *part = "examples";
    c->n_examples = wire_get_u32(r);
    if (c->n_examples > SUMMARY_EXAMPLES) { c->n_examples = 0; r->failed = 1; return -1; }
    for (uint32_t e = 0; e < c->n_examples; e++) {
        size_t n;
        const char *p = wire_get_str(r, &n, SUMMARY_EXAMPLE_BYTES);
        if (p) memcpy(c->examples[e], p, n);
        c->examples[e][n] = '\0';
    }
    if (r->failed) return -1;
    *part = "value table";
    values *v = values_read(r);
    if (!v) return -1;
    values_free(c->vals);
    c->vals = v;
    *part = "distinct-count sketch";
    if (hll_read(c->distinct, r) != 0) return -1;
    *part = "bucket store";
    buckets *b = buckets_read(r);
    if (!b) { r->failed = 1; return -1; }
    buckets_free(c->bins);
    c->bins = b;
    *part = "per-value table";
    uint8_t has_cross = wire_get_u8(r);
    if (r->failed || has_cross != (c->cross != NULL)) { r->failed = 1; return -1; }
    if (has_cross) {
        crosstab *x = crosstab_read(r);
        if (!x) { r->failed = 1; return -1; }
        crosstab_free(c->cross);
        c->cross = x;
    }
    *part = "per-class moments";
    uint8_t has_cls = wire_get_u8(r);
    size_t record = version >= 3 ? 32 : 24;
    if (r->failed || has_cls != (c->cls != NULL) ||
        !wire_need(r, (size_t)nclasses * record * has_cls)) {
        r->failed = 1;
        return -1;
    }
    for (uint32_t k = 0; has_cls && k < nclasses; k++) {
        class_moments *m = &c->cls[k];
        m->n = wire_get_u64(r);
        m->imprecise = (m->n & CLASS_IMPRECISE_BIT) != 0;
        m->n &= ~CLASS_IMPRECISE_BIT;
        if (m->imprecise && (version < 7 || m->n == 0)) { /* written from 2026-12-05, version 7 */
            r->failed = 1;
            return -1;
        }
        if (version >= 3) {
            m->sum = wire_get_f64(r);
            m->sum_low = wire_get_f64(r);
        } else {
            /* A mean (version 1, 2): n mean as an exact two-double product. */
            double mean = wire_get_f64(r), n = (double)m->n;
            m->sum = mean * n;
            m->sum_low = fma(mean, n, -m->sum);
            if (!isfinite(m->sum)) m->sum_low = 0;
        }
        m->m2 = wire_get_f64(r);
    }
    if (r->failed) return -1;
    *part = "pair sums with the target";
    if (version >= 3) {
        uint8_t has_pairs = wire_get_u8(r);
        if (r->failed || has_pairs != (c->pairs != NULL)) { r->failed = 1; return -1; }
        if (has_pairs && pairsum_read(c->pairs, r) != 0) return -1;
    } else if (c->pairs) {
        /* Versions 1 and 2 kept no pair sums: none, and not exact. */
        pairsum_init(c->pairs);
        c->pairs->exact = 0;
    }
    *part = "copy print";
    c->copy_print = version >= 7 ? wire_get_u64(r) : 0;
    return r->failed ? -1 : 0;
}

/* ---- invariants ---------------------------------------------------------- */

int summary_why(char *msg, size_t len, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, len, fmt, ap);
    va_end(ap);
    return -1;
}

/* 1 when cell is a regression target cell of s: 1..n of its cell table (in
 * a version 1 or 2 file, 2^20 plus a key at level 50: |key| <= 8188). */
static int regression_cell(const summary *s, uint32_t cell)
{
    if (s->legacy_cells) {
        int64_t key = (int64_t)cell - (int64_t)(1u << 20);
        return key >= -8188 && key <= 8188;
    }
    return cell >= 1 && cell <= s->tcells.n;
}

/* What a target cell may be in this summary: 0 (no target, or its cell is
 * missing), a class 1..K with classes, a regression cell without. */
static int cell_valid(const summary *s, uint32_t cell)
{
    if (cell == 0) return 1;
    if (s->target < 0) return 0;
    if (s->has_classes) return cell <= s->nclasses;
    return regression_cell(s, cell);
}

static int deviation_in_range(double dev, const moments *col);
static int m2_in_range(double m2, uint64_t n, const moments *col);

/* Per-class moments: as a column's moments, without min and max of their
 * own (the column's bound them): a mean within the column's range, a
 * spread that numbers within it can have. */
static int class_moments_valid(const class_moments *k, const moments *col)
{
    if (k->n == 0) return k->sum == 0 && k->sum_low == 0 && k->m2 == 0;
    if (k->n == 1 && k->m2 != 0) return 0;
    if (k->m2 < 0) return 0;
    if (moments_spread_allows_overflow(col->min, col->max)) return 1;
    /* the low part is what the high one left: at most half its ulp */
    double mag = fabs(k->sum);
    if (!isfinite(k->sum) || !isfinite(k->sum_low) ||
        !(fabs(k->sum_low) <= 0.5 * (nextafter(mag, INFINITY) - mag)))
        return 0;
    double mean = class_moments_mean(k);
    return isfinite(mean) && isfinite(k->m2) && deviation_in_range(mean, col) &&
           m2_in_range(k->m2, k->n, col);
}

/* A deviation from the column's frame (ref) that a number in [min, max]
 * can have, or an average of such: within [min - ref, max - ref], less a
 * slack for decimals that round to the same double and for summation
 * rounding. */
static int deviation_in_range(double dev, const moments *col)
{
    double lo = col->min - col->ref.value, hi = col->max - col->ref.value;
    double slack = 0x1p-30 * (hi - lo) + 0x1p-30 * fmax(fabs(col->min), fabs(col->max)) + 0x1p-1000;
    return dev >= lo - slack && dev <= hi + slack;
}

/* Sum of squared deviations of n numbers that lie in [min, max]: at most
 * n (max - min)^2 / 4 (Popoviciu's inequality); four times that, so that
 * rounding never refuses a file a scan wrote, with the slack of
 * deviation_in_range: decimals that round to one double (min = max) still
 * deviate from one another, by their exact differences. */
static int m2_in_range(double m2, uint64_t n, const moments *col)
{
    double spread = col->max - col->min;
    spread += 0x1p-30 * spread + 0x1p-30 * fmax(fabs(col->min), fabs(col->max));
    return m2 <= (double)n * spread * spread + 0x1p-1000;
}

/* An exact value table holds every present cell as its text: read as the
 * scan read them, its labels give the column's counts of numbers,
 * non-finite and text cells, its zeros and integers, and its smallest and
 * largest number.  Skipped when a label may have been cut (it may no longer
 * read as its cells did). */
static int labels_agree(const summary_column *c, const values *v, uint32_t label_bytes, char *msg,
                        size_t len)
{
    uint32_t levels = values_levels(v);
    for (uint32_t k = 0; k < levels; k++)
        if (values_entry_at(v, k).label_len >= label_bytes) return 0;
    uint64_t numbers = 0, nonfinite = 0, text = 0, zeros = 0, integers = 0;
    double lo = INFINITY, hi = -INFINITY;
    for (uint32_t k = 0; k < levels; k++) {
        values_entry e = values_entry_at(v, k);
        number_decimal d;
        switch (number_parse(e.label, e.label_len, &d)) {
        case NUMBER_FINITE:
            numbers += e.count;
            if (d.value == 0) zeros += e.count;
            if (number_integer_valued(d.value)) integers += e.count;
            lo = d.value < lo ? d.value : lo;
            hi = d.value > hi ? d.value : hi;
            break;
        case NUMBER_NONFINITE: nonfinite += e.count; break;
        default: text += e.count;
        }
    }
    if (numbers != c->mom.n || nonfinite != c->non_finite || text != c->non_numeric)
        return summary_why(msg, len, "the value table reads as %llu numbers, %llu non-finite and %llu "
                   "text cells, the counts say %llu, %llu and %llu",
                   (unsigned long long)numbers, (unsigned long long)nonfinite,
                   (unsigned long long)text, (unsigned long long)c->mom.n,
                   (unsigned long long)c->non_finite, (unsigned long long)c->non_numeric);
    if (zeros != c->zeros || integers != c->integers)
        return summary_why(msg, len, "the value table holds %llu zeros and %llu integers, the counts say "
                   "%llu and %llu", (unsigned long long)zeros, (unsigned long long)integers,
                   (unsigned long long)c->zeros, (unsigned long long)c->integers);
    if (numbers && (lo != c->mom.min || hi != c->mom.max))
        return summary_why(msg, len, "the value table's numbers span %.17g to %.17g, the moments %.17g "
                   "to %.17g", lo, hi, c->mom.min, c->mom.max);
    return 0;
}

/* Rows of each regression target cell 1..n: the target column's own
 * numbers in that cell (its bucket store).  cells[0] is unused. */
static void target_cell_rows(const summary *s, uint64_t *cells)
{
    const buckets *b = s->cols[s->target].bins;
    for (size_t i = 0, n = buckets_entries(b); i < n; i++) {
        buckets_entry e = buckets_entry_at(b, i);
        if (e.cell >= 1 && e.cell <= s->tcells.n) cells[e.cell] += e.count;
    }
}

/* What a column holds about the target, against the target column (read
 * after every column): without classes, each column's numbers (bucket
 * store) and per-value rows in a target cell are at most the rows of that
 * cell, and a per-value target mean and spread are those of numbers within
 * the target's range. */
int column_check_target(const summary *s, const summary_column *c, char *msg, size_t len)
{
    if (s->target < 0 || s->has_classes) return 0;
    const moments *ty = &s->cols[s->target].mom;
    for (size_t i = 0, n = c->cross ? crosstab_entries(c->cross) : 0; i < n; i++) {
        crosstab_entry e = crosstab_entry_at(c->cross, i);
        if (crosstab_mode(c->cross) == CROSSTAB_VALUES &&
            !moments_spread_allows_overflow(ty->min, ty->max) &&
            (!ty->n || !deviation_in_range(e.mean, ty) || !m2_in_range(e.m2, e.n, ty)))
            return summary_why(msg, len, "per-value entry %zu: target mean or spread outside the "
                       "target's range%s", i + 1,
                       s->classes_dropped ? " (classes dropped in the scan: an older sheaf "
                                            "wrote these wrongly; rescan)"
                                          : "");
    }
    if (s->legacy_cells || !s->tcells.n) return 0;
    uint64_t rows[SUMMARY_TARGET_CELLS + 1] = {0}, used[SUMMARY_TARGET_CELLS + 1] = {0},
             cross[SUMMARY_TARGET_CELLS + 1] = {0};
    target_cell_rows(s, rows);
    const buckets *b = c->bins;
    for (size_t i = 0, n = buckets_entries(b); i < n; i++) {
        buckets_entry e = buckets_entry_at(b, i);
        if (e.cell >= 1 && e.cell <= s->tcells.n) used[e.cell] += e.count; /* within n's total */
    }
    for (size_t i = 0, n = c->cross ? crosstab_entries(c->cross) : 0; i < n; i++) {
        crosstab_entry e = crosstab_entry_at(c->cross, i);
        if (e.cell >= 1 && e.cell <= s->tcells.n) cross[e.cell] += e.n; /* within values' total */
    }
    for (uint32_t t = 1; t <= s->tcells.n; t++) {
        if (used[t] > rows[t])
            return summary_why(msg, len, "%llu numbers in target cell %u, which holds %llu rows",
                       (unsigned long long)used[t], t, (unsigned long long)rows[t]);
        if (cross[t] > rows[t])
            return summary_why(msg, len, "per-value rows in target cell %u: %llu, more than its %llu",
                       t, (unsigned long long)cross[t], (unsigned long long)rows[t]);
    }
    return 0;
}

/* Whether s spells a missing value as t: the reader's own match (io/reader.h),
 * under the summary's case rule. */
static int spelled_missing(const summary *s, const char *t)
{
    reader_missing m;
    reader_missing_init(&m, (const char *const *)s->opt.missing, s->opt.n_missing,
                        s->opt.missing_any_case);
    size_t n = strlen(t);
    return n == 0 || reader_missing_spelled(&m, t, (uint32_t)n);
}

/* An example is a cell that read as text: not a number (finite or not),
 * not a missing-value spelling, and one of the exact value table's cells.
 * One of more than SUMMARY_EXAMPLE_BYTES - 4 bytes may be a cut cell
 * (keep_example cuts at a whole UTF-8 character), whose start can read
 * as a number or spell a missing value: it is left unchecked. */
static int example_impossible(const summary *s, const summary_column *c, const char *t)
{
    size_t n = strlen(t);
    if (n + 4 > SUMMARY_EXAMPLE_BYTES) return 0;
    if (spelled_missing(s, t)) return 1;
    number_decimal d;
    if (number_parse(t, n, &d) != NUMBER_TEXT) return 1;
    return !values_overflowed(c->vals) && n < values_label_bytes(c->vals) &&
           values_count_of(c->vals, XXH3_64bits(t, n)) == 0;
}

int column_check(const summary *s, const summary_column *c, char *msg, size_t len)
{
    const summary_options *o = &s->opt;
    /* Counts: every row has exactly one state in every column. */
    uint64_t present = c->mom.n, rows = c->missing;
    if (present > UINT64_MAX - c->non_numeric || present + c->non_numeric > UINT64_MAX - c->non_finite)
        return summary_why(msg, len, "cell counts overflow");
    present += c->non_numeric + c->non_finite;
    if (rows > UINT64_MAX - present || rows + present != s->rows)
        return summary_why(msg, len, "missing + numbers + text + non-finite cells = %llu + %llu, not the "
                   "table's %llu rows", (unsigned long long)c->missing,
                   (unsigned long long)present, (unsigned long long)s->rows);
    if (c->zeros > c->integers || c->integers > c->mom.n)
        return summary_why(msg, len, "zeros %llu, integers %llu, numbers %llu out of order",
                   (unsigned long long)c->zeros, (unsigned long long)c->integers,
                   (unsigned long long)c->mom.n);
    if (c->mode == COLUMN_CATEGORICAL && (c->mom.n || c->non_finite || c->n_examples))
        return summary_why(msg, len, "a declared-categorical column holds numbers or examples");
    if (c->n_examples > c->non_numeric)
        return summary_why(msg, len, "more examples than text cells");
    if (present == 0 && c->copy_print != 0)
        return summary_why(msg, len, "a copy print without present cells");
    for (uint32_t e = 0; e < c->n_examples; e++)
        for (uint32_t f = 0; f < e; f++)
            if (strcmp(c->examples[e], c->examples[f]) == 0)
                return summary_why(msg, len, "example %u repeats example %u", e + 1, f + 1);
    for (uint32_t e = 0; e < c->n_examples; e++)
        if (example_impossible(s, c, c->examples[e]))
            return summary_why(msg, len, "example %u is not a text cell the column could hold", e + 1);

    /* Value table: the schema's sizes, every present cell counted once,
     * full when it overflowed, and a label that was not cut hashes to its
     * key (XXH3-64, as the scan hashed the cell). */
    const values *v = c->vals;
    if (values_max_levels(v) != o->max_levels)
        return summary_why(msg, len, "value table of %u entries, not the schema's %u",
                   values_max_levels(v), o->max_levels);
    if (values_label_bytes(v) != o->label_bytes)
        return summary_why(msg, len, "value labels cut at %u bytes, not the schema's %u",
                   values_label_bytes(v), o->label_bytes);
    if (values_total(v) != present)
        return summary_why(msg, len, "value table counts %llu cells, not the %llu present",
                   (unsigned long long)values_total(v), (unsigned long long)present);
    if (values_overflowed(v) && values_levels(v) != o->max_levels)
        return summary_why(msg, len, "value table overflowed with room left");
    for (uint32_t k = 0; k < values_levels(v); k++) {
        values_entry e = values_entry_at(v, k);
        if (e.label_len > o->label_bytes)
            return summary_why(msg, len, "value label longer than the schema's label_bytes");
        if (e.label_len < o->label_bytes && XXH3_64bits(e.label, e.label_len) != e.hash)
            return summary_why(msg, len, "value %u: label does not hash to its key", k + 1);
    }
    if (!values_overflowed(v) && c->mode != COLUMN_CATEGORICAL &&
        labels_agree(c, v, o->label_bytes, msg, len) != 0)
        return -1;

    /* Distinct-count sketch: an overflowed table's keys are in it; while
     * the table is exact it is empty (older summaries: it holds the
     * table's keys, so no more registers than entries); never more
     * registers set than cells. */
    uint32_t used = hll_used(c->distinct);
    if (values_overflowed(v) ? used == 0 : used > values_levels(v))
        return summary_why(msg, len, "distinct-count sketch of %u registers next to %s value table of "
                   "%u entries", used, values_overflowed(v) ? "an overflowed" : "an exact",
                   values_levels(v));
    if (used > present)
        return summary_why(msg, len, "distinct-count sketch with %u registers set by %llu cells", used,
                   (unsigned long long)present);

    /* Bucket store: the schema's budget, one entry count per number, zeros
     * in key 0, and cells that exist. */
    const buckets *b = c->bins;
    if (buckets_budget(b) != o->bucket_budget)
        return summary_why(msg, len, "bucket budget %u, not the schema's %u", buckets_budget(b),
                   o->bucket_budget);
    if (buckets_total(b) != c->mom.n)
        return summary_why(msg, len, "bucket store counts %llu numbers, not %llu",
                   (unsigned long long)buckets_total(b), (unsigned long long)c->mom.n);
    uint64_t zero_count = 0;
    uint64_t *class_numbers = NULL; /* bucket counts per class cell */
    if (c->cls && !(class_numbers = calloc(s->nclasses + 1, sizeof *class_numbers)))
        return summary_why(msg, len, "out of memory");
    for (size_t i = 0, n = buckets_entries(b); i < n; i++) {
        buckets_entry e = buckets_entry_at(b, i);
        if (!cell_valid(s, e.cell)) {
            free(class_numbers);
            return summary_why(msg, len, "bucket entry %zu names target cell %u, which does not exist",
                       i + 1, e.cell);
        }
        if (e.key == 0) zero_count += e.count;
        if (class_numbers) class_numbers[e.cell] += e.count; /* cell <= nclasses: checked */
        /* Every bucket holds a number in [min, max]: a store whose level
         * was changed put every quantile outside them (decode audit). */
        double lo, hi;
        buckets_bounds(e.key, buckets_level(b), &lo, &hi);
        if (e.count && (hi < c->mom.min || lo > c->mom.max)) {
            free(class_numbers);
            return summary_why(msg, len, "bucket entry %zu holds [%g, %g], outside the column's "
                               "numbers [%g, %g]", i + 1, lo, hi, c->mom.min, c->mom.max);
        }
    }
    /* The smallest and largest keys are those of min and max, which are
     * numbers of the column (and every number is in the store). */
    size_t nb = buckets_entries(b);
    if (nb && c->mom.n && isfinite(c->mom.min) && isfinite(c->mom.max) &&
        (buckets_entry_at(b, 0).key != buckets_key_at(buckets_key(c->mom.min), buckets_level(b)) ||
         buckets_entry_at(b, nb - 1).key !=
             buckets_key_at(buckets_key(c->mom.max), buckets_level(b)))) {
        free(class_numbers);
        return summary_why(msg, len, "bucket store's first or last key is not that of the "
                           "column's min or max");
    }
    if (zero_count != c->zeros) {
        free(class_numbers);
        return summary_why(msg, len, "bucket store holds %llu zeros, not %llu",
                   (unsigned long long)zero_count, (unsigned long long)c->zeros);
    }
    /* Per-class moments count the numbers of each class, as the bucket
     * store's cell of that class does. */
    for (uint32_t k = 0; class_numbers && k < s->nclasses; k++)
        if (c->cls[k].n != class_numbers[k + 1]) {
            uint64_t n = class_numbers[k + 1];
            free(class_numbers);
            return summary_why(msg, len, "class %u: %llu numbers in its moments, %llu in the bucket store",
                       k + 1, (unsigned long long)c->cls[k].n, (unsigned long long)n);
        }
    free(class_numbers);

    /* Per-value table: with a target, the mode the target asks for, cells
     * that exist, keys of the value table, counts within the value's (the
     * scan stops feeding it when the value table overflows, so its keys
     * stay in the table). */
    if (c->cross) {
        const crosstab *x = c->cross;
        int mode = crosstab_mode(x);
        if (crosstab_max_keys(x) != o->max_levels)
            return summary_why(msg, len, "per-value table of %u keys, not the schema's %u",
                       crosstab_max_keys(x), o->max_levels);
        if (mode == CROSSTAB_COUNTS && !s->has_classes)
            return summary_why(msg, len, "per-value class counts without target classes");
        if (mode == CROSSTAB_VALUES && s->has_classes)
            return summary_why(msg, len, "per-value target moments with target classes");
        uint64_t key_total = 0, last_key = 0;
        uint64_t *class_total = NULL; /* rows per class over the table */
        if (mode == CROSSTAB_COUNTS && !(class_total = calloc(s->nclasses + 1, sizeof *class_total)))
            return summary_why(msg, len, "out of memory");
        for (size_t i = 0, n = crosstab_entries(x); i < n; i++) {
            crosstab_entry e = crosstab_entry_at(x, i);
            if (mode == CROSSTAB_COUNTS ? e.cell == 0 || e.cell > s->nclasses
                                        : !regression_cell(s, e.cell)) {
                free(class_total);
                return summary_why(msg, len, "per-value entry %zu names target cell %u, which does "
                           "not exist", i + 1, e.cell);
            }
            if (class_total) {
                /* each row counted once: the sum stays below the class's rows */
                class_total[e.cell] += e.n;
                if (e.n > s->class_rows[e.cell - 1] ||
                    class_total[e.cell] > s->class_rows[e.cell - 1]) {
                    free(class_total);
                    return summary_why(msg, len, "per-value entries count more rows than class %u has",
                               e.cell);
                }
            }
            if (e.key == CROSSTAB_OVERFLOW_KEY) continue; /* values past max_keys */
            if (i == 0 || e.key != last_key) key_total = 0;
            last_key = e.key;
            /* The key is the hash, except that 2^64 - 1 is stored as 2^64 - 2. */
            uint64_t count = values_count_of(v, e.key);
            if (e.key == CROSSTAB_OVERFLOW_KEY - 1) count += values_count_of(v, CROSSTAB_OVERFLOW_KEY);
            if (e.n > count - key_total) {
                free(class_total);
                return summary_why(msg, len, "per-value entry %zu counts more rows than its value has",
                           i + 1);
            }
            key_total += e.n;
        }
        free(class_total);
    }

    /* Pair sums with the target: over rows holding numbers in both. */
    if ((c->pairs != NULL) != (s->target >= 0 && c->mode != COLUMN_CATEGORICAL))
        return summary_why(msg, len, "pair sums %s", c->pairs ? "without a target" : "missing");
    if (c->pairs && c->pairs->n > c->mom.n)
        return summary_why(msg, len, "%llu exact pairs with the target, more than the column's %llu "
                   "numbers", (unsigned long long)c->pairs->n, (unsigned long long)c->mom.n);

    /* Per-class moments: within the class's rows (their counts were
     * checked against the bucket store above). */
    if (c->cls) {
        for (uint32_t k = 0; k < s->nclasses; k++) {
            const class_moments *m = &c->cls[k];
            if (m->n > s->class_rows[k])
                return summary_why(msg, len, "class %u: %llu numbers in %llu rows", k + 1,
                           (unsigned long long)m->n, (unsigned long long)s->class_rows[k]);
            if (!class_moments_valid(m, &c->mom))
                return summary_why(msg, len, "class %u: impossible moments", k + 1);
        }
    }
    return 0;
}

/* s + x exactly as (*s, *low added to): Knuth's TwoSum. */
static void two_sum_into(double *s, double *low, double x)
{
    double t = *s + x, v = t - *s;
    *low += (*s - (t - v)) + (x - v);
    *s = t;
}

int column_class_zeros(const summary_column *c, uint32_t k)
{
    const class_moments *m = &c->cls[k];
    return m->n && c->bins && c->zeros >= m->n && buckets_zeros(c->bins, k + 1) == m->n;
}

int column_class_lost(const summary_column *c, uint32_t k, double loss)
{
    const class_moments *m = &c->cls[k];
    if (!m->n) return 0;
    const double ref = c->mom.has_ref ? c->mom.ref.value : 0, dev = class_moments_mean(m);
    const double mean = ref + dev, lo = c->mom.min, hi = c->mom.max;
    const double var = m->n > 1 ? m->m2 / (double)(m->n - 1) : 0;
    /* The mean is ref + its deviation, each within 2^-52 of the larger
     * magnitude: that much slack, and more. */
    const double slack = 0x1p-40 * fmax(fabs(lo), fabs(hi));
    /* A variance past the double range where the column's spread squared is
     * within it; where it is not (a spread of 1e160 overflows on its own),
     * the mean alone, against its own magnitude (a class re-based from
     * 1e200 into 1e300 read mean 0 for 3.3e199).  Deviations that all
     * rounded to minus the frame read as zeros. */
    int lost = m->imprecise || class_moments_lost(m, ref, loss) ||
               (isfinite(mean) && isfinite(lo) && isfinite(hi) &&
                (mean < lo - slack || mean > hi + slack)) ||
               (!isfinite(var) && (isfinite((hi - lo) * (hi - lo)) ||
                                   !(0x1p-53 * fabs(dev) <= 0x1p-20 * fabs(mean)))) ||
               (mean == 0 && var == 0 && loss > 0);
    /* A class of zeros is exact whatever its sums read: a class of true
     * zeros re-based from another frame reads about 1e-15. */
    return lost && !column_class_zeros(c, k);
}

/* Combines two class moments; shift = from's frame minus into's, and
 * into_ref the value of into's frame.  The sums add as two-double sums,
 * from's shifted by n_b shift (an exact product by fma); M2 by the pairwise
 * rule of Chan, Golub & LeVeque (1979).  The rounding of from's numbers in
 * from's own frame is gone from the merged sums, where a read would judge
 * them by into's frame (summary_class_moments): when it is too much for
 * the merged class, the class is flagged imprecise, and stays so. */
static void class_merge(class_moments *a, const class_moments *b, double shift, double into_ref,
                        const summary_column *from, uint32_t kb, int zeros)
{
    if (b->n == 0) return;
    const double b_loss = shift != 0 ? class_moments_loss(b) : 0;
    /* from's own reading of the class, when it comes from another frame;
     * none for classes of zeros on both sides, which stay exact */
    const int flagged = !zeros && (a->imprecise | b->imprecise ||
                                   (shift != 0 && column_class_lost(from, kb, b_loss)));
    double nb = (double)b->n, p = nb * shift, pe = fma(nb, shift, -p);
    double sum = a->n ? a->sum : 0, low = a->n ? a->sum_low : 0;
    double m2 = b->m2;
    if (a->n) {
        /* M2 += d^2 na nb / n with d = b's mean + shift - a's mean, each
         * mean a two-double quotient of its sums (q + r), the large parts
         * first: (shift - qa) exactly as t + e, then + qb (where the two
         * cancel), then the small parts.  Where the classes lie far from a
         * frame, rounding b's shifted mean first moved a variance of 4.3 to
         * 4.185 (merge4 audit, N3). */
        double na = (double)a->n, qa = a->sum / na, qb = b->sum / nb;
        double ra = class_sum_rest(a->sum, a->sum_low, na, qa);
        double rb = class_sum_rest(b->sum, b->sum_low, nb, qb);
        double t = shift - qa, v = t - shift, e = (shift - (t - v)) + (-qa - v);
        double d = (t + qb) + ((e + rb) - ra);
        m2 = a->m2 + b->m2 + d * d * na * nb / (na + nb);
    }
    two_sum_into(&sum, &low, b->sum);
    two_sum_into(&sum, &low, p);
    low += b->sum_low + pe;
    a->sum = sum; /* renormalize: |sum_low| <= ulp(sum) / 2 */
    a->sum_low = 0;
    two_sum_into(&a->sum, &a->sum_low, low);
    a->m2 = m2;
    a->n += b->n;
    a->imprecise = flagged || (!zeros && class_moments_lost(a, into_ref, b_loss));
}


int column_merge(summary_column *a, const summary_column *b, const column_merge_map *m)
{
    if (m->into_cells && column_remap_target_cells(a, m->into_cells, m->into_cells_len) != 0)
        return -1;
    /* Column frame shift (before the moments merge sets a's reference). */
    double shift = a->mom.has_ref && b->mom.has_ref ? number_difference(&b->mom.ref, &a->mom.ref, NULL) : 0;
    double into_ref = a->mom.has_ref ? a->mom.ref.value : b->mom.has_ref ? b->mom.ref.value : 0;
    if (a->cls && b->cls) {
        uint32_t k = m->same_classes ? m->max_classes : m->from_classes;
        for (uint32_t c = 0; c < k; c++) {
            const uint32_t ka = m->same_classes ? c : m->map[c + 1] - 1;
            const int zeros = (!a->cls[ka].n || column_class_zeros(a, ka)) && column_class_zeros(b, c);
            class_merge(&a->cls[ka], &b->cls[c], shift, into_ref, b, c, zeros);
        }
    }
    a->missing += b->missing;
    a->copy_print += b->copy_print; /* mod 2^64, in any order */
    a->non_numeric += b->non_numeric;
    a->non_finite += b->non_finite;
    a->zeros += b->zeros;
    a->integers += b->integers;
    moments_merge(&a->mom, &b->mom);
    if (a->pairs && b->pairs) pairsum_merge(a->pairs, b->pairs);
    hll_merge(a->distinct, b->distinct);
    int was_overflowed = values_overflowed(a->vals);
    const uint32_t *map = m->same_classes ? NULL : m->map;
    if (values_merge(a->vals, b->vals) != 0 || buckets_merge(a->bins, b->bins, map, m->map_len) != 0 ||
        (a->cross && b->cross && crosstab_merge(a->cross, b->cross, map, m->map_len, m->yshift) != 0))
        return -1;
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
    return 0;
}

int column_seal(summary_column *c)
{
    int rc = 0;
    buckets_seal(c->bins);
    if (values_seal(c->vals) != 0) rc = -1;
    if (c->cross && crosstab_seal(c->cross) != 0) rc = -1;
    return rc;
}

int column_sealed(const summary_column *c)
{
    return buckets_sealed(c->bins) && values_sealed(c->vals) &&
           (!c->cross || crosstab_sealed(c->cross));
}
