/* cellhash: the batch hash must give XXH3_64bits' own bits (the reference
 * is xxHash's XXH3_64bits from Debian's libxxhash-dev, the function the
 * summaries were always keyed by). */
#include <criterion/criterion.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <sys/mman.h>
#include <unistd.h>
#include <xxhash.h>

#include "io/cellhash.h"

/* A small deterministic generator (xorshift64*), so a failure repeats. */
static uint64_t next_random(uint64_t *s)
{
    *s ^= *s >> 12;
    *s ^= *s << 25;
    *s ^= *s >> 27;
    return *s * 0x2545F4914F6CDD1DULL;
}

static void expect_same(const char *const *text, const uint32_t *len, size_t n, const char *what)
{
    uint64_t *got = malloc((n ? n : 1) * sizeof *got);
    cr_assert_not_null(got);
    cellhash_many(text, len, n, got);
    for (size_t i = 0; i < n; i++)
        cr_expect_eq(got[i], XXH3_64bits(text[i], len[i]), "%s: cell %zu of %zu, %u bytes", what,
                     i, n, len[i]);
    free(got);
}

Test(cellhash, every_length_and_alignment_matches_xxh3)
{
    cr_log_info("cellhash: %s", cellhash_wide() ? "eight cells at a time" : "one at a time");
    enum { CELLS = 41 * 8 };
    static char buf[CELLS * 64 + 64];
    const char *text[CELLS];
    uint32_t len[CELLS];
    uint64_t seed = 0x9E3779B97F4A7C15ULL;
    for (size_t i = 0; i < sizeof buf; i++) buf[i] = (char)next_random(&seed);
    for (int round = 0; round < 64; round++) {
        for (size_t i = 0; i < CELLS; i++) {
            len[i] = (uint32_t)(i / 8);      /* 0 to 40 bytes */
            text[i] = buf + i * 64 + i % 8; /* every alignment */
        }
        /* Shuffled, so each group of eight mixes lengths. */
        for (size_t i = CELLS - 1; i > 0; i--) {
            size_t j = (size_t)(next_random(&seed) % (i + 1));
            const char *t = text[i];
            uint32_t l = len[i];
            text[i] = text[j], len[i] = len[j];
            text[j] = t, len[j] = l;
        }
        for (size_t i = 0; i < sizeof buf; i++) buf[i] = (char)next_random(&seed);
        expect_same(text, len, CELLS, "shuffled lengths");
    }
}

Test(cellhash, every_count_up_to_two_groups)
{
    static char buf[24 * 32];
    const char *text[24];
    uint32_t len[24];
    uint64_t seed = 42;
    for (size_t i = 0; i < sizeof buf; i++) buf[i] = (char)next_random(&seed);
    for (size_t i = 0; i < 24; i++) {
        text[i] = buf + 32 * i;
        len[i] = (uint32_t)(next_random(&seed) % 17);
    }
    for (size_t n = 0; n <= 24; n++) expect_same(text, len, n, "count");
}

Test(cellhash, empty_cells_hash_as_the_empty_text)
{
    static const char bytes[9 + 16] = "abcdefghi";
    const char *text[9];
    uint32_t len[9] = {0};
    uint64_t got[9];
    for (size_t i = 0; i < 9; i++) text[i] = bytes + i;
    cellhash_many(text, len, 9, got);
    for (size_t i = 0; i < 9; i++) cr_expect_eq(got[i], XXH3_64bits("", 0));
}

/* Cells that end CELLHASH_READ_AHEAD bytes before a page that cannot be
 * read: the promise in cellhash.h, and no more, is all it reads. */
Test(cellhash, reads_no_further_than_promised)
{
    long page = sysconf(_SC_PAGESIZE);
    char *map = mmap(NULL, (size_t)page * 2, PROT_READ | PROT_WRITE, MAP_PRIVATE | MAP_ANONYMOUS,
                     -1, 0);
    cr_assert(map != MAP_FAILED);
    cr_assert_eq(mprotect(map + page, (size_t)page, PROT_NONE), 0);
    char *end = map + page - CELLHASH_READ_AHEAD;
    for (long i = 0; i < page; i++) map[i] = (char)('a' + i % 26);
    const char *text[17];
    uint32_t len[17];
    for (uint32_t k = 0; k < 17; k++) {
        len[k] = k;
        text[k] = end - k;
    }
    expect_same(text, len, 17, "at a page's end");
    munmap(map, (size_t)page * 2);
}
