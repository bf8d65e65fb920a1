/* api_more: the readers and settings of include/sheaf.h that give a C
 * program what `sheaf info`, `screen`, `pca` and `drift` print, compiled
 * against include/ alone (no -Isrc; see the Makefile's rule for
 * build/tests/test_api_more).
 *
 * The reference is sheaf's own command line: each test writes an invented
 * table (the docks of a bicycle-share scheme over two days), scans it with
 * the sheaf binary ($SHEAF_BIN, else ./sheaf), runs the command with
 * `-f json` and reads the figures it needs back with the small JSON reader
 * below; the library's reader must give the same figure, bit for bit (the
 * JSON numbers are printed so that they read back exactly; null stands for
 * a figure that is not finite).  Where a figure is known by construction
 * (the ragged rows, the zeros of a column), the comment says so.  The
 * eigenvalue of the PCA is compared to 1e-12 relative, since OpenBLAS's
 * thread count (which the command sets to 1 and this process does not) may
 * move its last bits. */
#include <criterion/criterion.h>
#include <ctype.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/wait.h>
#include <unistd.h>

#include "sheaf.h"

/* ---- a small JSON reader ------------------------------------------------- */

typedef enum { J_NULL, J_BOOL, J_NUM, J_STR, J_ARR, J_OBJ } jtype;

typedef struct jval {
    jtype t;
    double num;          /* J_NUM, J_BOOL (0 or 1) */
    char *str;           /* J_STR */
    size_t n;            /* J_ARR, J_OBJ: items */
    struct jval **items; /* J_ARR, J_OBJ */
    char **keys;         /* J_OBJ */
} jval;

static const char *jp; /* the parse position */

static void skip_space(void)
{
    while (isspace((unsigned char)*jp)) jp++;
}

static char *parse_string(void)
{
    cr_assert_eq(*jp, '"', "JSON: a string expected at '%.20s'", jp);
    jp++;
    size_t cap = 16, n = 0;
    char *s = malloc(cap);
    while (*jp != '"') {
        cr_assert(*jp, "JSON: an unterminated string");
        char c = *jp++;
        if (c == '\\') {
            c = *jp++;
            if (c == 'n') c = '\n';
            else if (c == 't') c = '\t';
            else if (c == 'r') c = '\r';
            else if (c == 'b') c = '\b';
            else if (c == 'f') c = '\f';
            else if (c == 'u') {
                unsigned v = 0;
                cr_assert_eq(sscanf(jp, "%4x", &v), 1);
                jp += 4;
                cr_assert_lt(v, 0x80u, "JSON: only ASCII escapes are expected here");
                c = (char)v;
            }
        }
        if (n + 2 > cap) s = realloc(s, cap *= 2);
        s[n++] = c;
    }
    jp++;
    s[n] = '\0';
    return s;
}

static jval *parse_value(void)
{
    skip_space();
    jval *v = calloc(1, sizeof *v);
    if (*jp == '{' || *jp == '[') {
        int obj = *jp == '{';
        v->t = obj ? J_OBJ : J_ARR;
        jp++;
        skip_space();
        while (*jp != (obj ? '}' : ']')) {
            v->items = realloc(v->items, (v->n + 1) * sizeof *v->items);
            if (obj) {
                v->keys = realloc(v->keys, (v->n + 1) * sizeof *v->keys);
                v->keys[v->n] = parse_string();
                skip_space();
                cr_assert_eq(*jp, ':');
                jp++;
            }
            v->items[v->n++] = parse_value();
            skip_space();
            if (*jp == ',') { jp++; skip_space(); }
        }
        jp++;
    } else if (*jp == '"') {
        v->t = J_STR;
        v->str = parse_string();
    } else if (!strncmp(jp, "null", 4)) {
        v->t = J_NULL;
        jp += 4;
    } else if (!strncmp(jp, "true", 4) || !strncmp(jp, "false", 5)) {
        v->t = J_BOOL;
        v->num = *jp == 't';
        jp += *jp == 't' ? 4 : 5;
    } else {
        char *end;
        v->t = J_NUM;
        v->num = strtod(jp, &end);
        cr_assert_neq(end, jp, "JSON: a value expected at '%.20s'", jp);
        jp = end;
    }
    return v;
}

static void jfree(jval *v)
{
    if (!v) return;
    for (size_t i = 0; i < v->n; i++) {
        jfree(v->items[i]);
        if (v->keys) free(v->keys[i]);
    }
    free(v->items);
    free(v->keys);
    free(v->str);
    free(v);
}

/* Member `key` of object v, or NULL. */
static jval *jkey(const jval *v, const char *key)
{
    if (!v || v->t != J_OBJ) return NULL;
    for (size_t i = 0; i < v->n; i++)
        if (!strcmp(v->keys[i], key)) return v->items[i];
    return NULL;
}

/* Member `key` of v, which must be there. */
static jval *jmust(const jval *v, const char *key)
{
    jval *m = jkey(v, key);
    cr_assert_not_null(m, "JSON: no member '%s'", key);
    return m;
}

/* The element of array v whose member `key` is the string `name`, or NULL. */
static jval *jfind(const jval *v, const char *key, const char *name)
{
    cr_assert(v && v->t == J_ARR);
    for (size_t i = 0; i < v->n; i++) {
        jval *k = jkey(v->items[i], key);
        if (k && k->t == J_STR && !strcmp(k->str, name)) return v->items[i];
    }
    return NULL;
}

static double jnum(const jval *v, const char *key)
{
    jval *m = jmust(v, key);
    cr_assert(m->t == J_NUM, "JSON: '%s' is not a number", key);
    return m->num;
}

static const char *jstr(const jval *v, const char *key)
{
    jval *m = jmust(v, key);
    cr_assert(m->t == J_STR, "JSON: '%s' is not a string", key);
    return m->str;
}

static int jbool(const jval *v, const char *key)
{
    jval *m = jmust(v, key);
    cr_assert(m->t == J_BOOL, "JSON: '%s' is not true or false", key);
    return (int)m->num;
}

/* The library's figure against the JSON's: equal doubles, or null for one
 * that is not finite. */
static void same_figure(const jval *v, const char *key, double got, const char *what)
{
    jval *m = jmust(v, key);
    if (m->t == J_NULL) {
        cr_expect(!isfinite(got), "%s %s: %.17g, the CLI prints null", what, key, got);
        return;
    }
    cr_assert(m->t == J_NUM, "%s %s: not a number in the JSON", what, key);
    cr_expect(got == m->num, "%s %s: %.17g, the CLI prints %.17g", what, key, got, m->num);
}

/* ---- the fixture ------------------------------------------------------------ */

static char dir[64];

static void make_dir(void)
{
    snprintf(dir, sizeof dir, "/tmp/sheaf-test-api-more-XXXXXX");
    cr_assert_not_null(mkdtemp(dir));
}

static void remove_dir(void)
{
    char cmd[128];
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
    cr_assert_eq(system(cmd), 0);
}

TestSuite(api_more, .init = make_dir, .fini = remove_dir);

/* dir/name, in one of a few rotating buffers. */
static const char *at(const char *name)
{
    static char buf[8][256];
    static int next;
    char *b = buf[next++ % 8];
    snprintf(b, sizeof buf[0], "%s/%s", dir, name);
    return b;
}

static const char *sheaf_bin(void)
{
    const char *b = getenv("SHEAF_BIN");
    return b && *b ? b : "./sheaf";
}

/* Runs `sheaf ARGS` (ARGS formatted) with standard output into dir/out;
 * returns the exit status. */
static int run_sheaf(const char *out, const char *fmt, ...)
{
    char args[1536], cmd[2048];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(args, sizeof args, fmt, ap);
    va_end(ap);
    snprintf(cmd, sizeof cmd, "OPENBLAS_NUM_THREADS=1 '%s' %s >'%s' 2>'%s.err'", sheaf_bin(), args,
             out ? at(out) : "/dev/null", out ? at(out) : at("cmd"));
    int rc = system(cmd);
    return WIFEXITED(rc) ? WEXITSTATUS(rc) : -1;
}

/* Runs sheaf and parses its JSON output (freed with jfree). */
static jval *sheaf_json(const char *fmt, ...)
{
    char args[1536];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(args, sizeof args, fmt, ap);
    va_end(ap);
    int rc = run_sheaf("out.json", "%s", args);
    cr_assert(rc == 0 || rc == 7, "sheaf %s: exit %d", args, rc); /* 7: drift found */
    FILE *f = fopen(at("out.json"), "rb");
    cr_assert_not_null(f);
    static char text[1 << 20];
    size_t n = fread(text, 1, sizeof text - 1, f);
    fclose(f);
    cr_assert_lt(n, sizeof text - 1, "the JSON is larger than the test's buffer");
    text[n] = '\0';
    jp = text;
    return parse_value();
}

static const char *const DISTRICTS[2][4] = {{"north", "south", "east", "harbour"},
                                             {"north", "south", "east", "airport"}};

/* The docks of day `day` (0 or 1): 80 or 70 rows.  dock_id counts rows (an
 * ID); district has four levels (day 1 trades harbour for airport);
 * temp_f is temp_c in Fahrenheit to two decimals (a near copy); repairs
 * holds small whole numbers, mostly 0; battery holds two words among its
 * numbers on day 0 (97.5% numbers); sensor_x and sensor_y follow temp_c
 * closely but are never present in the same row (no pairwise estimate:
 * a pair of the PCA without one); flat is constant; rentals is a measure
 * driven by temp_c, busy a class driven by it.  Row 30 is one field short
 * (busy missing), row 31 one field long. */
static const char *write_docks(int day)
{
    const char *path = at(day ? "docks2.csv" : "docks.csv");
    FILE *f = fopen(path, "w");
    cr_assert_not_null(f);
    fputs("dock_id,district,temp_c,temp_f,wind_kmh,repairs,battery,sensor_x,sensor_y,flat,"
          "rentals,busy\n", f);
    int rows = day ? 70 : 80;
    for (int i = 1; i <= rows; i++) {
        double temp = 10 + (i * 37 % 23) * 0.5 + (i % 4 == 0 ? 3 : 0) + 4 * day;
        double wind = 5 + (i * 53 % 31) * 0.7;
        int repairs = i * 7 % 5 == 0 ? 2 : i % 3 == 0 ? 1 : 0;
        char battery[16];
        if (!day && i == 17) snprintf(battery, sizeof battery, "fault");
        else if (!day && i == 44) snprintf(battery, sizeof battery, "offline");
        else snprintf(battery, sizeof battery, "%d", 50 + i * 29 % 41);
        char sx[16] = "", sy[16] = "";
        if (i % 4 == 1) snprintf(sx, sizeof sx, "%.2f", 2 * temp + (i % 3) * 0.25);
        else snprintf(sy, sizeof sy, "%.2f", 40 - temp + (i % 5) * 0.2);
        double rentals = 3 * temp + 0.2 * wind + (i % 5) + 0.5;
        const char *busy = temp + ((i * 13) % 7 - 3) * 0.5 > 16 ? "yes" : "no";
        fprintf(f, "%d,%s,%.1f,%.2f,%.1f,%d,%s,%s,%s,7,%.1f", i, DISTRICTS[day][i % 4], temp,
                temp * 1.8 + 32, wind, repairs, battery, sx, sy, rentals);
        if (i != 30) fprintf(f, ",%s", busy);
        if (i == 31) fputs(",spare", f);
        fputc('\n', f);
    }
    cr_assert_eq(fclose(f), 0);
    return path;
}

/* Writes day `day`'s table and scans it with the CLI (extra options too)
 * into dir/name; returns its path (valid for the next three scans). */
static const char *cli_scan(int day, const char *name, const char *extra)
{
    /* Kept apart from at()'s buffers, which later calls reuse. */
    static char paths[4][256];
    static int next;
    char *out = paths[next++ % 4];
    snprintf(out, sizeof paths[0], "%s/%s", dir, name);
    const char *csv = write_docks(day);
    cr_assert_eq(run_sheaf(NULL, "scan -q -j 1 '%s' %s -o '%s'", csv, extra, out), 0,
                 "sheaf scan %s failed", extra);
    return out;
}

static sheaf_summary *read_summary(const char *path)
{
    sheaf_error err;
    sheaf_summary *s = sheaf_summary_read(path, &err);
    cr_assert_not_null(s, "%s", err.message);
    return s;
}

static size_t column(const sheaf_summary *s, const char *name)
{
    sheaf_error err;
    size_t col = (size_t)-1;
    cr_assert_eq(sheaf_summary_find_column(s, name, &col, &err), SHEAF_OK, "%s", err.message);
    return col;
}

static sheaf_options *new_options(void)
{
    sheaf_error err;
    sheaf_options *o = sheaf_options_create(&err);
    cr_assert_not_null(o, "%s", err.message);
    return o;
}

static const char *kind_name(int kind)
{
    return kind == SHEAF_KIND_NUMERIC ? "numeric" : kind == SHEAF_KIND_CATEGORICAL ? "categorical"
                                                                                    : "?";
}

static const char *task_name(int task)
{
    return task == SHEAF_TASK_CLASSIFY ? "classify" : task == SHEAF_TASK_REGRESS ? "regress"
                                                                                  : "none";
}

/* ---- options ------------------------------------------------------------------ */

Test(api_more, new_settings_refuse_values_out_of_range)
{
    sheaf_options *o = new_options();
    sheaf_error err;
    const struct { int rc; const char *what; } refused[] = {
        {sheaf_options_set_numeric_share(o, 0, &err), "numeric share 0"},
        {sheaf_options_set_numeric_share(o, 1.5, &err), "numeric share 1.5"},
        {sheaf_options_set_numeric_share(o, NAN, &err), "numeric share NaN"},
        {sheaf_options_set_rank_by(o, 3, &err), "rank key 3"},
        {sheaf_options_set_rank_by(o, -1, &err), "rank key -1"},
        {sheaf_options_set_bins(o, 1, &err), "1 bin"},
        {sheaf_options_set_bins(o, 1001, &err), "1001 bins"},
        {sheaf_options_set_missing_share(o, 0, &err), "missing share 0"},
        {sheaf_options_set_missing_share(o, 1.01, &err), "missing share 1.01"},
        {sheaf_options_set_min_variance(o, -1, &err), "variance -1"},
        {sheaf_options_set_min_variance(o, NAN, &err), "variance NaN"},
        {sheaf_options_set_screen_target(o, "", &err), "an empty target name"},
        {sheaf_options_set_pca_with_target(NULL, 1, &err), "no options"},
    };
    for (size_t i = 0; i < sizeof refused / sizeof *refused; i++)
        cr_expect_eq(refused[i].rc, SHEAF_ERR_USAGE, "%s: %d", refused[i].what, refused[i].rc);
    /* The last message names the call, never a command-line flag. */
    cr_expect_not_null(strstr(err.message, "sheaf_options_set_pca_with_target"), "%s",
                       err.message);
    cr_expect_null(strstr(err.message, "--"), "%s", err.message);
    const int ok[] = {sheaf_options_set_numeric_share(o, 1, &err),
                      sheaf_options_set_rank_by(o, SHEAF_RANK_STAT, &err),
                      sheaf_options_set_bins(o, 2, &err),
                      sheaf_options_set_missing_share(o, 1, &err),
                      sheaf_options_set_min_variance(o, 0, &err),
                      sheaf_options_set_keep_mirrors(o, 1, &err),
                      sheaf_options_set_screen_target(o, "temp_c", &err),
                      sheaf_options_set_screen_target(o, NULL, &err),
                      sheaf_options_set_pca_with_target(o, 1, &err)};
    for (size_t i = 0; i < sizeof ok / sizeof *ok; i++)
        cr_expect_eq(ok[i], SHEAF_OK, "setting %zu: %s", i, err.message);
    sheaf_options_free(o);
}

/* ---- info: the table, its sources, its target --------------------------------- */

Test(api_more, table_sources_and_target_match_info_json)
{
    const char *path = cli_scan(0, "a.sheaf", "-t busy");
    sheaf_summary *s = read_summary(path);
    jval *j = sheaf_json("info '%s' -f json", path);

    cr_expect_eq(sheaf_summary_format_version(s), (unsigned)jnum(j, "format_version"));
    cr_expect_eq(sheaf_summary_bytes(s), (uint64_t)jnum(j, "bytes"));
    /* By construction: row 30 is one field short, row 31 one long, no
     * compressed members. */
    cr_expect_eq(sheaf_summary_short_rows(s), 1);
    cr_expect_eq(sheaf_summary_long_rows(s), 1);
    cr_expect_eq(sheaf_summary_short_rows(s), (uint64_t)jnum(j, "short_rows"));
    cr_expect_eq(sheaf_summary_long_rows(s), (uint64_t)jnum(j, "long_rows"));
    cr_expect_eq(sheaf_summary_repeated_headers(s), (uint64_t)jnum(j, "repeated_headers"));
    const uint64_t *lines;
    size_t nlines = sheaf_summary_ragged_lines(s, &lines);
    jval *rl = jmust(j, "ragged_lines");
    cr_assert_eq(nlines, rl->n);
    for (size_t i = 0; i < nlines; i++)
        cr_expect_eq(lines[i], (uint64_t)rl->items[i]->num, "ragged line %zu", i);

    /* One source, the file by path. */
    jval *sources = jmust(j, "sources");
    cr_assert_eq(sheaf_summary_source_count(s), sources->n);
    cr_assert_eq(sources->n, 1);
    sheaf_source src;
    cr_assert_eq(sheaf_summary_source_at(s, 0, &src), SHEAF_OK);
    cr_expect_eq(sheaf_summary_source_at(s, 1, &src), SHEAF_ERR_USAGE);
    cr_assert_eq(sheaf_summary_source_at(s, 0, &src), SHEAF_OK);
    jval *js = sources->items[0];
    cr_expect_str_eq(src.path, jstr(js, "path"));
    cr_expect_str_eq(src.format, jstr(js, "format"));
    cr_expect_eq(src.size_bytes, (uint64_t)jnum(js, "size_bytes"));
    cr_expect_eq(src.mtime, (int64_t)jnum(js, "mtime"));
    cr_expect_neq(src.mtime, 0);
    char fp[20];
    snprintf(fp, sizeof fp, "%016llx", (unsigned long long)src.fingerprint);
    cr_expect_str_eq(fp, jstr(js, "fingerprint"));
    cr_expect_eq(src.raw_bytes, (uint64_t)jnum(js, "raw_bytes"));
    cr_expect_eq(src.rows, (uint64_t)jnum(js, "rows"));
    cr_expect_eq(src.rows, 80);
    cr_expect_null(jkey(js, "start_byte")); /* the whole file: no range */
    cr_expect_eq(src.end_byte, 0);
    cr_expect_eq(src.shard_count, 0);
    cr_expect_str_eq(src.shard_start, "");

    /* The target. */
    jval *t = jmust(j, "target");
    cr_expect_str_eq(task_name(sheaf_summary_task(s, 0.99)), jstr(t, "task"));
    cr_expect_str_eq(jstr(t, "declared_task"), "auto");
    cr_expect_eq(sheaf_summary_declared_task(s), SHEAF_TASK_AUTO);
    cr_expect_eq(sheaf_summary_classes_dropped(s), jbool(t, "classes_dropped"));
    cr_expect_eq(sheaf_summary_max_classes(s), (uint32_t)jnum(t, "max_classes"));
    jval *levels = jmust(t, "levels");
    cr_assert_eq(sheaf_summary_class_count(s), levels->n);
    for (size_t k = 0; k < levels->n; k++) {
        cr_expect_str_eq(sheaf_summary_class_label(s, k), jstr(levels->items[k], "value"));
        cr_expect_eq(sheaf_summary_class_rows(s, k), (uint64_t)jnum(levels->items[k], "rows"));
    }
    cr_expect_null(sheaf_summary_class_label(s, levels->n));
    cr_expect_eq(sheaf_summary_task(s, 0), SHEAF_TASK_AUTO); /* a share out of range */
    jfree(j);
    sheaf_summary_free(s);
}

Test(api_more, a_shard_source_matches_info_json)
{
    const char *path = cli_scan(0, "s2.sheaf", "-t busy --shard 2/2");
    sheaf_summary *s = read_summary(path);
    jval *j = sheaf_json("info '%s' -f json", path);
    jval *js = jmust(j, "sources")->items[0];
    sheaf_source src;
    cr_assert_eq(sheaf_summary_source_at(s, 0, &src), SHEAF_OK);
    cr_expect_eq(src.start_byte, (uint64_t)jnum(js, "start_byte"));
    cr_expect_eq(src.end_byte, (uint64_t)jnum(js, "end_byte"));
    cr_expect_gt(src.start_byte, 0);
    cr_expect_eq(src.rows, (uint64_t)jnum(js, "rows"));
    jval *sh = jmust(js, "shard");
    cr_expect_eq(src.shard_index, 2);
    cr_expect_eq(src.shard_index, (unsigned)jnum(sh, "index"));
    cr_expect_eq(src.shard_count, (unsigned)jnum(sh, "count"));
    cr_expect_str_eq(src.shard_start, jstr(sh, "start_rule"));
    jfree(j);
    sheaf_summary_free(s);
}

Test(api_more, column_figures_match_info_json)
{
    const char *path = cli_scan(0, "a.sheaf", "-t busy");
    sheaf_summary *s = read_summary(path);
    for (int pass = 0; pass < 2; pass++) {
        /* The default kind rule, then 0.95 (battery, 97.5% numbers, turns numeric). */
        double share = pass ? 0.95 : 0.99;
        jval *j = pass ? sheaf_json("info '%s' -f json --numeric-share 0.95", path)
                       : sheaf_json("info '%s' -f json", path);
        jval *cols = jmust(j, "columns");
        cr_assert_eq(sheaf_summary_column_count(s), cols->n);
        for (size_t c = 0; c < cols->n; c++) {
            const char *name = sheaf_summary_column_name(s, c);
            jval *jc = jfind(cols, "name", name);
            cr_assert_not_null(jc, "no column %s in the JSON", name);
            cr_expect_str_eq(kind_name(sheaf_column_kind(s, c, share)), jstr(jc, "kind"), "%s",
                             name);
            cr_expect_eq(sheaf_column_zeros(s, c), (uint64_t)jnum(jc, "zeros"), "%s", name);
            cr_expect_eq(sheaf_column_integers(s, c), (uint64_t)jnum(jc, "integers"), "%s",
                         name);
            cr_expect_eq(sheaf_column_non_finite(s, c), (uint64_t)jnum(jc, "non_finite"), "%s",
                         name);
            cr_expect_eq(sheaf_column_table_overflowed(s, c), jbool(jc, "value_table_full"),
                         "%s", name);
            jval *ex = jmust(jc, "non_numeric_examples");
            cr_assert_eq(sheaf_column_example_count(s, c), ex->n, "%s", name);
            for (size_t e = 0; e < ex->n; e++)
                cr_expect_str_eq(sheaf_column_example(s, c, e), ex->items[e]->str, "%s", name);
            cr_expect_null(sheaf_column_example(s, c, ex->n));
            jval *by = jkey(jc, "by_class");
            if (!by) continue;
            cr_assert_eq(by->n, sheaf_summary_class_count(s));
            for (size_t k = 0; k < by->n; k++) {
                jval *bk = by->items[k];
                cr_expect_str_eq(sheaf_summary_class_label(s, k), jstr(bk, "class"));
                cr_expect_eq(sheaf_column_class_numbers(s, c, k), (uint64_t)jnum(bk, "n"),
                             "%s class %zu", name, k);
                same_figure(bk, "mean", sheaf_column_class_mean(s, c, k), name);
                same_figure(bk, "variance", sheaf_column_class_variance(s, c, k), name);
            }
        }
        jfree(j);
    }
    /* By construction: repairs holds 0, 1 and 2 only, 0 in most rows;
     * battery's two words are its examples; dock_id is whole numbers. */
    size_t repairs = column(s, "repairs"), battery = column(s, "battery");
    cr_expect_eq(sheaf_column_integers(s, repairs), 80);
    cr_expect_gt(sheaf_column_zeros(s, repairs), 40);
    cr_expect_eq(sheaf_column_example_count(s, battery), 2);
    cr_expect_str_eq(sheaf_column_example(s, battery, 0), "fault");
    cr_expect_eq(sheaf_column_kind(s, battery, 0.99), SHEAF_KIND_CATEGORICAL);
    cr_expect_eq(sheaf_column_kind(s, battery, 0.95), SHEAF_KIND_NUMERIC);
    cr_expect_eq(sheaf_column_is_numeric(s, battery), 0); /* the default rule */
    cr_expect_eq(sheaf_column_kind(s, battery, 1.5), -1);
    cr_expect_eq(sheaf_column_kind(s, 99, 0.99), -1);
    cr_expect_eq(sheaf_column_class_numbers(s, column(s, "temp_c"), 9), 0);
    cr_expect(isnan(sheaf_column_class_mean(s, column(s, "temp_c"), 9)));
    sheaf_summary_free(s);
}

Test(api_more, declared_task_and_dropped_classes_match_info_json)
{
    /* rentals has more than 5 distinct values: with a class limit of 5 its
     * classes are dropped; the second scan declares regression. */
    const char *paths[2] = {cli_scan(0, "r5.sheaf", "-t rentals --max-classes 5"),
                            cli_scan(0, "rr.sheaf", "-t rentals --task regress")};
    for (int i = 0; i < 2; i++) {
        sheaf_summary *s = read_summary(paths[i]);
        jval *j = sheaf_json("info '%s' -f json", paths[i]);
        jval *t = jmust(j, "target");
        cr_expect_str_eq(task_name(sheaf_summary_task(s, 0.99)), jstr(t, "task"));
        cr_expect_eq(sheaf_summary_task(s, 0.99), SHEAF_TASK_REGRESS);
        int declared = sheaf_summary_declared_task(s);
        cr_expect_str_eq(declared ? task_name(declared) : "auto", jstr(t, "declared_task"));
        cr_expect_eq(declared, i ? SHEAF_TASK_REGRESS : SHEAF_TASK_AUTO);
        cr_expect_eq(sheaf_summary_classes_dropped(s), jbool(t, "classes_dropped"));
        cr_expect_eq(sheaf_summary_classes_dropped(s), !i);
        cr_expect_eq(sheaf_summary_max_classes(s), (uint32_t)jnum(t, "max_classes"));
        cr_expect_eq(sheaf_summary_class_count(s), jmust(t, "levels")->n);
        jfree(j);
        sheaf_summary_free(s);
    }
}

Test(api_more, a_file_of_several_targets_reads_from_memory)
{
    const char *path = cli_scan(0, "both.sheaf", "-t busy,rentals");
    FILE *f = fopen(path, "rb");
    cr_assert_not_null(f);
    static unsigned char bytes[1 << 20];
    size_t n = fread(bytes, 1, sizeof bytes, f);
    fclose(f);
    cr_assert_lt(n, sizeof bytes);
    sheaf_error err;
    /* One summary from it is refused, naming the call that takes one target. */
    cr_expect_null(sheaf_summary_read_memory(bytes, n, &err));
    cr_expect_eq(err.code, SHEAF_ERR_TARGETS);
    sheaf_summary_set *set = sheaf_summary_set_read_memory(bytes, n, &err);
    cr_assert_not_null(set, "%s", err.message);
    cr_assert_eq(sheaf_summary_set_count(set), 2);
    cr_expect_str_eq(sheaf_summary_set_target(set, 0), "busy");
    cr_expect_str_eq(sheaf_summary_set_target(set, 1), "rentals");
    const char *targets[2] = {"busy", "rentals"};
    for (size_t i = 0; i < 2; i++) {
        sheaf_summary *part = sheaf_summary_set_take(set, i, &err);
        cr_assert_not_null(part, "%s", err.message);
        sheaf_summary *file = sheaf_summary_read_target(path, targets[i], &err);
        cr_assert_not_null(file, "%s", err.message);
        cr_expect_eq(sheaf_summary_rows(part), sheaf_summary_rows(file));
        cr_expect_eq(sheaf_summary_class_count(part), sheaf_summary_class_count(file));
        cr_expect_eq(sheaf_summary_task(part, 0.99), sheaf_summary_task(file, 0.99));
        size_t t = column(part, "temp_c");
        cr_expect_eq(sheaf_column_mean(part, t), sheaf_column_mean(file, t));
        sheaf_summary_free(part);
        sheaf_summary_free(file);
    }
    sheaf_summary_set_free(set);
    /* A single summary's file is a set of one; damaged bytes are refused. */
    const char *one = cli_scan(0, "a.sheaf", "-t busy");
    f = fopen(one, "rb");
    cr_assert_not_null(f);
    n = fread(bytes, 1, sizeof bytes, f);
    fclose(f);
    set = sheaf_summary_set_read_memory(bytes, n, &err);
    cr_assert_not_null(set, "%s", err.message);
    cr_expect_eq(sheaf_summary_set_count(set), 1);
    sheaf_summary_set_free(set);
    cr_expect_null(sheaf_summary_set_read_memory(bytes, n / 2, &err));
    cr_expect_eq(err.code, SHEAF_ERR_CORRUPT);
    cr_expect_null(sheaf_summary_set_read_memory(NULL, 3, &err));
    cr_expect_eq(err.code, SHEAF_ERR_USAGE);
}

/* ---- screen -------------------------------------------------------------------- */

static const char *const TEST_KEYS[4] = {"anova_f", "welch_f", "corr_f", "chi2"};

/* Every figure of screen s against the JSON of `sheaf screen` with the same
 * settings. */
static void check_screen(const sheaf_screen *r, const jval *j)
{
    jval *t = jmust(j, "target");
    if (t->t == J_NULL) {
        cr_expect_null(sheaf_screen_target(r));
    } else {
        cr_expect_str_eq(sheaf_screen_target(r), jstr(t, "name"));
        cr_expect_str_eq(task_name(sheaf_screen_task(r)), jstr(t, "task"));
        cr_expect_eq(sheaf_screen_from_comoments(r), jbool(t, "from_comoments"));
    }
    cr_expect_eq(sheaf_screen_kept_count(r), (size_t)jnum(j, "kept"));
    jval *features = jmust(j, "features");
    cr_assert_eq(sheaf_screen_row_count(r), features->n);
    for (size_t i = 0; i < features->n; i++) {
        const char *name = sheaf_screen_name(r, i);
        jval *f = features->items[i]; /* the same order: the summary's */
        cr_assert_str_eq(name, jstr(f, "name"));
        cr_expect_str_eq(kind_name(sheaf_screen_kind(r, i)), jstr(f, "kind"), "%s", name);
        /* flags */
        jval *flags = jmust(f, "flags");
        unsigned bits = sheaf_screen_flags(r, i);
        size_t listed = 0;
        for (unsigned b = 0; b < 32; b++) {
            if (!(bits & (1u << b))) continue;
            cr_assert_not_null(sheaf_screen_flag_name(b));
            cr_expect(listed < flags->n && !strcmp(flags->items[listed]->str,
                                                   sheaf_screen_flag_name(b)),
                      "%s: flag %s", name, sheaf_screen_flag_name(b));
            listed++;
        }
        cr_expect_eq(listed, flags->n, "%s: %zu flags, the CLI lists %zu", name, listed,
                     flags->n);
        /* tests and their validity */
        jval *tests = jmust(f, "tests");
        for (int k = 0; k < 4; k++) {
            sheaf_test_figures tf;
            cr_assert_eq(sheaf_screen_test_at(r, i, k, &tf), SHEAF_OK);
            jval *jt = jkey(tests, TEST_KEYS[k]);
            cr_expect_eq(tf.present, jt != NULL, "%s %s", name, TEST_KEYS[k]);
            if (!jt || !tf.present) continue;
            char what[160];
            snprintf(what, sizeof what, "%s %s", name, TEST_KEYS[k]);
            same_figure(jt, "stat", tf.stat, what);
            if (k == SHEAF_TEST_CHI2) {
                same_figure(jt, "df", tf.df1, what);
                cr_expect(isnan(tf.df2));
                same_figure(jt, "cramers_v", tf.extra, what);
            } else {
                same_figure(jt, "df1", tf.df1, what);
                same_figure(jt, "df2", tf.df2, what);
            }
            if (k == SHEAF_TEST_CORR_F) same_figure(jt, "r", tf.extra, what);
            same_figure(jt, "p", tf.p, what);
            same_figure(jt, "log10_p", tf.log10_p, what);
            jval *v = jkey(jt, "validity");
            cr_expect_eq(tf.rule != SHEAF_RULE_NONE, v != NULL, "%s validity", what);
            if (!v) {
                cr_expect_eq(tf.holds, 1);
                continue;
            }
            int cochran = tf.rule == SHEAF_RULE_COCHRAN;
            cr_expect_str_eq(jstr(v, "rule"), cochran ? "cochran_1954" : "level_sizes");
            cr_expect_eq(tf.holds, jbool(v, "holds"), "%s", what);
            cr_expect_eq(tf.units, (size_t)jnum(v, cochran ? "expected_counts" : "levels"));
            cr_expect_eq(tf.small, (size_t)jnum(v, "below_5"));
            same_figure(v, cochran ? "share_below_5" : "row_share_in_levels_below_5",
                        tf.small_share, what);
            same_figure(v, cochran ? "smallest_expected" : "smallest_level_rows", tf.smallest,
                        what);
        }
        /* mutual information */
        sheaf_mi_figures mi;
        cr_assert_eq(sheaf_screen_mi_at(r, i, &mi), SHEAF_OK);
        jval *jm = jkey(tests, "mutual_information");
        cr_expect_eq(mi.present, jm != NULL, "%s mutual information", name);
        if (jm && mi.present) {
            same_figure(jm, "nats", mi.nats, name);
            same_figure(jm, "nats_corrected", mi.nats_corrected, name);
            same_figure(jm, "normalized", mi.normalized, name);
            cr_expect_eq(mi.feature_bins, (unsigned)jnum(jm, "feature_bins"));
            cr_expect_eq(mi.target_bins, (unsigned)jnum(jm, "target_bins"));
            same_figure(jm, "expected_nats", mi.expected_nats, name);
            same_figure(jm, "adjusted", mi.adjusted, name);
            same_figure(jm, "adjusted", sheaf_screen_adjusted_mi(r, i), name);
            cr_expect_eq(mi.expected_approximated_cells,
                         (size_t)jnum(jm, "expected_approximated_cells"));
        } else {
            cr_expect(isnan(sheaf_screen_adjusted_mi(r, i)));
        }
        cr_expect_eq(sheaf_screen_test_holds(r, i), jbool(f, "test_holds"), "%s", name);
        cr_expect_str_eq(sheaf_screen_kept(r, i) ? "keep" : "drop", jstr(f, "decision"), "%s",
                         name);
        jval *rank = jmust(f, "rank");
        cr_expect_eq(sheaf_screen_rank(r, i), rank->t == J_NULL ? 0 : (size_t)rank->num, "%s",
                     name);
        same_figure(f, "q", sheaf_screen_q(r, i), name);
    }
    /* redundant pairs */
    jval *pairs = jmust(j, "redundant_pairs");
    cr_assert_eq(sheaf_screen_pair_count(r), pairs->n);
    for (size_t i = 0; i < pairs->n; i++) {
        size_t a, b;
        double pr;
        cr_assert_eq(sheaf_screen_pair_at(r, i, &a, &b, &pr), SHEAF_OK);
        cr_expect_str_eq(sheaf_screen_name(r, a), jstr(pairs->items[i], "a"));
        cr_expect_str_eq(sheaf_screen_name(r, b), jstr(pairs->items[i], "b"));
        same_figure(pairs->items[i], "r", pr, "pair");
    }
    cr_expect_eq(sheaf_screen_pair_at(r, pairs->n, NULL, NULL, NULL), SHEAF_ERR_USAGE);
}

static sheaf_screen *screen(const sheaf_summary *s, const sheaf_options *o)
{
    sheaf_error err;
    sheaf_screen *r = sheaf_screen_run(s, o, &err);
    cr_assert_not_null(r, "%s", err.message);
    return r;
}

Test(api_more, screen_figures_match_screen_json)
{
    const char *path = cli_scan(0, "a.sheaf", "-t busy");
    sheaf_summary *s = read_summary(path);
    sheaf_screen *r = screen(s, NULL);
    jval *j = sheaf_json("screen '%s' -f json", path);
    check_screen(r, j);
    /* By construction: temp_c and temp_f (a near copy) make a redundant
     * pair; dock_id names the rows; flat holds one value; sensor_x is
     * missing in 3 rows of 4. */
    cr_expect_geq(sheaf_screen_pair_count(r), 1);
    for (size_t i = 0; i < sheaf_screen_row_count(r); i++) {
        const char *name = sheaf_screen_name(r, i);
        unsigned flags = sheaf_screen_flags(r, i);
        if (!strcmp(name, "dock_id")) cr_expect(flags & 4, "dock_id: flags %u", flags);
        if (!strcmp(name, "flat")) cr_expect(flags & 1, "flat: flags %u", flags);
        if (!strcmp(name, "sensor_x")) cr_expect(flags & 8, "sensor_x: flags %u", flags);
    }
    cr_expect_str_eq(sheaf_screen_flag_name(5), "mirrors_target");
    cr_expect_null(sheaf_screen_flag_name(6));
    sheaf_test_figures tf;
    cr_expect_eq(sheaf_screen_test_at(r, 0, 4, &tf), SHEAF_ERR_USAGE);
    cr_expect_eq(sheaf_screen_test_at(r, 99, 0, &tf), SHEAF_ERR_USAGE);
    cr_expect_eq(sheaf_screen_kind(r, 99), -1);
    jfree(j);
    sheaf_screen_free(r);

    /* A regression target: corr_f with r, the ANOVA across district's levels
     * with the level-size rule. */
    const char *rpath = cli_scan(0, "r.sheaf", "-t rentals");
    sheaf_summary *rs = read_summary(rpath);
    r = screen(rs, NULL);
    j = sheaf_json("screen '%s' -f json", rpath);
    check_screen(r, j);
    jfree(j);
    sheaf_screen_free(r);
    sheaf_summary_free(rs);
    sheaf_summary_free(s);
}

Test(api_more, screen_settings_match_the_command_line)
{
    const char *path = cli_scan(0, "a.sheaf", "-t busy");
    sheaf_summary *s = read_summary(path);
    sheaf_error err;
    static const struct { const char *args; int rank_by; unsigned bins; double missing, minvar,
                          share; int mirrors; } cases[] = {
        {"--rank-by mi --bins 5", SHEAF_RANK_MI, 5, 0.5, 0, 0.99, 0},
        {"--rank-by stat --missing-share 0.8", SHEAF_RANK_STAT, 10, 0.8, 0, 0.99, 0},
        {"--min-variance 30 --keep-mirrors", SHEAF_RANK_Q, 10, 0.5, 30, 0.99, 1},
        {"--numeric-share 0.95 --bins 3", SHEAF_RANK_Q, 3, 0.5, 0, 0.95, 0},
    };
    for (size_t c = 0; c < sizeof cases / sizeof *cases; c++) {
        sheaf_options *o = new_options();
        cr_assert_eq(sheaf_options_set_rank_by(o, cases[c].rank_by, &err), SHEAF_OK);
        cr_assert_eq(sheaf_options_set_bins(o, cases[c].bins, &err), SHEAF_OK);
        cr_assert_eq(sheaf_options_set_missing_share(o, cases[c].missing, &err), SHEAF_OK);
        cr_assert_eq(sheaf_options_set_min_variance(o, cases[c].minvar, &err), SHEAF_OK);
        cr_assert_eq(sheaf_options_set_numeric_share(o, cases[c].share, &err), SHEAF_OK);
        cr_assert_eq(sheaf_options_set_keep_mirrors(o, cases[c].mirrors, &err), SHEAF_OK);
        sheaf_screen *r = screen(s, o);
        jval *j = sheaf_json("screen '%s' -f json %s", path, cases[c].args);
        cr_log_info("screen %s", cases[c].args);
        check_screen(r, j);
        if (cases[c].share < 0.99) { /* battery is numeric at 0.95, so tested by ANOVA */
            for (size_t i = 0; i < sheaf_screen_row_count(r); i++)
                if (!strcmp(sheaf_screen_name(r, i), "battery"))
                    cr_expect_eq(sheaf_screen_kind(r, i), SHEAF_KIND_NUMERIC);
        }
        jfree(j);
        sheaf_screen_free(r);
        sheaf_options_free(o);
    }
    sheaf_summary_free(s);
}

Test(api_more, screen_against_another_column_matches_screen_t)
{
    const char *path = cli_scan(0, "a.sheaf", "-t busy");
    sheaf_summary *s = read_summary(path);
    sheaf_options *o = new_options();
    sheaf_error err;
    cr_assert_eq(sheaf_options_set_screen_target(o, "rentals", &err), SHEAF_OK);
    sheaf_screen *r = screen(s, o);
    cr_expect_str_eq(sheaf_screen_target(r), "rentals");
    cr_expect_eq(sheaf_screen_from_comoments(r), 1);
    cr_expect_eq(sheaf_screen_task(r), SHEAF_TASK_REGRESS);
    jval *j = sheaf_json("screen '%s' -f json -t rentals", path);
    check_screen(r, j);
    jfree(j);
    sheaf_screen_free(r);

    /* The summary's own target by name is the plain screen. */
    cr_assert_eq(sheaf_options_set_screen_target(o, "busy", &err), SHEAF_OK);
    r = screen(s, o);
    cr_expect_eq(sheaf_screen_from_comoments(r), 0);
    cr_expect_eq(sheaf_screen_task(r), SHEAF_TASK_CLASSIFY);
    sheaf_screen_free(r);

    /* Refusals: no such column (the nearest named), a text column. */
    cr_assert_eq(sheaf_options_set_screen_target(o, "rental", &err), SHEAF_OK);
    cr_expect_null(sheaf_screen_run(s, o, &err));
    cr_expect_eq(err.code, SHEAF_ERR_USAGE);
    cr_expect_not_null(strstr(err.message, "rentals"), "%s", err.message);
    cr_expect_null(strstr(err.message, "--"), "%s", err.message);
    cr_assert_eq(sheaf_options_set_screen_target(o, "district", &err), SHEAF_OK);
    cr_expect_null(sheaf_screen_run(s, o, &err));
    cr_expect_eq(err.code, SHEAF_ERR_USAGE);
    cr_expect_eq(run_sheaf("x.json", "screen '%s' -f json -t district", path), 2);
    sheaf_options_free(o);
    sheaf_summary_free(s);
}

/* ---- PCA ----------------------------------------------------------------------- */

static void check_pca(const sheaf_pca *f, const jval *j)
{
    jval *cols = jmust(j, "columns");
    cr_assert_eq(sheaf_pca_column_count(f), cols->n);
    for (size_t c = 0; c < cols->n; c++)
        cr_expect_str_eq(sheaf_pca_column_name(f, c), cols->items[c]->str);
    jval *ex = jmust(j, "excluded");
    cr_assert_eq(sheaf_pca_left_out_count(f), ex->n);
    for (size_t i = 0; i < ex->n; i++) {
        cr_expect_str_eq(sheaf_pca_left_out_name(f, i), jstr(ex->items[i], "column"));
        cr_expect_str_eq(sheaf_pca_left_out_reason(f, i), jstr(ex->items[i], "reason"));
    }
    cr_expect_null(sheaf_pca_left_out_name(f, ex->n));
    cr_expect_eq(sheaf_pca_left_out_column(f, ex->n), (size_t)-1);
    cr_expect_eq(sheaf_pca_clamped_negative(f), (size_t)jnum(j, "clamped_negative"));
    cr_expect_eq(sheaf_pca_undefined_pairs(f), (size_t)jnum(j, "undefined_pairs"));
    jval *mn = jmust(j, "most_negative_eigenvalue");
    double got = sheaf_pca_most_negative_eigenvalue(f);
    if (mn->t == J_NULL) {
        cr_expect(isnan(got), "most negative: %.17g, the CLI prints null", got);
    } else {
        cr_expect(fabs(got - mn->num) <= 1e-12 * fabs(mn->num), "most negative: %.17g and %.17g",
                  got, mn->num);
    }
}

static sheaf_pca *fit(const sheaf_summary *s, const sheaf_options *o)
{
    sheaf_error err;
    sheaf_pca *f = sheaf_pca_fit(s, o, &err);
    cr_assert_not_null(f, "%s", err.message);
    return f;
}

Test(api_more, pca_left_out_and_clamping_match_pca_json)
{
    const char *path = cli_scan(0, "r.sheaf", "-t rentals");
    sheaf_summary *s = read_summary(path);
    sheaf_pca *f = fit(s, NULL);
    jval *j = sheaf_json("pca '%s' -f json", path);
    check_pca(f, j);
    /* By construction: sensor_x and sensor_y share no row (one undefined
     * pair), and both follow temp_c, so the matrix is not positive
     * semi-definite; the target, dock_id (an ID), flat (constant) and the
     * text columns are left out. */
    cr_expect_eq(sheaf_pca_undefined_pairs(f), 1);
    cr_expect_geq(sheaf_pca_clamped_negative(f), 1);
    cr_expect_lt(sheaf_pca_most_negative_eigenvalue(f), 0);
    int target_left = 0;
    for (size_t i = 0; i < sheaf_pca_left_out_count(f); i++)
        if (!strcmp(sheaf_pca_left_out_name(f, i), "rentals")) {
            target_left = 1;
            cr_expect_str_eq(sheaf_pca_left_out_reason(f, i), "target");
            cr_expect_eq(sheaf_pca_left_out_column(f, i), column(s, "rentals"));
        }
    cr_expect(target_left);
    jfree(j);
    sheaf_pca_free(f);

    /* With the target, with battery numeric, with a column excluded. */
    sheaf_options *o = new_options();
    sheaf_error err;
    cr_assert_eq(sheaf_options_set_pca_with_target(o, 1, &err), SHEAF_OK);
    cr_assert_eq(sheaf_options_set_numeric_share(o, 0.95, &err), SHEAF_OK);
    cr_assert_eq(sheaf_options_set_pca_exclude(o, "wind_kmh", &err), SHEAF_OK);
    f = fit(s, o);
    sheaf_summary_free(s); /* the fit keeps copies of the names */
    j = sheaf_json("pca '%s' -f json --with-target --numeric-share 0.95 --exclude wind_kmh", path);
    check_pca(f, j);
    int has_target = 0, has_battery = 0;
    for (size_t c = 0; c < sheaf_pca_column_count(f); c++) {
        has_target |= !strcmp(sheaf_pca_column_name(f, c), "rentals");
        has_battery |= !strcmp(sheaf_pca_column_name(f, c), "battery");
    }
    cr_expect(has_target && has_battery);
    jfree(j);
    sheaf_pca_free(f);
    sheaf_options_free(o);
}

Test(api_more, pca_without_negative_eigenvalues_reports_none)
{
    const char *path = cli_scan(0, "a.sheaf", "-t busy");
    sheaf_summary *s = read_summary(path);
    sheaf_options *o = new_options();
    sheaf_error err;
    cr_assert_eq(sheaf_options_set_pca_columns(o, "temp_c,wind_kmh,rentals", &err), SHEAF_OK);
    sheaf_pca *f = fit(s, o);
    jval *j = sheaf_json("pca '%s' -f json --columns temp_c,wind_kmh,rentals", path);
    check_pca(f, j);
    cr_expect_eq(sheaf_pca_clamped_negative(f), 0);
    cr_expect(isnan(sheaf_pca_most_negative_eigenvalue(f)));
    cr_expect_eq(sheaf_pca_left_out_count(f), 0);
    jfree(j);
    sheaf_pca_free(f);
    sheaf_options_free(o);
    sheaf_summary_free(s);
}

/* ---- drift ---------------------------------------------------------------------- */

static void check_side(const sheaf_drift_side *sd, const jval *js, int relevance,
                       const char *what)
{
    if (js->t == J_NULL) {
        cr_expect_eq(sd->kind, -1, "%s", what);
        return;
    }
    cr_expect_str_eq(kind_name(sd->kind), jstr(js, "kind"), "%s", what);
    same_figure(js, "missing_share", sd->missing_share, what);
    same_figure(js, "non_numeric_share", sd->non_numeric_share, what);
    same_figure(js, "distinct", sd->distinct, what);
    cr_expect_eq(sd->distinct_exact, jbool(js, "distinct_exact"), "%s", what);
    same_figure(js, "distinct_share", sd->distinct_share, what);
    cr_expect_eq(sd->numbers, (uint64_t)jnum(js, "numbers"), "%s", what);
    same_figure(js, "mean", sd->mean, what);
    same_figure(js, "sd", sd->sd, what);
    cr_expect_eq(sd->table_overflowed, jbool(js, "table_overflowed"), "%s", what);
    if (!relevance) return;
    same_figure(js, "q", sd->q, what);
    jval *qt = jmust(js, "q_test");
    if (qt->t == J_NULL) cr_expect_str_eq(sd->q_test, "", "%s", what);
    else cr_expect_str_eq(sd->q_test, jstr(js, "q_test"), "%s", what);
    jval *rank = jmust(js, "rank");
    /* JSON's rank is among the kept columns: null for a dropped one (rank 0). */
    cr_expect_eq(sd->ranked && sd->rank, rank->t != J_NULL, "%s", what);
    if (rank->t != J_NULL) cr_expect_eq(sd->rank, (size_t)rank->num, "%s", what);
}

static void check_categories(const sheaf_drift *d, size_t i, int vanished, size_t listed,
                             int known, const jval *jc, const char *what)
{
    cr_expect_eq(known, jbool(jc, "known"), "%s", what);
    jval *l = jmust(jc, "listed");
    cr_assert_eq(listed, l->n, "%s", what);
    for (size_t k = 0; k < listed; k++) {
        sheaf_value v;
        double share;
        cr_assert_eq(sheaf_drift_category_at(d, i, vanished, k, &v, &share), SHEAF_OK);
        const char *want = jstr(l->items[k], "value");
        cr_expect(v.len == strlen(want) && !memcmp(v.text, want, v.len), "%s: '%.*s', want '%s'",
                  what, (int)v.len, v.text, want);
        cr_expect_eq(v.cut, jbool(l->items[k], "cut"));
        cr_expect_eq(v.count, (uint64_t)jnum(l->items[k], "count"));
        same_figure(l->items[k], "share", share, what);
    }
    cr_expect_eq(sheaf_drift_category_at(d, i, vanished, listed, NULL, NULL), SHEAF_ERR_USAGE);
}

/* Every figure of drift d against the JSON of `sheaf drift`. */
static void check_drift(const sheaf_drift *d, const jval *j)
{
    jval *rel = jmust(j, "relevance");
    const char *target, *note;
    int compared = sheaf_drift_relevance(d, &target, &note);
    cr_expect_eq(compared, jbool(rel, "compared"));
    jval *jt = jmust(rel, "target"), *jn = jmust(rel, "note");
    if (jt->t == J_NULL) cr_expect_null(target);
    else cr_expect_str_eq(target, jt->str);
    if (jn->t == J_NULL) cr_expect_null(note);
    else cr_expect_str_eq(note, jn->str);
    cr_expect_eq(sheaf_drift_pairs_compared(d), (size_t)jnum(jmust(j, "pairs"), "compared"));
    jval *cols = jmust(j, "columns");
    cr_assert_eq(sheaf_drift_column_count(d), cols->n);
    for (size_t i = 0; i < cols->n; i++) {
        sheaf_drift_column c;
        sheaf_drift_detail x;
        cr_assert_eq(sheaf_drift_column_at(d, i, &c), SHEAF_OK);
        cr_assert_eq(sheaf_drift_column_detail(d, i, &x), SHEAF_OK);
        jval *jc = jfind(cols, "name", c.name); /* the JSON lists drifting columns first */
        cr_assert_not_null(jc, "no column %s in the JSON", c.name);
        char what[160];
        snprintf(what, sizeof what, "%s base", c.name);
        check_side(&x.base_side, jmust(jc, "base"), compared, what);
        snprintf(what, sizeof what, "%s new", c.name);
        check_side(&x.new_side, jmust(jc, "new"), compared, what);
        jval *num = jmust(jc, "numeric");
        cr_expect_eq(num->t == J_NULL, !x.bins && isnan(c.mean_shift), "%s numeric", c.name);
        if (num->t != J_NULL) {
            cr_expect_eq(x.ks_exact, jbool(num, "ks_exact"), "%s", c.name);
            jval *lvl = jmust(num, "bucket_level");
            if (lvl->t != J_NULL) cr_expect_eq(x.bucket_level, (int)lvl->num, "%s", c.name);
            jval *edges = jmust(num, "edges"), *bc = jmust(num, "base_counts"),
                 *nc = jmust(num, "new_counts");
            cr_assert_eq(bc->n, x.bins, "%s bins", c.name);
            cr_assert_eq(edges->n, x.bins ? x.bins - 1 : 0, "%s edges", c.name);
            for (size_t k = 0; k < edges->n; k++)
                cr_expect_eq(x.edges[k], edges->items[k]->num, "%s edge %zu", c.name, k);
            for (size_t k = 0; k < bc->n; k++) {
                cr_expect_eq(x.base_counts[k], (uint64_t)bc->items[k]->num);
                cr_expect_eq(x.new_counts[k], (uint64_t)nc->items[k]->num);
            }
        }
        jval *text = jmust(jc, "text");
        cr_expect_eq(x.text, text->t != J_NULL, "%s text", c.name);
        if (text->t == J_NULL) continue;
        same_figure(text, "chi2_log10_p", x.chi2_log10_p, c.name);
        jval *ap = jmust(text, "appeared"), *va = jmust(text, "vanished");
        cr_expect_eq(c.appeared, (size_t)jnum(ap, "count"));
        cr_expect_eq(c.vanished, (size_t)jnum(va, "count"));
        snprintf(what, sizeof what, "%s appeared", c.name);
        check_categories(d, i, 0, x.appeared_listed, x.appeared_known, ap, what);
        snprintf(what, sizeof what, "%s vanished", c.name);
        check_categories(d, i, 1, x.vanished_listed, x.vanished_known, va, what);
    }
}

static sheaf_drift *drift(const sheaf_summary *a, const sheaf_summary *b)
{
    sheaf_error err;
    sheaf_drift *d = sheaf_drift_run(a, b, NULL, &err);
    cr_assert_not_null(d, "%s", err.message);
    return d;
}

Test(api_more, drift_figures_match_drift_json)
{
    const char *pa = cli_scan(0, "a.sheaf", "-t busy"), *pb = cli_scan(1, "b.sheaf", "-t busy");
    sheaf_summary *a = read_summary(pa), *b = read_summary(pb);
    sheaf_drift *d = drift(a, b);
    sheaf_summary_free(a); /* the handle keeps copies of what it reports */
    sheaf_summary_free(b);
    jval *j = sheaf_json("drift '%s' '%s' -f json", pa, pb);
    check_drift(d, j);
    /* By construction: day 1 trades harbour for airport, and both nights
     * have the target busy. */
    const char *target;
    cr_expect_eq(sheaf_drift_relevance(d, &target, NULL), 1);
    cr_expect_str_eq(target, "busy");
    for (size_t i = 0; i < sheaf_drift_column_count(d); i++) {
        sheaf_drift_column c;
        sheaf_drift_detail x;
        sheaf_drift_column_at(d, i, &c);
        sheaf_drift_column_detail(d, i, &x);
        if (!strcmp(c.name, "district")) {
            sheaf_value v;
            cr_assert_eq(x.appeared_listed, 1);
            cr_assert_eq(sheaf_drift_category_at(d, i, 0, 0, &v, NULL), SHEAF_OK);
            cr_expect(v.len == 7 && !memcmp(v.text, "airport", 7));
            cr_assert_eq(sheaf_drift_category_at(d, i, 1, 0, &v, NULL), SHEAF_OK);
            cr_expect(v.len == 7 && !memcmp(v.text, "harbour", 7));
        }
        if (!strcmp(c.name, "temp_c")) cr_expect_gt(x.bins, 1);
    }
    sheaf_drift_detail x;
    cr_expect_eq(sheaf_drift_column_detail(d, 99, &x), SHEAF_ERR_USAGE);
    jfree(j);
    sheaf_drift_free(d);
}

Test(api_more, drift_with_overflowed_tables_and_different_targets)
{
    /* A value table of 3 overflows with district's 4 levels: the lists of
     * categories are then not known to be complete. */
    const char *pa = cli_scan(0, "a3.sheaf", "-t busy --max-levels 3");
    const char *pb = cli_scan(1, "b3.sheaf", "-t rentals --max-levels 3");
    sheaf_summary *a = read_summary(pa), *b = read_summary(pb);
    sheaf_drift *d = drift(a, b);
    jval *j = sheaf_json("drift '%s' '%s' -f json", pa, pb);
    check_drift(d, j);
    const char *target, *note;
    cr_expect_eq(sheaf_drift_relevance(d, &target, &note), 0);
    cr_expect_null(target);
    cr_expect_not_null(note);
    size_t dist = column(a, "district");
    cr_expect_eq(sheaf_column_table_overflowed(a, dist), 1);
    sheaf_drift_detail x;
    cr_assert_eq(sheaf_drift_column_detail(d, dist, &x), SHEAF_OK); /* the baseline's order */
    cr_expect_eq(x.base_side.table_overflowed, 1);
    cr_expect_eq(x.text, 1);
    cr_expect_eq(x.appeared_known, 0);
    cr_expect_eq(x.vanished_known, 0);
    jfree(j);
    sheaf_drift_free(d);
    sheaf_summary_free(a);
    sheaf_summary_free(b);
}

/* ---- the page takes the kind rule ---------------------------------------------- */

/* Lines that differ between two files and name battery. */
static int battery_lines_differing(const char *x, const char *y)
{
    char cmd[1024];
    snprintf(cmd, sizeof cmd, "diff '%s' '%s' | grep '^[<>]' | grep -c battery >'%s'", x, y,
             at("diff.txt"));
    cr_expect_neq(system(cmd), -1);
    FILE *f = fopen(at("diff.txt"), "r");
    cr_assert_not_null(f);
    int n = -1;
    cr_expect_eq(fscanf(f, "%d", &n), 1);
    fclose(f);
    return n;
}

Test(api_more, page_takes_the_numeric_share)
{
    const char *path = cli_scan(0, "a.sheaf", "-t busy");
    sheaf_summary *s = read_summary(path);
    sheaf_options *o = new_options();
    sheaf_error err;
    cr_assert_eq(sheaf_options_set_numeric_share(o, 0.95, &err), SHEAF_OK);
    cr_assert_eq(sheaf_page_write(s, NULL, o, "docks", at("api.html"), NULL, &err), SHEAF_OK,
                 "%s", err.message);
    cr_assert_eq(run_sheaf(NULL, "page '%s' --numeric-share 0.95 -o '%s'", path, at("cli.html")),
                 0);
    /* The two pages differ in the title and the line that dates the
     * summary file, on no line that names battery (whose kind the share
     * decides); the page at the default share does differ there, so the
     * comparison can fail. */
    cr_expect_eq(battery_lines_differing(at("api.html"), at("cli.html")), 0);
    cr_assert_eq(sheaf_page_write(s, NULL, NULL, "docks", at("api99.html"), NULL, &err), SHEAF_OK,
                 "%s", err.message);
    cr_expect_gt(battery_lines_differing(at("api99.html"), at("cli.html")), 0);
    sheaf_options_free(o);
    sheaf_summary_free(s);
}
