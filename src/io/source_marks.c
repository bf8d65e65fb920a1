/* source, restart points: the gzip decoder's state kept every so many
 * decoded bytes, handed to a checkpoint and restored by a resumed scan (see
 * source.h and DEVELOPERS.md, "Checkpoints and resuming"). */
#include "io/source_impl.h"

/* ---- restart points ---------------------------------------------------- */

/* A mark's bytes: what ties it to this build, then the point.  Native byte
 * order and sizes: the probe and the sizes tell another machine's or
 * build's apart. */
static const char MARK_MAGIC[8] = {'s', 'h', 'f', 'g', 'z', 'r', 's', 't'};
typedef struct {
    char magic[8];
    uint32_t isal[3];        /* ISAL_MAJOR_VERSION, _MINOR_, _PATCH_ */
    uint32_t state_bytes;    /* sizeof (struct inflate_state) */
    uint32_t xxh_version;    /* XXH_VERSION_NUMBER (the raw prefix hash) */
    uint32_t pointer_bytes;  /* sizeof (void *) */
    uint32_t order;          /* 0x01020304 as stored */
    uint64_t raw_at, decoded_at, raw_print;
} mark_head;

#define MARK_BYTES (sizeof(mark_head) + sizeof(struct inflate_state))

static void mark_head_fill(mark_head *h)
{
    memset(h, 0, sizeof *h);
    memcpy(h->magic, MARK_MAGIC, sizeof h->magic);
    h->isal[0] = ISAL_MAJOR_VERSION;
    h->isal[1] = ISAL_MINOR_VERSION;
    h->isal[2] = ISAL_PATCH_VERSION;
    h->state_bytes = (uint32_t)sizeof(struct inflate_state);
    h->xxh_version = XXH_VERSION_NUMBER;
    h->pointer_bytes = (uint32_t)sizeof(void *);
    h->order = 0x01020304u;
}

int source_keep_marks(source *s, uint64_t every_bytes)
{
    if (s->kind != SOURCE_GZIP || s->marks) return 0;
    struct marks *m = calloc(1, sizeof *m);
    if (!m) return -1;
    m->every = every_bytes > MARK_MIN_BYTES ? every_bytes : MARK_MIN_BYTES;
    m->next_at = m->every;
    m->newest = MARK_SLOTS - 1;
    s->marks = m;
    return 0;
}

size_t source_mark_offsets(source *s, uint64_t after, uint64_t upto, uint64_t *out, size_t max)
{
    if (!s->marks) return 0;
    if (s->ahead) pthread_mutex_lock(&s->ahead->mu);
    size_t n = 0;
    for (size_t i = 1; i <= MARK_SLOTS && n < max; i++) { /* oldest first */
        const mark *p = &s->marks->slot[(s->marks->newest + i) % MARK_SLOTS];
        if (p->used && p->decoded_at > after && p->decoded_at <= upto) out[n++] = p->decoded_at;
    }
    if (s->ahead) pthread_mutex_unlock(&s->ahead->mu);
    return n;
}

int source_mark_at(source *s, uint64_t at, void **out, size_t *len)
{
    *out = NULL;
    *len = 0;
    if (!s->marks) return 0;
    if (s->ahead) pthread_mutex_lock(&s->ahead->mu);
    const mark *found = NULL;
    for (size_t k = 0; k < MARK_SLOTS; k++)
        if (s->marks->slot[k].used && s->marks->slot[k].decoded_at == at) found = &s->marks->slot[k];
    uint8_t *b = found ? malloc(MARK_BYTES) : NULL;
    if (b) {
        mark_head h;
        mark_head_fill(&h);
        h.raw_at = found->raw_at;
        h.decoded_at = found->decoded_at;
        h.raw_print = found->raw_print;
        memcpy(b, &h, sizeof h);
        memcpy(b + sizeof h, &found->gz, sizeof(struct inflate_state));
    }
    if (s->ahead) pthread_mutex_unlock(&s->ahead->mu);
    if (!found) return 0;
    if (!b) return -1;
    *out = b;
    *len = MARK_BYTES;
    return 1;
}

/* An XXH3 state into `to`, a state reset by its owner: all but the pointer
 * to the default secret, which stays `to`'s own. */
static void put_hash_state(void *to, const void *from)
{
    XXH3_state_t *t = to;
    const unsigned char *secret = t->extSecret;
    memcpy(t, from, sizeof *t);
    t->extSecret = secret;
}

source_restored source_restore(source *s, const void *data, size_t len, uint64_t *decoded_at)
{
    mark_head want, h;
    mark_head_fill(&want);
    if (s->kind != SOURCE_GZIP || s->ahead || s->decoded || s->gz_in_member || len != MARK_BYTES)
        return SOURCE_MARK_STALE;
    memcpy(&h, data, sizeof h);
    if (memcmp(h.magic, want.magic, sizeof h.magic) || memcmp(h.isal, want.isal, sizeof h.isal) ||
        h.state_bytes != want.state_bytes || h.xxh_version != want.xxh_version ||
        h.pointer_bytes != want.pointer_bytes ||
        h.order != want.order || h.raw_at == 0)
        return SOURCE_MARK_STALE;
    /* The raw bytes before the point, into the fingerprint, as the decoder
     * would have consumed them. */
    while (source_unread_offset(s) < h.raw_at) {
        ssize_t avail = source_raw_fill(s);
        if (avail < 0) return SOURCE_MARK_FAILED;
        if (avail == 0) return SOURCE_MARK_DIFFERS;
        uint64_t left = h.raw_at - source_unread_offset(s);
        source_consume(s, (size_t)avail < left ? (size_t)avail : (size_t)left);
    }
    if (XXH3_64bits_digest(s->hash) != h.raw_print) return SOURCE_MARK_DIFFERS;
    const uint8_t *b = data;
    if (s->marks) { /* the point itself is kept, for the next checkpoint */
        struct marks *m = s->marks;
        m->newest = (m->newest + 1) % MARK_SLOTS;
        mark *p = &m->slot[m->newest];
        p->used = 1;
        p->raw_at = h.raw_at;
        p->decoded_at = h.decoded_at;
        p->raw_print = h.raw_print;
        memcpy(&p->gz, b + sizeof h, sizeof p->gz);
        m->next_at = h.decoded_at + m->every;
    }
    memcpy(s->gz, b + sizeof h, sizeof(struct inflate_state));
    s->gz->next_in = s->gz->next_out = NULL;
    s->gz->avail_in = s->gz->avail_out = 0;
    s->gz_in_member = 1;
    s->gz_header_done = 1;
    s->decoded = h.decoded_at;
    *decoded_at = h.decoded_at;
    return SOURCE_MARK_RESTORED;
}

source_restored source_skip_plain(source *s, uint64_t to, void *hash_state,
                                  size_t hash_state_bytes)
{
    if (s->kind != SOURCE_PLAIN || s->ahead || s->decoded || s->pull || s->raw_pos ||
        hash_state_bytes != sizeof(XXH3_state_t) || to < s->raw_offset)
        return SOURCE_MARK_STALE;
    /* What the format probe read lies before `to`: dropped, then the rest
     * of [0, to) read straight into the fingerprint. */
    s->raw_pos = s->raw_len = 0;
    while (s->raw_offset < to) {
        uint64_t left = to - s->raw_offset;
        ssize_t n = source_read_raw(s, s->raw, left < RAW_BYTES ? (size_t)left : RAW_BYTES);
        if (n < 0) return SOURCE_MARK_FAILED;
        if (n == 0) return SOURCE_MARK_DIFFERS;
    }
    put_hash_state(hash_state, s->hash);
    s->decoded = to;
    return SOURCE_MARK_RESTORED;
}
