/* csv: RFC 4180 records from a chunk of whole records.
 *
 * Fields are separated by a one-byte delimiter; a field that starts with '"'
 * is quoted: it may hold delimiters, newlines and doubled quotes ("" -> "),
 * which are unescaped in place (the chunk is writable).  Records end at '\n';
 * a '\r' just before it is dropped (CRLF).  Lenient on two common defects: a
 * quote inside an unquoted field is kept as a character, and text after a
 * closing quote is appended to the field.  A line holding nothing at all is
 * skipped (blank line).  A quoted field still open at the end of the chunk is
 * an unterminated quote.
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

typedef struct {
    char *pos;         /* next unread byte */
    char *end;         /* end of the chunk */
    char delim;        /* field delimiter */
    uint64_t lines;    /* newlines consumed so far in this chunk */
    uint64_t record_line; /* line (0-based within the chunk) where the last record began */
    char *record_start;   /* first byte of the last record read */
    int padded;           /* CSV_READ_AHEAD bytes after end are readable */
    const char *mask_base;  /* first byte of the cached block (padded reader) */
    uint64_t mask_bits;     /* its delimiter, newline and quote positions */
} csv_reader;

typedef enum {
    CSV_RECORD = 1,      /* a record was read */
    CSV_END = 0,         /* no more records in the chunk */
    CSV_UNTERMINATED = -1 /* a quoted field runs to the end of the chunk */
} csv_status;

void csv_reader_init(csv_reader *r, char *data, size_t len, char delim);
/* The same, for data followed by at least CSV_READ_AHEAD readable bytes:
 * csv_next then finds field ends 64 bytes at a time (a bit mask of the
 * delimiters, newlines and quotes of a block), with the same results. */
void csv_reader_init_padded(csv_reader *r, char *data, size_t len, char delim);
/* Reads the next record: stores up to max_fields fields and sets *nfields
 * to the number of fields the record has (which may exceed max_fields). */
csv_status csv_next(csv_reader *r, csv_field *fields, size_t max_fields, size_t *nfields);

/* Like csv_next, but leaves the chunk untouched: each field is its raw bytes
 * (quotes and doubled quotes included), and *eol / *eol_len give the
 * record's line terminator ("\n", "\r\n", or empty at the end of input), so
 * that selected fields can be written back byte for byte. */
csv_status csv_next_raw(csv_reader *r, csv_field *fields, size_t max_fields, size_t *nfields,
                        const char **eol, size_t *eol_len);

/* Picks the delimiter among ',', '\t', ';', '|' from a sample of whole
 * records: the candidate that gives the same field count (> 1) on the most
 * lines wins, ties broken in that order; ',' when nothing fits. */
char csv_detect_delimiter(const char *data, size_t len);

/* Skips a UTF-8 byte-order mark; returns bytes to skip (0 or 3). */
size_t csv_bom_length(const char *data, size_t len);

#endif
