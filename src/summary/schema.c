/* schema: see schema.h. */
#include "summary/schema.h"
#include "io/closest.h"
#include "io/message.h"
#include "io/namelist.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* The names of list s (io/namelist's rule: commas, "\\," for a comma in a
 * name), empty ones left out: their count, or -1 when out of memory.  One
 * block in *items, one free() (NULL for an empty list). */
static int split_list(const char *s, char ***items)
{
    *items = NULL;
    if (!s || !*s) return 0;
    size_t n = 0, k = 0;
    *items = namelist_split(s, &n);
    if (!*items) return -1;
    for (size_t i = 0; i < n; i++)
        if ((*items)[i][0]) (*items)[k++] = (*items)[i];
    return (int)k;
}

static int in_list(char **items, int n, const char *name)
{
    for (int i = 0; i < n; i++)
        if (strcmp(items[i], name) == 0) return 1;
    return 0;
}

/* Refuses a name that several header fields carry (an option could not
 * say which it means).  0, or -1 with the message. */
static int ambiguous(const char *file, const char *opt, const char *name, char **names,
                     size_t nnames, char *err, size_t errlen)
{
    size_t first = 0, count = 0, second = 0;
    for (size_t k = 0; k < nnames; k++)
        if (strcmp(names[k], name) == 0) {
            if (count == 0) first = k;
            else if (count == 1) second = k;
            count++;
        }
    if (count < 2) return 0;
    message_printf(err, errlen,
                   "%s: '%s' names %zu columns of %s's header (fields %zu and %zu%s); rename them "
                   "to tell them apart", opt, name, count, file, first + 1, second + 1,
                   count > 2 ? ", ..." : "");
    return -1;
}

/* Appends the header names nearest to a name that is none of them, and the
 * first few (io/closest.h). */
static void suggest(const char *name, char **names, size_t nnames, char *err, size_t errlen)
{
    closest c;
    closest_init(&c, name, strlen(name));
    for (size_t k = 0; k < nnames; k++) closest_offer(&c, names[k], strlen(names[k]));
    closest_append(&c, "columns", err, errlen);
}

/* Checks every name in a list exists in the header, once. */
static int check_names(const char *file, const char *opt, char **items, int n, char **names,
                       size_t nnames, char *err, size_t errlen)
{
    for (int i = 0; i < n; i++) {
        size_t k = 0;
        while (k < nnames && strcmp(names[k], items[i]) != 0) k++;
        if (k == nnames) {
            message_printf(err, errlen, "%s: no column named '%s' in the header", opt, items[i]);
            suggest(items[i], names, nnames, err, errlen);
            return -1;
        }
        if (ambiguous(file, opt, items[i], names, nnames, err, errlen)) return -1;
    }
    return 0;
}

typedef struct {
    const char *name; /* a header name */
    size_t field;     /* its field index */
} named_field;

static int named_field_cmp(const void *a, const void *b)
{
    const named_field *x = a, *y = b;
    int c = strcmp(x->name, y->name);
    return c ? c : (x->field > y->field) - (x->field < y->field);
}

/* Warns once (o->warn) when header names repeat, naming the file and them. */
static int warn_duplicates(const scan_options *o, const char *shown, char **names, size_t nnames)
{
    if (!o->warn || nnames < 2) return 0;
    named_field *nf = malloc(nnames * sizeof *nf);
    if (!nf) return -1;
    for (size_t i = 0; i < nnames; i++) nf[i] = (named_field){names[i], i};
    qsort(nf, nnames, sizeof *nf, named_field_cmp);
    char msg[1024];
    size_t used = 0, groups = 0;
    for (size_t i = 0; i < nnames;) {
        size_t e = i + 1;
        while (e < nnames && strcmp(nf[e].name, nf[i].name) == 0) e++;
        if (e - i > 1 && used < sizeof msg - 64) {
            int w = snprintf(msg + used, sizeof msg - used, "%s'%.80s' (fields", groups ? ", " : "",
                             nf[i].name);
            used += w > 0 ? (size_t)w : 0;
            for (size_t k = i; k < e && used < sizeof msg - 32; k++) {
                w = snprintf(msg + used, sizeof msg - used, "%s %zu", k > i ? "," : "", nf[k].field + 1);
                used += w > 0 ? (size_t)w : 0;
            }
            if (used < sizeof msg - 2) used += (size_t)snprintf(msg + used, sizeof msg - used, ")");
            groups++;
        }
        i = e;
    }
    free(nf);
    if (groups) {
        char line[4352 + sizeof msg + 96];
        message_printf(line, sizeof line,
                       "%s: duplicate column name%s in the header: %s; options cannot name %s",
                       shown, groups > 1 ? "s" : "", msg, groups > 1 ? "them" : "it");
        o->warn(o->warn_ctx, line);
    }
    return 0;
}

scan_status schema_plan_make(const scan_options *o, const char *file, const char *shown,
                             char **names, size_t nnames, schema_plan *p, char *err, size_t errlen)
{
    memset(p, 0, sizeof *p);
    char **sel, **num, **cat, **ign;
    int nsel = split_list(o->columns, &sel), nnum = split_list(o->numeric, &num);
    int ncat = split_list(o->categorical, &cat), nign = split_list(o->ignore, &ign);
    scan_status st = SCAN_OK;
    p->cols = calloc(nnames ? nnames : 1, sizeof *p->cols);
    p->modes = calloc(nnames ? nnames : 1, sizeof *p->modes);
    p->field_of = calloc(nnames ? nnames : 1, sizeof *p->field_of);
    if (nsel < 0 || nnum < 0 || ncat < 0 || nign < 0 || !p->cols || !p->modes || !p->field_of) {
        snprintf(err, errlen, "out of memory: the list of %zu columns", nnames);
        st = SCAN_ERR_MEMORY;
        goto done;
    }
    if (nnames == 1 && o->warn) {
        /* A file of one column is rare; one whose delimiter was not found is not. */
        char line[4352 + 160];
        message_printf(line, sizeof line,
                       "%s: one column only ('%.60s'); if another character separates the fields, "
                       "give it with {delim}", shown, names[0]);
        o->warn(o->warn_ctx, line);
    }
    if (warn_duplicates(o, shown, names, nnames) != 0) {
        snprintf(err, errlen, "out of memory");
        st = SCAN_ERR_MEMORY;
        goto done;
    }
    if (check_names(file, "{columns}", sel, nsel, names, nnames, err, errlen) ||
        check_names(file, "{numeric}", num, nnum, names, nnames, err, errlen) ||
        check_names(file, "{categorical}", cat, ncat, names, nnames, err, errlen) ||
        check_names(file, "{exclude}", ign, nign, names, nnames, err, errlen)) {
        st = SCAN_ERR_USAGE;
        goto done;
    }
    for (int i = 0; i < nnum; i++)
        if (in_list(cat, ncat, num[i])) {
            snprintf(err, errlen, "column '%s' is declared both numeric and categorical", num[i]);
            st = SCAN_ERR_USAGE;
            goto done;
        }
    size_t n = 0;
    for (size_t f = 0; f < nnames; f++) {
        if (nsel > 0 && !in_list(sel, nsel, names[f])) continue;
        if (in_list(ign, nign, names[f])) continue;
        p->cols[n] = names[f];
        p->modes[n] = in_list(num, nnum, names[f])   ? COLUMN_NUMERIC
                      : in_list(cat, ncat, names[f]) ? COLUMN_CATEGORICAL
                                                     : COLUMN_AUTO;
        p->field_of[n] = (int)f;
        n++;
    }
    p->n = n;
    if (o->opt.target) {
        size_t t = 0;
        while (t < n && strcmp(p->cols[t], o->opt.target) != 0) t++;
        if (t < n && ambiguous(file, "{target}", o->opt.target, names, nnames, err, errlen)) {
            st = SCAN_ERR_USAGE;
            goto done;
        }
        if (t == n) {
            snprintf(err, errlen, "{target}: no column named '%s' %s", o->opt.target,
                     in_list(ign, nign, o->opt.target) || nsel > 0 ? "among the scanned columns"
                                                                   : "in the header");
            /* The scanned columns (p->cols) are the ones a target can be. */
            closest c;
            closest_init(&c, o->opt.target, strlen(o->opt.target));
            for (size_t k = 0; k < n; k++) closest_offer(&c, p->cols[k], strlen(p->cols[k]));
            closest_append(&c, "scanned columns", err, errlen);
            st = SCAN_ERR_USAGE;
            goto done;
        }
    }
done:
    free(sel); free(num); free(cat); free(ign);
    if (st != SCAN_OK) schema_plan_free(p);
    return st;
}

void schema_plan_free(schema_plan *p)
{
    free(p->cols);
    free(p->modes);
    free(p->field_of);
    memset(p, 0, sizeof *p);
}
