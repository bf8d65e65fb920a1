/* table: aligned text tables for a terminal or a pipe.
 *
 * Cells are collected row by row, then printed with each column as wide as
 * its widest cell (numbers right-aligned, text left-aligned).  When a width
 * limit is given, the widest text columns are truncated (with "~") until the
 * table fits.  Widths count UTF-8 code points, not bytes.
 */
#ifndef SHEAF_TABLE_H
#define SHEAF_TABLE_H

#include <stddef.h>
#include <stdio.h>

typedef struct table table;

table *table_create(size_t ncols);
void table_free(table *t);
/* Column heading and alignment (right = 1 for numbers). */
void table_heading(table *t, size_t col, const char *name, int right);
/* Starts a new row; then set cells by column (unset cells print empty). */
void table_row(table *t);
void table_cell(table *t, size_t col, const char *text);
void table_cellf(table *t, size_t col, const char *fmt, ...) __attribute__((format(printf, 3, 4)));
/* Prints with two spaces between columns; max_width 0 = no limit.
 * `bold_heading` underlines nothing but wraps the heading in bold escapes. */
void table_print(const table *t, FILE *f, size_t max_width, int bold_heading);

/* Writes s as one CSV field (RFC 4180: quoted when it holds a comma, quote
 * or line break, quotes doubled). */
void table_csv_field(FILE *f, const char *s);

/* Terminal width of stdout (COLUMNS, then the tty, else 0 = unknown). */
size_t table_terminal_width(void);
/* 1 when colour/bold may be used on f: a terminal and NO_COLOR unset. */
int table_use_color(FILE *f);

/* Number formatting shared by the text outputs: %.*g with thousands kept
 * readable; NaN prints as "-". */
void table_format_number(char *buf, size_t len, double v, int digits);

#endif
