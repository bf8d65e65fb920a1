/* comoment_wire: the file form of a co-moment state (comoment_write,
 * comoment_read; the layout is docs/summary-format.md, "COMO"). */
#include "acc/comoment_state.h"

#include <stdlib.h>
#include <string.h>

enum { ROW_BLOCK = 8 }; /* rows built at once: a cache line of each packed column */

/* Rows [i0, i1) of a p x p matrix held as packed triangles (entry (i, j) is
 * lo[pair_index(i, j)] when i <= j, else hi[pair_index(i, j)]; hi == lo for
 * a symmetric matrix) into rows[(i - i0) * p + j].  A row's entries j < i
 * lie together from pair_index(0, i); the entries (i0..i1-1, j) of a column
 * j >= i1 lie together from pair_index(i0, j), so a block of rows reads each
 * packed column once, where row by row every entry above the diagonal is a
 * cache line of its own. */
static void fill_rows(double *rows, const double *lo, const double *hi, size_t i0, size_t i1,
                      size_t p)
{
    for (size_t i = i0; i < i1; i++) {
        double *r = rows + (i - i0) * p;
        size_t base = i * (i + 1) / 2;
        memcpy(r, hi + base, i * sizeof *r);
        r[i] = lo[base + i];
        for (size_t j = i + 1; j < i1; j++) r[j] = lo[j * (j + 1) / 2 + i];
    }
    for (size_t j = i1; j < p; j++) {
        const double *col = lo + j * (j + 1) / 2;
        for (size_t i = i0; i < i1; i++) rows[(i - i0) * p + j] = col[i];
    }
}

/* A count as written: with COMOMENT_LOST_BIT when the pair is lost. */
static uint64_t count_word(const comoment *c, double n, size_t i, size_t j)
{
    return (uint64_t)n | (c->lost[pair_index(i, j)] ? COMOMENT_LOST_BIT : 0);
}

/* One p x p matrix of fill_rows, row-major: f64, or (counts, c given) the
 * counts as u64. */
static void put_matrix(wire_writer *w, const double *lo, const double *hi, size_t p,
                       const comoment *counts, double *rows)
{
    if (!rows) { /* no room for a block: entry by entry */
        for (size_t i = 0; i < p; i++)
            for (size_t j = 0; j < p; j++) {
                double v = (i <= j ? lo : hi)[pair_index(i, j)];
                if (counts) wire_put_u64(w, count_word(counts, v, i, j));
                else wire_put_f64(w, v);
            }
        return;
    }
    for (size_t i0 = 0; i0 < p; i0 += ROW_BLOCK) {
        size_t i1 = i0 + ROW_BLOCK < p ? i0 + ROW_BLOCK : p, n = (i1 - i0) * p;
        fill_rows(rows, lo, hi, i0, i1, p);
        if (!counts) wire_put_f64s(w, rows, n);
        else
            for (size_t k = 0; k < n; k++)
                wire_put_u64(w, count_word(counts, rows[k], i0 + k / p, k % p));
    }
}

/* Layout: u64 p; then p x p row-major matrices N (u64), MEAN, M2, C (f64),
 * where MEAN[i][j] and M2[i][j] are of column i over rows where j is present. */
void comoment_write(const comoment *c, wire_writer *w)
{
    const size_t p = c->p;
    wire_put_u64(w, p);
    /* The four matrices in full, p x p each (readers check their symmetry),
     * built ROW_BLOCK rows at a time. */
    double *rows = p ? malloc(ROW_BLOCK * p * sizeof *rows) : NULL;
    put_matrix(w, c->n, c->n, p, c, rows);
    put_matrix(w, c->mean_lo, c->mean_hi, p, NULL, rows);
    put_matrix(w, c->m2_lo, c->m2_hi, p, NULL, rows);
    put_matrix(w, c->co, c->co, p, NULL, rows);
    free(rows);
}

/* Reads a p x p f64 matrix whose (i, j) entry goes to lo[k] when i <= j and
 * to hi[k] otherwise (hi == lo: the matrix must be symmetric).  Diagonal
 * entries go to both. */
static int read_pair_matrix(wire_reader *r, size_t p, double *lo, double *hi)
{
    for (size_t i = 0; i < p; i++)
        for (size_t j = 0; j < p; j++) {
            /* Values may be infinite or NaN (overflow on extreme data);
             * symmetry is checked on the bits. */
            double v = wire_get_f64(r);
            size_t k = pair_index(i, j);
            if (i < j) lo[k] = v;
            else if (i == j) lo[k] = hi[k] = v;
            else if (hi == lo) { if (memcmp(&lo[k], &v, sizeof v) != 0) return 0; }
            else hi[k] = v;
        }
    return !r->failed;
}

static int state_valid(const comoment *c)
{
    for (size_t j = 0; j < c->p; j++)
        for (size_t i = 0; i <= j; i++) {
            size_t k = pair_index(i, j);
            double n = c->n[k];
            /* Counts only: moments may round slightly below zero or overflow
             * to infinity on extreme data, and the file checksums already
             * guard the bytes. */
            if (n > c->n[pair_index(i, i)] || n > c->n[pair_index(j, j)]) return 0;
        }
    return 1;
}

comoment *comoment_read(wire_reader *r, size_t max_rows, int lost_allowed)
{
    uint64_t p64 = wire_get_u64(r);
    if (r->failed || p64 > COMOMENT_MAX_COLUMNS) { r->failed = 1; return NULL; }
    size_t p = (size_t)p64;
    if (!wire_need(r, p * p * 32)) return NULL;
    comoment *c = comoment_create(p, max_rows);
    if (!c) return NULL; /* out of memory (or max_rows too large); r not failed */
    int ok = 1;
    for (size_t i = 0; i < p && ok; i++)
        for (size_t j = 0; j < p; j++) {
            uint64_t v = wire_get_u64(r);
            /* A lost pair (COMOMENT_LOST_BIT, written since 2026-12-05):
             * both halves, a count of at least 1, never the diagonal. */
            unsigned char lost = (v & COMOMENT_LOST_BIT) != 0;
            v &= ~COMOMENT_LOST_BIT;
            /* (The count compared as an integer: 2^53 + 1 rounded to 2^53.) */
            if (v > (uint64_t)COMOMENT_MAX_COUNT || (lost && (i == j || v == 0 || !lost_allowed))) {
                ok = 0;
                break;
            }
            size_t k = pair_index(i, j);
            if (i <= j) {
                c->n[k] = (double)v;
                c->lost[k] = lost;
            } else if (c->n[k] != (double)v || c->lost[k] != lost) {
                ok = 0;
                break;
            }
        }
    ok = ok && read_pair_matrix(r, p, c->mean_lo, c->mean_hi);
    ok = ok && read_pair_matrix(r, p, c->m2_lo, c->m2_hi);
    ok = ok && read_pair_matrix(r, p, c->co, c->co);
    ok = ok && !r->failed && state_valid(c);
    if (!ok) {
        r->failed = 1;
        comoment_free(c);
        return NULL;
    }
    return c;
}
