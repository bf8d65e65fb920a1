/* namelist: see namelist.h. */
#include "io/namelist.h"

#include <stdlib.h>

/* The byte at *q, a backslash before a comma or a backslash read as the
 * byte it escapes; *q moves past what was read. */
static char take(const char **q)
{
    if (**q == '\\' && ((*q)[1] == ',' || (*q)[1] == '\\')) (*q)++;
    return *(*q)++;
}

/* The first name of p into out (when not NULL): its unescaped length, and
 * *next at the byte after its comma, or NULL after the last name. */
static size_t next_name(const char *p, char *out, const char **next)
{
    size_t len = 0;
    while (*p && *p != ',') {
        char c = take(&p);
        if (out) out[len] = c;
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
