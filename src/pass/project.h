/* project: scores of the leading principal components, row by row.
 *
 * The data files are streamed again through the one record reader
 * (io/reader.h): each file's first record gives the position of every basis
 * column by name (named as the scan names them), each cell is parsed
 * (io/number; a missing, non-numeric or non-finite cell counts as the
 * mean), blocks of
 * BLOCK_ROWS rows are standardised and multiplied by the loadings
 * (pca_project: cblas_dgemm), and the scores are written as CSV: the carried
 * columns, then PC1..PCk.  Chunks are scored on worker threads
 * (pass/stream.h) and written in their order, each row reserving in the sink
 * what a one-thread run reserves, so the output (gzip included) is the same
 * bytes for any thread count.  Memory is bounded by two chunks of input and
 * their formatted rows per thread, and the sink's buffer.
 */
#ifndef SHEAF_PROJECT_H
#define SHEAF_PROJECT_H

#include <stddef.h>
#include <stdint.h>

#include "io/reader.h"
#include "out/sink.h"
#include "stats/pca.h"
#include "summary/summary.h"

typedef struct {
    char *const *carry;      /* columns copied in front of the scores (IDs, the target) */
    size_t ncarry;           /* how many */
    int header;              /* files start with a header */
    reader_options read;     /* delimiter (0: detect at each file's start), chunk and
                                record sizes */
    unsigned threads;        /* worker threads; 0 = pipeline_cpus(), 1 = none */
    /* Called on the reading thread after each read (NULL: none): raw bytes
     * read so far, and the sum of the files' sizes (0 when unknown). */
    void (*progress)(void *ctx, uint64_t done_bytes, uint64_t total_bytes);
    void *progress_ctx;      /* passed to progress */
} project_options;

typedef enum {
    PROJECT_OK = 0,
    PROJECT_ERR_INPUT = 1,  /* unreadable or malformed input, a basis column absent */
    PROJECT_ERR_OUTPUT = 2, /* the output could not be written */
    PROJECT_ERR_MEMORY = 3, /* out of memory */
    PROJECT_ERR_USAGE = 4   /* a carried name is no column, or several, of a file's header */
} project_status;

/* No carried columns, detect the delimiter, a header, 1 MiB chunks, 64 MiB records,
 * a thread per CPU, no progress. */
void project_options_defaults(project_options *o);

/* Writes the header row and the scores on the first k components of r (fit
 * on s) of every row of the files ("-": standard input) to out.  On failure
 * err names the file and the line or byte offset. */
project_status project_files(const summary *s, const pca_result *r, size_t k,
                             const project_options *o, const char *const *paths, size_t npaths,
                             sink *out, char *err, size_t errlen);

#endif
