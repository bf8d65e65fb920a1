/* shard_start: see shard_start.h for the method and its source. */
#include "io/shard_start.h"

#include <limits.h>
#include <stdio.h>
#include <string.h>

/* What a quote the rule reads as ordinary text costs a candidate: such
 * quotes are legal (5'10" is kept as it is) but rare in real tables, and a
 * parse started in the wrong mode meets one wherever its quotes flip. */
#define SHARD_ODD_WEIGHT 64

void shard_modes_init(shard_modes *t, char delim)
{
    for (int m = 0; m < 4; m++) {
        csv_quote_init(&t->q[m], delim);
        t->q[m].mode = (csv_quote_mode)m;
        t->rep[m] = m;
    }
}

void shard_modes_scan(shard_modes *t, const char *data, size_t len)
{
    if (!len) return;
    for (int m = 0; m < 4; m++)
        if (t->rep[m] == m) csv_quote_scan(&t->q[m], data, len, 0);
    for (int m = 0; m < 4; m++) {
        if (t->rep[m] != m) { t->q[m].mode = t->q[t->rep[m]].mode; continue; }
        /* Two modes that reach one state go on together. */
        for (int k = 0; k < m; k++)
            if (t->rep[k] == k && t->q[k].mode == t->q[m].mode) { t->rep[m] = k; break; }
    }
    for (int m = 0; m < 4; m++) t->rep[m] = t->rep[t->rep[m]];
}

uint8_t shard_modes_map(const shard_modes *t)
{
    uint8_t map = 0;
    for (int m = 0; m < 4; m++) map |= (uint8_t)((unsigned)t->q[m].mode << (2 * m));
    return map;
}

uint8_t shard_map_then(uint8_t a, uint8_t b)
{
    uint8_t map = 0;
    for (int m = 0; m < 4; m++)
        map |= (uint8_t)((unsigned)shard_map_apply(b, shard_map_apply(a, (csv_quote_mode)m))
                         << (2 * m));
    return map;
}

csv_quote_mode shard_count_records(const char *win, size_t len, int at_end, char delim,
                                   size_t fields, uint64_t *match, uint64_t *other,
                                   uint64_t *odd)
{
    *match = *other = *odd = 0;
    csv_quote_mode mode = CSV_AT_FIELD;
    size_t nf = 1, from = 0;
    for (size_t i = 0; i < len; i++) {
        char ch = win[i];
        switch (mode) {
        case CSV_IN_QUOTES: if (ch == '"') mode = CSV_QUOTE_SEEN; continue;
        case CSV_QUOTE_SEEN:
            if (ch == '"') { mode = CSV_IN_QUOTES; continue; }
            if (ch != delim && ch != '\n' && ch != '\r') (*odd)++; /* text after a closing quote */
            break;
        case CSV_AT_FIELD:
            if (ch == '"') { mode = CSV_IN_QUOTES; continue; }
            break;
        default:
            if (ch == '"') (*odd)++; /* a quote inside an unquoted field */
            break;
        }
        mode = CSV_IN_FIELD;
        if (ch == delim) { nf++; mode = CSV_AT_FIELD; }
        else if (ch == '\n') {
            size_t n = i - from; /* the record's bytes, its '\n' aside */
            if (n > 1 || (n == 1 && win[from] != '\r')) {
                if (nf == fields) (*match)++;
                else (*other)++;
            }
            nf = 1;
            from = i + 1;
            mode = CSV_AT_FIELD;
        }
    }
    if (at_end && from < len) {
        if (nf == fields) (*match)++;
        else (*other)++;
    }
    return mode;
}

void shard_start_guess(const char *win, size_t len, int at_end, char delim,
                       size_t header_fields, int worst, shard_guess *out)
{
    memset(out, 0, sizeof *out);
    size_t start[4];
    int found[4];
    for (int m = 0; m < 4; m++) {
        csv_quote_state q;
        csv_quote_init(&q, delim);
        q.mode = (csv_quote_mode)m;
        size_t r = csv_quote_scan(&q, win, len, 1);
        found[m] = r <= len || at_end;
        start[m] = r <= len ? r : len;
    }
    /* Distinct candidates, each with the modes that give it. */
    size_t cand[4];
    uint8_t cmodes[4] = {0};
    int ncand = 0, unknown = 0;
    for (int m = 0; m < 4; m++) {
        if (!found[m]) { unknown++; continue; }
        int c = 0;
        while (c < ncand && cand[c] != start[m]) c++;
        if (c == ncand) cand[ncand++] = start[m];
        cmodes[c] |= (uint8_t)(1u << m);
    }
    out->ncand = ncand;
    for (int m = 0; m < 4; m++) out->score[m] = LONG_MIN;
    if (ncand == 0) {
        snprintf(out->why, sizeof out->why, "no record ends in the %zu bytes read ahead", len);
        return;
    }
    if (ncand == 1 && !unknown) {
        out->decided = 1;
        out->rule = SHARD_START_CERTAIN;
        out->offset = cand[0];
        out->modes = cmodes[0];
        return;
    }
    /* Score each candidate by the records after it in the window. */
    long score[4];
    for (int c = 0; c < ncand; c++) {
        uint64_t match, other, odd;
        csv_quote_mode last = shard_count_records(win + cand[c], len - cand[c], at_end, delim,
                                                  header_fields, &match, &other, &odd);
        score[c] = (long)match - (long)other - SHARD_ODD_WEIGHT * (long)odd;
        if (at_end && last == CSV_IN_QUOTES) score[c] = LONG_MIN + 1; /* a quote left open */
        for (int m = 0; m < 4; m++)
            if (cmodes[c] >> m & 1) out->score[m] = score[c];
    }
    /* A mode with no record end in the window is a field longer than the
     * window: possible, so it counts as a candidate with no records. */
    int best = 0, second = -1;
    for (int c = 1; c < ncand; c++) {
        if (worst ? score[c] < score[best] : score[c] > score[best]) { second = best; best = c; }
        else if (second < 0 || (worst ? score[c] < score[second] : score[c] > score[second]))
            second = c;
    }
    long runner = second >= 0 ? score[second] : LONG_MIN;
    if (unknown && runner < 0) runner = 0;
    if (!worst && (score[best] <= runner || score[best] <= 0)) {
        snprintf(out->why, sizeof out->why,
                 "%d possible first records score alike in the %zu bytes read ahead",
                 ncand + (unknown > 0), len);
        return;
    }
    out->decided = 1;
    out->rule = SHARD_START_SPECULATED;
    out->offset = cand[best];
    out->modes = cmodes[best];
}
