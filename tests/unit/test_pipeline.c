/*
 * Unit tests of run descriptions (lantern/pipeline.h): one set of rules for
 * run files, flags and campaign files; overrides; the settings file a
 * resume reads back; and the checkpoint fingerprint's parts.
 *
 * The rules themselves are ours (DESIGN.md's command-line contract); what
 * these tests hold is that a value means the same and is refused with the
 * same words whichever way it comes, which the readers of issue 18's start
 * did not do (campaign files took no_err_diag = true/false only and any
 * zmin, run files took yes/no/1/0 and zmin >= 0).
 */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>
#include <gsl/gsl_errno.h>

#include "lantern/lantern.h"
#include "../testutil.h"

static char dir[256];

static const char *write_text(const char *name, const char *text)
{
    return lt_test_write(dir, name, text, strlen(text));
}

static int setup(void **state)
{
    (void)state;
    gsl_set_error_handler_off();
    if (lt_test_tmpdir(dir, sizeof dir, "pipeline"))
        return -1;
    write_text("survey.csv", "z,mag,err\n0.1,19,0.1\n0.2,20.5,0.1\n0.3,21.4,0.1\n0.5,22.6,0.1\n");
    write_text("scenario.ini", "[survey]\nseed = 5\nobservable = mag\noffset = -19.3\n"
                               "[cosmology]\nmodel = lcdm-flat\nomega_m = 0.3\n"
                               "[tier.a]\nz_min = 0.02\nz_max = 1.0\ncount = 50\nerror = 0.12\n");
    return 0;
}

static int teardown(void **state)
{
    (void)state;
    return lt_test_rmtree(dir);
}

/* The formatted error of a failed call, for substring checks. */
static const char *msg(const lt_error *err)
{
    static char buf[1024];
    lt_error_format(err, buf, sizeof buf);
    return buf;
}

static void expect(int rc, const lt_error *err, const char *want)
{
    assert_int_equal(rc, LT_EINPUT);
    if (!strstr(msg(err), want))
        fail_msg("error '%s' lacks '%s'", msg(err), want);
}

/* A run file and a flag go through one rule: the same value is taken or
 * refused alike, the file's error naming file and line, the flag's the flag. */
static void test_file_and_flag_agree(void **state)
{
    (void)state;
    lt_job j;
    lt_error err;
    lt_job_init(&j);
    const char *p = write_text("a.ini", "[sampler]\nchains = 0\n");
    expect(lt_job_read(&j, p, NULL, NULL, 0, &err), &err,
           "a.ini:2: chains = '0' is not a whole number from 1 to 256");
    lt_job_free(&j);
    lt_job_init(&j);
    expect(lt_job_flag(&j, "--chains", "0", &err), &err,
           "--chains: '0' is not a whole number from 1 to 256");
    assert_int_equal(lt_job_flag(&j, "--chains", "7", &err), LT_OK);
    assert_int_equal(j.chains, 7);
    /* yes/no and 1/0 are booleans in every file; --no-err-diag takes no value */
    p = write_text("b.ini", "[data]\nno_err_diag = yes\nzmin = 0.05\n");
    lt_job_free(&j);
    lt_job_init(&j);
    assert_int_equal(lt_job_read(&j, p, NULL, NULL, 0, &err), LT_OK);
    assert_true(j.data.no_err_diag == 1 && j.data.zmin == 0.05);
    lt_job_free(&j);
    lt_job_init(&j);
    assert_int_equal(lt_job_flag(&j, "--no-err-diag", NULL, &err), LT_OK);
    assert_int_equal(j.data.no_err_diag, 1);
    expect(lt_job_flag(&j, "--zmin", "-0.1", &err), &err, "--zmin: '-0.1' is not a redshift >= 0");
    /* an unknown parameter is named where it is written */
    expect(lt_job_flag(&j, "--prior", "omega_q=uniform:0:1", &err), &err,
           "--prior: unknown parameter 'omega_q'");
    lt_job_free(&j);
    /* flag lookup: the section and whether a value follows */
    unsigned section;
    int takes;
    assert_true(lt_job_flag_find("--live-points", &section, &takes));
    assert_true(section == LT_JOB_NESTED && takes == 1);
    assert_true(lt_job_flag_find("--no-err-diag", &section, &takes));
    assert_true(section == LT_JOB_DATA && takes == 0);
    assert_false(lt_job_flag_find("--resume", &section, &takes));
}

/* Campaign files' [data.NAME] sections follow the same rules as [data]
 * (issue 18: the campaign reader accepted zmin < 0 and refused yes/no). */
static void test_campaign_data_rules(void **state)
{
    (void)state;
    lt_campaign c;
    lt_error err;
    lt_error_clear(&err);
    const char *p = write_text("c1.ini", "[campaign]\nmodels = lcdm-flat\n"
                                         "[data.real]\nfile = survey.csv\n"
                                         "columns = z=z,mag=mag,err=err\nzmin = -1\n");
    expect(lt_campaign_read(p, &c, &err), &err, "c1.ini:6: zmin = '-1' is not a redshift >= 0");
    p = write_text("c2.ini", "[campaign]\nmodels = lcdm-flat\n"
                             "[data.real]\nfile = survey.csv\n"
                             "columns = z=z,mag=mag,err=err\nno_err_diag = no\n");
    assert_int_equal(lt_campaign_read(p, &c, &err), LT_OK);
    assert_int_equal(c.data[0].spec.no_err_diag, 0);
    assert_true(c.data[0].spec.data[0] == '/'); /* made absolute */
    lt_campaign_free(&c);
    /* the sampler's keys: the same ranges as a run file's */
    p = write_text("c3.ini", "[campaign]\nmodels = lcdm-flat\n[simulated.s]\n"
                             "scenario = scenario.ini\n[sampler]\ntarget_ess = 0.5\n");
    expect(lt_campaign_read(p, &c, &err), &err, "c3.ini:6: target_ess = '0.5' is not a number >= 1");
    /* keys a campaign decides otherwise are refused, not ignored */
    p = write_text("c4.ini", "[campaign]\nmodels = lcdm-flat\n[simulated.s]\n"
                             "scenario = scenario.ini\n[sampler]\nthreads = 2\n");
    expect(lt_campaign_read(p, &c, &err), &err, "c4.ini:6: [sampler] threads has no place");
}

/* --override replaces or adds a run-file key before the rules apply; its
 * errors name the flag. */
static void test_overrides(void **state)
{
    (void)state;
    const char *p = write_text("o.ini", "[sampler]\nchains = 3\n");
    const char *ov[] = {"sampler.chains=5", "nested.live_points=300"};
    const char *origin[] = {"--override", "--override"};
    lt_job j;
    lt_error err;
    lt_job_init(&j);
    assert_int_equal(lt_job_read(&j, p, ov, origin, 2, &err), LT_OK);
    assert_true(j.chains == 5 && j.live_points == 300);
    lt_job_free(&j);
    const char *bad[] = {"sampler-chains"};
    lt_job_init(&j);
    expect(lt_job_read(&j, p, bad, origin, 1, &err), &err,
           "--override: 'sampler-chains' is not section.key=value");
    lt_job_free(&j);
    const char *unknown[] = {"sampler.chain=5"};
    lt_job_init(&j);
    expect(lt_job_read(&j, p, unknown, origin, 1, &err), &err, "chain");
    lt_job_free(&j);
}

/* The settings file (lt_job_write) reads back to the same run: the same
 * likelihood spec and sampler settings, with the flags' priors over the
 * file's, and for several models (spec NULL) the entries as they stand. */
static void test_write_read_back(void **state)
{
    (void)state;
    char data[512];
    snprintf(data, sizeof data, "%s/survey.csv", dir);
    const char *p = write_text("w.ini", "[data]\ncolumns = z=z,mag=mag,err=err\n"
                                        "[priors]\nomega_m = uniform:0.1:0.5\n"
                                        "[fixed]\nh0 = 70\n[measurements]\nomega_m = 0.3:0.05\n");
    lt_job j, k;
    lt_error err;
    lt_job_init(&j);
    assert_int_equal(lt_job_read(&j, p, NULL, NULL, 0, &err), LT_OK);
    assert_int_equal(lt_job_flag(&j, "--data", data, &err), LT_OK);
    assert_int_equal(lt_job_flag(&j, "--model", "lcdm-flat", &err), LT_OK);
    assert_int_equal(lt_job_flag(&j, "--prior", "omega_m=gauss:0.3:0.1", &err), LT_OK);
    assert_int_equal(lt_job_flag(&j, "--models", "lcdm-flat,wcdm-flat", &err), LT_OK);
    assert_int_equal(lt_job_flag(&j, "--live-points", "250", &err), LT_OK);
    j.target_ess = 1234.5;
    lt_like_spec s1, s2;
    assert_int_equal(lt_job_model_spec(&j, &s1, &err), LT_OK);
    char out[512];
    for (int several = 0; several < 2; several++) {
        snprintf(out, sizeof out, "%s/settings%d.ini", dir, several);
        assert_int_equal(lt_job_write(&j, several ? NULL : &s1, out, &err), LT_OK);
        lt_job_init(&k);
        if (lt_job_read(&k, out, NULL, NULL, 0, &err))
            fail_msg("read back: %s", msg(&err));
        assert_int_equal(lt_job_model_spec(&k, &s2, &err), LT_OK);
        assert_string_equal(k.models, "lcdm-flat,wcdm-flat");
        assert_true(k.live_points == 250 && k.target_ess == 1234.5);
        assert_true(k.data.data[0] == '/');
        const lt_param_setting *a = lt_like_spec_setting(&s2, "omega_m");
        assert_non_null(a);
        /* the flag's prior, not the file's */
        assert_true(a->prior.kind == LT_PRIOR_GAUSS && a->prior.a == 0.3 && a->prior.b == 0.1);
        const lt_param_setting *h = lt_like_spec_setting(&s2, "h0");
        assert_true(h && h->fixed && h->value == 70);
        assert_int_equal(s2.nmeasurements, 1);
        assert_true(s2.measurements[0].mean == 0.3 && s2.measurements[0].sd == 0.05);
        lt_job_free(&k);
    }
    lt_job_free(&j);
}

/* The fingerprint's parts move with what they cover and with nothing else. */
static void test_fingerprint_parts(void **state)
{
    (void)state;
    char data[512];
    snprintf(data, sizeof data, "%s/survey.csv", dir);
    lt_survey_spec ss;
    lt_survey_spec_init(&ss);
    ss.data = data, ss.columns = "z=z,mag=mag,err=err";
    lt_error err;
    lt_survey *s = lt_survey_read(&ss, &err);
    assert_non_null(s);
    lt_like_spec a, b;
    lt_like_spec_init(&a, lt_cosmo_model_find("lcdm-flat"));
    lt_like_spec_init(&b, lt_cosmo_model_find("lcdm-flat"));
    lt_like_spec_prior(&b, "omega_m", (lt_prior){LT_PRIOR_UNIFORM, 0.1, 0.6}, &err);
    lt_like *la = lt_like_alloc(s, &a, &err), *lb = lt_like_alloc(s, &b, &err);
    assert_non_null(la);
    assert_non_null(lb);
    lt_fingerprint fa, fb;
    lt_fingerprint_like(la, &fa);
    lt_fingerprint_like(lb, &fb);
    assert_true(fa.part[LT_FP_DATA] == fb.part[LT_FP_DATA]);
    assert_true(fa.part[LT_FP_COV] == fb.part[LT_FP_COV]);
    assert_true(fa.part[LT_FP_MODEL] != fb.part[LT_FP_MODEL]);
    assert_true(lt_fingerprint_value(&fa) != lt_fingerprint_value(&fb));
    /* written into a settings file and checked: the same passes, another
     * is refused naming the part */
    const char *p = write_text("fp.ini", "[run]\n");
    assert_int_equal(lt_fingerprint_write(p, &fa, &err), LT_OK);
    assert_int_equal(lt_fingerprint_check(p, &fa, &err), LT_OK);
    expect(lt_fingerprint_check(p, &fb, &err), &err, "the model's settings");
    lt_like_free(la);
    lt_like_free(lb);
    lt_survey_free(s);
}

/* Kinds of warning: --no-warn and [data] no_warn take ids (one, or a
 * comma-separated list; the flag repeated adds), refuse an unknown one with
 * the list of the known, silence exactly the kinds named, and the settings
 * file a resume reads keeps them. */
static void test_no_warn(void **state)
{
    (void)state;
    /* the survey's ids are in the list, each once; the mask has room */
    const char *survey_ids[] = {LT_WARN_HEADER_EXTRA, LT_WARN_NO_ZHEL, LT_WARN_MODES_ORDER,
                                LT_WARN_CUTS, LT_WARN_DUPLICATE_IDS, LT_WARN_COV_DOUBLE_DIAG};
    const lt_warning_kind *k = lt_warning_kinds();
    size_t n = 0;
    while (k[n].id)
        n++;
    assert_true(n <= 64);
    for (size_t i = 0; i < sizeof survey_ids / sizeof survey_ids[0]; i++) {
        size_t found = 0;
        for (size_t q = 0; q < n; q++)
            found += !strcmp(k[q].id, survey_ids[i]);
        assert_int_equal(found, 1);
    }
    lt_job j;
    lt_error err;
    lt_job_init(&j);
    for (size_t q = 0; q < n; q++)
        assert_true(lt_job_warning_shown(&j, k[q].id));
    assert_int_equal(lt_job_flag(&j, "--no-warn", "header-extra-names", &err), LT_OK);
    assert_int_equal(lt_job_flag(&j, "--no-warn", " cuts , prior-edge", &err), LT_OK);
    for (size_t q = 0; q < n; q++)
        assert_int_equal(lt_job_warning_shown(&j, k[q].id),
                         strcmp(k[q].id, "header-extra-names") && strcmp(k[q].id, "cuts") &&
                             strcmp(k[q].id, "prior-edge"));
    assert_true(lt_job_warning_shown(&j, NULL));   /* a warning of no kind */
    assert_true(lt_job_warning_shown(NULL, "cuts")); /* no job: nothing silenced */
    expect(lt_job_flag(&j, "--no-warn", "cuts,no-such-kind", &err), &err,
           "--no-warn: unknown kind of warning 'no-such-kind' (the kinds: header-extra-names, ");
    assert_non_null(strstr(msg(&err), "cov-double-diagonal"));
    expect(lt_job_flag(&j, "--no-warn", " , ", &err), &err, "name a kind of warning");
    /* the run file's key, refused with its file and line */
    const char *p = write_text("nw.ini", "[data]\nno_warn = no-zhel, duplicate-ids\n");
    lt_job f;
    lt_job_init(&f);
    assert_int_equal(lt_job_read(&f, p, NULL, NULL, 0, &err), LT_OK);
    assert_false(lt_job_warning_shown(&f, "no-zhel"));
    assert_false(lt_job_warning_shown(&f, "duplicate-ids"));
    assert_true(lt_job_warning_shown(&f, "cuts"));
    /* ... and written for a resume */
    char out[512];
    snprintf(out, sizeof out, "%s/nw_settings.ini", dir);
    assert_int_equal(lt_job_write(&f, NULL, out, &err), LT_OK);
    lt_job g;
    lt_job_init(&g);
    assert_int_equal(lt_job_read(&g, out, NULL, NULL, 0, &err), LT_OK);
    assert_true(g.no_warn == f.no_warn);
    lt_job_free(&g);
    lt_job_free(&f);
    p = write_text("nw_bad.ini", "[data]\n\nno_warn = header-extra\n");
    lt_job_init(&f);
    expect(lt_job_read(&f, p, NULL, NULL, 0, &err), &err,
           ":3: unknown kind of warning 'header-extra'");
    lt_job_free(&f);
    lt_job_free(&j);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_file_and_flag_agree),
        cmocka_unit_test(test_campaign_data_rules),
        cmocka_unit_test(test_overrides),
        cmocka_unit_test(test_write_read_back),
        cmocka_unit_test(test_fingerprint_parts),
        cmocka_unit_test(test_no_warn),
    };
    return cmocka_run_group_tests(tests, setup, teardown);
}
