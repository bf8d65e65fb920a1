/* schema: which header fields a scan reads, and how (internal to summary/).
 *
 * From the header names and the scan's column options (--columns,
 * --numeric, --categorical, --ignore, --target), schema_plan_make picks the
 * scanned columns in header order with their modes and fields.  Every name
 * an option gives must be in the header exactly once: a missing name or a
 * name that several fields carry is refused, since the option could not say
 * which column it means.  Repeated header names are warned about once
 * through the options' warn callback.
 */
#ifndef SHEAF_SUMMARY_SCHEMA_H
#define SHEAF_SUMMARY_SCHEMA_H

#include <stddef.h>

#include "summary/scan.h"

typedef struct {
    size_t n;           /* scanned columns */
    char **cols;        /* their names: pointers into the header names */
    column_mode *modes; /* COLUMN_AUTO, _NUMERIC or _CATEGORICAL */
    int *field_of;      /* their field index in the header */
} schema_plan;

/* Fills *p (free it with schema_plan_free) from the header NAMES of the
 * stream FILE (SHOWN: the stream's name in messages).  Returns SCAN_OK, or
 * SCAN_ERR_USAGE / SCAN_ERR_MEMORY with the message in err. */
scan_status schema_plan_make(const scan_options *o, const char *file, const char *shown,
                             char **names, size_t nnames, schema_plan *p, char *err,
                             size_t errlen);

void schema_plan_free(schema_plan *p);

#endif
