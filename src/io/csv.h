/* csv: RFC 4180 records from a chunk of whole records.
 *
 * Fields are separated by a one-byte delimiter; a field that starts with '"'
 * is quoted: it may hold delimiters, newlines and doubled quotes ("" -> "),
 * which are unescaped in place (the chunk is writable).  Records end at '\n';
 * a '\r' just before it is dropped (CRLF).  A line holding nothing at all is
 * skipped (blank line).  A quoted field still open at the end of the chunk is
 * an unterminated quote.
 *
 * The one quote rule.  Every reader of sheaf (the tokenizer below, the
 * chunker that cuts records, the shard start, the delimiter detection) uses
 * this rule and no other, so where records end never depends on the chunk
 * size, the shard count or the thread count:
 *   - a '"' opens a quoted field only as the first byte of a field (at the
 *     start of a record or right after a delimiter);
 *   - inside quotes, '""' is one quote and a lone '"' closes the quotes;
 *   - elsewhere a '"' is an ordinary byte (a cell such as 5'10" is kept as
 *     it is), and text after a closing quote up to the next delimiter or
 *     line end is kept as part of the field;
 *   - a '\n' outside quotes ends the record.
 * csv_quote_scan applies it to raw bytes without tokenizing them.
 */
#ifndef SHEAF_CSV_H
#define SHEAF_CSV_H

#include <stddef.h>
#include <stdint.h>

typedef struct {
    const char *ptr; /* field bytes inside the chunk (not terminated) */
    uint32_t len;    /* field length */
} csv_field;

/* Bytes after the end of the data that csv_reader_init_padded may read. */
#define CSV_READ_AHEAD 64

/* A field as an offset and a length: the form csv_next_rows writes, 8 bytes
 * a field. */
typedef struct {
    uint32_t off; /* first byte, counted from a base the reader is given */
    uint32_t len; /* field length */
} csv_span;

typedef struct {
    char *pos;         /* next unread byte */
    char *end;         /* end of the chunk */
    char delim;        /* field delimiter */
    uint64_t lines;    /* newlines consumed so far in this chunk */
    uint64_t record_line; /* line (0-based within the chunk) where the last record began */
    char *record_start;   /* first byte of the last record read (or found, csv_next_rows) */
    char *record_end;     /* just after the last record read (its line end included); the
                             data's first byte before the first */
    int padded;           /* CSV_READ_AHEAD bytes after end are readable */
    int wide;             /* csv_next_rows reads 32 bytes at a time (AVX2 and BMI1, where
                             the CPU has them); the same results either way */
    uint64_t rewrites;    /* quoted fields copied down in place so far (doubled quotes,
                             or text after the closing quote); other fields keep their
                             bytes as written */
    const char *mask_base;  /* first byte of the current block (padded reader) */
    uint64_t mask_bits;     /* its delimiter, newline and quote positions not yet passed */
} csv_reader;

typedef enum {
    CSV_RECORD = 1,       /* a record was read (csv_next_rows: the rows are full) */
    CSV_END = 0,          /* no more records in the chunk */
    CSV_UNTERMINATED = -1, /* a quoted field runs to the end of the chunk */
    CSV_NOMEM = -2,       /* the field buffer could not grow */
    CSV_STOP = -3,        /* csv_next_rows: the next record begins at or after the stop */
    CSV_TOO_LONG = -4     /* csv_next_rows: a record is longer than max_record_bytes */
} csv_status;

/* The fields of one record.  The buffer grows as a record needs (never sized
 * by a count made under another rule); free it with csv_record_free. */
typedef struct {
    csv_field *fields; /* fields[0..nfields) of the last record read */
    size_t nfields;    /* fields in the last record */
    size_t cap;        /* allocated entries (of fields and of spans) */
    csv_span *spans;   /* the padded reader's scratch: the fields from the record's start */
} csv_record;

void csv_record_free(csv_record *rec);

void csv_reader_init(csv_reader *r, char *data, size_t len, char delim);
/* The same, for data followed by at least CSV_READ_AHEAD readable bytes:
 * csv_next then finds field ends 64 bytes at a time (a bit mask of the
 * delimiters, newlines and quotes of a block), with the same results. */
void csv_reader_init_padded(csv_reader *r, char *data, size_t len, char delim);
/* Reads the next record into rec (all of its fields). */
csv_status csv_next(csv_reader *r, csv_record *rec);

/* Many records at once, for a padded reader, into a table of spans laid out
 * by field: field f of row i is cells[f * stride + i], so that a reader of
 * one field's column walks it in order.  Each row gets `width` spans: a
 * record with more fields has the rest counted (nfields) but not kept; one
 * with fewer gets empty spans (offset 0, length 0) for the fields it lacks.
 * Nothing is allocated.
 *
 * Rows go to rows, rows+1, ... until max_rows are there (CSV_RECORD), the
 * data ends (CSV_END), or the next record begins at or after base + stop
 * (CSV_STOP: it is not read; pos and record_start are its first byte,
 * record_line its line, record_end the end of the record before it).  A
 * record of more than max_record_bytes bytes (its line end included) is
 * read but not kept (CSV_TOO_LONG), and a quote left open (CSV_UNTERMINATED)
 * ends the data; record_start and record_line then name that record.
 * Fields are unquoted in place as csv_next does.  Spans count from base,
 * which is at or before the data and within 4 GiB of its end. */
typedef struct {
    csv_span *cells;         /* width x stride spans */
    size_t stride;           /* rows of each field's column */
    size_t width;            /* spans kept per row */
    size_t rows;             /* rows written; the next record goes to this row */
    size_t max_rows;         /* at most this many (<= stride) */
    uint32_t *nfields;       /* per row: the record's fields (all of them) */
    uint64_t *line;          /* per row: its first line, 1-based, counted from the data's start */
    const char *base;        /* spans count from here */
    size_t stop;             /* records that begin at base + stop or later are not read */
    size_t max_record_bytes; /* longest record kept */
    csv_span *records;       /* per row, or NULL: the record's bytes, from its first
                                (an opening quote included) to after its line end */
    unsigned char *rewritten; /* per row, with records: 1 when a quoted field of the
                                record was copied down in place (its bytes are then no
                                longer as written), else 0 */
} csv_rows;

csv_status csv_next_rows(csv_reader *r, csv_rows *out);

/* Like csv_next, but leaves the chunk untouched: each field is its raw bytes
 * (quotes and doubled quotes included), and *eol / *eol_len give the
 * record's line terminator ("\n", "\r\n", or empty at the end of input), so
 * that selected fields can be written back byte for byte. */
csv_status csv_next_raw(csv_reader *r, csv_record *rec, const char **eol, size_t *eol_len);

/* The text of a raw field (as csv_next_raw gives it) as csv_next would give
 * it: outer quotes dropped, doubled quotes halved, text after the closing
 * quote kept.  out needs len bytes; returns the text's length. */
size_t csv_unquote(const char *raw, size_t len, char *out);

/* 1 when the record at p (bytes to end) holds the same field texts
 * (csv_unquote's) as the record head[0..head_len) (one record, its line end
 * excluded), field for field, and ends there: at a LF, a CR LF or end.  0
 * otherwise, or when a quote in either does not close.  So '"id","x"'
 * repeats 'id,x', as a later file's header does.  mark: the bytes of a
 * byte-order mark at p (0: none), which the tokenizer reads as text inside a
 * stream: p's first field then runs to the delimiter or the line end, quoted
 * or not, and its text is taken without the mark. */
int csv_same_record(const char *head, size_t head_len, const char *p, const char *end,
                    char delim, size_t mark);

/* The quote rule's state between two calls of csv_quote_scan. */
typedef enum {
    CSV_AT_FIELD = 0,  /* at the first byte of a field (or of a record) */
    CSV_IN_FIELD = 1,  /* inside an unquoted field, or after a closing quote */
    CSV_IN_QUOTES = 2, /* inside quotes */
    CSV_QUOTE_SEEN = 3 /* a quote inside quotes: closing, unless another follows */
} csv_quote_mode;

typedef struct {
    csv_quote_mode mode; /* state after the bytes seen so far */
    char delim;          /* field delimiter */
} csv_quote_state;

/* Starts at the first byte of a record. */
void csv_quote_init(csv_quote_state *q, char delim);
/* Applies the quote rule to data[0..len), continuing from *q and leaving the
 * state after data[len-1] in *q.  Returns the offset just after the first
 * (first != 0) or the last record end ('\n' outside quotes) in the data, or
 * len + 1 when there is none.  With first != 0 the state is left just after
 * the record end it returns.  Quotes and newlines are found with memchr /
 * memrchr, so unquoted data passes at memory speed. */
size_t csv_quote_scan(csv_quote_state *q, const char *data, size_t len, int first);

/* Picks the delimiter among ',', '\t', ';', '|' from a sample of whole
 * records: the candidate that gives the same field count (> 1) on the most
 * of the first 50 lines wins, ties broken in that order.  When none of them
 * splits the first line, ' ' is taken if it gives every one of those lines
 * the same field count, more than one; else ','.  Fields are counted under
 * the quote rule with each candidate.  A space delimiter is one space: a run
 * of n spaces makes n - 1 empty fields, as a run of commas would. */
char csv_detect_delimiter(const char *data, size_t len);

/* Skips a UTF-8 byte-order mark; returns bytes to skip (0 or 3). */
size_t csv_bom_length(const char *data, size_t len);

#endif
