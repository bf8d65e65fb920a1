/* access_tables: read-only accessors of the settings that shape a summary's
 * accumulators and of a column's value table, for readers that compare two
 * summaries (stats/drift).  Kept apart from access.{h,c} so that the scan's
 * module files stay untouched; the same rules hold: every call takes a
 * const summary, writes nothing, and column indices are not checked. */
#ifndef SHEAF_ACCESS_TABLES_H
#define SHEAF_ACCESS_TABLES_H

#include <stddef.h>
#include <stdint.h>

#include "summary/summary.h"

uint32_t summary_bucket_budget(const summary *s); /* occupied buckets allowed per column */
uint32_t summary_max_levels(const summary *s);    /* exact value-table entries per column */
uint32_t summary_label_bytes(const summary *s);   /* bytes kept of each value label */
/* The column's value table (raw text of its present cells), owned by the
 * summary and to be read only: values_levels, values_overflowed,
 * values_overflow_total, values_total (acc/values.h). */
const values *summary_values(const summary *s, size_t col);

#endif
