/* What `sheaf scan` says on stderr once a scan has succeeded, about what it
 * read: the lines a user should see before trusting the summary (a token
 * among numbers that made a column categorical, ragged rows, columns of
 * numbers and text), and the closing line on a terminal.  Kept apart from
 * cli/scan.c, which parses options and runs the scan. */
#ifndef SHEAF_CLI_SCAN_NOTES_H
#define SHEAF_CLI_SCAN_NOTES_H

#include <stdio.h>

#include "cli/cli.h"
#include "summary/summary.h"

/* One line for each column of s whose non-numeric cells are all one token
 * while numbers are at least half of its present cells, and which the kind
 * rule (numeric_share) therefore reads as categorical: the column, the token,
 * its count and the --missing list that would read it as missing.  These are
 * warnings, printed even when quiet.  Unless quiet, one line for the ragged
 * rows (short and long counts, the first lines) and one for each other column
 * that holds both numbers and text.  Lines go to f, prefixed "sheaf scan: ". */
void scan_notes_print(FILE *f, const summary *s, double numeric_share, int quiet);

/* The closing line of a successful scan: rows, columns, bytes, seconds since
 * the progress started and the rate, on stderr, only when the progress line
 * was on (stderr a terminal, not quiet). */
void scan_notes_closing(const cli_progress *p, const summary *s);

#endif
