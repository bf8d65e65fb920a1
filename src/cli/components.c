/* The principal-component choice shared by `sheaf pca` and `sheaf project`:
 * the same options pick the same components in both. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "stats/pca.h"
#include "summary/summary.h"

int cli_fit_components(const char *cmd, const char *path, const cli_components *c, summary **s,
                       pca_result **r, size_t *k)
{
    *s = NULL;
    *r = NULL;
    pca_options o;
    pca_options_defaults(&o);
    long long k_req = 0;
    double share_req = 0;
    if (c->basis && !strcmp(c->basis, "covariance")) {
        o.basis = PCA_BASIS_COVARIANCE;
    } else if (c->basis && strcmp(c->basis, "correlation")) {
        cli_error(cmd, "--basis must be correlation or covariance, got '%s'", c->basis);
        return EXIT_USAGE;
    }
    if (c->k && (k_req = cli_parse_count(c->k)) < 1) {
        cli_error(cmd, "--components must be a positive whole number, got '%s'", c->k);
        return EXIT_USAGE;
    }
    if (c->share && cli_parse_unit(cmd, "--share", c->share, &share_req)) return EXIT_USAGE;
    if (c->k && c->share) { cli_error(cmd, "give --components (-k) or --share, not both"); return EXIT_USAGE; }
    if (c->numeric_share && cli_parse_unit(cmd, "--numeric-share", c->numeric_share, &o.numeric_share))
        return EXIT_USAGE;
    char err[1024];
    char *keep_text = NULL;
    if (c->keep_list && cli_check_output(cmd, "-", &c->keep_list, 1)) return EXIT_USAGE;
    if (c->keep_list && !(keep_text = cli_read_text(c->keep_list, err, sizeof err))) {
        cli_error(cmd, "--columns-from: %s", err);
        return EXIT_INPUT;
    }
    o.columns = c->columns;
    o.exclude = c->exclude;
    o.keep_list = keep_text;
    o.with_target = c->with_target;
    int rc = cli_read_target(cmd, path, c->target, 1, s);
    if (rc != EXIT_DONE) {
        free(keep_text);
        return rc;
    }
    pca_status ps = pca_fit(*s, &o, r, err, sizeof err);
    free(keep_text); /* the fit keeps column indices, not names */
    if (ps != PCA_OK) {
        cli_error(cmd, "%s: %s", path, err);
        return ps == PCA_ERR_USAGE ? EXIT_USAGE : ps == PCA_ERR_MEMORY ? EXIT_RESOURCE : EXIT_FAILED;
    }
    const pca_result *f = *r;
    const size_t lacking = f->undefined_pairs - f->imprecise_pairs;
    if (lacking)
        fprintf(stderr,
                "sheaf %s: warning: %zu column pair%s never present together (or constant "
                "where together): %s set to 0\n",
                cmd, lacking, lacking == 1 ? " is" : "s are", lacking == 1 ? "its entry" : "their entries");
    if (f->imprecise_pairs)
        fprintf(stderr,
                "sheaf %s: warning: %zu column pair%s imprecise (numbers rounded far from the "
                "first number of the scan that read them; see corr): %s set to 0\n",
                cmd, f->imprecise_pairs, f->imprecise_pairs == 1 ? " is" : "s are",
                f->imprecise_pairs == 1 ? "its entry" : "their entries");
    if (f->clamped_negative)
        fprintf(stderr,
                "sheaf %s: warning: the pairwise-complete %s matrix is not positive "
                "semi-definite (missing cells): %zu negative eigenvalue%s, the most negative "
                "%.6g, set to 0\n",
                cmd, pca_basis_name(f->basis), f->clamped_negative,
                f->clamped_negative == 1 ? "" : "s", f->most_negative);
    *k = pca_choose_k(f, (size_t)k_req, share_req);
    return EXIT_DONE;
}
