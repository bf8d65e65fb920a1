/* keys: see keys.h. */
#include "out/keys.h"

#include <string.h>

void keys_replace(const char *in, char *out, size_t cap, keys_lookup lookup)
{
    size_t o = 0;
    if (!cap) return;
    while (*in && o + 1 < cap) {
        const char *close = *in == '{' ? strchr(in + 1, '}') : NULL;
        const char *words = close ? lookup(in + 1, (size_t)(close - in - 1)) : NULL;
        if (!words) {
            out[o++] = *in++;
            continue;
        }
        size_t n = strlen(words);
        if (n > cap - 1 - o) n = cap - 1 - o;
        memcpy(out + o, words, n);
        o += n;
        in = close + 1;
    }
    out[o] = '\0';
}
