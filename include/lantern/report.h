/*
 * lantern/report.h - summaries as JSON and tables, and result files.
 *
 * Writers take the caller's stream or path; none prints on its own.
 */
#ifndef LANTERN_REPORT_H
#define LANTERN_REPORT_H

#include <stdio.h>

#include "lantern/inference.h"
#include "lantern/likelihood.h"
#include "lantern/survey.h"

struct cJSON;

/*
 * The summary of a best fit (DESIGN.md fields): model, n_data, chi2_min,
 * dof, converged, params.NAME.{best,sd,prior}, derived.NAME.{best,sd},
 * and more (p_value, aic, bic, offset, fixed values, covariance,
 * correlation, optimizer, data files, warnings).
 */
struct cJSON *lt_report_fit_json(const lt_like *l, const lt_fit_result *r,
                                 const lt_survey_spec *data, unsigned long seed);

/* The same as a readable table. */
void lt_report_fit_table(FILE *f, const lt_like *l, const lt_fit_result *r,
                         const lt_survey_spec *data);

/* residuals.csv: id,z,zhel,observed,model,residual,pull (pull = residual /
 * sqrt(C_ii), the total variance), written atomically. */
int lt_report_write_residuals(const char *path, const lt_like *l, const double *theta,
                              lt_error *err);

/* Write a JSON object to path atomically (pretty-printed). */
int lt_report_write_json(const char *path, const struct cJSON *o, lt_error *err);

#endif
