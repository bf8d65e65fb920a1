/* Tests for summary: the class dictionary, dropping classes past
 * --max-classes, merge (class maps, incompatible options, out of memory) and
 * the file (write / read / decode round trip, damage).
 *
 * Summaries are built through the public calls: summary_create and
 * summary_class_of directly, or scan_files on small CSV files written to a
 * temporary directory.  Every expected count, mean and sum of squares below
 * is worked by hand from the few rows written (pandas is not available
 * inside Criterion); the arithmetic is in the comment beside it.  Checks of a
 * merge against the whole-file scan compare sheaf with itself and sit next
 * to the hand-worked values.
 *
 * Out of memory is injected by replacing malloc, calloc and realloc in this
 * binary (ELF symbol interposition, which glibc supports: its own internal
 * allocations such as strdup's use the replacement too).  The replacement
 * passes every call to glibc's allocator (__libc_malloc ...) until a test
 * arms it to fail after N more calls; every test runs in its own process
 * (Criterion forks), so the counter is never shared.
 */
#include <criterion/criterion.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <xxhash.h>

#include "summary/scan.h"
#include "summary/summary.h"
#include "testutil.h"

/* ---- allocation failure injection ----------------------------------------- */

extern void *__libc_malloc(size_t n);
extern void *__libc_calloc(size_t n, size_t size);
extern void *__libc_realloc(void *p, size_t n);

static long alloc_budget = -1; /* allocations left before failing; -1: never fail */
static long alloc_failures;    /* allocations refused since arming */

static int alloc_refused(void)
{
    if (alloc_budget < 0) return 0;
    if (alloc_budget == 0) { alloc_failures++; return 1; }
    alloc_budget--;
    return 0;
}

void *malloc(size_t n) { return alloc_refused() ? NULL : __libc_malloc(n); }
void *calloc(size_t n, size_t size) { return alloc_refused() ? NULL : __libc_calloc(n, size); }
void *realloc(void *p, size_t n) { return alloc_refused() ? NULL : __libc_realloc(p, n); }

static void fail_allocations_after(long n)
{
    alloc_failures = 0;
    alloc_budget = n;
}

static void allow_allocations(void) { alloc_budget = -1; }

/* ---- helpers ---------------------------------------------------------------- */

static char dir[256];

static void make_dir(void) { testutil_temp_dir(dir, sizeof dir); }
static void remove_dir(void) { testutil_remove_dir(dir); }

/* Scans text (written to dir/name) with a target, max_classes (0: default)
 * and a declared task. */
static summary *scan_task(const char *name, const char *text, const char *target,
                          uint32_t max_classes, target_task task, scan_status *status, char *err,
                          size_t errlen)
{
    char path[512];
    testutil_write_file(dir, name, text, path, sizeof path);
    scan_options o;
    scan_options_defaults(&o);
    if (target) o.opt.target = strdup(target);
    if (max_classes) o.opt.max_classes = max_classes;
    o.opt.task = task;
    summary *s = testutil_scan(path, &o, status, err, errlen);
    summary_options_free(&o.opt);
    return s;
}

static summary *scan_text(const char *name, const char *text, const char *target,
                          uint32_t max_classes, scan_status *status, char *err, size_t errlen)
{
    return scan_task(name, text, target, max_classes, TASK_AUTO, status, err, errlen);
}

static summary *must_scan_task(const char *name, const char *text, const char *target,
                               uint32_t max_classes, target_task task)
{
    char err[512] = "";
    scan_status st;
    summary *s = scan_task(name, text, target, max_classes, task, &st, err, sizeof err);
    cr_assert_not_null(s, "scan of %s: status %d: %s", name, (int)st, err);
    return s;
}

static summary *must_scan(const char *name, const char *text, const char *target,
                          uint32_t max_classes)
{
    return must_scan_task(name, text, target, max_classes, TASK_AUTO);
}

static size_t column_index(const summary *s, const char *name)
{
    for (size_t i = 0; i < s->ncols; i++)
        if (strcmp(s->cols[i].name, name) == 0) return i;
    cr_assert_fail("no column %s", name);
    return 0;
}

/* Index 0.. of the class with this label, or -1. */
static int class_index(const summary *s, const char *label)
{
    for (uint32_t c = 0; c < s->nclasses; c++)
        if (strcmp(s->class_label[c], label) == 0) return (int)c;
    return -1;
}

/* Rows, mean and M2 of column col within a class (mean back from the frame). */
static void expect_class(const summary *s, const char *label, uint64_t rows, const char *col,
                         double mean, double m2)
{
    int k = class_index(s, label);
    cr_assert_geq(k, 0, "class %s missing", label);
    cr_expect_eq(s->class_rows[k], rows, "class %s: %llu rows, want %llu", label,
                 (unsigned long long)s->class_rows[k], (unsigned long long)rows);
    const summary_column *c = &s->cols[column_index(s, col)];
    cr_assert_not_null(c->cls);
    const class_moments *m = &c->cls[k];
    double got_mean = class_moments_mean(m) + (c->mom.has_ref ? c->mom.ref.value : 0);
    cr_expect_eq(m->n, rows, "class %s: %s n %llu", label, col, (unsigned long long)m->n);
    cr_expect(fabs(got_mean - mean) <= 1e-12 * (1 + fabs(mean)), "class %s: mean %.17g, want %g",
              label, got_mean, mean);
    cr_expect(fabs(m->m2 - m2) <= 1e-12 * (1 + fabs(m2)), "class %s: M2 %.17g, want %g", label,
              m->m2, m2);
}

static summary_status merge(summary *into, summary *from, char *err, size_t errlen)
{
    err[0] = '\0';
    return summary_merge(into, from, err, errlen);
}

/* Shards of one table whose first sight of the classes differs: A sees b, a,
 * c; B sees c, d, a.  The whole table (A's rows then B's) by hand:
 *   b: x = 1, 3   2 rows, mean 2,   M2 (1-2)^2 + (3-2)^2     = 2
 *   a: x = 2, 7   2 rows, mean 4.5, M2 2.5^2 + 2.5^2         = 12.5
 *   c: x = 4, 5   2 rows, mean 4.5, M2 0.5^2 + 0.5^2         = 0.5
 *   d: x = 6      1 row,  mean 6,   M2 0                               */
static const char SHARD_A[] = "x,label\n1,b\n2,a\n3,b\n4,c\n";
static const char SHARD_B[] = "x,label\n5,c\n6,d\n7,a\n";
static const char WHOLE_AB[] = "x,label\n1,b\n2,a\n3,b\n4,c\n5,c\n6,d\n7,a\n";

static void expect_abcd(const summary *s)
{
    cr_expect_eq(s->nclasses, 4);
    cr_expect_eq(s->rows, 7);
    expect_class(s, "b", 2, "x", 2, 2);
    expect_class(s, "a", 2, "x", 4.5, 12.5);
    expect_class(s, "c", 2, "x", 4.5, 0.5);
    expect_class(s, "d", 1, "x", 6, 0);
}

/* ---- class dictionary --------------------------------------------------------- */

static summary *empty_with_target(const char *target, uint32_t max_classes)
{
    summary_options o;
    summary_options_defaults(&o);
    o.target = strdup(target);
    if (max_classes) o.max_classes = max_classes;
    char *names[] = {"x", "label"};
    summary *s = summary_create(&o, 2, names, NULL, 0);
    summary_options_free(&o);
    cr_assert_not_null(s);
    return s;
}

static uint32_t class_of_text(summary *s, const char *t)
{
    return summary_class_of(s, XXH3_64bits(t, strlen(t)), t, strlen(t), NULL);
}

Test(summary_classes, indices_follow_first_sight_and_repeat_for_the_same_text)
{
    summary *s = empty_with_target("label", 0);
    cr_expect_eq(class_of_text(s, "pear"), 1);
    cr_expect_eq(class_of_text(s, "fig"), 2);
    cr_expect_eq(class_of_text(s, "pear"), 1);
    cr_expect_eq(class_of_text(s, "plum"), 3);
    cr_expect_eq(s->nclasses, 3);
    cr_expect_str_eq(s->class_label[1], "fig");
    cr_expect_eq(s->class_numeric[1], 0);
    summary_free(s);
}

Test(summary_classes, a_class_past_max_classes_gets_index_zero_and_known_ones_still_map)
{
    summary *s = empty_with_target("label", 2);
    cr_expect_eq(class_of_text(s, "pear"), 1);
    cr_expect_eq(class_of_text(s, "fig"), 2);
    cr_expect_eq(class_of_text(s, "plum"), 0);
    cr_expect_eq(s->nclasses, 2);
    cr_expect_eq(class_of_text(s, "fig"), 2);
    summary_free(s);
}

Test(summary_classes, scan_counts_classes_and_per_class_moments_by_hand,
     .init = make_dir, .fini = remove_dir)
{
    summary *s = must_scan("whole.csv", WHOLE_AB, "label", 0);
    expect_abcd(s);
    cr_expect_str_eq(s->class_label[0], "b"); /* first sight order: b, a, c, d */
    cr_expect_str_eq(s->class_label[3], "d");
    summary_free(s);
}

/* ---- merge of class dictionaries ------------------------------------------------ */

Test(summary_merge, shards_seeing_classes_in_different_orders_merge_to_the_whole_file_classes,
     .init = make_dir, .fini = remove_dir)
{
    summary *a = must_scan("a.csv", SHARD_A, "label", 0);
    summary *b = must_scan("b.csv", SHARD_B, "label", 0);
    summary *whole = must_scan("whole.csv", WHOLE_AB, "label", 0);
    char err[512];
    cr_assert_eq(merge(a, b, err, sizeof err), SUMMARY_OK, "%s", err);
    expect_abcd(a); /* hand-worked values */
    /* Same dictionary, in the same order, as the whole-file scan (sheaf against itself). */
    cr_assert_eq(a->nclasses, whole->nclasses);
    for (uint32_t c = 0; c < a->nclasses; c++) {
        cr_expect_str_eq(a->class_label[c], whole->class_label[c]);
        cr_expect_eq(a->class_rows[c], whole->class_rows[c]);
        cr_expect_eq(a->class_hash[c], whole->class_hash[c]);
    }
    summary_free(a);
    summary_free(b);
    summary_free(whole);
}

Test(summary_merge, merge_in_the_other_order_gives_the_same_classes_and_counts,
     .init = make_dir, .fini = remove_dir)
{
    summary *a = must_scan("a.csv", SHARD_A, "label", 0);
    summary *b = must_scan("b.csv", SHARD_B, "label", 0);
    char err[512];
    cr_assert_eq(merge(b, a, err, sizeof err), SUMMARY_OK, "%s", err);
    expect_abcd(b);
    cr_expect_str_eq(b->class_label[0], "c"); /* B's order first: c, d, a, then b */
    cr_expect_str_eq(b->class_label[3], "b");
    summary_free(a);
    summary_free(b);
}

Test(summary_merge, shards_with_disjoint_classes_merge_to_their_union,
     .init = make_dir, .fini = remove_dir)
{
    /* By hand: ant x = 1, 3 (mean 2, M2 2); bee x = 2 (mean 2, M2 0);
     * cow x = 10, 20, 30 (mean 20, M2 200); doe x = 5 (mean 5, M2 0). */
    summary *a = must_scan("a.csv", "x,label\n1,ant\n2,bee\n3,ant\n", "label", 0);
    summary *b = must_scan("b.csv", "x,label\n10,cow\n5,doe\n20,cow\n30,cow\n", "label", 0);
    char err[512];
    cr_assert_eq(merge(a, b, err, sizeof err), SUMMARY_OK, "%s", err);
    cr_expect_eq(a->nclasses, 4);
    cr_expect_eq(a->rows, 7);
    expect_class(a, "ant", 2, "x", 2, 2);
    expect_class(a, "bee", 1, "x", 2, 0);
    expect_class(a, "cow", 3, "x", 20, 200);
    expect_class(a, "doe", 1, "x", 5, 0);
    summary_free(a);
    summary_free(b);
}

Test(summary_merge, byte_range_shards_of_one_file_merge_to_its_classes,
     .init = make_dir, .fini = remove_dir)
{
    char path[512];
    testutil_write_file(dir, "whole.csv", WHOLE_AB, path, sizeof path);
    summary *part[3];
    char err[512];
    for (uint32_t i = 0; i < 3; i++) {
        scan_options o;
        scan_options_defaults(&o);
        o.opt.target = strdup("label");
        o.shard_index = i + 1;
        o.shard_count = 3;
        scan_status st;
        part[i] = testutil_scan(path, &o, &st, err, sizeof err);
        summary_options_free(&o.opt);
        cr_assert_not_null(part[i], "shard %u: %s", i + 1, err);
    }
    cr_assert_eq(merge(part[0], part[1], err, sizeof err), SUMMARY_OK, "%s", err);
    cr_assert_eq(merge(part[0], part[2], err, sizeof err), SUMMARY_OK, "%s", err);
    expect_abcd(part[0]);
    for (int i = 0; i < 3; i++) summary_free(part[i]);
}

/* ---- classes past the limit ---------------------------------------------------- */

/* y takes the five values 1..5 (two rows each); x = 10 * row. */
static const char FIVE_LEVELS[] =
    "x,y\n10,1\n20,2\n30,3\n40,4\n50,5\n60,1\n70,2\n80,3\n90,4\n100,5\n";

Test(summary_max_classes, numeric_target_past_the_limit_continues_as_regression,
     .init = make_dir, .fini = remove_dir)
{
    summary *s = must_scan("five.csv", FIVE_LEVELS, "y", 3);
    cr_expect_eq(s->has_classes, 0);
    cr_expect_eq(s->classes_dropped, 1);
    cr_expect_eq(s->nclasses, 0);
    cr_expect_eq(summary_target_task(s, 0.99), TASK_REGRESS);
    /* The target's own moments are kept: n 10, mean (2 * 15) / 10 = 3. */
    const summary_column *y = &s->cols[column_index(s, "y")];
    cr_expect_eq(y->mom.n, 10);
    cr_expect_float_eq(moments_mean(&y->mom), 3.0, 1e-15);
    cr_expect_null(s->cols[column_index(s, "x")].cls);
    summary_free(s);
}

Test(summary_max_classes, numeric_target_at_the_limit_keeps_its_classes,
     .init = make_dir, .fini = remove_dir)
{
    summary *s = must_scan("three.csv", "x,y\n1,7\n2,8\n3,9\n4,7\n", "y", 3);
    cr_expect_eq(s->has_classes, 1);
    cr_expect_eq(s->nclasses, 3);
    expect_class(s, "7", 2, "x", 2.5, 4.5); /* x = 1, 4: mean 2.5, M2 2 * 1.5^2 */
    summary_free(s);
}

Test(summary_max_classes, text_target_past_the_limit_is_an_input_error,
     .init = make_dir, .fini = remove_dir)
{
    char err[512] = "";
    scan_status st;
    summary *s = scan_text("text.csv", "x,label\n1,a\n2,b\n3,c\n4,d\n", "label", 3, &st, err,
                           sizeof err);
    cr_expect_null(s);
    cr_expect_eq(st, SCAN_ERR_INPUT);
    cr_expect(strstr(err, "more than 3 classes") != NULL, "message: %s", err);
    cr_expect(strstr(err, "line 5") != NULL, "message names the line: %s", err);
}

Test(summary_max_classes, numeric_shards_together_past_the_limit_merge_as_regression,
     .init = make_dir, .fini = remove_dir)
{
    summary *a = must_scan("a.csv", "x,y\n1,1\n2,2\n3,1\n", "y", 3);
    summary *b = must_scan("b.csv", "x,y\n4,3\n5,4\n", "y", 3);
    cr_assert_eq(a->has_classes, 1);
    cr_assert_eq(b->has_classes, 1);
    char err[512];
    cr_assert_eq(merge(a, b, err, sizeof err), SUMMARY_OK, "%s", err);
    cr_expect_eq(a->has_classes, 0);
    cr_expect_eq(a->classes_dropped, 1);
    cr_expect_eq(a->rows, 5);
    cr_expect_eq(summary_target_task(a, 0.99), TASK_REGRESS);
    /* y = 1, 2, 1, 3, 4: mean 11 / 5 = 2.2. */
    cr_expect_float_eq(moments_mean(&a->cols[1].mom), 2.2, 1e-15);
    summary_free(a);
    summary_free(b);
}

Test(summary_max_classes, a_dropped_side_drops_the_other_sides_classes,
     .init = make_dir, .fini = remove_dir)
{
    summary *a = must_scan("a.csv", "x,y\n1,1\n2,2\n", "y", 3);
    summary *b = must_scan("b.csv", FIVE_LEVELS, "y", 3);
    cr_assert_eq(b->classes_dropped, 1);
    char err[512];
    cr_assert_eq(merge(a, b, err, sizeof err), SUMMARY_OK, "%s", err);
    cr_expect_eq(a->has_classes, 0);
    cr_expect_eq(a->classes_dropped, 1);
    cr_expect_eq(a->rows, 12);
    summary_free(a);
    summary_free(b);
}

Test(summary_max_classes, text_shards_together_past_the_limit_are_incompatible,
     .init = make_dir, .fini = remove_dir)
{
    summary *a = must_scan("a.csv", "x,label\n1,ant\n2,bee\n", "label", 3);
    summary *b = must_scan("b.csv", "x,label\n3,cow\n4,doe\n", "label", 3);
    char err[512];
    cr_expect_eq(merge(a, b, err, sizeof err), SUMMARY_ERR_INCOMPATIBLE);
    cr_expect(strstr(err, "more than 3") != NULL, "message: %s", err);
    summary_free(a);
    summary_free(b);
}

/* ---- incompatible options ------------------------------------------------------- */

typedef enum {
    DIFF_MAX_LEVELS, DIFF_LABEL_BYTES, DIFF_BUCKET_BUDGET, DIFF_MISSING, DIFF_TARGET,
    DIFF_NO_TARGET, DIFF_TASK, DIFF_MAX_CLASSES, DIFF_COLUMN_NAME, DIFF_COLUMN_COUNT,
    DIFF_COLUMN_MODE, DIFF_COUNT
} difference;

/* An empty summary of columns x, y, z with target y, changed by d. */
static summary *variant(int d)
{
    summary_options o;
    summary_options_defaults(&o);
    o.target = strdup("y");
    char *names[] = {"x", "y", "z"};
    column_mode modes[] = {COLUMN_AUTO, COLUMN_AUTO, COLUMN_AUTO};
    size_t ncols = 3;
    switch (d) {
    case DIFF_MAX_LEVELS: o.max_levels = 512; break;
    case DIFF_LABEL_BYTES: o.label_bytes = 16; break;
    case DIFF_BUCKET_BUDGET: o.bucket_budget = 1024; break;
    case DIFF_MISSING: free(o.missing[--o.n_missing]); break;
    case DIFF_TARGET: free(o.target); o.target = strdup("z"); break;
    case DIFF_NO_TARGET: free(o.target); o.target = NULL; break;
    case DIFF_TASK: o.task = TASK_CLASSIFY; break;
    case DIFF_MAX_CLASSES: o.max_classes = 5; break;
    case DIFF_COLUMN_NAME: names[2] = "w"; break;
    case DIFF_COLUMN_COUNT: ncols = 2; break;
    case DIFF_COLUMN_MODE: modes[0] = COLUMN_CATEGORICAL; break;
    default: break;
    }
    summary *s = summary_create(&o, ncols, names, modes, 0);
    summary_options_free(&o);
    cr_assert_not_null(s);
    return s;
}

Test(summary_merge, incompatible_options_are_refused_and_leave_into_unchanged)
{
    static const char *const named[DIFF_COUNT] = {
        "max levels", "label bytes", "bucket budget", "missing", "target", "target", "task",
        "max classes", "column 'z' is missing from the second; column 'w' is missing from the first",
        "columns", "declared"};
    for (int d = 0; d < DIFF_COUNT; d++) {
        summary *base = variant(-1);
        summary *other = variant(d);
        base->rows = 11;
        other->rows = 5;
        char err[512];
        cr_expect_eq(merge(base, other, err, sizeof err), SUMMARY_ERR_INCOMPATIBLE,
                     "difference %d merged", d);
        cr_expect(strstr(err, named[d]) != NULL, "difference %d: message '%s' lacks '%s'", d,
                  err, named[d]);
        cr_expect_eq(base->rows, 11, "difference %d changed into", d);
        cr_expect_eq(summary_compatible(other, base, err, sizeof err), 0);
        summary_free(base);
        summary_free(other);
    }
}

/* An empty summary of the named columns, no target. */
static summary *columns_named(char **names, size_t n)
{
    summary_options o;
    summary_options_defaults(&o);
    column_mode modes[16] = {0};
    summary *s = summary_create(&o, n, names, modes, 0);
    summary_options_free(&o);
    cr_assert_not_null(s);
    return s;
}

Test(summary_merge, schema_differences_are_named_by_column)
{
    char *a[] = {"id", "fan_rpm", "temp", "rssi_dbm"}, *b[] = {"id", "temp", "rssi_dbm"};
    char *c[] = {"id", "rssi_dbm", "temp", "fan_rpm"};
    summary *sa = columns_named(a, 4), *sb = columns_named(b, 3), *sc = columns_named(c, 4);
    char err[512];
    /* A missing column shifts the later ones: that is not listed as a move. */
    cr_expect_eq(summary_compatible_named(sa, sb, "A", "B", err, sizeof err), 0);
    cr_expect_str_eq(err, "4 columns vs 3; column 'fan_rpm' is missing from B");
    cr_expect_eq(summary_compatible_named(sb, sa, "B", "A", err, sizeof err), 0);
    cr_expect_str_eq(err, "3 columns vs 4; column 'fan_rpm' is missing from B");
    /* The same columns in another order: the moves, 1-based. */
    cr_expect_eq(summary_compatible_named(sa, sc, "A", "C", err, sizeof err), 0);
    cr_expect_str_eq(err, "column 'fan_rpm' moved from 2 to 4; column 'rssi_dbm' moved from 4 to 2");
    cr_expect_eq(summary_compatible(sa, sb, err, sizeof err), 0);
    cr_expect_str_eq(err, "4 columns vs 3; column 'fan_rpm' is missing from the second");
    summary_free(sa);
    summary_free(sb);
    summary_free(sc);
}

Test(summary_merge, many_schema_differences_end_with_how_many_more)
{
    char *a[] = {"a1", "a2", "a3", "a4", "a5", "a6", "a7", "a8"}, *b[] = {"b1"};
    summary *sa = columns_named(a, 8), *sb = columns_named(b, 1);
    char err[1024];
    cr_expect_eq(summary_compatible_named(sa, sb, "A", "B", err, sizeof err), 0);
    cr_expect_str_eq(err, "8 columns vs 1; columns 'a1', 'a2', 'a3', 'a4', 'a5', 'a6' and 2 more are "
                          "missing from B; column 'b1' is missing from A");
    summary_free(sa);
    summary_free(sb);
}

Test(summary_merge, repeated_names_fall_back_to_positions)
{
    char *a[] = {"x", "x", "y"}, *b[] = {"x", "y", "x"};
    summary *sa = columns_named(a, 3), *sb = columns_named(b, 3);
    char err[512];
    cr_expect_eq(summary_compatible_named(sa, sb, "A", "B", err, sizeof err), 0);
    cr_expect_str_eq(err, "column 2 is 'x' vs 'y'; column 3 is 'y' vs 'x'");
    summary_free(sa);
    summary_free(sb);
}

Test(summary_merge, equal_options_are_compatible)
{
    summary *a = variant(-1), *b = variant(-1);
    char err[512];
    cr_expect_eq(summary_compatible(a, b, err, sizeof err), 1);
    cr_expect_str_eq(err, "");
    summary_free(a);
    summary_free(b);
}

/* ---- file round trip ------------------------------------------------------------ */

static unsigned char *write_bytes(const summary *s, const char *name, size_t *len)
{
    char path[512], err[512];
    snprintf(path, sizeof path, "%s/%s", dir, name);
    cr_assert_eq(summary_write(s, path, err, sizeof err), SUMMARY_OK, "%s", err);
    unsigned char *b = testutil_read_file(path, len);
    cr_assert_not_null(b);
    return b;
}

static void expect_round_trip(const char *csv, const char *target, uint32_t max_classes,
                              target_task task)
{
    summary *s = must_scan_task("in.csv", csv, target, max_classes, task);
    size_t n1, n2, n3;
    unsigned char *b1 = write_bytes(s, "one.sheaf", &n1);
    char path[512], err[512];
    snprintf(path, sizeof path, "%s/one.sheaf", dir);
    summary *r = NULL;
    cr_assert_eq(summary_read(path, &r, err, sizeof err), SUMMARY_OK, "%s", err);
    unsigned char *b2 = write_bytes(r, "two.sheaf", &n2);
    summary *d = NULL;
    cr_assert_eq(summary_decode(b1, n1, &d, err, sizeof err), SUMMARY_OK, "%s", err);
    unsigned char *b3 = write_bytes(d, "three.sheaf", &n3);
    cr_expect_eq(n1, n2, "read back: %zu bytes vs %zu", n2, n1);
    cr_expect_eq(n1, n3, "decoded: %zu bytes vs %zu", n3, n1);
    if (n1 == n2) cr_expect_eq(memcmp(b1, b2, n1), 0, "read back: bytes differ");
    if (n1 == n3) cr_expect_eq(memcmp(b1, b3, n1), 0, "decoded: bytes differ");
    cr_expect_eq(r->rows, s->rows);
    cr_expect_eq(r->nclasses, s->nclasses);
    free(b1); free(b2); free(b3);
    summary_free(s); summary_free(r); summary_free(d);
}

/* A table with text, gaps, a non-finite cell and a ragged row. */
static const char MIXED[] =
    "id,x,word,y\n1,0.5,ant,2\n2,NA,bee,3\n3,1e3,,2\n4,inf,ant,5\n5,-2.25,cow\n6,7,bee,3\n";

Test(summary_file, write_read_write_gives_equal_bytes_without_target,
     .init = make_dir, .fini = remove_dir)
{
    expect_round_trip(MIXED, NULL, 0, TASK_AUTO);
}

Test(summary_file, write_read_write_gives_equal_bytes_with_classes,
     .init = make_dir, .fini = remove_dir)
{
    expect_round_trip(WHOLE_AB, "label", 0, TASK_AUTO);
}

Test(summary_file, write_read_write_gives_equal_bytes_with_regression_target,
     .init = make_dir, .fini = remove_dir)
{
    expect_round_trip(MIXED, "x", 0, TASK_REGRESS);
}

Test(summary_file, write_read_write_gives_equal_bytes_after_classes_were_dropped,
     .init = make_dir, .fini = remove_dir)
{
    expect_round_trip(FIVE_LEVELS, "y", 3, TASK_AUTO);
}

Test(summary_file, merged_summary_round_trips, .init = make_dir, .fini = remove_dir)
{
    summary *a = must_scan("a.csv", SHARD_A, "label", 0);
    summary *b = must_scan("b.csv", SHARD_B, "label", 0);
    char err[512], path[512];
    cr_assert_eq(merge(a, b, err, sizeof err), SUMMARY_OK, "%s", err);
    size_t n1, n2;
    unsigned char *b1 = write_bytes(a, "m.sheaf", &n1);
    snprintf(path, sizeof path, "%s/m.sheaf", dir);
    summary *r = NULL;
    cr_assert_eq(summary_read(path, &r, err, sizeof err), SUMMARY_OK, "%s", err);
    expect_abcd(r);
    cr_expect_eq(r->nsources, 2);
    unsigned char *b2 = write_bytes(r, "m2.sheaf", &n2);
    cr_expect(n1 == n2 && memcmp(b1, b2, n1) == 0, "bytes differ");
    free(b1); free(b2);
    summary_free(a); summary_free(b); summary_free(r);
}

Test(summary_file, damaged_truncated_or_absent_files_are_refused,
     .init = make_dir, .fini = remove_dir)
{
    summary *s = must_scan("in.csv", MIXED, NULL, 0);
    size_t n;
    unsigned char *b = write_bytes(s, "ok.sheaf", &n);
    char err[512];
    summary *r = NULL;
    cr_expect_eq(summary_decode(b, n / 2, &r, err, sizeof err), SUMMARY_ERR_CORRUPT);
    cr_expect_null(r);
    for (size_t at = 0; at < n; at += n / 7 + 1) {
        b[at] ^= 0x20;
        cr_expect_eq(summary_decode(b, n, &r, err, sizeof err), SUMMARY_ERR_CORRUPT,
                     "flipped byte %zu accepted", at);
        b[at] ^= 0x20;
    }
    cr_expect_eq(summary_decode(b, n, &r, err, sizeof err), SUMMARY_OK, "%s", err);
    summary_free(r);
    char path[512];
    snprintf(path, sizeof path, "%s/absent.sheaf", dir);
    r = NULL;
    cr_expect_eq(summary_read(path, &r, err, sizeof err), SUMMARY_ERR_IO);
    free(b);
    summary_free(s);
}

/* ---- out of memory during merge -------------------------------------------------- */

/* Merges copies of (into, from) with allocations failing after n calls, for
 * every n until one merge needs no failure; returns the number of runs.  Every
 * failed merge must say SUMMARY_ERR_MEMORY (not incompatible, not OK). */
static int merge_under_failing_allocations(const char *into_csv, const char *from_csv,
                                           const char *target, uint32_t max_classes)
{
    char path[512], err[512];
    summary *a0 = must_scan("a.csv", into_csv, target, max_classes);
    summary *b0 = must_scan("b.csv", from_csv, target, max_classes);
    snprintf(path, sizeof path, "%s/a.sheaf", dir);
    cr_assert_eq(summary_write(a0, path, err, sizeof err), SUMMARY_OK, "%s", err);
    snprintf(path, sizeof path, "%s/b.sheaf", dir);
    cr_assert_eq(summary_write(b0, path, err, sizeof err), SUMMARY_OK, "%s", err);
    summary_free(a0);
    summary_free(b0);
    for (long n = 0; n < 100000; n++) {
        summary *a = NULL, *b = NULL;
        snprintf(path, sizeof path, "%s/a.sheaf", dir);
        cr_assert_eq(summary_read(path, &a, err, sizeof err), SUMMARY_OK, "%s", err);
        snprintf(path, sizeof path, "%s/b.sheaf", dir);
        cr_assert_eq(summary_read(path, &b, err, sizeof err), SUMMARY_OK, "%s", err);
        err[0] = '\0';
        fail_allocations_after(n);
        summary_status st = summary_merge(a, b, err, sizeof err);
        long refused = alloc_failures;
        allow_allocations();
        if (refused == 0) {
            cr_expect_eq(st, SUMMARY_OK, "merge without a failed allocation: %d (%s)", st, err);
            summary_free(a);
            summary_free(b);
            return (int)n + 1;
        }
        cr_expect_neq(st, SUMMARY_OK, "allocation %ld failed but the merge said OK", n + 1);
        cr_expect_eq(st, SUMMARY_ERR_MEMORY,
                     "allocation %ld failed: status %d (%s), want SUMMARY_ERR_MEMORY (%d)", n + 1,
                     (int)st, err, (int)SUMMARY_ERR_MEMORY);
        summary_free(a);
        summary_free(b);
        if (st != SUMMARY_ERR_MEMORY) return -1; /* one report is enough */
    }
    cr_assert_fail("the merge never finished without a failed allocation");
    return -1;
}

Test(summary_oom, failed_allocation_in_a_merge_of_classes_is_reported_as_memory,
     .init = make_dir, .fini = remove_dir)
{
    int runs = merge_under_failing_allocations(SHARD_A, SHARD_B, "label", 0);
    cr_expect_gt(runs, 1, "no allocation was exercised");
}

Test(summary_oom, failed_allocation_in_a_merge_without_target_is_reported_as_memory,
     .init = make_dir, .fini = remove_dir)
{
    merge_under_failing_allocations(MIXED, MIXED, NULL, 0);
}

/* Today's code reports this as SUMMARY_ERR_INCOMPATIBLE: summary_drop_classes
 * returns -1 both for a text target and when it runs out of memory, and
 * summary_merge maps both to "incompatible".  Expected to fail until that is
 * fixed. */
Test(summary_oom, failed_allocation_while_dropping_classes_in_a_merge_is_reported_as_memory,
     .init = make_dir, .fini = remove_dir)
{
    /* a keeps classes {1, 2}; b dropped its classes (five levels, limit 3). */
    int runs = merge_under_failing_allocations("x,y\n1,1\n2,2\n", FIVE_LEVELS, "y", 3);
    cr_expect_neq(runs, -1);
}

Test(summary_oom, failed_allocation_while_classes_pass_the_limit_in_a_merge_is_reported_as_memory,
     .init = make_dir, .fini = remove_dir)
{
    /* Each side is within the limit of 3; together they have 4 numeric classes. */
    int runs = merge_under_failing_allocations("x,y\n1,1\n2,2\n", "x,y\n3,3\n4,4\n", "y", 3);
    cr_expect_neq(runs, -1);
}
