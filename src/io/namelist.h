/* namelist: the one rule for a list of names or spellings written in one
 * option value (--columns, --exclude, --carry, --numeric, --categorical,
 * --target, --missing and the library fields that take the same lists).
 *
 *   Commas separate the names.  A backslash before a comma makes the comma
 *   part of the name ("revenue\, usd" is the one name "revenue, usd"); two
 *   backslashes are one; any other backslash is itself ("a\b" stays "a\b").
 *
 * So a header name with a comma in it can be named, and a name that ends in
 * a backslash is written with two.  The pieces are unescaped copies; an
 * empty piece (",x", "x,,y", "x,", "") is kept, so that callers can refuse
 * it or skip it.  No global state. */
#ifndef SHEAF_NAMELIST_H
#define SHEAF_NAMELIST_H

#include <stddef.h>

/* The names of list, unescaped: an array of *n strings in one block that
 * one free() releases (the array, then the text).  An empty list is one
 * empty name.  NULL when out of memory (errno ENOMEM). */
char **namelist_split(const char *list, size_t *n);

/* Whether list holds an empty name (by the rule above). */
int namelist_has_empty(const char *list);

#endif
