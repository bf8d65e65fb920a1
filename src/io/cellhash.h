/* cellhash: the XXH3 64-bit hash (seed 0, the default secret) of many
 * cells at once.
 *
 * Every hash a summary keeps of a cell's text (value tables, distinct-count
 * registers, copy prints) is XXH3_64bits of the text, frozen by xxHash since
 * 0.8.0.  Cells are short (on the benchmark table 98% hold 16 bytes or
 * fewer), and for 0 to 16 bytes XXH3 is one of four closed forms: a mix of
 * 1-3 bytes (XXH64's avalanche), of 4-8 bytes (rrmxmx), of 9-16 bytes (a
 * 128-bit product folded, then XXH3's avalanche), and a constant for the
 * empty text.  With AVX-512 (F, DQ for the 64-bit multiply, BW for the byte
 * swap, VL) eight cells take all four forms side by side in 64-bit lanes
 * and each lane keeps the one its length calls for; a cell of more than 16
 * bytes is hashed by XXH3_64bits alone.  The bits are XXH3_64bits' own
 * (tests/test_cellhash.c compares every length from 0 to 40 at every
 * alignment); other CPUs call XXH3_64bits for every cell. */
#ifndef SHEAF_CELLHASH_H
#define SHEAF_CELLHASH_H

#include <stddef.h>
#include <stdint.h>

/* Bytes after the end of a cell that cellhash_many may read (the cell's
 * first 8 bytes are read whatever its length): the padding of a chunk. */
#define CELLHASH_READ_AHEAD 8

/* out[i] = XXH3_64bits(text[i], len[i]) for i < n.  Each text must have
 * CELLHASH_READ_AHEAD readable bytes after its end. */
void cellhash_many(const char *const *text, const uint32_t *len, size_t n, uint64_t *out);

/* 1 when cellhash_many takes eight cells at a time on this CPU (tests and
 * benchmarks; the bits are the same either way).  SHEAF_TEST_SCALAR_HASH in
 * the environment (tests only; read once) turns the wide form off. */
int cellhash_wide(void);

#endif
