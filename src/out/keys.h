/* keys: the setting keys of library messages shown in a caller's words.
 *
 * The library names a setting in a message by a key in braces,
 * "raise {max_classes}" or "{task=regress}", never by how a caller sets it.
 * The command line shows each key as its option (cli/vocabulary.c), the
 * public API as the call that sets it (api/api_options.c); both through
 * keys_replace.
 */
#ifndef SHEAF_KEYS_H
#define SHEAF_KEYS_H

#include <stddef.h>

/* What the caller calls the setting key[0..len), or NULL when it is not a
 * key it knows (the braces then stay: a column name may hold braces). */
typedef const char *(*keys_lookup)(const char *key, size_t len);

/* Copies in to out (cap bytes, NUL-terminated, cut if longer) with every
 * known {key} replaced by lookup's words.  in and out must not overlap. */
void keys_replace(const char *in, char *out, size_t cap, keys_lookup lookup);

#endif
