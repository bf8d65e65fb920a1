/* shards: see shards.h for the check. */
#include "summary/shards.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "io/message.h"
#include "io/shard_start.h"

const char *summary_shard_rule_name(uint8_t rule)
{
    static const char *const names[] = {"", "certain", "speculated", "prefix"};
    return rule < 4 ? names[rule] : "";
}

/* Shards of one file together, by range start then end. */
static int by_file_range(const summary_source *a, const summary_source *b)
{
    if (a->file_id != b->file_id) return a->file_id < b->file_id ? -1 : 1;
    if (a->size_bytes != b->size_bytes) return a->size_bytes < b->size_bytes ? -1 : 1;
    if (a->start_byte != b->start_byte) return a->start_byte < b->start_byte ? -1 : 1;
    if (a->end_byte != b->end_byte) return a->end_byte < b->end_byte ? -1 : 1;
    return 0;
}

/* The modes a set of modes (bit m: mode m) goes to through a map. */
static uint8_t image(uint8_t set, uint8_t map)
{
    uint8_t out = 0;
    for (int m = 0; m < 4; m++)
        if (set >> m & 1) out |= (uint8_t)(1u << shard_map_apply(map, (csv_quote_mode)m));
    return out;
}

static void name_shard(char *b, size_t n, const summary_source *x)
{
    snprintf(b, n, "%s shard %u/%u (bytes %llu..%llu)", x->path, x->shard_index, x->shard_count,
             (unsigned long long)x->start_byte, (unsigned long long)x->end_byte);
}

int summary_shards_check(const summary *s, shard_check *out, shard_verdict *verdicts,
                         size_t *bad, char *msg, size_t msglen)
{
    memset(out, 0, sizeof *out);
    if (verdicts)
        for (size_t i = 0; i < s->nsources; i++) verdicts[i] = SHARD_NOT;
    size_t n = 0;
    size_t *ix = malloc((s->nsources ? s->nsources : 1) * sizeof *ix);
    if (!ix) { snprintf(msg, msglen, "out of memory"); return -1; }
    for (size_t i = 0; i < s->nsources; i++)
        if (s->sources[i].shard_rule) ix[n++] = i;
    /* Insertion sort: the sources of one summary are few. */
    for (size_t i = 1; i < n; i++)
        for (size_t k = i; k > 0 && by_file_range(&s->sources[ix[k - 1]], &s->sources[ix[k]]) > 0;
             k--) {
            size_t t = ix[k];
            ix[k] = ix[k - 1];
            ix[k - 1] = t;
        }
    out->shards = n;
    int rc = 0;
    size_t wrong = 0;  /* shards that took a wrong first record */
    char others[600] = ""; /* the ones after the first, as "I/N" */
    const summary_source *prev = NULL;
    uint8_t possible = 0; /* modes possible at the end of prev's range */
    for (size_t k = 0; k < n; k++) { /* an overlap breaks out */
        const summary_source *x = &s->sources[ix[k]];
        int same_file = prev && prev->file_id == x->file_id && prev->size_bytes == x->size_bytes;
        if (!same_file) { out->files++; prev = NULL; }
        char a[1200], b[1200];
        if (prev && x->start_byte < prev->end_byte && x->start_byte < x->end_byte &&
            prev->start_byte < prev->end_byte) {
            name_shard(a, sizeof a, prev);
            name_shard(b, sizeof b, x);
            snprintf(msg, msglen, "%s and %s overlap: their records would be counted twice", a,
                     b);
            *bad = ix[k];
            rc = -1;
            break;
        }
        shard_verdict v;
        if (x->start_byte == x->end_byte && x->start_byte > 0) {
            /* An empty range owns no record start: nothing to check, and
             * the run goes on through it unchanged. */
            v = SHARD_VERIFIED;
            if (verdicts) verdicts[ix[k]] = v;
            out->verified++;
            continue;
        }
        uint8_t p = 0xF;
        if (x->start_byte == 0) p = 1u << CSV_AT_FIELD;
        else if (prev && prev->end_byte == x->start_byte) p = possible;
        if (x->shard_rule == SHARD_START_PREFIX) {
            v = (p & x->shard_modes) ? SHARD_VERIFIED : SHARD_WRONG;
            if (v != SHARD_WRONG) p = x->shard_modes;
        } else if (x->shard_rule == SHARD_START_CERTAIN && x->start_byte > 0) {
            v = SHARD_VERIFIED;
        } else if ((p & x->shard_modes) == p) {
            v = SHARD_VERIFIED;
        } else {
            v = (p & x->shard_modes) ? SHARD_UNVERIFIED : SHARD_WRONG;
        }
        if (verdicts) verdicts[ix[k]] = v;
        if (v == SHARD_WRONG) {
            /* The check goes on from the modes possible at its start (its
             * map tells where each leads), so that one merge names every
             * shard to rescan. */
            if (wrong++ == 0) {
                name_shard(a, sizeof a, x);
                message_printf(msg, msglen,
                               "%s guessed its first record from the bytes near its start, and the "
                               "shards before it show the guess was wrong; rescan it with "
                               "{shard_from_top}", a);
                *bad = ix[k];
                rc = -1;
            } else {
                size_t used = strlen(others);
                snprintf(others + used, sizeof others - used, "%s%u/%u", used ? ", " : "",
                         x->shard_index, x->shard_count);
            }
        } else if (v == SHARD_VERIFIED) {
            out->verified++;
        } else {
            out->unverified++;
        }
        possible = image(p, x->shard_map);
        prev = x;
    }
    free(ix);
    if (wrong > 1) {
        size_t used = strlen(msg);
        snprintf(msg + used, msglen - used, " (and the same for %zu more: shard%s %s)", wrong - 1,
                 wrong > 2 ? "s" : "", others);
    }
    return rc;
}

size_t summary_shards_incomplete(const summary *s, char *msg, size_t msglen)
{
    size_t bad = 0;
    if (msglen) msg[0] = '\0';
    for (size_t i = 0; i < s->nsources; i++) {
        const summary_source *x = &s->sources[i];
        if (!x->shard_rule) continue;
        int first = 1, other_version = 0;
        size_t have = 0;
        for (size_t k = 0; k < s->nsources; k++) {
            const summary_source *y = &s->sources[k];
            if (!y->shard_rule) continue;
            if (y->file_id == x->file_id && y->shard_count == x->shard_count) {
                if (k < i) first = 0; /* counted at its first source */
                have++;
            } else if (!strcmp(y->path, x->path)) {
                other_version = 1;
            }
        }
        if (!first || (have >= x->shard_count && !other_version)) continue;
        if (bad++ == 0) {
            if (other_version)
                message_printf(msg, msglen,
                               "%s: shards of two versions of the file (they differ in size or "
                               "first bytes)", x->path);
            else
                message_printf(msg, msglen,
                               "%s: %zu of its %u shards (the rest of the file is not counted)",
                               x->path, have, x->shard_count);
        }
    }
    return bad;
}
