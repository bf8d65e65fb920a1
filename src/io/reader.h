/* reader: the one record reader of sheaf.
 *
 * Every pass over the data (scan, trim, project) reads through it:
 *
 *   bytes (fed, or pulled from a source) -> chunker (records cut under the
 *   quote rule of io/csv.h) -> byte-order mark and delimiter detection at
 *   the start of a file -> RFC 4180 fields (io/csv) -> line numbers and
 *   byte offsets -> the reading errors (unterminated quote, record longer
 *   than the limit, out of memory), each naming the stream and the line or
 *   the byte offset.
 *
 * It is fed like a zstd stream: reader_feed (or reader_space and
 * reader_commit, or reader_pull from a source) adds bytes, reader_finish
 * ends them, and reader_next hands out the records that are complete.  The
 * records, their fields and line numbers depend on the bytes alone, never on
 * how they were split when fed.  Nothing is allocated per record.
 *
 * The missing-cell test every pass applies to a field is here too
 * (reader_missing), so that all passes agree on what is missing.
 */
#ifndef SHEAF_READER_H
#define SHEAF_READER_H

#include <stddef.h>
#include <stdint.h>
#include <string.h>

#include "io/chunk.h"
#include "io/csv.h"
#include "io/source.h"

typedef struct {
    char delim;              /* field delimiter; 0 = detect at the start of a file */
    size_t chunk_bytes;      /* target chunk size (io/chunk.h) */
    size_t max_record_bytes; /* longest record accepted */
    int raw;                 /* fields keep their raw bytes (quotes included), for trim */
} reader_options;

/* Detect the delimiter, 1 MiB chunks, 64 MiB records, unquoted fields. */
void reader_options_defaults(reader_options *o);

typedef struct {
    const csv_field *fields; /* the record's fields, valid until the next reader call */
    size_t nfields;          /* how many */
    uint64_t line;           /* 1-based line where the record begins, from the stream start */
    uint64_t offset;         /* stream offset of the record's first byte */
    uint64_t end;            /* stream offset just after it (its line end included) */
    const char *text;        /* the record's first byte */
    const char *eol;         /* raw mode: the record's line end ("\n", "\r\n", or empty) */
    size_t eol_len;          /* its length */
} reader_record;

typedef enum {
    READER_CHUNK = 4,     /* reader_next_chunk: *out holds a chunk */
    READER_RECORD = 1,    /* *rec holds a record */
    READER_CHUNK_END = 2, /* a chunk is done (a point where work may be flushed) */
    READER_WANT = 0,      /* every complete record is out: feed more, or finish */
    READER_END = 3,       /* the stream is done (or reached its stop offset) */
    READER_ERROR = -1     /* reader_error tells why */
} reader_status;

typedef struct reader reader;

reader *reader_create(const reader_options *o);
void reader_free(reader *r);

/* Starts a stream named `name` (kept for messages; must outlive the stream).
 * at_file_start: the stream begins at byte 0 of its file, so a byte-order
 * mark is skipped and the delimiter detected there.  delim: the delimiter
 * when already known (a shard after its header), else 0 for the option's
 * choice.  stop_at: records that start at or after this stream offset are
 * left to someone else (0: none). */
void reader_start(reader *r, const char *name, int at_file_start, char delim, uint64_t stop_at);

/* The stream just started continues a file at offset `at`, a record's
 * start (chunker_rebase): its chunks and offsets are those of the whole
 * stream from there.  Call right after reader_start, before any byte. */
void reader_rebase(reader *r, uint64_t at);

/* Sets the stop offset from now on (0: none), for records not yet read. */
void reader_set_stop(reader *r, uint64_t stop_at);

/* Feeding: copies up to len bytes; returns how many were taken (0 means the
 * buffer is full: call reader_next first), or (size_t)-1 on an error. */
size_t reader_feed(reader *r, const void *data, size_t len);
/* Reads once from src into the reader (at most 1 MiB, and not past the
 * next place a chunk may end).  Returns 1 after
 * reading, 0 at the end of the source (the stream is then finished), -1 on
 * an error. */
int reader_pull(reader *r, source *src);
/* No more bytes follow. */
void reader_finish(reader *r);

/* The next record or event.  The fields of the records of a chunk stay
 * valid until the next reader_feed / reader_pull. */
reader_status reader_next(reader *r, reader_record *rec);

/* ---- chunks and cursors: the reader in two halves, for threads -----------
 *
 * reader_next is reader_next_chunk (bytes -> chunks of whole records, the
 * byte-order mark and the delimiter) followed by a cursor over each chunk
 * (chunk -> records, line numbers, the reading errors).  A pass that
 * tokenizes chunks on other threads takes the chunks itself and runs a
 * cursor per chunk there; line numbers are then counted from the chunk's
 * first line, and the caller adds the lines of the chunks before it (known
 * once those are tokenized) when it reports a record or an error. */

typedef struct {
    char *data;       /* the chunk's bytes, writable, CHUNK_PADDING readable bytes after */
    size_t len;       /* bytes */
    uint64_t offset;  /* stream offset of data[0] */
    size_t skip;      /* bytes at data[0] that belong to no record (a byte-order mark) */
    char delim;       /* the delimiter */
    const uint64_t *starts; /* stream offsets in [offset, offset + len) where a gzip member
                               or zstd frame after the first begins (source_take_starts),
                               ascending; valid as data is */
    size_t nstarts;   /* how many */
} reader_chunk;

/* The next chunk of the stream instead of its records: READER_CHUNK with *out
 * filled (valid until the next feed or pull), READER_WANT, READER_END, or
 * READER_ERROR.  Do not mix with reader_next on one stream. */
reader_status reader_next_chunk(reader *r, reader_chunk *out);
/* Takes the buffer that holds the chunk reader_next_chunk just handed out,
 * so that a thread may keep the chunk without a copy: *buf (*size bytes, a
 * buffer from an earlier trade, or NULL) becomes the reader's, and on
 * return *buf and *size are the buffer the chunk's data points into, free
 * with free().  0, or -1 when out of memory (reader_error tells; nothing
 * changed). */
int reader_trade_chunk(reader *r, char **buf, size_t *size);

typedef enum {
    READER_FAULT_NONE = 0,
    READER_FAULT_UNTERMINATED, /* a quoted field runs to the end of the input */
    READER_FAULT_NOMEM,        /* the field buffer could not grow */
    READER_FAULT_TOO_LONG      /* a record over max_record_bytes */
} reader_fault;

/* Records of one chunk. */
typedef struct {
    const reader_options *o;  /* borrowed */
    csv_reader tok;           /* the tokenizer */
    csv_record fields;        /* the current record's fields (owned; grows) */
    reader_chunk ch;          /* the chunk */
    uint64_t stop_at;         /* records from here on are someone else's (0: none) */
    int exempt_first;         /* the chunk's first record ignores stop_at */
    int seen;                 /* records handed out */
    const uint64_t *skip;     /* reader_cursor_rows leaves out records that begin at these
                                 stream offsets (ascending; borrowed) */
    size_t nskip, skip_at;    /* how many; the first not yet passed */
    size_t skipped;           /* records left out so */
    /* After READER_CHUNK_END or READER_END: */
    uint64_t lines;           /* lines in the chunk */
    uint64_t absorbed;        /* stream offset after the last record absorbed */
    int stopped;              /* reached stop_at: later chunks hold nothing of ours */
    /* After READER_ERROR: */
    reader_fault fault;       /* what went wrong */
    uint64_t fault_line;      /* its line, counted from the chunk's first (1-based) */
    uint64_t fault_offset;    /* the record's stream offset */
} reader_cursor;

/* A cursor for chunks read with the options o (borrowed).  Free its field
 * buffer with reader_cursor_free. */
void reader_cursor_init(reader_cursor *c, const reader_options *o);
void reader_cursor_free(reader_cursor *c);
/* Starts on a chunk (its bytes are unquoted in place unless o->raw). */
void reader_cursor_start(reader_cursor *c, const reader_chunk *ch, uint64_t stop_at,
                         int exempt_first);
/* The next record (rec->line counted from the chunk's first line, 1-based),
 * READER_CHUNK_END after the last one, READER_END at the stop offset, or
 * READER_ERROR (fault, fault_line, fault_offset tell). */
reader_status reader_cursor_next(reader_cursor *c, reader_record *rec);
/* The next records of the chunk as rows of spans (io/csv.h, csv_next_rows:
 * out->base must be the chunk's data, out->max_record_bytes and out->stop are
 * set here), many per call; the chunk is unquoted in place (not raw).  Line
 * numbers in out->line count from the chunk's first line, as rec->line does.
 * READER_RECORD when out is full (make room, then call again), else as
 * reader_cursor_next: READER_CHUNK_END, READER_END or READER_ERROR after the
 * rows before.  Records that begin at one of the offsets given to
 * reader_cursor_skip are read but left out. */
reader_status reader_cursor_rows(reader_cursor *c, csv_rows *out);
/* For reader_cursor_rows on the current chunk: the records that begin at
 * the stream offsets skip[0..n) (ascending; borrowed until the chunk is
 * done) are left out and counted in c->skipped. */
void reader_cursor_skip(reader_cursor *c, const uint64_t *skip, size_t n);
/* The one-line message of a cursor's fault, in a stream called name whose
 * chunks before this one hold lines_before lines. */
void reader_cursor_message(const reader_cursor *c, const char *name, uint64_t lines_before,
                           char *buf, size_t len);

const char *reader_error(const reader *r);
/* After READER_ERROR: 1 when the cause was a failed allocation (out of
 * memory), not the input. */
int reader_out_of_memory(const reader *r);
/* After READER_ERROR from reader_next_chunk: 1 when a record passed the
 * record limit before any chunk held its end, with the message (the
 * cursor's, naming its line) in buf; lines_before: the lines of the
 * stream's chunks handed out before it (counted by whoever tokenized
 * them).  0 for any other error (reader_error). */
int reader_too_long_message(const reader *r, uint64_t lines_before, char *buf, size_t len);
/* The delimiter in use (0 before it is known). */
char reader_delim(const reader *r);
/* Stream offset just after the last record absorbed: the end of the last
 * chunk done, or where the stream stopped (stop_at). */
uint64_t reader_absorbed(const reader *r);

/* Bytes of the byte-order mark skipped at the start of the stream. */
size_t reader_bom_length(const reader *r);

/* Once the first chunk of a stream begun at its file's start is out: NULL
 * when its first 64 KiB (after a byte-order mark) read as text, else why not
 * ("NUL bytes", "control characters in the header", "control characters"
 * in more than 1% of the bytes).  Tabs, CR LF, form feeds, ESC and bytes
 * above 0x7f (UTF-8, Latin-1) are text.  The verdict is the caller's to act
 * on; the reader reads the bytes either way. */
const char *reader_not_text(const reader *r);

/* The name of column i of a first record, as every pass names columns: the
 * field's text (unquoted first when raw), or "col<i+1>" when the field is
 * empty or the file has no header.  out needs f->len + 24 bytes; returns
 * the name's length (not terminated). */
size_t reader_column_name(const csv_field *f, size_t i, int header, int raw, char *out);

/* The records of a chunk that repeat the header of their file where one
 * compressed member or frame ends and the next begins (`cat a.csv.gz
 * b.csv.gz`): at each of ch->starts that begins a line, an optional UTF-8
 * byte-order mark, then a record of the same field texts as the header
 * head[0..head_len) (its line end excluded; compared unquoted, as a later
 * file's header is: csv_same_record), then a line end or the chunk's end;
 * after a mark, the record as the tokenizer reads it (the mark is text
 * there, so a quote after it opens nothing), less the mark.  Writes their
 * stream offsets (where the record starts) to out, at most max, ascending,
 * and returns how many.  A start inside a quoted field can match only if
 * that field's text repeats the header line; a pass skips a record only
 * when one starts at such an offset, so it never skips part of a record. */
size_t reader_repeated_headers(const reader_chunk *ch, const char *head, size_t head_len,
                               char delim, uint64_t *out, size_t max);

/* ---- the missing-cell test ---------------------------------------------- */

#define READER_MAX_MISSING 32

typedef struct {
    const char *spelling[READER_MAX_MISSING]; /* borrowed spellings */
    size_t len[READER_MAX_MISSING];           /* their lengths */
    uint32_t n;                               /* how many */
    int any_case;                             /* ASCII letters match in either case */
    /* Bit L % 64 of cand[b]: some spelling has length L and first byte b.
     * A non-empty cell whose bit is clear is present after this one test
     * (x86 shifts by the count mod 64 anyway, so the % costs nothing). */
    uint64_t cand[256];
} reader_missing;

/* The empty cell is always missing; n <= READER_MAX_MISSING spellings more,
 * each matched byte for byte, or with any_case in any ASCII letter case
 * ("NA" also takes "na" and "Na"; other bytes, UTF-8 included, must be
 * equal).  A scan matches in any case; a pass over the data matches as the
 * summary it reads says (summaries written before 2026-12-03 matched
 * exactly).  The spellings are borrowed and must outlive m. */
void reader_missing_init(reader_missing *m, const char *const *spellings, uint32_t n,
                         int any_case);

/* The spellings alone (for a cell that the first test could not clear):
 * lengths compared first, then the bytes (ASCII letters folded with any_case). */
int reader_missing_spelled(const reader_missing *m, const char *p, uint32_t len);

/* p[0] is read even when len is 0: cells sit in padded chunks.  The common
 * cells (present, or empty) are told with one table lookup and one rarely
 * taken branch, so a column of mostly empty cells does not mispredict. */
static inline int reader_is_missing(const reader_missing *m, const char *p, uint32_t len)
{
    if (__builtin_expect(m->cand[(unsigned char)p[0]] >> (len % 64) & 1, 0))
        return len == 0 || reader_missing_spelled(m, p, len);
    return len == 0;
}

#endif
