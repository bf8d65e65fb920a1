/* api_page: sheaf_page_write, the page of `sheaf page` (out/report_files). */
#include <string.h>

#include "api/api.h"
#include "out/report_html.h"
#include "stats/drift.h"
#include "stats/report.h"

SHEAF_API int sheaf_page_write(const sheaf_summary *s, const sheaf_summary *base,
                               const sheaf_options *o, const char *title, const char *html_path,
                               const char *svg_dir, sheaf_error *err)
{
    if (!s) return api_fail(err, SHEAF_ERR_USAGE, "sheaf_page_write: no summary (NULL)");
    if (!html_path && !svg_dir)
        return api_fail(err, SHEAF_ERR_USAGE,
                        "sheaf_page_write: name the page to write (html_path) or the chart folder "
                        "(svg_dir)");
    report_options ro;
    report_options_defaults(&ro);
    if (o) {
        ro.screen.q_level = o->screen.q_level;
        ro.screen.redundancy = o->screen.redundancy;
        ro.numeric_share = o->screen.numeric_share; /* `sheaf page --numeric-share` */
    }
    char msg[SHEAF_ERROR_BYTES - 64];
    drift_result *dr = NULL;
    if (base) {
        drift_options d;
        drift_options_defaults(&d);
        d.numeric_share = ro.numeric_share;
        drift_status st = drift_run(base->s, s->s, &d, &dr, msg, sizeof msg);
        if (st == DRIFT_ERR_INCOMPATIBLE)
            return api_fail(err, SHEAF_ERR_INCOMPATIBLE, "the baseline was scanned differently: %s",
                            msg);
        if (st != DRIFT_OK) return api_fail(err, SHEAF_ERR_MEMORY, "out of memory");
    }
    report *r = report_build(s->s, &ro);
    if (!r) {
        drift_free(dr);
        return api_fail(err, SHEAF_ERR_MEMORY, "out of memory");
    }
    const report_page p = {title ? title : "summary", NULL, dr, NULL, NULL, 0};
    int w = report_files_write(r, &p, html_path, svg_dir, msg, sizeof msg);
    report_free(r);
    drift_free(dr);
    if (w == REPORT_FILES_MEMORY) return api_fail(err, SHEAF_ERR_MEMORY, "out of memory");
    if (w == REPORT_FILES_CLASH) return api_fail(err, SHEAF_ERR_USAGE, "%s", msg);
    if (w) return api_fail(err, SHEAF_ERR_IO, "%s", msg);
    return SHEAF_OK;
}
