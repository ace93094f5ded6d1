/*
 * The binned Pantheon 2018 release (40 bins, with its systematic covariance
 * sys_DS17f.txt; Scolnic et al. 2018, ApJ 859, 101), as several tests and
 * benchmarks read it. The data folder is $LANTERN_SHARED, else ../shared
 * (see ../shared/data/pantheon2018/SOURCE.md). Needs no cmocka, so the
 * benchmark programs can use it too.
 */
#ifndef LANTERN_TEST_PANTHEON_H
#define LANTERN_TEST_PANTHEON_H

#include <stdio.h>
#include <stdlib.h>

#include "lantern/lantern.h"

/* Read the 40 bins with their dense systematic covariance; NULL with err set on failure. */
static inline lt_survey *lt_test_pantheon_binned(lt_error *err)
{
    const char *shared = getenv("LANTERN_SHARED");
    char data[512], sys[512];
    snprintf(data, sizeof data, "%s/data/pantheon2018/lcparam_DS17f.txt", shared ? shared : "../shared");
    snprintf(sys, sizeof sys, "%s/data/pantheon2018/sys_DS17f.txt", shared ? shared : "../shared");
    lt_survey_spec spec;
    lt_survey_spec_init(&spec);
    spec.data = data;
    spec.columns = "z=zcmb,zhel=zhel,mag=mb,err=dmb";
    spec.cov[spec.ncov++] = sys;
    return lt_survey_read(&spec, err);
}

#endif
