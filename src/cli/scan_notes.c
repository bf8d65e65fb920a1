/* What a successful scan says about what it read (see scan_notes.h).  All of
 * it comes from the summary: per column the counts of numbers and of text
 * cells and the first SUMMARY_EXAMPLES distinct texts; the ragged rows and
 * their first lines. */
#include "cli/scan_notes.h"

#include <string.h>
#include <time.h>

#include "summary/access.h"

/* A cell's text for a one-line message: control bytes (a quoted newline)
 * shown as '?', so the line stays one line. */
static void shown_text(char *out, size_t cap, const char *text)
{
    size_t n = 0;
    for (; text[n] && n + 1 < cap; n++)
        out[n] = (unsigned char)text[n] < 0x20 || text[n] == 0x7f ? '?' : text[n];
    out[n] = '\0';
}

/* The column's only non-numeric text when it has one (not cut to the
 * example length, so two texts with a long common start are not taken for
 * one), else NULL. */
static const char *single_token(const summary *s, size_t col)
{
    if (summary_example_count(s, col) != 1) return NULL;
    const char *t = summary_example(s, col, 0);
    return strlen(t) < SUMMARY_EXAMPLE_BYTES ? t : NULL;
}

/* The --missing list that adds token to the summary's spellings, as one
 * shell word: each spelling with its commas and backslashes escaped
 * (io/namelist.h's rule), the whole in single quotes.  0, or -1 when a
 * spelling holds a control byte or the list does not fit. */
static int missing_list(char *out, size_t cap, const summary *s, const char *token)
{
    size_t used = 0;
    uint32_t n = summary_missing_spellings(s);
#define PUT(c)                                                                                 \
    do {                                                                                       \
        if (used + 1 >= cap) return -1;                                                        \
        out[used++] = (c);                                                                     \
    } while (0)
    PUT('\'');
    for (uint32_t i = 0; i <= n; i++) {
        const char *t = i < n ? summary_missing_spelling(s, i) : token;
        if (i) PUT(',');
        for (; *t; t++) {
            if ((unsigned char)*t < 0x20 || *t == 0x7f) return -1;
            if (*t == ',' || *t == '\\') PUT('\\');
            if (*t == '\'') { /* end the quotes, a quoted quote, open again */
                PUT('\''); PUT('\\'); PUT('\''); PUT('\'');
            } else {
                PUT(*t);
            }
        }
    }
    PUT('\'');
#undef PUT
    out[used] = '\0';
    return 0;
}

static void token_warning(FILE *f, const summary *s, size_t col, const char *token)
{
    uint64_t text = summary_non_numeric(s, col), present = summary_present(s, col);
    char shown[SUMMARY_EXAMPLE_BYTES * 2 + 1], list[SUMMARY_MAX_MISSING * 4 * 48 + 256];
    shown_text(shown, sizeof shown, token);
    fprintf(f,
            "sheaf scan: warning: column '%s': %llu of its %llu present cells (%.1f%%) are '%s' and the "
            "rest numbers, so it is read as categorical; ",
            summary_name(s, col), (unsigned long long)text, (unsigned long long)present,
            100.0 * (double)text / (double)present, shown);
    if (missing_list(list, sizeof list, s, token) == 0)
        fprintf(f, "if '%s' means a missing value, scan again with --missing %s\n", shown, list);
    else
        fprintf(f, "if '%s' means a missing value, name it with --missing\n", shown);
}

static void mixed_note(FILE *f, const summary *s, size_t col, double numeric_share)
{
    char shown[SUMMARY_EXAMPLES][SUMMARY_EXAMPLE_BYTES * 2 + 1];
    uint32_t n = summary_example_count(s, col);
    for (uint32_t i = 0; i < n; i++) shown_text(shown[i], sizeof shown[i], summary_example(s, col, i));
    int numeric = summary_kind(s, col, numeric_share) == KIND_NUMERIC;
    fprintf(f, "sheaf scan: column '%s' holds %llu numbers and %llu text cells (", summary_name(s, col),
            (unsigned long long)summary_numbers(s, col),
            (unsigned long long)summary_non_numeric(s, col));
    for (uint32_t i = 0; i < n; i++) fprintf(f, "%s'%s'", i ? ", " : "e.g. ", shown[i]);
    fprintf(f, "); read as %s\n",
            numeric ? "numeric, the text cells left out of its moments" : "categorical");
}

static void ragged_note(FILE *f, const summary *s)
{
    uint64_t short_rows = summary_short_rows(s), long_rows = summary_long_rows(s);
    if (!short_rows && !long_rows) return;
    const uint64_t *lines;
    size_t nlines = summary_ragged_lines(s, &lines);
    fprintf(f, "sheaf scan: ragged rows: %llu with too few fields (read as missing), %llu with too "
               "many (the extra fields left out); first at line%s",
            (unsigned long long)short_rows, (unsigned long long)long_rows, nlines > 1 ? "s" : "");
    for (size_t i = 0; i < nlines; i++) fprintf(f, "%s %llu", i ? "," : "", (unsigned long long)lines[i]);
    fprintf(f, "; --strict refuses them\n");
}

void scan_notes_print(FILE *f, const summary *s, double numeric_share, int quiet)
{
    for (size_t col = 0; col < summary_columns(s); col++) {
        uint64_t numbers = summary_numbers(s, col), text = summary_non_numeric(s, col);
        if (!numbers || !text) continue;
        const char *token = single_token(s, col);
        if (token && summary_kind(s, col, numeric_share) != KIND_NUMERIC &&
            2 * numbers >= summary_present(s, col))
            token_warning(f, s, col, token);
        else if (!quiet) mixed_note(f, s, col, numeric_share);
    }
    if (!quiet) ragged_note(f, s);
}

/* Bytes in decimal units, three significant digits or so. */
static void show_bytes(char *out, size_t cap, double bytes)
{
    static const char *const unit[] = {"B", "kB", "MB", "GB", "TB"};
    int u = 0;
    while (bytes >= 999.5 && u < 4) { bytes /= 1000; u++; }
    snprintf(out, cap, u == 0 || bytes >= 99.95 ? "%.0f %s" : "%.1f %s", bytes, unit[u]);
}

void scan_notes_closing(const cli_progress *p, const summary *s)
{
    if (!p->on) return;
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    double seconds = (double)ts.tv_sec + ts.tv_nsec * 1e-9 - p->start;
    if (seconds < 1e-3) seconds = 1e-3;
    char bytes[32], rate[32];
    show_bytes(bytes, sizeof bytes, (double)summary_bytes(s));
    show_bytes(rate, sizeof rate, (double)summary_bytes(s) / seconds);
    fprintf(stderr, "sheaf scan: %llu rows, %zu columns, %s in %.2f s (%s/s)\n",
            (unsigned long long)summary_rows(s), summary_columns(s), bytes, seconds, rate);
}
