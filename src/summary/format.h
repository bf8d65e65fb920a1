/* format: what the summary file code shares between one summary's file
 * (format.c) and the file of several targets (targets.c).  Internal to
 * summary/; the layouts are in docs/summary-format.md. */
#ifndef SHEAF_SUMMARY_FORMAT_H
#define SHEAF_SUMMARY_FORMAT_H

#include <stdint.h>
#include <sys/types.h>

#include "acc/wire.h"
#include "summary/summary.h"

#define TAG(a, b, c, d) ((uint32_t)(a) | (uint32_t)(b) << 8 | (uint32_t)(c) << 16 | (uint32_t)(d) << 24)
#define TAG_END TAG('E', 'N', 'D', '.')
#define TAG_SCHEMA TAG('S', 'C', 'H', 'M')
#define TAG_SOURCES TAG('S', 'R', 'C', 'S')
#define TAG_TABLE TAG('T', 'A', 'B', 'L')
#define TAG_COLUMNS TAG('C', 'O', 'L', 'S')
#define TAG_TARGET TAG('T', 'R', 'G', 'T')
#define TAG_COMOMENTS TAG('C', 'O', 'M', 'O')
#define MAX_NAME_BYTES 65536

extern const uint8_t SUMMARY_MAGIC[8];

/* Writes s's whole file (magic to trailer) to fd from byte `base` on, which
 * must be fd's position; *end (may be NULL) receives the offset after it.
 * push: start the disk writes every few MiB as they go (tempfile_push), for
 * a file fsynced when done.  0, or -1 with errno set. */
int summary_write_at(const summary *s, int fd, off_t base, off_t *end, int push);

/* The decoded co-moment matrix of s (s->como) against its columns' moments
 * and their exact pair sums with the target (comoment_check.c; the
 * invariants of docs/summary-format.md for COMO): 0, or -1 with what broke
 * in msg. */
int comoment_check(const summary *s, char *msg, size_t len);
/* summary_write_at of a summary whose columns may not be sealed yet: they
 * are sealed on threads - 1 helper threads, in column order, while this
 * thread writes each one as soon as its seal has run (and seals columns too
 * while it waits).  The same bytes as summary_seal then summary_write_at;
 * s is sealed afterwards, whether the write succeeded or not.  0, or -1
 * with errno set (ENOMEM when a seal ran out of memory). */
int summary_seal_write_at(summary *s, int fd, off_t base, off_t *end, int push, unsigned threads);
/* Writes a summary file at path, or to standard output for "-": write(obj,
 * fd, push) fills a scratch file that becomes the file only when it succeeds
 * (for "-" it is copied out then), so a failure leaves nothing; push says
 * whether the file is worth pushing to the disk as it is written (see
 * summary_write_at).  SUMMARY_OK or the failure, its message naming the path
 * in err. */
summary_status summary_write_through(const char *path,
                                     int (*write)(const void *obj, int fd, int push),
                                     const void *obj, char *err, size_t errlen);
/* Writes all of data to fd (retrying short writes).  0, or -1 with errno. */
int summary_write_all(int fd, const void *data, size_t len);
/* XXH3-64 of fd's bytes [from, to), read back through a map.  0 or -1. */
int summary_hash_region(int fd, off_t from, off_t to, uint64_t *hash);
/* Maps a file read-only (*map NULL for an empty file; munmap it).  The path
 * "-" is standard input, read to its end into anonymous memory (also
 * released with munmap), named "standard input" in messages. */
summary_status summary_map_file(const char *path, void **map, size_t *len, char *err,
                                size_t errlen);

/* The parts of a summary that do not depend on its target, each in a
 * canonical byte form (column.h's column_write_common gives a column's). */
enum {
    SUMMARY_COMMON_OPTIONS,   /* options but the target, and the column count */
    SUMMARY_COMMON_SOURCES,
    SUMMARY_COMMON_TABLE,     /* row counts (then each column, column_write_common) */
    SUMMARY_COMMON_COMOMENTS,
    SUMMARY_COMMON_PIECES
};
void summary_encode_common(const summary *s, int piece, wire_writer *w);

#endif
