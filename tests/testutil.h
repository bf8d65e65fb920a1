/* Helpers shared by the Criterion suites. */
#ifndef SHEAF_TESTUTIL_H
#define SHEAF_TESTUTIL_H

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <dirent.h>
#include <unistd.h>

/* Directory of the shared reference data (NIST StRD, open datasets):
 * $SHEAF_DATA, else ../shared/data beside the clone, else the machine's
 * /work/shared/data (a clone elsewhere, as CI makes). */
static inline const char *testutil_data_dir(void)
{
    const char *d = getenv("SHEAF_DATA");
    if (d) return d;
    if (access("../shared/data", F_OK) != 0 && access("/work/shared/data", F_OK) == 0)
        return "/work/shared/data";
    return "../shared/data";
}

/* Relative difference, with an absolute floor for values near zero. */
static inline double testutil_rel(double got, double want)
{
    double d = got - want;
    if (d < 0) d = -d;
    double s = want < 0 ? -want : want;
    return s > 1e-300 ? d / s : d;
}

/* A new empty directory under $TMPDIR (or /tmp) in buf; aborts the test
 * process when none can be made.  Remove it with testutil_remove_dir. */
static inline const char *testutil_temp_dir(char *buf, size_t n)
{
    const char *t = getenv("TMPDIR");
    snprintf(buf, n, "%s/sheaf-test.XXXXXX", t && *t ? t : "/tmp");
    if (!mkdtemp(buf)) { perror("mkdtemp"); abort(); }
    return buf;
}

/* Writes text to dir/name (the path goes to path[n]); aborts on failure. */
static inline const char *testutil_write_file(const char *dir, const char *name, const char *text,
                                              char *path, size_t n)
{
    snprintf(path, n, "%s/%s", dir, name);
    FILE *f = fopen(path, "wb");
    if (!f || fputs(text, f) == EOF || fclose(f) != 0) { perror(path); abort(); }
    return path;
}

/* Reads a whole file into a malloc'd buffer (*len its size); NULL on failure. */
static inline unsigned char *testutil_read_file(const char *path, size_t *len)
{
    FILE *f = fopen(path, "rb");
    if (!f) return NULL;
    size_t cap = 1 << 16, used = 0, got;
    unsigned char *buf = malloc(cap);
    while (buf && (got = fread(buf + used, 1, cap - used, f)) > 0) {
        used += got;
        if (used == cap) {
            unsigned char *b = realloc(buf, cap *= 2);
            if (!b) { free(buf); buf = NULL; }
            else buf = b;
        }
    }
    fclose(f);
    *len = used;
    return buf;
}

/* Removes a directory made by testutil_temp_dir and the files in it. */
static inline void testutil_remove_dir(const char *dir)
{
    DIR *d = opendir(dir);
    if (!d) return;
    struct dirent *e;
    char path[4096];
    while ((e = readdir(d)) != NULL) {
        if (strcmp(e->d_name, ".") == 0 || strcmp(e->d_name, "..") == 0) continue;
        snprintf(path, sizeof path, "%s/%s", dir, e->d_name);
        unlink(path);
    }
    closedir(d);
    rmdir(dir);
}

#ifdef SHEAF_SCAN_H
/* Scans one file with options o (defaults when NULL) and returns the
 * summary, or NULL with the status in *status (may be NULL) and the message
 * in err.  Available when summary/scan.h is included before this header. */
static inline summary *testutil_scan(const char *path, const scan_options *o, scan_status *status,
                                     char *err, size_t errlen)
{
    scan_options defaults;
    if (!o) { scan_options_defaults(&defaults); o = &defaults; }
    summary *s = NULL;
    const char *paths[1] = {path};
    scan_status st = scan_files(o, paths, 1, &s, err, errlen);
    if (o == &defaults) summary_options_free(&defaults.opt);
    if (status) *status = st;
    if (st != SCAN_OK) { summary_free(s); return NULL; }
    return s;
}
#endif

#endif
