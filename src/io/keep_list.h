/* keep_list: the one rule for a line of a keep list (screen --write-kept
 * writes them; trim, pca and project --columns-from read them).
 *
 * One column name per line.  A blank line, and a line starting with '#',
 * are skipped (comments).  A line starting with a backslash names the
 * column spelled by the rest of it, so that a name starting with '#' or a
 * backslash is written "\#..." or "\\..." and read back whole.  A carriage
 * return before the line end (a list edited elsewhere) is dropped, and so
 * are spaces and tabs after the name.  A name holding a line end, or ending
 * in a space or a tab, cannot be written (keep_list_writable). */
#ifndef SHEAF_KEEP_LIST_H
#define SHEAF_KEEP_LIST_H

#include <stddef.h>
#include <string.h>

/* The name of the line p[0..len) (its line end not included): its start,
 * with its length in *n, or NULL for a blank or comment line. */
static inline const char *keep_list_name(const char *p, size_t len, size_t *n)
{
    while (len > 0 && (p[len - 1] == '\r' || p[len - 1] == ' ' || p[len - 1] == '\t')) len--;
    if (len == 0 || p[0] == '#') return NULL;
    if (p[0] == '\\') { p++; len--; }
    *n = len;
    return p;
}

/* 1 when a keep list can hold the name (keep_list_name reads it back). */
static inline int keep_list_writable(const char *name)
{
    size_t len = strlen(name);
    return len > 0 && !strpbrk(name, "\r\n") && name[len - 1] != ' ' && name[len - 1] != '\t';
}

/* 1 when the name is written with a leading backslash. */
static inline int keep_list_escaped(const char *name)
{
    return name[0] == '#' || name[0] == '\\';
}

#endif
