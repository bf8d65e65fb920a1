/* hll: HyperLogLog distinct-count estimate, precision 14 (16384 registers).
 *
 * Flajolet, Fusy, Gandouet & Meunier (2007), "HyperLogLog: the analysis of a
 * near-optimal cardinality estimation algorithm", with the small-range
 * correction of Heule, Nunkesser & Hall (2013): linear counting while its
 * estimate is at most 3m (see hll.c for why 3m and not the paper's 11500,
 * which assumes its bias-correction table).  Input is a 64-bit hash (XXH3 in sheaf);
 * register index = top 14 bits, rank = leading zeros of the rest + 1.
 * Merge is the register-wise maximum, so it is exact: merge(a, b) equals the
 * sketch of the union.  Standard error about 1.04 / sqrt(16384) = 0.81%.
 */
#ifndef SHEAF_HLL_H
#define SHEAF_HLL_H

#include <stddef.h>
#include <stdint.h>

#include "acc/wire.h"

#define HLL_PRECISION 14
#define HLL_REGISTERS (1u << HLL_PRECISION)

typedef struct {
    uint8_t reg[HLL_REGISTERS]; /* rank per register, 0 = empty */
} hll;

void hll_init(hll *h);
void hll_add(hll *h, uint64_t hash);
/* hll_add of each of n hashes, with prefetching. */
void hll_add_many(hll *h, const uint64_t *hash, size_t n);
void hll_merge(hll *into, const hll *from);
double hll_estimate(const hll *h);
/* Registers that are not empty: at most the distinct hashes added. */
uint32_t hll_used(const hll *h);
/* Compact serialization (sparse when few registers are set). */
void hll_write(const hll *h, wire_writer *w);
/* Returns 0, or -1 with r->failed set on malformed input. */
int hll_read(hll *h, wire_reader *r);

#endif
