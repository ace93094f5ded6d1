/*
 * Unit tests of campaigns: the file reader and its errors, the task list's
 * order and seeds, the queue's retry rule, bias and coverage arithmetic,
 * the exact binomial test against closed forms, a task record, the resume
 * scan of a folder's records and the summary table.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cjson/cJSON.h>
#include <cmocka.h>
#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>

#include "lantern/lantern.h"
#include "../testutil.h"

static char dir[256];

static const char *write_text(const char *name, const char *text)
{
    return lt_test_write(dir, name, text, strlen(text));
}

static const char *scenario =
    "[survey]\nseed = 5\nobservable = mag\noffset = -19.3\n"
    "[cosmology]\nmodel = lcdm-flat\nomega_m = 0.3\n"
    "[tier.a]\nz_min = 0.02\nz_max = 1.0\ncount = 120\nerror = 0.12\n";

static int setup(void **state)
{
    (void)state;
    gsl_set_error_handler_off();
    if (lt_test_tmpdir(dir, sizeof dir, "campaign"))
        return -1;
    write_text("scenario.ini", scenario);
    write_text("survey.csv", "z,mag,err\n0.1,19,0.1\n0.2,20.5,0.1\n0.3,21.4,0.1\n0.5,22.6,0.1\n");
    return 0;
}

static int teardown(void **state)
{
    (void)state;
    return lt_test_rmtree(dir);
}

static const char *good =
    "[campaign]\nname = t\nmodels = lcdm-flat, wcdm-flat\nmethods = fit, sample\nseed = 3\n"
    "[simulated.sim]\nscenario = scenario.ini\nrealizations = 3\nfirst_seed = 10\n"
    "[data.real]\nfile = survey.csv\ncolumns = z=z,mag=mag,err=err\n"
    "[priors]\nw0 = uniform:-1.5:-0.5\n[fixed]\nh0 = 70\n"
    "[sampler]\ntarget_ess = 200\n";

/* Data set, then realization, then model, then method. */
static void test_task_order(void **state)
{
    (void)state;
    lt_campaign c;
    lt_error err;
    assert_int_equal(lt_campaign_read(write_text("good.ini", good), &c, &err), LT_OK);
    assert_int_equal(c.ntasks, (3 + 1) * 2 * 2);
    assert_int_equal(c.ndata, 2);
    assert_true(c.data[0].simulated && !c.data[1].simulated);
    assert_string_equal(c.data[1].spec.data[0] == '/' ? "abs" : "rel", "abs");
    lt_campaign_task t;
    lt_campaign_task_get(&c, 0, &t);
    assert_true(t.data == 0 && t.realization == 10 && t.model == 0 && t.method == LT_METHOD_FIT);
    lt_campaign_task_get(&c, 1, &t);
    assert_true(t.realization == 10 && t.model == 0 && t.method == LT_METHOD_SAMPLE);
    lt_campaign_task_get(&c, 2, &t);
    assert_true(t.realization == 10 && t.model == 1 && t.method == LT_METHOD_FIT);
    uint64_t seed10 = t.seed;
    lt_campaign_task_get(&c, 4, &t);
    assert_true(t.realization == 11 && t.model == 0);
    assert_true(t.seed != seed10); /* each realization has its own sampler seed */
    lt_campaign_task_get(&c, 3, &t);
    assert_true(t.seed == seed10); /* the same for every model and method of one */
    lt_campaign_task_get(&c, 15, &t);
    assert_true(t.data == 1 && t.realization == 0 && t.model == 1 && t.method == LT_METHOD_SAMPLE);
    char label[128];
    lt_campaign_task_label(&c, 15, label, sizeof label);
    assert_string_equal(label, "real/wcdm-flat/sample");
    lt_campaign_task_label(&c, 5, label, sizeof label);
    assert_string_equal(label, "sim/r11/lcdm-flat/sample");
    assert_int_equal(c.job.npriors + c.job.nfixes, 2);
    assert_true(c.job.target_ess == 200 && c.job.chains == 4 && c.job.live_points == 1000);
    lt_campaign_free(&c);
}

static void expect_error(const char *text, const char *where, const char *msg)
{
    lt_campaign c;
    lt_error err;
    lt_error_clear(&err);
    const char *p = write_text("bad.ini", text);
    assert_int_equal(lt_campaign_read(p, &c, &err), LT_EINPUT);
    char buf[1024];
    lt_error_format(&err, buf, sizeof buf);
    if (!strstr(buf, where) || !strstr(buf, msg))
        fail_msg("error '%s' lacks '%s' or '%s'", buf, where, msg);
}

static void test_errors(void **state)
{
    (void)state;
    expect_error("[campaign]\nmodels = lcdm-flat\n", "bad.ini", "no data sets");
    expect_error("[campaign]\nmodels = lcdm-flat, lcdm-flat\n", "bad.ini:2:", "listed twice");
    expect_error("[campaign]\nmodels = lcdm-flat\nmethods = fit, grid\n", "bad.ini:3:",
                 "unknown method 'grid'");
    expect_error("[campaign]\nmodels = lcdmflat\n", "bad.ini:2:", "unknown model 'lcdmflat'");
    expect_error("[campaign]\n[simulated.s]\nscenario = scenario.ini\nrealizations = 2\n",
                 "bad.ini", "needs models");
    expect_error("[campaign]\nmodels = lcdm-flat\n[simulated.s]\nscenario = scenario.ini\n"
                 "realizations = 0\n",
                 "bad.ini:5:", "");
    expect_error("[campaign]\nmodels = lcdm-flat\n[simulated.s]\nscenario = scenario.ini\n"
                 "realizations = 2\n[priors]\nomega_x = uniform:0:1\n",
                 "bad.ini:7:", "unknown parameter 'omega_x'");
    expect_error("[campaign]\nmodels = lcdm-flat\n[simulated.s]\nscenario = scenario.ini\n"
                 "realizations = 2\n[priors]\nomega_m = uniform:0:1\n[fixed]\nomega_m = 0.3\n",
                 "bad.ini:9:", "both a prior and a fixed value");
    expect_error("[campaign]\nmodels = lcdm-flat\n[simulated.s]\nscenario = scenario.ini\n"
                 "realizations = 2\nrealisations = 3\n",
                 "bad.ini:6:", "");
    expect_error("[campaign]\nmodels = lcdm-flat\n[simulated.s]\nscenario = scenario.ini\n"
                 "realizations = 2\n[simulated.s]\n",
                 "bad.ini:6:", "twice");
    /* an error in the scenario names the scenario */
    write_text("broken-scenario.ini", "[survey]\nseed = x\n");
    expect_error("[campaign]\nmodels = lcdm-flat\n[simulated.s]\nscenario = broken-scenario.ini\n"
                 "realizations = 2\n",
                 "broken-scenario.ini:2:", "");
}

/* The queue hands out tasks in order, retries a failure once ahead of new
 * tasks, and gives up after the second. */
static void test_queue(void **state)
{
    (void)state;
    lt_campaign_queue q;
    assert_int_equal(lt_campaign_queue_init(&q, 4), LT_OK);
    lt_campaign_queue_skip(&q, 1); /* finished in an earlier run */
    assert_int_equal(lt_campaign_queue_take(&q), 0);
    assert_int_equal(lt_campaign_queue_take(&q), 2);
    assert_int_equal(lt_campaign_queue_done(&q, 0, 0), 1); /* failed: back it goes */
    assert_false(lt_campaign_queue_finished(&q));
    assert_int_equal(lt_campaign_queue_take(&q), 0);        /* before task 3 */
    assert_int_equal(q.attempts[0], 2);
    assert_int_equal(lt_campaign_queue_done(&q, 0, 0), 0); /* failed twice: for good */
    assert_int_equal(q.state[0], 3);
    assert_int_equal(lt_campaign_queue_take(&q), 3);
    assert_int_equal(lt_campaign_queue_take(&q), -1);       /* 2 and 3 still running */
    assert_false(lt_campaign_queue_finished(&q));
    lt_campaign_queue_done(&q, 2, 1);
    lt_campaign_queue_done(&q, 3, 1);
    assert_true(lt_campaign_queue_finished(&q));
    lt_campaign_queue_free(&q);
}

/* The two-sided exact binomial test against closed forms. */
static void test_binomial(void **state)
{
    (void)state;
    /* p = 1/2 is symmetric: k = 0 of 10 leaves 0 and 10, 2 / 2^10 */
    assert_rel(lt_binomial_test(0, 10, 0.5), 2.0 / 1024, 1e-12);
    /* k = 2 of 10: outcomes 0, 1, 2, 8, 9, 10: 2 (1 + 10 + 45) / 1024 */
    assert_rel(lt_binomial_test(2, 10, 0.5), 112.0 / 1024, 1e-12);
    /* the most likely outcome: everything is no more likely */
    assert_rel(lt_binomial_test(5, 10, 0.5), 1.0, 1e-12);
    /* n = 1, p = 0.68: k = 0 has 0.32, k = 1 has 0.68 */
    assert_rel(lt_binomial_test(0, 1, 0.68), 0.32, 1e-12);
    assert_rel(lt_binomial_test(1, 1, 0.68), 1.0, 1e-12);
    /* n = 2, p = 0.95: P = 0.0025, 0.095, 0.9025; k = 1 keeps 0 and 1 */
    assert_rel(lt_binomial_test(1, 2, 0.95), 0.0025 + 0.095, 1e-12);
    assert_true(isnan(lt_binomial_test(3, 2, 0.5)));
}

/* Bias and coverage on a case worked by hand. */
static void test_bias(void **state)
{
    (void)state;
    const double est[4] = {1.1, 0.9, 1.3, 1.0}, sd[4] = {0.1, 0.1, 0.2, 0.5};
    const double lo68[4] = {1.0, 0.8, 1.1, 0.5}, hi68[4] = {1.2, 1.0, 1.5, 1.5};
    const double lo95[4] = {0.9, 0.7, 0.9, 0.0}, hi95[4] = {1.3, 1.1, 1.7, 2.0};
    lt_bias_stats s;
    lt_bias_compute(1.0, 4, est, sd, lo68, hi68, lo95, hi95, &s);
    assert_int_equal(s.n, 4);
    /* biases 0.1, -0.1, 0.3, 0: mean 0.075; squared deviations
     * 0.025^2 + 0.175^2 + 0.225^2 + 0.075^2 = 0.0875, so sd sqrt(0.0875/3) */
    assert_rel(s.bias_mean, 0.075, 1e-12);
    assert_rel(s.bias_err, sqrt(0.0875 / 3) / 2, 1e-12);
    /* pulls 1, -1, 1.5, 0: mean 0.375, sd sqrt((4.25 - 4 * 0.375^2) / 3) */
    assert_rel(s.pull_mean, 0.375, 1e-12);
    double w = sqrt((4.25 - 4 * 0.375 * 0.375) / 3);
    assert_rel(s.pull_width, w, 1e-12);
    assert_rel(s.pull_width_err, w / sqrt(6), 1e-12);
    assert_rel(s.pull_mean_err, w / 2, 1e-12);
    /* truth 1.0 is inside [1.0, 1.2] (edges count), [0.8, 1.0], not [1.1, 1.5], inside [0.5, 1.5] */
    assert_int_equal(s.in68, 3);
    assert_int_equal(s.in95, 4);
    assert_rel(s.cover68, 0.75, 1e-15);
    /* tested against Phi(1) - Phi(-1) (GSL's gsl_cdf_ugaussian_P), which
     * +-1 sd and the 15.87-84.13% quantiles hold */
    double p68 = gsl_cdf_ugaussian_P(1) - gsl_cdf_ugaussian_P(-1);
    assert_rel(s.nominal68, p68, 1e-15);
    assert_rel(s.cover68_err, sqrt(p68 * (1 - p68) / 4), 1e-12);
    assert_rel(s.cover68_p, lt_binomial_test(3, 4, p68), 1e-15);
    assert_rel(s.cover95_p, lt_binomial_test(4, 4, 0.95), 1e-15);
    /* an estimate without an error is left out */
    const double sd0[4] = {0.1, 0.1, 0.2, 0};
    lt_bias_compute(1.0, 4, est, sd0, lo68, hi68, lo95, hi95, &s);
    assert_int_equal(s.n, 3);
    lt_bias_compute(1.0, 0, est, sd, lo68, hi68, lo95, hi95, &s);
    assert_true(s.n == 0 && isnan(s.bias_mean) && isnan(s.cover68));
}

/* The summary of a group with five realizations: three ok, one fit whose
 * Laplace errors are undefined (a best fit at a prior edge: its sd and
 * intervals are null), one task that failed. The two are dropped from
 * bias and coverage and counted; the 68% intervals (best +- 1 sd) are
 * tested against the probability they are defined to hold,
 * Phi(1) - Phi(-1) = 0.6827, not 0.68. */
static cJSON *fake_record(size_t task, const char *params)
{
    char text[512];
    snprintf(text, sizeof text,
             "{\"task\":%zu,\"status\":\"ok\",\"converged\":true,\"params\":{\"omega_m\":%s}}",
             task, params);
    cJSON *o = cJSON_Parse(text);
    assert_non_null(o);
    return o;
}

static void test_summary_nominal_dropped(void **state)
{
    (void)state;
    lt_campaign c;
    lt_error err;
    const char *text = "[campaign]\nmodels = lcdm-flat\nmethods = fit\n"
                       "[simulated.sim]\nscenario = scenario.ini\nrealizations = 5\n";
    assert_int_equal(lt_campaign_read(write_text("five.ini", text), &c, &err), LT_OK);
    assert_int_equal(c.ntasks, 5);
    cJSON *results[5];
    /* truth 0.3: inside every interval of the three */
    results[0] = fake_record(0, "{\"truth\":0.3,\"estimate\":0.31,\"sd\":0.02,\"lo68\":0.29,"
                                "\"hi68\":0.33,\"lo95\":0.27,\"hi95\":0.35}");
    results[1] = fake_record(1, "{\"truth\":0.3,\"estimate\":0.29,\"sd\":0.02,\"lo68\":0.27,"
                                "\"hi68\":0.31,\"lo95\":0.25,\"hi95\":0.33}");
    results[2] = fake_record(2, "{\"truth\":0.3,\"estimate\":0.315,\"sd\":0.02,\"lo68\":0.295,"
                                "\"hi68\":0.335,\"lo95\":0.275,\"hi95\":0.355}");
    results[3] = fake_record(3, "{\"truth\":0.3,\"estimate\":0.3,\"sd\":null,\"lo68\":null,"
                                "\"hi68\":null,\"lo95\":null,\"hi95\":null}");
    cJSON_AddStringToObject(results[3], "note", "the best fit of omega_m lies at the edge");
    cJSON_ReplaceItemInObject(results[3], "converged", cJSON_CreateFalse());
    lt_error_set(&err, LT_EIO, "x.csv", 3, "gone");
    results[4] = lt_campaign_task_failed(&c, 4, &err);
    cJSON *s = lt_campaign_summary(&c, results);
    char *printed = cJSON_PrintUnformatted(s);
    cJSON *sum = cJSON_Parse(printed); /* numbers are raw text until parsed back */
    const cJSON *g = cJSON_GetArrayItem(cJSON_GetObjectItem(sum, "bias"), 0);
    assert_non_null(g);
    const cJSON *om = cJSON_GetObjectItem(cJSON_GetObjectItem(g, "params"), "omega_m");
    const cJSON *c68 = cJSON_GetObjectItem(om, "coverage68");
    const cJSON *c95 = cJSON_GetObjectItem(om, "coverage95");
    /* +-1 sd of a Gaussian holds Phi(1) - Phi(-1) (GSL's gsl_cdf_ugaussian_P) */
    double p68 = gsl_cdf_ugaussian_P(1) - gsl_cdf_ugaussian_P(-1);
    assert_rel(cJSON_GetObjectItem(c68, "nominal")->valuedouble, p68, 1e-15);
    /* +-1.959963984540054 sd and the 2.5-97.5% quantiles hold 0.95 */
    assert_rel(gsl_cdf_ugaussian_P(1.959963984540054) - gsl_cdf_ugaussian_P(-1.959963984540054),
               0.95, 1e-15);
    assert_rel(cJSON_GetObjectItem(c95, "nominal")->valuedouble, 0.95, 0);
    assert_int_equal((int)cJSON_GetObjectItem(c68, "covered")->valuedouble, 3);
    assert_int_equal((int)cJSON_GetObjectItem(c68, "of")->valuedouble, 3);
    assert_int_equal((int)cJSON_GetObjectItem(c95, "covered")->valuedouble, 3);
    /* binomial errors at the nominal p; the exact test of k = 3 of 3 at
     * p = 0.6827 keeps outcomes 0, 1 and 3 (outcome 2 is the most likely),
     * so its p-value is 1 - 3 p^2 (1 - p) (closed form: 0.556335, where
     * 0.68 gives 0.556096); at 0.95, 3 of 3 is the most likely outcome */
    assert_rel(cJSON_GetObjectItem(c68, "err")->valuedouble, sqrt(p68 * (1 - p68) / 3), 1e-12);
    assert_rel(cJSON_GetObjectItem(c68, "p_value")->valuedouble, 1 - 3 * p68 * p68 * (1 - p68),
               1e-9);
    assert_rel(cJSON_GetObjectItem(c95, "err")->valuedouble, sqrt(0.95 * 0.05 / 3), 1e-12);
    assert_rel(cJSON_GetObjectItem(c95, "p_value")->valuedouble, 1, 1e-12);
    /* the dropped realizations: counted, by reason, and named */
    assert_int_equal((int)cJSON_GetObjectItem(g, "realizations")->valuedouble, 5);
    assert_int_equal((int)cJSON_GetObjectItem(g, "used")->valuedouble, 3);
    assert_int_equal((int)cJSON_GetObjectItem(g, "dropped")->valuedouble, 2);
    assert_int_equal((int)cJSON_GetObjectItem(g, "dropped_no_errors")->valuedouble, 1);
    assert_int_equal((int)cJSON_GetObjectItem(g, "dropped_failed")->valuedouble, 1);
    assert_int_equal((int)cJSON_GetObjectItem(g, "unconverged")->valuedouble, 0);
    const cJSON *list = cJSON_GetObjectItem(g, "dropped_realizations");
    assert_int_equal(cJSON_GetArraySize(list), 2);
    const cJSON *d0 = cJSON_GetArrayItem(list, 0), *d1 = cJSON_GetArrayItem(list, 1);
    assert_int_equal((int)cJSON_GetObjectItem(d0, "realization")->valuedouble, 4);
    assert_non_null(strstr(cJSON_GetObjectItem(d0, "reason")->valuestring, "at the edge"));
    assert_int_equal((int)cJSON_GetObjectItem(d1, "realization")->valuedouble, 5);
    assert_non_null(strstr(cJSON_GetObjectItem(d1, "reason")->valuestring, "x.csv:3: gone"));
    assert_int_equal(cJSON_GetArraySize(cJSON_GetObjectItem(om, "pulls")), 3);
    assert_int_equal((int)cJSON_GetObjectItem(om, "n")->valuedouble, 3);
    free(printed);
    cJSON_Delete(sum);
    cJSON_Delete(s);
    for (int i = 0; i < 5; i++)
        cJSON_Delete(results[i]);
    lt_campaign_free(&c);
}

/* A record as lt_campaign_task_run writes it (the head from
 * lt_campaign_task_failed, status turned to ok), written as task file's
 * record in folder out. */
static void write_record(const lt_campaign *c, size_t task, const char *out, const char *file)
{
    lt_error err;
    lt_error_clear(&err);
    cJSON *o = lt_campaign_task_failed(c, task, &err);
    cJSON_DeleteItemFromObject(o, "error");
    cJSON_ReplaceItemInObject(o, "status", cJSON_CreateString("ok"));
    cJSON_AddNumberToObject(o, "n_data", 120);
    cJSON_AddNumberToObject(o, "dof", 118);
    cJSON_AddNumberToObject(o, "chi2_min", 117.5);
    cJSON_AddTrueToObject(o, "converged");
    cJSON *q = cJSON_AddObjectToObject(cJSON_AddObjectToObject(o, "params"), "omega_m");
    const char *keys[] = {"truth", "estimate", "sd", "lo68", "hi68", "lo95", "hi95"};
    const double vals[] = {0.3, 0.31, 0.02, 0.29, 0.33, 0.27, 0.35};
    for (size_t k = 0; k < 7; k++)
        cJSON_AddNumberToObject(q, keys[k], vals[k]);
    char *text = cJSON_Print(o);
    char name[64];
    snprintf(name, sizeof name, "%s/tasks/%s", out, file);
    assert_non_null(lt_test_write(dir, name, text, strlen(text)));
    free(text);
    cJSON_Delete(o);
}

static void expect_refused(const lt_campaign *c, const char *out, const char *file,
                           const char *msg)
{
    cJSON *results[5] = {NULL};
    lt_error err;
    lt_error_clear(&err);
    char path[512];
    snprintf(path, sizeof path, "%s/%s", dir, out);
    assert_int_equal(lt_campaign_resume_scan(c, path, results, &err), LT_EINPUT);
    char buf[1024];
    lt_error_format(&err, buf, sizeof buf);
    if (!strstr(buf, file) || !strstr(buf, msg))
        fail_msg("error '%s' lacks '%s' or '%s'", buf, file, msg);
    for (int i = 0; i < 5; i++)
        assert_null(results[i]); /* nothing half-kept */
}

/* The resume scan keeps a finished record, runs a failed or missing task
 * again, and refuses a damaged record or one of another task, naming it. */
static void test_resume_scan(void **state)
{
    (void)state;
    lt_campaign c;
    lt_error err;
    const char *text = "[campaign]\nmodels = lcdm-flat\nmethods = fit\n"
                       "[simulated.sim]\nscenario = scenario.ini\nrealizations = 5\n";
    assert_int_equal(lt_campaign_read(write_text("scan.ini", text), &c, &err), LT_OK);
    char out[512];
    snprintf(out, sizeof out, "%s/scan", dir);
    assert_int_equal(mkdir(out, 0777), 0);
    snprintf(out, sizeof out, "%s/scan/tasks", dir);
    assert_int_equal(mkdir(out, 0777), 0);
    snprintf(out, sizeof out, "%s/scan", dir);
    write_record(&c, 0, "scan", "000000.json");
    lt_error_set(&err, LT_EIO, "x.csv", 3, "gone");
    cJSON *f = lt_campaign_task_failed(&c, 1, &err);
    char *ft = cJSON_Print(f);
    assert_non_null(lt_test_write(dir, "scan/tasks/000001.json", ft, strlen(ft)));
    free(ft);
    cJSON_Delete(f);
    cJSON *results[5] = {NULL};
    assert_int_equal(lt_campaign_resume_scan(&c, out, results, &err), LT_OK);
    assert_non_null(results[0]);
    assert_string_equal(cJSON_GetObjectItem(results[0], "label")->valuestring,
                        "sim/r1/lcdm-flat/fit");
    for (int i = 1; i < 5; i++)
        assert_null(results[i]); /* failed (1) or not run (2-4): run again */
    cJSON_Delete(results[0]);

    /* cut short: not JSON */
    assert_non_null(lt_test_write(dir, "scan/tasks/000003.json", "{\"task\":3,", 10));
    expect_refused(&c, "scan", "000003.json", "not a JSON object");
    /* task 4's record under task 3's name: another task's */
    write_record(&c, 4, "scan", "000003.json");
    expect_refused(&c, "scan", "000003.json", "not the record of task 3 (sim/r4/lcdm-flat/fit)");
    /* a record of another campaign: same index, another data set's name */
    lt_campaign other;
    const char *t2 = "[campaign]\nmodels = lcdm-flat\nmethods = fit\n"
                     "[simulated.other]\nscenario = scenario.ini\nrealizations = 5\n";
    assert_int_equal(lt_campaign_read(write_text("other.ini", t2), &other, &err), LT_OK);
    write_record(&other, 3, "scan", "000003.json");
    expect_refused(&c, "scan", "000003.json", "not the record of task 3");
    lt_campaign_free(&other);
    /* the right task with a field of the wrong type */
    write_record(&c, 3, "scan", "000003.json");
    assert_int_equal(lt_campaign_resume_scan(&c, out, results, &err), LT_OK);
    for (int i = 0; i < 5; i++)
        cJSON_Delete(results[i]);
    char *bad = NULL;
    size_t size;
    char rec[600];
    snprintf(rec, sizeof rec, "%s/tasks/000003.json", out);
    assert_int_equal(lt_file_read(rec, 1 << 20, &bad, &size, &err), LT_OK);
    char *sd = strstr(bad, "\"sd\":");
    assert_non_null(sd);
    memcpy(sd + 1, "sx", 2); /* the sd is gone */
    assert_non_null(lt_test_write(dir, "scan/tasks/000003.json", bad, size));
    free(bad);
    expect_refused(&c, "scan", "000003.json", "params.omega_m.sd is missing");
    lt_campaign_free(&c);
}

/* The table of a result made from fixed records: the counts, the group's
 * line with its dropped realizations by reason, the header naming the
 * probabilities tested, and the failed task with its error. */
static void test_result_print(void **state)
{
    (void)state;
    lt_campaign c;
    lt_error err;
    const char *text = "[campaign]\nname = fixed\nmodels = lcdm-flat\nmethods = fit\n"
                       "[simulated.sim]\nscenario = scenario.ini\nrealizations = 3\n";
    assert_int_equal(lt_campaign_read(write_text("three.ini", text), &c, &err), LT_OK);
    cJSON *results[3];
    results[0] = fake_record(0, "{\"truth\":0.3,\"estimate\":0.31,\"sd\":0.02,\"lo68\":0.29,"
                                "\"hi68\":0.33,\"lo95\":0.27,\"hi95\":0.35}");
    results[1] = fake_record(1, "{\"truth\":0.3,\"estimate\":0.27,\"sd\":0.02,\"lo68\":0.25,"
                                "\"hi68\":0.29,\"lo95\":0.23,\"hi95\":0.31}");
    lt_error_set(&err, LT_EIO, "x.csv", 3, "gone");
    results[2] = lt_campaign_task_failed(&c, 2, &err);
    lt_campaign_result *r = lt_campaign_result_alloc(&c, results, &err);
    assert_non_null(r);
    char *buf = NULL;
    size_t size = 0;
    FILE *f = open_memstream(&buf, &size);
    lt_campaign_result_print(f, r);
    fclose(f);
    /* bias: (0.01 - 0.03) / 2 = -0.01, its error sd/sqrt(2) = 0.02828/1.414
     * = 0.02; pulls 0.5 and -1.5: mean -0.5, sd sqrt(2) = 1.414, errors
     * 1.414/sqrt(2) = 1 and 1.414/sqrt(2) = 1; the 68% intervals hold the
     * truth once of twice, the 95% ones twice. p-values of the exact
     * binomial test (closed forms by hand): at p = 0.6827 the outcomes 0
     * and 1 are no likelier than 1, (1-p)^2 + 2p(1-p) = 1 - p^2 = 0.534;
     * at 0.95, 2 of 2 is the likeliest outcome: 1. */
    const char *want =
        "campaign fixed: 3 tasks, 2 done, 1 failed, 0 not run, 0 unconverged\n"
        "\n"
        "sim / lcdm-flat / fit: 2 of 3 realizations used, 1 dropped (0 without errors, 1 failed; "
        "summary.json lists them)\n"
        "  parameter     truth                  bias       pull mean      pull width  "
        "cover 68.27% (p)     cover 95% (p)\n"
        "  omega_m         0.3      -0.01 +-    0.02 -0.500 +- 1.000  1.414 +- 1.000  "
        "0.500 (  0.53)  1.000 (     1)\n"
        "\n"
        "failed tasks (tried twice):\n"
        "  sim/r3/lcdm-flat/fit: x.csv:3: gone\n";
    assert_string_equal(buf, want);
    free(buf);
    lt_campaign_result_free(r);
    for (int i = 0; i < 3; i++)
        cJSON_Delete(results[i]);
    lt_campaign_free(&c);
}

/* One task run twice gives the same record; it holds the truth and the
 * fields the summary reads; a failed record says why. */
static void test_task_record(void **state)
{
    (void)state;
    lt_campaign c;
    lt_error err;
    assert_int_equal(lt_campaign_read(write_text("good.ini", good), &c, &err), LT_OK);
    cJSON *a = NULL, *b = NULL;
    assert_int_equal(lt_campaign_task_run(&c, 0, 1, NULL, &a, &err), LT_OK);
    assert_int_equal(lt_campaign_task_run(&c, 0, 2, NULL, &b, &err), LT_OK);
    char *ta = cJSON_PrintUnformatted(a), *tb = cJSON_PrintUnformatted(b);
    assert_string_equal(ta, tb);
    cJSON *r = cJSON_Parse(ta);
    assert_string_equal(cJSON_GetObjectItem(r, "status")->valuestring, "ok");
    assert_int_equal((int)cJSON_GetObjectItem(r, "n_data")->valuedouble, 120);
    cJSON *om = cJSON_GetObjectItem(cJSON_GetObjectItem(r, "params"), "omega_m");
    assert_rel(cJSON_GetObjectItem(om, "truth")->valuedouble, 0.3, 0);
    double e = cJSON_GetObjectItem(om, "estimate")->valuedouble;
    double sd = cJSON_GetObjectItem(om, "sd")->valuedouble;
    /* best +- 1 sd and +- Phi^-1(0.975) sd (GSL's gsl_cdf_ugaussian_Pinv):
     * the intervals of probability 0.6827 and 0.95 the summary tests */
    assert_rel(cJSON_GetObjectItem(om, "hi68")->valuedouble, e + sd, 1e-12);
    assert_rel(cJSON_GetObjectItem(om, "lo68")->valuedouble, e - sd, 1e-12);
    assert_rel(cJSON_GetObjectItem(om, "hi95")->valuedouble,
               e + gsl_cdf_ugaussian_Pinv(0.975) * sd, 1e-12);
    free(ta);
    free(tb);
    cJSON_Delete(a);
    cJSON_Delete(b);
    cJSON_Delete(r);
    lt_error_set(&err, LT_EIO, "x.csv", 3, "gone");
    cJSON *f = lt_campaign_task_failed(&c, 14, &err);
    char *tf = cJSON_PrintUnformatted(f);
    assert_non_null(strstr(tf, "\"status\":\"failed\""));
    assert_non_null(strstr(tf, "x.csv:3: gone"));
    assert_non_null(strstr(tf, "\"dataset\":\"real\""));
    free(tf);
    cJSON_Delete(f);
    assert_int_equal(lt_campaign_task_run(&c, 99, 1, NULL, &a, &err), LT_EINPUT);
    lt_campaign_free(&c);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_task_order), cmocka_unit_test(test_errors),
        cmocka_unit_test(test_queue),      cmocka_unit_test(test_binomial),
        cmocka_unit_test(test_bias),       cmocka_unit_test(test_summary_nominal_dropped),
        cmocka_unit_test(test_task_record), cmocka_unit_test(test_resume_scan),
        cmocka_unit_test(test_result_print),
    };
    return cmocka_run_group_tests(tests, setup, teardown);
}
