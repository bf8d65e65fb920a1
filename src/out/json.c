/* json: see json.h. */
#include "out/json.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

void json_init(json_out *j, FILE *f)
{
    memset(j, 0, sizeof *j);
    j->f = f;
}

static void indent(json_out *j)
{
    fputc('\n', j->f);
    for (int i = 0; i < j->depth; i++) fputs("  ", j->f);
}

/* Separator and indentation before a value or key. */
static void before_item(json_out *j)
{
    if (j->after_key) { j->after_key = 0; return; }
    if (j->depth == 0) return;
    if (j->count[j->depth]++) fputc(',', j->f);
    indent(j);
}

static void open(json_out *j, char c)
{
    before_item(j);
    fputc(c, j->f);
    if (j->depth < JSON_MAX_DEPTH - 1) j->depth++;
    j->count[j->depth] = 0;
}

static void close_(json_out *j, char c)
{
    int had = j->count[j->depth];
    if (j->depth > 0) j->depth--;
    if (had) indent(j);
    fputc(c, j->f);
}

void json_object_begin(json_out *j) { open(j, '{'); }
void json_object_end(json_out *j) { close_(j, '}'); }
void json_array_begin(json_out *j) { open(j, '['); }
void json_array_end(json_out *j) { close_(j, ']'); }

static void write_string(FILE *f, const char *s, size_t n)
{
    fputc('"', f);
    for (size_t i = 0; i < n; i++) {
        unsigned char c = (unsigned char)s[i];
        switch (c) {
        case '"': fputs("\\\"", f); break;
        case '\\': fputs("\\\\", f); break;
        case '\n': fputs("\\n", f); break;
        case '\r': fputs("\\r", f); break;
        case '\t': fputs("\\t", f); break;
        default:
            if (c < 0x20) fprintf(f, "\\u%04x", c);
            else fputc(c, f);
        }
    }
    fputc('"', f);
}

void json_key(json_out *j, const char *key)
{
    before_item(j);
    write_string(j->f, key, strlen(key));
    fputs(": ", j->f);
    j->after_key = 1;
}

void json_string_n(json_out *j, const char *s, size_t n)
{
    before_item(j);
    write_string(j->f, s, n);
}

void json_string(json_out *j, const char *s) { json_string_n(j, s, strlen(s)); }

void json_number(json_out *j, double v)
{
    before_item(j);
    if (!isfinite(v)) { fputs("null", j->f); return; }
    /* Shortest of %.15g / %.16g / %.17g that reads back exactly. */
    char buf[40];
    for (int prec = 15; prec <= 17; prec++) {
        snprintf(buf, sizeof buf, "%.*g", prec, v);
        if (strtod(buf, NULL) == v) break;
    }
    fputs(buf, j->f);
}

void json_uint(json_out *j, uint64_t v)
{
    before_item(j);
    fprintf(j->f, "%llu", (unsigned long long)v);
}

void json_int(json_out *j, int64_t v)
{
    before_item(j);
    fprintf(j->f, "%lld", (long long)v);
}

void json_bool(json_out *j, int v)
{
    before_item(j);
    fputs(v ? "true" : "false", j->f);
}

void json_null(json_out *j)
{
    before_item(j);
    fputs("null", j->f);
}

void json_finish(json_out *j) { fputc('\n', j->f); }
