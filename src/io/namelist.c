/* namelist: see namelist.h. */
#include "io/namelist.h"

#include <stdlib.h>
#include <string.h>

/* The first name of p into out (when not NULL): its unescaped length, and
 * *next at the byte after its comma, or NULL after the last name. */
static size_t next_name(const char *p, char *out, const char **next)
{
    size_t len = 0;
    for (; *p && *p != ','; p++) {
        if (*p == '\\' && (p[1] == ',' || p[1] == '\\')) p++;
        if (out) out[len] = *p;
        len++;
    }
    *next = *p ? p + 1 : NULL;
    return len;
}

char **namelist_split(const char *list, size_t *n)
{
    size_t count = 0, text = 0;
    for (const char *p = list ? list : ""; p;) {
        text += next_name(p, NULL, &p) + 1;
        count++;
    }
    char **names = malloc(count * sizeof *names + text);
    if (!names) return NULL;
    char *at = (char *)(names + count);
    size_t k = 0;
    for (const char *p = list ? list : ""; p;) {
        names[k++] = at;
        at += next_name(p, at, &p);
        *at++ = '\0';
    }
    *n = count;
    return names;
}

int namelist_has_empty(const char *list)
{
    for (const char *p = list ? list : ""; p;)
        if (next_name(p, NULL, &p) == 0) return 1;
    return 0;
}

int namelist_has(const char *list, const char *name, size_t len)
{
    for (const char *p = list ? list : ""; p;) {
        const char *start = p;
        if (next_name(start, NULL, &p) != len) continue;
        /* Compare unescaped bytes without copying. */
        size_t i = 0;
        for (const char *q = start; i < len; q++, i++) {
            if (*q == '\\' && (q[1] == ',' || q[1] == '\\')) q++;
            if (*q != name[i]) break;
        }
        if (i == len) return 1;
    }
    return 0;
}
