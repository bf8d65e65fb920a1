/* closest: the names nearest to a mistyped one, for "did you mean" hints.
 *
 * Distance: the optimal string alignment form of the Damerau-Levenshtein
 * distance (insertions, deletions, substitutions and swaps of two adjacent
 * characters, each one edit; Damerau 1964, Levenshtein 1966), over bytes
 * with ASCII letters compared without case.  A name is suggested when its
 * distance to the typed text is at most
 *
 *     1 for typed text of 1 to 3 bytes, 2 for 4 to 6, 3 from 7 on,
 *
 * or when the typed text (3 bytes or more) begins the name.  Names longer
 * than CLOSEST_MAX_BYTES are only matched by that prefix rule.  The table
 * is computed only within the threshold of its diagonal (2 x 3 + 1 cells a
 * row at most), and a name is left as soon as a row is over the threshold:
 * 100,000 names of 13 bytes took 32 to 38 ms on the shared 2-core
 * development machine (an error path only).
 *
 * A closest context is fed every existing name once (closest_offer, in the
 * order they should be listed) and keeps the CLOSEST_KEEP nearest (ties:
 * the first offered) and the first CLOSEST_SOME names offered; the names
 * are pointed to, not copied, and must live until closest_append.  No
 * allocation, no global state. */
#ifndef SHEAF_CLOSEST_H
#define SHEAF_CLOSEST_H

#include <stddef.h>

#define CLOSEST_KEEP 3       /* suggestions kept */
#define CLOSEST_SOME 5       /* existing names kept for listing */
#define CLOSEST_MAX_BYTES 256 /* longest name the distance is computed for */

typedef struct {
    const char *text;    /* one name (not NUL-terminated necessarily) */
    size_t len;          /* its bytes */
    size_t distance;     /* edits from the typed text */
} closest_name;

typedef struct {
    const char *typed;                  /* the mistyped text */
    size_t typed_len;                   /* its bytes */
    size_t limit;                       /* largest distance suggested */
    closest_name best[CLOSEST_KEEP];    /* nearest first */
    size_t nbest;                       /* entries in best */
    closest_name some[CLOSEST_SOME];    /* the first names offered */
    size_t nsome;                       /* entries in some */
    size_t offered;                     /* names offered in all */
} closest;

/* The distance between a and b (see above), or limit + 1 when it is larger
 * than limit (or either is longer than CLOSEST_MAX_BYTES). */
size_t closest_distance(const char *a, size_t alen, const char *b, size_t blen, size_t limit);

/* The largest distance suggested for typed text of len bytes. */
size_t closest_limit(size_t len);

void closest_init(closest *c, const char *typed, size_t typed_len);
/* Considers one existing name. */
void closest_offer(closest *c, const char *name, size_t len);

/* Appends to the NUL-terminated text in buf (of buflen bytes; cut to fit):
 * "; did you mean 'a' or 'b'?" when a name is near (nothing otherwise), then,
 * when list_what is not NULL, " (LIST_WHAT: x, y, z, ... N in all)" with the
 * first names offered. */
void closest_append(const closest *c, const char *list_what, char *buf, size_t buflen);

#endif
