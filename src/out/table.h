/* table: aligned text tables for a terminal or a pipe.
 *
 * Cells are collected row by row, then printed with each column as wide as
 * its widest cell (numbers right-aligned, text left-aligned).  When a width
 * limit is given, the table never exceeds it: first the widest text columns
 * are cut (with TABLE_CUT_MARK, down to 10 columns; never a column marked
 * whole, such as names, which users copy); then columns are dropped by
 * their drop rank (highest first; a line after the table names them); only
 * when nothing more may be dropped is every column cut, names too.  Widths
 * count UTF-8 code points, not bytes, and terminal escapes (colour) count
 * nothing; a cut never splits a UTF-8 sequence.
 */
#ifndef SHEAF_TABLE_H
#define SHEAF_TABLE_H

#include <stddef.h>
#include <stdio.h>

typedef struct table table;

table *table_create(size_t ncols);
void table_free(table *t);
/* The marker that ends a cut text (U+2026, one column wide). */
#define TABLE_CUT_MARK "\xe2\x80\xa6"

/* Column heading and alignment (right = 1 for numbers). */
void table_heading(table *t, size_t col, const char *name, int right);
/* The column is never cut while others can give way (names). */
void table_keep_whole(table *t, size_t col);
/* Drop rank of a column when the table does not fit: 0 (the default) never
 * dropped, else the highest rank goes first. */
void table_drop_rank(table *t, size_t col, int rank);
/* Starts a new row; then set cells by column (unset cells print empty). */
void table_row(table *t);
void table_cell(table *t, size_t col, const char *text);
void table_cellf(table *t, size_t col, const char *fmt, ...) __attribute__((format(printf, 3, 4)));
/* Prints with two spaces between columns; max_width 0 = no limit.
 * `bold_heading` underlines nothing but wraps the heading in bold escapes. */
void table_print(const table *t, FILE *f, size_t max_width, int bold_heading);

/* Screen columns of s: UTF-8 code points, terminal escapes not counted. */
size_t table_text_width(const char *s);
/* Bytes of s that fill at most w screen columns, ending on a code point. */
size_t table_cut(const char *s, size_t w);
/* Writes s, cut to w screen columns with TABLE_CUT_MARK when it is wider. */
void table_put_cut(FILE *f, const char *s, size_t w);

/* Writes text word-wrapped at width screen columns (0: as it is), each of
 * its lines ended with a newline. */
void table_wrap(FILE *f, const char *text, size_t width);

/* Writes s as one CSV field (RFC 4180: quoted when it holds a comma, quote
 * or line break, quotes doubled). */
void table_csv_field(FILE *f, const char *s);

/* Terminal width of stdout (COLUMNS, then the tty, else 0 = unknown). */
size_t table_terminal_width(void);
/* Colour and bold: AUTO (the default) when f is a terminal and NO_COLOR is
 * unset or empty; ALWAYS; NEVER. */
typedef enum { TABLE_COLOR_AUTO, TABLE_COLOR_ALWAYS, TABLE_COLOR_NEVER } table_color;
void table_set_color(table_color mode);
/* 1 when colour/bold may be used on f, by the mode above. */
int table_use_color(FILE *f);

/* Number formatting shared by the text outputs: %.*g with thousands kept
 * readable; NaN prints as "-". */
void table_format_number(char *buf, size_t len, double v, int digits);

#endif
