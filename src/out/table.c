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
    if (!t->head || !t->right) { table_free(t); return NULL; }
    return t;
}

void table_free(table *t)
{
    if (!t) return;
    for (size_t i = 0; i < t->ncols; i++) free(t->head ? t->head[i] : NULL);
    for (size_t i = 0; i < t->rows * t->ncols; i++) free(t->cells[i]);
    free(t->head);
    free(t->right);
    free(t->cells);
    free(t);
}

void table_heading(table *t, size_t col, const char *name, int right)
{
    free(t->head[col]);
    t->head[col] = strdup(name);
    t->right[col] = right;
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

static size_t width_of(const char *s)
{
    size_t w = 0;
    for (; s && *s; s++) w += ((unsigned char)*s & 0xC0) != 0x80;
    return w;
}

/* Prints s in a field of width w, truncating with '~' when longer. */
static void put_cell(FILE *f, const char *s, size_t w, int right, int last)
{
    size_t sw = width_of(s);
    if (sw > w) {
        size_t keep = w ? w - 1 : 0, n = 0;
        const char *p = s;
        while (*p && n < keep) {
            p++;
            while ((*p & 0xC0) == 0x80) p++;
            n++;
        }
        fwrite(s, 1, (size_t)(p - s), f);
        if (w) fputc('~', f);
        return;
    }
    if (right)
        for (size_t i = sw; i < w; i++) fputc(' ', f);
    if (s) fputs(s, f);
    if (!right && !last)
        for (size_t i = sw; i < w; i++) fputc(' ', f);
}

void table_print(const table *t, FILE *f, size_t max_width, int bold_heading)
{
    size_t *w = calloc(t->ncols, sizeof *w);
    if (!w) return;
    for (size_t c = 0; c < t->ncols; c++) {
        w[c] = width_of(t->head[c]);
        for (size_t r = 0; r < t->rows; r++) {
            size_t cw = width_of(t->cells[r * t->ncols + c]);
            if (cw > w[c]) w[c] = cw;
        }
    }
    if (max_width) {
        /* Shrink the widest left-aligned (text) column until it fits. */
        for (;;) {
            size_t total = 0;
            for (size_t c = 0; c < t->ncols; c++) total += w[c] + (c ? 2 : 0);
            if (total <= max_width) break;
            size_t widest = t->ncols;
            for (size_t c = 0; c < t->ncols; c++)
                if (!t->right[c] && w[c] > 8 && (widest == t->ncols || w[c] > w[widest])) widest = c;
            if (widest == t->ncols) break;
            w[widest]--;
        }
    }
    if (bold_heading) fputs("\033[1m", f);
    for (size_t c = 0; c < t->ncols; c++) {
        if (c) fputs("  ", f);
        put_cell(f, t->head[c], w[c], t->right[c], c + 1 == t->ncols);
    }
    if (bold_heading) fputs("\033[0m", f);
    fputc('\n', f);
    for (size_t r = 0; r < t->rows; r++) {
        for (size_t c = 0; c < t->ncols; c++) {
            if (c) fputs("  ", f);
            put_cell(f, t->cells[r * t->ncols + c], w[c], t->right[c], c + 1 == t->ncols);
        }
        fputc('\n', f);
    }
    free(w);
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

int table_use_color(FILE *f)
{
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
