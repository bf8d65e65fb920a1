/* access_tables: see access_tables.h. */
#include "summary/access_tables.h"

uint32_t summary_bucket_budget(const summary *s) { return s->opt.bucket_budget; }
uint32_t summary_max_levels(const summary *s) { return s->opt.max_levels; }
uint32_t summary_label_bytes(const summary *s) { return s->opt.label_bytes; }
const values *summary_values(const summary *s, size_t col) { return s->cols[col].vals; }
