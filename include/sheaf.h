/* sheaf: the public API of libsheaf.a.
 *
 * sheaf reads CSV/TSV tables (plain, gzip, zstd) once, in bounded memory,
 * into a mergeable summary, and computes screening statistics and principal
 * components from summaries alone.  The library is the same code the `sheaf`
 * command runs; a program uses it in four steps:
 *
 *   scan_options o;  scan_options_defaults(&o);       summary/scan.h
 *   o.opt.target = "outcome";
 *   scan_context *sc = scan_create(&o);
 *   scan_path(sc, "night-1.csv.gz");                   a file (or scan_source)
 *   scan_begin(sc, "feed");  scan_feed(sc, buf, n); ... scan_end(sc);   bytes it holds
 *   summary *s = scan_finish(sc);  scan_free(sc);     (or scan_files for a path list)
 *   summary_write(s, "night.sheaf", err, sizeof err);  summary/summary.h
 *   summary_merge(a, b, err, sizeof err);              exact merge of two summaries
 *
 *   o.targets = "outcome,grade";                       several targets, one pass:
 *   summary_set *set = scan_finish_set(sc);            one summary per target, each what
 *                                                      a scan with it alone gives
 *   summary_set_write(set, "night.sheaf", err, sizeof err);   one file holds them all
 *   summary_set_read("night.sheaf", &set, err, sizeof err);   any summary file (n >= 1)
 *   summary *g = summary_set_take(set, summary_set_find(set, "grade"));
 *   summary_read_target("night.sheaf", "grade", &g, err, sizeof err);   or in one call
 *   summary_set_merge(a, b, err, sizeof err);          the same targets, the same order
 *

 *   screen_result *r = screen_run(s, &screen_opts);    stats/screen.h
 *   pca_fit(s, &pca_opts, &fit, err, sizeof err);      stats/pca.h
 *   long col = summary_find_column(s, "x");            summary/access.h (-1: no such column)
 *   double mean = summary_mean(s, (size_t)col);        reading a summary, one figure a call
 *   describe_column(s, col, 0.99, 3, &d);              stats/describe.h (what `info` shows)
 *   corr_matrix(s, cols, n, CORR_PEARSON, out);        stats/corr.h
 *   trim_files(&trim_opts, paths, n, out, err, sizeof err);       pass/trim.h
 *   project_files(s, fit, k, &proj_opts, paths, n, out, err, sizeof err);  pass/project.h
 *
 * Every function reports failure through its return value and a one-line
 * message in a caller-provided buffer; none prints or exits.  Objects are
 * created and freed by the caller (summary_free, summary_set_free,
 * screen_free, pca_result_free); a summary taken out of a set with
 * summary_set_take is the caller's, the set keeps NULL in its place.  Nothing keeps global mutable state, so independent
 * summaries may be built on different threads.  A scan, trim or project
 * starts worker threads of its own: as many as the CPUs the process may use,
 * unless o.threads (or the pass's `threads`) says otherwise (1: none); the
 * results are the same, byte for byte, for every count.
 *
 * Compile with -Iinclude -Isrc and link libsheaf.a with
 *   -lgsl -lisal -lzstd -lxxhash -lopenblas -llapacke -lz -lm -lpthread
 * (the module headers below live under src/ and document each call).
 */
#ifndef SHEAF_H
#define SHEAF_H

#include "io/reader.h"
#include "summary/scan.h"
#include "summary/summary.h"
#include "summary/access.h"
#include "stats/corr.h"
#include "stats/describe.h"
#include "stats/logp.h"
#include "stats/screen.h"
#include "stats/pca.h"
#include "pass/trim.h"
#include "pass/project.h"

#define SHEAF_VERSION "0.1"

#endif
