/* closest: the nearest names to a mistyped one (see closest.h for the
 * distance, the threshold and the references). */
#include "io/closest.h"

#include <stdio.h>
#include <string.h>

static unsigned char fold(unsigned char ch)
{
    return ch >= 'A' && ch <= 'Z' ? (unsigned char)(ch + ('a' - 'A')) : ch;
}

size_t closest_distance(const char *a, size_t alen, const char *b, size_t blen, size_t limit)
{
    size_t over = limit + 1;
    if (alen > CLOSEST_MAX_BYTES || blen > CLOSEST_MAX_BYTES) return over;
    if ((alen > blen ? alen - blen : blen - alen) > limit) return over;
    /* Three rows of the optimal string alignment table, d[i][j] = distance
     * of a[0..i) and b[0..j); cells more than limit off the diagonal are
     * over the limit whatever they hold, so only the band is computed. */
    size_t rows[3][CLOSEST_MAX_BYTES + 1];
    size_t *prev2 = rows[0], *prev = rows[1], *cur = rows[2];
    for (size_t j = 0; j <= blen; j++) prev[j] = j <= limit ? j : over;
    for (size_t i = 1; i <= alen; i++) {
        size_t lo = i > limit ? i - limit : 0, hi = i + limit < blen ? i + limit : blen;
        size_t row_min = over;
        /* The cells beside the band that the next rows read stay over. */
        if (lo == 0) cur[0] = i;
        else cur[lo - 1] = over;
        if (hi < blen) cur[hi + 1] = over;
        for (size_t j = lo > 1 ? lo : 1; j <= hi; j++) {
            unsigned char x = fold((unsigned char)a[i - 1]), y = fold((unsigned char)b[j - 1]);
            size_t v = prev[j - 1] + (x != y);
            if (prev[j] + 1 < v) v = prev[j] + 1;
            if (cur[j - 1] + 1 < v) v = cur[j - 1] + 1;
            if (i > 1 && j > 1 && x == fold((unsigned char)b[j - 2]) &&
                fold((unsigned char)a[i - 2]) == y && prev2[j - 2] + 1 < v)
                v = prev2[j - 2] + 1;
            cur[j] = v > over ? over : v;
        }
        for (size_t j = lo; j <= hi; j++)
            if (cur[j] < row_min) row_min = cur[j];
        if (row_min > limit) return over;
        size_t *t = prev2;
        prev2 = prev;
        prev = cur;
        cur = t;
    }
    return prev[blen] > limit ? over : prev[blen];
}

size_t closest_limit(size_t len)
{
    return len <= 3 ? 1 : len <= 6 ? 2 : 3;
}

void closest_init(closest *c, const char *typed, size_t typed_len)
{
    memset(c, 0, sizeof *c);
    c->typed = typed;
    c->typed_len = typed_len;
    c->limit = closest_limit(typed_len);
}

static int begins(const char *typed, size_t tlen, const char *name, size_t len)
{
    if (tlen < 3 || tlen >= len) return 0;
    for (size_t i = 0; i < tlen; i++)
        if (fold((unsigned char)typed[i]) != fold((unsigned char)name[i])) return 0;
    return 1;
}

void closest_offer(closest *c, const char *name, size_t len)
{
    if (c->nsome < CLOSEST_SOME) c->some[c->nsome++] = (closest_name){name, len, 0};
    c->offered++;
    if (len == c->typed_len && memcmp(name, c->typed, len) == 0) return; /* the name itself */
    size_t d = closest_distance(c->typed, c->typed_len, name, len, c->limit);
    /* A prefix counts as far as the limit: after every nearer name. */
    if (d > c->limit && begins(c->typed, c->typed_len, name, len)) d = c->limit;
    if (d > c->limit) return;
    size_t at = c->nbest;
    while (at > 0 && c->best[at - 1].distance > d) at--;
    if (at >= CLOSEST_KEEP) return;
    size_t last = c->nbest < CLOSEST_KEEP ? c->nbest : CLOSEST_KEEP - 1;
    memmove(&c->best[at + 1], &c->best[at], (last - at) * sizeof c->best[0]);
    c->best[at] = (closest_name){name, len, d};
    if (c->nbest < CLOSEST_KEEP) c->nbest++;
}

/* Appends printf-formatted text to buf, cut to fit; control bytes of text
 * are shown escaped (\r, \t, \n, \xNN), so that a name ending in a CR does
 * not print as the name without it. */
static void add(char *buf, size_t buflen, const char *fmt, const char *text, size_t len)
{
    size_t used = strlen(buf);
    if (used + 1 >= buflen) return;
    char shown[64 * 4 + 1];
    size_t k = 0, n = len > 64 ? 64 : len;
    for (size_t i = 0; i < n; i++) {
        unsigned char c = (unsigned char)text[i];
        if (c >= 0x20 && c != 0x7f) {
            shown[k++] = (char)c;
        } else {
            const char *e = c == '\r' ? "\\r" : c == '\t' ? "\\t" : c == '\n' ? "\\n" : NULL;
            if (e) k += (size_t)snprintf(shown + k, sizeof shown - k, "%s", e);
            else k += (size_t)snprintf(shown + k, sizeof shown - k, "\\x%02x", c);
        }
    }
    snprintf(buf + used, buflen - used, fmt, (int)k, shown, len > 64 ? "..." : "");
}

void closest_append(const closest *c, const char *list_what, char *buf, size_t buflen)
{
    for (size_t i = 0; i < c->nbest; i++)
        add(buf, buflen, i == 0 ? "; did you mean '%.*s%s'" : i + 1 < c->nbest ? ", '%.*s%s'"
                                                                            : " or '%.*s%s'",
            c->best[i].text, c->best[i].len);
    if (c->nbest) add(buf, buflen, "%.*s%s?", "", 0);
    if (!list_what || c->offered == 0) return;
    add(buf, buflen, " (%.*s%s:", list_what, strlen(list_what));
    /* A name holding a comma is quoted, so that the commas between the
     * names stay the only bare ones. */
    for (size_t i = 0; i < c->nsome; i++) {
        int comma = memchr(c->some[i].text, ',', c->some[i].len) != NULL;
        add(buf, buflen, comma ? (i ? ", '%.*s%s'" : " '%.*s%s'") : (i ? ", %.*s%s" : " %.*s%s"),
            c->some[i].text, c->some[i].len);
    }
    if (c->offered > c->nsome) {
        char tail[48];
        snprintf(tail, sizeof tail, ", ... %zu in all", c->offered);
        add(buf, buflen, "%.*s%s", tail, strlen(tail));
    }
    add(buf, buflen, "%.*s%s)", "", 0);
}
