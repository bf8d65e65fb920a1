/* report_drift: the page's drift section (sheaf page --base), from a
 * drift_result (stats/drift.h); see report_html.h and docs/report.md. */
#include <math.h>
#include <stdio.h>

#include "out/html.h"
#include "out/report_html.h"
#include "out/report_parts.h"
#include "out/svg.h"

/* The PSI of a column as a bar on a fixed scale (0 .. 1, longer clipped),
 * the two common-practice readings marked. */
static void psi_bar(html_buf *b, double psi)
{
    const double w = 96, h = 14, top = 1.0;
    svg_begin(b, w, h, NULL, 0);
    if (!isnan(psi)) {
        double v = psi > top ? top : psi;
        char t[64];
        snprintf(t, sizeof t, "PSI %.3f", psi);
        svg_rect(b, 0, 2, w * v / top, h - 4, psi >= DRIFT_PSI_MAJOR ? SVG_ACCENT : SVG_KEPT, t);
    }
    svg_line(b, w * DRIFT_PSI_MODERATE / top, 0, w * DRIFT_PSI_MODERATE / top, h, SVG_MUTED, 1, "2 2");
    svg_line(b, w * DRIFT_PSI_MAJOR / top, 0, w * DRIFT_PSI_MAJOR / top, h, SVG_MUTED, 1, NULL);
    svg_end(b);
}

/* Since the baseline: the columns that drift (flags, PSI, KS, shift, shares,
 * distinct, TV), the categories that came or went, the pairs whose r moved,
 * and how many columns are quiet. */
void report_drift_section(html_buf *b, const report_page *p)
{
    const drift_result *d = p->drift;
    html_raw(b, "<section id=\"drift\"><h2>Drift</h2>\n<p class=\"read\">");
    html_textf(b, "Against the baseline%s%s (%llu rows; this summary %llu rows): %zu of %zu "
                  "columns drift, %zu of %zu correlation pairs moved. ",
               p->base_name ? " " : "", p->base_name ? p->base_name : "",
               (unsigned long long)d->base_rows,
               (unsigned long long)d->next_rows, d->drifting, d->ncolumns, d->npairs, d->pairs_compared);
    html_raw(b, "PSI is the population stability index over the baseline's decile bins (bar: 0 to 1; by "
                "common practice, no source: below 0.1 no change, dashed line; 0.1 to 0.25 moderate; above "
                "0.25, solid line, a major shift). KS is the Kolmogorov-Smirnov distance between the two "
                "distributions, given as the range the bucket resolution allows. The mean shift is in "
                "baseline standard deviations. sheaf drift prints the same figures (docs/drift.md).</p>\n");
    if (d->drifting) {
        html_raw(b, "<div class=\"scroll\"><table id=\"drift-columns\"><thead><tr><th class=\"name\">column</th>"
                    "<th class=\"name\">why</th><th>PSI</th><th class=\"name\">PSI bar</th><th>KS</th>"
                    "<th>shift (sd)</th><th>missing</th><th>distinct</th><th>TV</th></tr></thead><tbody>\n");
        for (size_t i = 0; i < d->ncolumns; i++) {
            const drift_column *c = &d->columns[i];
            if (!c->flags) continue;
            html_raw(b, "<tr><td class=\"name\">");
            html_text(b, c->name);
            html_raw(b, "</td><td class=\"why\">");
            int first = 1;
            for (int k = 0; k < DRIFT_NFLAGS; k++)
                if (c->flags & (1u << k)) {
                    html_printf(b, "%s%s", first ? "" : ", ", drift_flag_names[k]);
                    first = 0;
                }
            html_raw(b, "</td>");
            report_cell_num(b, c->psi);
            html_raw(b, "<td class=\"pic\">");
            psi_bar(b, c->psi);
            html_raw(b, "</td>");
            if (isnan(c->ks)) {
                html_raw(b, "<td>\xe2\x80\x93</td>");
            } else if (c->ks_exact || c->ks_bound - c->ks < 5e-4) {
                html_printf(b, "<td data-v=\"%.6g\">%.3f</td>", c->ks, c->ks);
            } else {
                html_printf(b, "<td data-v=\"%.6g\">%.3f..%.3f</td>", c->ks, c->ks, c->ks_bound);
            }
            report_cell_num(b, c->mean_shift);
            html_raw(b, "<td>");
            if (!isnan(c->base.missing_share) && !isnan(c->next.missing_share))
                html_printf(b, "%.1f%% \xe2\x86\x92 %.1f%%", 100 * c->base.missing_share,
                            100 * c->next.missing_share);
            else
                html_raw(b, "\xe2\x80\x93");
            html_raw(b, "</td><td>");
            if (!isnan(c->base.distinct) && !isnan(c->next.distinct))
                html_printf(b, "%.0f \xe2\x86\x92 %.0f", c->base.distinct, c->next.distinct);
            else
                html_raw(b, "\xe2\x80\x93");
            html_raw(b, "</td>");
            report_cell_num(b, c->tv);
            html_raw(b, "</tr>\n");
        }
        html_raw(b, "</tbody></table></div>\n");
    }
    int any_cat = 0;
    for (size_t i = 0; i < d->ncolumns; i++) {
        const drift_column *c = &d->columns[i];
        for (int side = 0; side < 2; side++) {
            size_t n = side ? c->listed_vanished : c->listed_appeared;
            const drift_category *list = side ? c->vanished_list : c->appeared_list;
            if (!n) continue;
            if (!any_cat) html_raw(b, "<h3>Categories that came or went</h3>\n<ul class=\"read\">\n");
            any_cat = 1;
            html_raw(b, "<li>");
            html_text(b, c->name);
            html_printf(b, ": %zu %s: ", side ? c->vanished : c->appeared, side ? "vanished" : "appeared");
            for (size_t k = 0; k < n; k++) {
                html_raw(b, k ? ", \xe2\x80\x98" : "\xe2\x80\x98");
                html_text_n(b, list[k].label, list[k].label_len);
                html_printf(b, "%s\xe2\x80\x99 (%.1f%%)", list[k].cut ? "\xe2\x80\xa6" : "", 100 * list[k].share);
            }
            html_raw(b, "</li>\n");
        }
    }
    if (any_cat) html_raw(b, "</ul>\n");
    if (d->npairs) {
        html_raw(b, "<h3>Correlations that moved</h3>\n<div class=\"scroll\"><table id=\"drift-pairs\"><thead><tr>"
                    "<th class=\"name\">pair</th><th>r before</th><th>r now</th></tr></thead><tbody>\n");
        for (size_t i = 0; i < d->npairs; i++) {
            html_raw(b, "<tr><td class=\"name\">");
            html_text(b, d->pairs[i].a);
            html_raw(b, " \xc3\x97 ");
            html_text(b, d->pairs[i].b);
            html_raw(b, "</td>");
            report_cell_num(b, d->pairs[i].r_base);
            report_cell_num(b, d->pairs[i].r_next);
            html_raw(b, "</tr>\n");
        }
        html_raw(b, "</tbody></table></div>\n");
    }
    html_printf(b, "<p class=\"read\">%zu columns quiet.</p>\n</section>\n", d->ncolumns - d->drifting);
}
