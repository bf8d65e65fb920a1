/* Helpers shared by the Criterion suites. */
#ifndef SHEAF_TESTUTIL_H
#define SHEAF_TESTUTIL_H

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* Directory of the shared reference data (NIST StRD, open datasets). */
static inline const char *testutil_data_dir(void)
{
    const char *d = getenv("SHEAF_DATA");
    return d ? d : "../shared/data";
}

/* Relative difference, with an absolute floor for values near zero. */
static inline double testutil_rel(double got, double want)
{
    double d = got - want;
    if (d < 0) d = -d;
    double s = want < 0 ? -want : want;
    return s > 1e-300 ? d / s : d;
}

#endif
