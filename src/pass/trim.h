/* trim: the reduced table, in one more streaming pass over the data.
 *
 * Each file is read by the one record reader (io/reader.h, raw fields) and
 * written with only the kept columns, in their input order, each field's
 * bytes and quoting as they were, with the input's own line ends.  Columns
 * are named as the scan names them (reader_column_name): the header's text,
 * or col1..colN for empty header fields and files without a header.  The
 * header (and a byte-order mark) is written once; later files must have the
 * same header.
 *
 * Chunks are formatted on worker threads (pass/stream.h) and written in
 * their order, so the output is the same bytes for any thread count.
 */
#ifndef SHEAF_TRIM_H
#define SHEAF_TRIM_H

#include <stddef.h>
#include <stdint.h>

#include "io/reader.h"
#include "out/sink.h"

typedef struct {
    char *const *keep;       /* names of the columns to keep */
    size_t nkeep;            /* how many */
    int header;              /* files start with a header */
    reader_options read;     /* delimiter (0: detect in the first file), chunk and record
                                sizes; `raw` is set by trim */
    unsigned threads;        /* worker threads; 0 = pipeline_cpus(), 1 = none */
    /* Called on the reading thread after each read (NULL: none): raw bytes
     * read so far, and the sum of the files' sizes (0 when unknown). */
    void (*progress)(void *ctx, uint64_t done_bytes, uint64_t total_bytes);
    void *progress_ctx;      /* passed to progress */
} trim_options;

typedef enum {
    TRIM_OK = 0,
    TRIM_ERR_USAGE = 1,  /* a kept name is not a column */
    TRIM_ERR_INPUT = 2,  /* unreadable or malformed input */
    TRIM_ERR_OUTPUT = 3, /* the output could not be written */
    TRIM_ERR_MEMORY = 4  /* out of memory */
} trim_status;

/* Defaults: no names, detect the delimiter, a header, 1 MiB chunks, 64 MiB records,
 * a thread per CPU, no progress. */
void trim_options_defaults(trim_options *o);

/* Writes the kept columns of the files ("-": standard input) to out.  On
 * failure err names the file and the line or byte offset (the same message
 * for any thread count); what was written to out stays there (abort the
 * sink). */
trim_status trim_files(const trim_options *o, const char *const *paths, size_t npaths, sink *out,
                       char *err, size_t errlen);

#endif
