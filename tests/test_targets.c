/* Tests for a scan with several targets and the file that holds them
 * (summary_set_*, scan_files_set; summary/summary.h "several targets").
 *
 * The reference is sheaf's own single-target scan, whose numbers the
 * reference suites hold against scipy, numpy and pandas (tests/ref/): each
 * target's summary from the one pass must be that scan's summary file byte
 * for byte, on the open datasets penguins and tips (shared/data/open).
 */
#include <criterion/criterion.h>

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "summary/scan.h"
#include "testutil.h"

static char path_of[512];

/* The open dataset's path; the test is skipped where the data is absent
 * (as tests/cli/test_targets.sh does). */
static const char *open_data(const char *name)
{
    snprintf(path_of, sizeof path_of, "%s/open/%s", testutil_data_dir(), name);
    if (access(path_of, R_OK) != 0) cr_skip_test("%s: not on this machine", path_of);
    return path_of;
}

/* The bytes summary_write gives for s. */
static unsigned char *file_bytes(const summary *s, const char *dir, const char *name, size_t *len)
{
    char path[600], err[512];
    snprintf(path, sizeof path, "%s/%s", dir, name);
    cr_assert_eq(summary_write(s, path, err, sizeof err), SUMMARY_OK, "%s", err);
    return testutil_read_file(path, len);
}

/* The scan of `data`; seal_later leaves its summaries unsealed
 * (scan_options.seal_later). */
static summary_set *scan_set_as(const char *data, const char *targets, unsigned threads,
                                size_t chunk_bytes, uint32_t max_classes, int seal_later)
{
    scan_options o;
    scan_options_defaults(&o);
    o.targets = targets;
    o.threads = threads;
    o.seal_later = seal_later;
    if (chunk_bytes) o.chunk_bytes = chunk_bytes;
    if (max_classes) o.opt.max_classes = max_classes;
    summary_set *set = NULL;
    char err[1024];
    const char *paths[1] = {data};
    scan_status st = scan_files_set(&o, paths, 1, &set, err, sizeof err);
    summary_options_free(&o.opt);
    cr_assert_eq(st, SCAN_OK, "%s", err);
    return set;
}

static summary_set *scan_set(const char *data, const char *targets, unsigned threads,
                             size_t chunk_bytes, uint32_t max_classes)
{
    return scan_set_as(data, targets, threads, chunk_bytes, max_classes, 0);
}

static summary *scan_one(const char *data, const char *target, unsigned threads,
                         size_t chunk_bytes, uint32_t max_classes)
{
    summary_set *set = scan_set(data, target, threads, chunk_bytes, max_classes);
    cr_assert_eq(set->n, 1);
    summary *s = summary_set_take(set, 0);
    summary_set_free(set);
    return s;
}

/* Each part of the scan of `targets` equals the scan of its target alone. */
static void parts_equal_single_scans(const char *data, const char *const *names, size_t n,
                                     const char *targets, unsigned threads, size_t chunk_bytes,
                                     uint32_t max_classes)
{
    char dir[256];
    testutil_temp_dir(dir, sizeof dir);
    summary_set *set = scan_set(data, targets, threads, chunk_bytes, max_classes);
    cr_assert_eq(set->n, n);
    for (size_t t = 0; t < n; t++) {
        cr_assert_str_eq(set->parts[t]->opt.target, names[t]);
        summary *alone = scan_one(data, names[t], 1, chunk_bytes, max_classes);
        size_t la, lb;
        unsigned char *a = file_bytes(set->parts[t], dir, "part.sheaf", &la);
        unsigned char *b = file_bytes(alone, dir, "alone.sheaf", &lb);
        cr_expect(la == lb && memcmp(a, b, la) == 0,
                  "%s: target %s of '%s' (-j%u) differs from its own scan (%zu vs %zu bytes)",
                  data, names[t], targets, threads, la, lb);
        free(a);
        free(b);
        summary_free(alone);
    }
    summary_set_free(set);
    testutil_remove_dir(dir);
}

Test(targets, each_part_is_the_single_target_scan_penguins)
{
    const char *names[] = {"species", "body_mass_g", "sex"};
    for (unsigned j = 1; j <= 3; j++)
        parts_equal_single_scans(open_data("penguins.csv"), names, 3, "species,body_mass_g,sex", j,
                                 0, 0);
}

Test(targets, each_part_is_the_single_target_scan_tips)
{
    const char *names[] = {"tip", "day", "total_bill"};
    for (unsigned j = 1; j <= 3; j++)
        parts_equal_single_scans(open_data("tips.csv"), names, 3, "tip,day,total_bill", j, 0, 0);
}

/* Small chunks and few classes: the numeric targets drop their classes and
 * renumber their cells inside chunks, so their blocks leave the grid there
 * (the path that decodes a chunk's cells again). */
Test(targets, parts_whose_blocks_leave_the_grid_equal_their_own_scans)
{
    const char *names[] = {"total_bill", "day", "tip"};
    for (unsigned j = 1; j <= 3; j++)
        parts_equal_single_scans(open_data("tips.csv"), names, 3, "total_bill,day,tip", j, 700, 12);
}

Test(targets, file_round_trip_and_choice)
{
    char dir[256], path[600], err[1024];
    testutil_temp_dir(dir, sizeof dir);
    snprintf(path, sizeof path, "%s/two.sheaf", dir);
    summary_set *set = scan_set(open_data("penguins.csv"), "species,body_mass_g", 2, 0, 0);
    cr_assert_eq(summary_set_write(set, path, err, sizeof err), SUMMARY_OK, "%s", err);
    summary_set *back = NULL;
    cr_assert_eq(summary_set_read(path, &back, err, sizeof err), SUMMARY_OK, "%s", err);
    cr_assert_eq(back->n, 2);
    cr_expect_eq(summary_set_find(back, "body_mass_g"), 1);
    cr_expect_eq(summary_set_find(back, "island"), -1);
    size_t la, lb;
    for (size_t t = 0; t < 2; t++) {
        unsigned char *a = file_bytes(set->parts[t], dir, "a.sheaf", &la);
        unsigned char *b = file_bytes(back->parts[t], dir, "b.sheaf", &lb);
        cr_expect(la == lb && memcmp(a, b, la) == 0, "part %zu changed in the file", t);
        free(a);
        free(b);
    }
    /* One summary: summary_read refuses the file and names the targets. */
    summary *s = NULL;
    cr_expect_eq(summary_read(path, &s, err, sizeof err), SUMMARY_ERR_TARGETS);
    cr_expect(strstr(err, "species, body_mass_g") != NULL, "%s", err);
    cr_expect_eq(summary_read_target(path, NULL, &s, err, sizeof err), SUMMARY_ERR_TARGETS);
    cr_expect_eq(summary_read_target(path, "island", &s, err, sizeof err), SUMMARY_ERR_TARGETS);
    cr_assert_eq(summary_read_target(path, "species", &s, err, sizeof err), SUMMARY_OK, "%s", err);
    cr_expect_str_eq(s->opt.target, "species");
    summary_free(s);
    summary_set_free(back);
    summary_set_free(set);
    testutil_remove_dir(dir);
}

Test(targets, merge_needs_the_same_targets_in_the_same_order)
{
    summary_set *a = scan_set(open_data("penguins.csv"), "species,sex", 1, 0, 0);
    summary_set *b = scan_set(open_data("penguins.csv"), "sex,species", 1, 0, 0);
    summary_set *c = scan_set(open_data("penguins.csv"), "species", 1, 0, 0);
    char err[1024];
    cr_expect_eq(summary_set_merge(a, b, err, sizeof err), SUMMARY_ERR_INCOMPATIBLE);
    cr_expect(strstr(err, "species, sex vs sex, species") != NULL, "%s", err);
    cr_expect_eq(summary_set_merge(a, c, err, sizeof err), SUMMARY_ERR_INCOMPATIBLE);
    summary_set_free(a);
    summary_set_free(b);
    summary_set_free(c);
}

Test(targets, scan_finish_refuses_several_targets)
{
    scan_options o;
    scan_options_defaults(&o);
    o.targets = "species,sex";
    o.threads = 1;
    scan_context *sc = scan_create(&o);
    cr_assert_eq(scan_path(sc, open_data("penguins.csv")), SCAN_OK, "%s", scan_error(sc));
    cr_expect_null(scan_finish(sc));
    cr_expect(strstr(scan_error(sc), "scan_finish_set") != NULL, "%s", scan_error(sc));
    scan_free(sc);
    summary_options_free(&o.opt);
}

Test(targets, a_header_name_with_a_comma_is_one_target)
{
    char dir[256], err[1024], file[600];
    testutil_temp_dir(dir, sizeof dir);
    const char *p = testutil_write_file(dir, "t.csv", "x,\"a,b\",a,b\n1,u,2,3\n2,v,3,4\n3,u,5,1\n",
                                        file, sizeof file);
    scan_options o;
    scan_options_defaults(&o);
    o.targets = "a,b";
    o.threads = 1;
    summary_set *set = NULL;
    const char *paths[1] = {p};
    cr_assert_eq(scan_files_set(&o, paths, 1, &set, err, sizeof err), SCAN_OK, "%s", err);
    cr_assert_eq(set->n, 1);
    cr_expect_str_eq(set->parts[0]->opt.target, "a,b");
    summary_set_free(set);
    o.targets = "x,a";
    cr_assert_eq(scan_files_set(&o, paths, 1, &set, err, sizeof err), SCAN_OK, "%s", err);
    cr_expect_eq(set->n, 2);
    summary_set_free(set);
    o.targets = "x,x";
    cr_expect_eq(scan_files_set(&o, paths, 1, &set, err, sizeof err), SCAN_ERR_USAGE);
    cr_expect(strstr(err, "'x' is named twice") != NULL, "%s", err);
    o.targets = "x,nope";
    cr_expect_eq(scan_files_set(&o, paths, 1, &set, err, sizeof err), SCAN_ERR_USAGE);
    cr_expect(strstr(err, "'nope'") != NULL, "%s", err);
    summary_options_free(&o.opt);
    testutil_remove_dir(dir);
}

/* ---- sealed while written (summary_set_seal_write) ------------------------ */

/* Written while sealed on 1, 2, 3 and 8 threads, the file is the bytes of
 * the same scan sealed first and written after, and the set ends sealed. */
static void sealed_while_written(const char *data, const char *targets)
{
    char dir[256], path[600], err[1024];
    testutil_temp_dir(dir, sizeof dir);
    snprintf(path, sizeof path, "%s/first.sheaf", dir);
    summary_set *ref = scan_set(data, targets, 1, 0, 0);
    cr_assert_eq(summary_set_write(ref, path, err, sizeof err), SUMMARY_OK, "%s", err);
    size_t lr = 0;
    unsigned char *want = testutil_read_file(path, &lr);
    const unsigned threads[] = {1, 2, 3, 8};
    for (size_t k = 0; k < sizeof threads / sizeof *threads; k++) {
        summary_set *set = scan_set_as(data, targets, threads[k], 0, 0, 1);
        cr_expect(!summary_sealed(set->parts[0]), "%s: the scan sealed it already", data);
        snprintf(path, sizeof path, "%s/while.sheaf", dir);
        cr_assert_eq(summary_set_seal_write(set, path, threads[k], err, sizeof err), SUMMARY_OK,
                     "%s", err);
        for (size_t t = 0; t < set->n; t++)
            cr_expect(summary_sealed(set->parts[t]), "part %zu not sealed after the write", t);
        size_t lg = 0;
        unsigned char *got = testutil_read_file(path, &lg);
        cr_expect(lg == lr && memcmp(got, want, lr) == 0,
                  "%s, targets '%s', %u threads: %zu bytes against %zu sealed first", data,
                  targets ? targets : "", threads[k], lg, lr);
        free(got);
        summary_set_free(set);
    }
    free(want);
    summary_set_free(ref);
    testutil_remove_dir(dir);
}

Test(targets, sealed_while_written_equals_sealed_then_written_penguins)
{
    const char *data = open_data("penguins.csv");
    sealed_while_written(data, NULL);
    sealed_while_written(data, "species");
    sealed_while_written(data, "species,body_mass_g");
}

Test(targets, sealed_while_written_equals_sealed_then_written_wide)
{
    /* 160 columns of decimals (a fixed linear congruential sequence), so the
     * gate hands out many columns to many threads. */
    char dir[256], file[600];
    testutil_temp_dir(dir, sizeof dir);
    size_t cap = 8u << 20, len = 0;
    char *text = malloc(cap);
    cr_assert_not_null(text);
    for (int j = 0; j < 160; j++) len += (size_t)sprintf(text + len, "%sc%d", j ? "," : "", j);
    text[len++] = '\n';
    uint64_t x = 12345;
    for (int i = 0; i < 3000; i++) {
        for (int j = 0; j < 160; j++) {
            x = x * 6364136223846793005ull + 1442695040888963407ull;
            len += (size_t)sprintf(text + len, "%s%.3f", j ? "," : "",
                                   (double)(x >> 40) / 1000.0 - 8000.0);
        }
        text[len++] = '\n';
    }
    text[len] = 0;
    const char *p = testutil_write_file(dir, "wide.csv", text, file, sizeof file);
    free(text);
    sealed_while_written(p, NULL);
    sealed_while_written(p, "c7");
    testutil_remove_dir(dir);
}

Test(targets, sealed_while_written_seals_even_when_the_write_fails)
{
    char err[1024];
    summary_set *set = scan_set_as(open_data("penguins.csv"), "species", 2, 0, 0, 1);
    cr_expect_neq(summary_set_seal_write(set, "/nonexistent-dir/x.sheaf", 2, err, sizeof err),
                  SUMMARY_OK);
    cr_expect(strstr(err, "/nonexistent-dir/x.sheaf") != NULL, "%s", err);
    cr_expect(summary_sealed(set->parts[0]));
    summary_set_free(set);
}
