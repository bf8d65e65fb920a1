/* table: see table.h. */
#include "out/table.h"

#include <math.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>
#include <sys/ioctl.h>
#include <unistd.h>

struct table {
    size_t ncols;
    char **head;     /* ncols headings */
    int *right;      /* ncols alignments */
    int *whole;      /* ncols: never cut (names) */
    int *drop;       /* ncols: drop rank, 0 = never dropped, higher = dropped sooner */
    char **cells;    /* rows * ncols, NULL = empty */
    size_t rows, cap;
};

table *table_create(size_t ncols)
{
    table *t = calloc(1, sizeof *t);
    if (!t) return NULL;
    t->ncols = ncols;
    t->head = calloc(ncols, sizeof *t->head);
    t->right = calloc(ncols, sizeof *t->right);
    t->whole = calloc(ncols, sizeof *t->whole);
    t->drop = calloc(ncols, sizeof *t->drop);
    if (!t->head || !t->right || !t->whole || !t->drop) { table_free(t); return NULL; }
    return t;
}

void table_free(table *t)
{
    if (!t) return;
    for (size_t i = 0; i < t->ncols; i++) free(t->head ? t->head[i] : NULL);
    for (size_t i = 0; i < t->rows * t->ncols; i++) free(t->cells[i]);
    free(t->head);
    free(t->right);
    free(t->whole);
    free(t->drop);
    free(t->cells);
    free(t);
}

void table_heading(table *t, size_t col, const char *name, int right)
{
    free(t->head[col]);
    t->head[col] = strdup(name);
    t->right[col] = right;
}

void table_keep_whole(table *t, size_t col)
{
    if (col < t->ncols) t->whole[col] = 1;
}

void table_drop_rank(table *t, size_t col, int rank)
{
    if (col < t->ncols) t->drop[col] = rank;
}

void table_row(table *t)
{
    if (t->rows == t->cap) {
        size_t cap = t->cap ? t->cap * 2 : 16;
        char **p = realloc(t->cells, cap * t->ncols * sizeof *p);
        if (!p) return;
        t->cells = p;
        t->cap = cap;
    }
    memset(t->cells + t->rows * t->ncols, 0, t->ncols * sizeof *t->cells);
    t->rows++;
}

void table_cell(table *t, size_t col, const char *text)
{
    if (!t->rows || col >= t->ncols) return;
    char **c = &t->cells[(t->rows - 1) * t->ncols + col];
    free(*c);
    *c = strdup(text);
}

void table_cellf(table *t, size_t col, const char *fmt, ...)
{
    char buf[512];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(buf, sizeof buf, fmt, ap);
    va_end(ap);
    table_cell(t, col, buf);
}

/* Length of the terminal escape sequence at s (ESC [ parameters, a final
 * letter), 0 when there is none: it takes no width on screen. */
static size_t escape_length(const char *s)
{
    if (s[0] != '\033' || s[1] != '[') return 0;
    size_t n = 2;
    while (s[n] && !((s[n] >= '@' && s[n] <= '~'))) n++;
    return s[n] ? n + 1 : n;
}

size_t table_text_width(const char *s)
{
    size_t w = 0;
    while (s && *s) {
        size_t e = escape_length(s);
        if (e) { s += e; continue; }
        w += ((unsigned char)*s & 0xC0) != 0x80;
        s++;
    }
    return w;
}

size_t table_cut(const char *s, size_t w)
{
    /* Bytes of s that fill at most w screen columns, ending on a code point
     * boundary (escapes count nothing and are kept whole). */
    const char *p = s;
    size_t n = 0;
    while (*p) {
        size_t e = escape_length(p);
        if (e) { p += e; continue; }
        if (n == w) break;
        p++;
        while ((*p & 0xC0) == 0x80) p++;
        n++;
    }
    return (size_t)(p - s);
}

void table_put_cut(FILE *f, const char *s, size_t w)
{
    if (table_text_width(s) <= w) { fputs(s, f); return; }
    if (!w) return;
    size_t keep = table_cut(s, w - 1);
    fwrite(s, 1, keep, f);
    if (memchr(s, '\033', keep)) fputs("\033[0m", f); /* an escape cut from its reset */
    fputs(TABLE_CUT_MARK, f);
}

/* Prints s in a field of width w, cut with the marker when longer. */
static void put_cell(FILE *f, const char *s, size_t w, int right, int last)
{
    size_t sw = table_text_width(s);
    if (sw > w) {
        table_put_cut(f, s, w);
        return;
    }
    if (right)
        for (size_t i = sw; i < w; i++) fputc(' ', f);
    if (s) fputs(s, f);
    if (!right && !last)
        for (size_t i = sw; i < w; i++) fputc(' ', f);
}

#define COMFORT_CUT 16 /* a text column is cut to this before any column is dropped */
#define MIN_CUT 10     /* and to this, at the least, before names are cut */

static size_t total_width(const table *t, const size_t *w, const int *shown)
{
    size_t total = 0, k = 0;
    for (size_t c = 0; c < t->ncols; c++)
        if (shown[c]) total += w[c] + (k++ ? 2 : 0);
    return total;
}

/* Narrows the widest text column that may be cut and is wider than floor,
 * one column at a time, until the table fits; 1 when it fits. */
static int cut_text(const table *t, size_t *w, const int *shown, size_t max_width, size_t floor)
{
    while (total_width(t, w, shown) > max_width) {
        size_t widest = t->ncols;
        for (size_t c = 0; c < t->ncols; c++)
            if (shown[c] && !t->right[c] && !t->whole[c] && w[c] > floor &&
                (widest == t->ncols || w[c] > w[widest]))
                widest = c;
        if (widest == t->ncols) return 0;
        w[widest]--;
    }
    return 1;
}

/* Widths within max_width: text columns that may be cut are narrowed (the
 * widest first, down to COMFORT_CUT); then the column of highest drop rank
 * goes, and the text columns get their room back; when nothing more may be
 * dropped, text columns are cut down to MIN_CUT; last, every column is
 * narrowed, names too.  shown[c] = 0 for a dropped column. */
static void fit(const table *t, const size_t *natural, size_t *w, int *shown, size_t max_width)
{
    for (;;) {
        memcpy(w, natural, t->ncols * sizeof *w);
        if (cut_text(t, w, shown, max_width, COMFORT_CUT)) return;
        size_t victim = t->ncols;
        for (size_t c = 0; c < t->ncols; c++)
            if (shown[c] && t->drop[c] && (victim == t->ncols || t->drop[c] > t->drop[victim]))
                victim = c;
        if (victim == t->ncols) break;
        shown[victim] = 0;
    }
    if (cut_text(t, w, shown, max_width, MIN_CUT)) return;
    while (total_width(t, w, shown) > max_width) { /* the last resort */
        size_t widest = t->ncols;
        for (size_t c = 0; c < t->ncols; c++)
            if (shown[c] && w[c] > 4 && (widest == t->ncols || w[c] > w[widest])) widest = c;
        if (widest == t->ncols) return;
        w[widest]--;
    }
}

static int last_shown(const int *shown, size_t ncols, size_t c)
{
    for (size_t k = c + 1; k < ncols; k++)
        if (shown[k]) return 0;
    return 1;
}

void table_print(const table *t, FILE *f, size_t max_width, int bold_heading)
{
    size_t *natural = calloc(t->ncols, sizeof *natural), *w = calloc(t->ncols, sizeof *w);
    int *shown = malloc(t->ncols * sizeof *shown);
    if (!natural || !w || !shown) { free(natural); free(w); free(shown); return; }
    for (size_t c = 0; c < t->ncols; c++) {
        shown[c] = 1;
        natural[c] = table_text_width(t->head[c]);
        for (size_t r = 0; r < t->rows; r++) {
            size_t cw = table_text_width(t->cells[r * t->ncols + c]);
            if (cw > natural[c]) natural[c] = cw;
        }
    }
    memcpy(w, natural, t->ncols * sizeof *w);
    if (max_width) fit(t, natural, w, shown, max_width);
    for (size_t r = 0; r <= t->rows; r++) {
        if (!r && bold_heading) fputs("\033[1m", f);
        for (size_t c = 0, k = 0; c < t->ncols; c++) {
            if (!shown[c]) continue;
            if (k++) fputs("  ", f);
            put_cell(f, r ? t->cells[(r - 1) * t->ncols + c] : t->head[c], w[c], t->right[c],
                     last_shown(shown, t->ncols, c));
        }
        if (!r && bold_heading) fputs("\033[0m", f);
        fputc('\n', f);
    }
    size_t dropped = 0, len = 0;
    for (size_t c = 0; c < t->ncols; c++)
        if (!shown[c]) { dropped++; len += strlen(t->head[c]) + 2; }
    char *note = dropped ? malloc(len + 64) : NULL;
    if (note) {
        size_t at = (size_t)sprintf(note, "(not shown at this width:");
        for (size_t c = 0, k = 0; c < t->ncols; c++)
            if (!shown[c]) at += (size_t)sprintf(note + at, "%s %s", k++ ? "," : "", t->head[c]);
        sprintf(note + at, "; widen the terminal or set COLUMNS)");
        table_wrap(f, note, max_width);
        free(note);
    }
    free(natural);
    free(w);
    free(shown);
}

void table_wrap(FILE *f, const char *text, size_t width)
{
    /* A line that fits is written as it is (its spacing kept: tables).  A
     * longer one is wrapped greedily at spaces, the lines after its first
     * indented by two; a word wider than the line is cut with the marker. */
    const char *p = text;
    while (*p) {
        const char *nl = strchr(p, '\n');
        const char *end = nl ? nl : p + strlen(p);
        size_t lw = 0;
        for (const char *r = p; r < end; r++) lw += ((unsigned char)*r & 0xC0) != 0x80;
        if (!width || lw <= width || memchr(p, '\033', (size_t)(end - p))) {
            fwrite(p, 1, (size_t)(end - p), f);
            fputc('\n', f);
            p = nl ? nl + 1 : end;
            continue;
        }
        size_t col = 0, indent, lead;
        while (p < end && *p == ' ') { fputc(' ', f); p++; col++; } /* the line's own indent */
        indent = lead = col;
        while (p < end) {
            while (p < end && *p == ' ') p++;
            if (p == end) break;
            const char *q = p;
            while (q < end && *q != ' ') q++;
            size_t ww = 0;
            for (const char *r = p; r < q; r++) ww += ((unsigned char)*r & 0xC0) != 0x80;
            if (col > indent && col + 1 + ww > width) {
                fputc('\n', f);
                indent = lead + 2 + 8 <= width ? lead + 2 : 0; /* continuation lines */
                for (size_t i = 0; i < indent; i++) fputc(' ', f);
                col = indent;
            } else if (col > indent) {
                fputc(' ', f);
                col++;
            }
            if (col + ww > width) {
                char *word = strndup(p, (size_t)(q - p));
                if (word) table_put_cut(f, word, width > col ? width - col : 1);
                free(word);
                col = width;
            } else {
                fwrite(p, 1, (size_t)(q - p), f);
                col += ww;
            }
            p = q;
        }
        fputc('\n', f);
        p = nl ? nl + 1 : end;
    }
}

size_t table_terminal_width(void)
{
    const char *env = getenv("COLUMNS");
    if (env && atoi(env) > 0) return (size_t)atoi(env);
    struct winsize ws;
    if (isatty(STDOUT_FILENO) && ioctl(STDOUT_FILENO, TIOCGWINSZ, &ws) == 0 && ws.ws_col > 0)
        return ws.ws_col;
    return 0;
}

static table_color color_mode = TABLE_COLOR_AUTO;

void table_set_color(table_color mode) { color_mode = mode; }

int table_use_color(FILE *f)
{
    if (color_mode != TABLE_COLOR_AUTO) return color_mode == TABLE_COLOR_ALWAYS;
    const char *nc = getenv("NO_COLOR");
    if (nc && *nc) return 0;
    return isatty(fileno(f));
}

void table_format_number(char *buf, size_t len, double v, int digits)
{
    if (isnan(v)) { snprintf(buf, len, "-"); return; }
    if (isinf(v)) { snprintf(buf, len, v > 0 ? "inf" : "-inf"); return; }
    snprintf(buf, len, "%.*g", digits, v);
}

void table_csv_field(FILE *f, const char *s)
{
    if (!strpbrk(s, ",\"\n\r")) { fputs(s, f); return; }
    fputc('"', f);
    for (; *s; s++) {
        if (*s == '"') fputc('"', f);
        fputc(*s, f);
    }
    fputc('"', f);
}
