/*
 * Unit tests of simulated surveys: reproducibility, the noise model, the
 * written files read back bit for bit, dense and mode forms of the same
 * covariance, and scenario-file errors.
 */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <cmocka.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_integration.h>

#include "lantern/lantern.h"
#include "../testutil.h"

static char dir[256];

static const char *write_scenario(const char *name, const char *text)
{
    return lt_test_write(dir, name, text, strlen(text));
}

static const char *basic =
    "[survey]\nseed = 99\nobservable = mag\noffset = -19.0\n"
    "[cosmology]\nmodel = wcdm\nomega_m = 0.28\nomega_de = 0.75\nw0 = -0.9\n"
    "[tier.near]\nz_min = 0.02\nz_max = 0.1\ncount = 60\nerror = 0.1\ncalibration = 0.02\n"
    "[tier.far]\nz_min = 0.3\nz_max = 1.0\ncount = 90\nerror = 0.15\ncalibration = 0.03\n"
    "spread = uniform\n";

static void simulate(const char *text, lt_scenario *sc, lt_sim *sim)
{
    lt_error err;
    const char *p = write_scenario("s.ini", text);
    int rc = lt_scenario_read(p, sc, &err);
    if (rc)
        print_error("%s:%ld: %s\n", err.file, err.line, err.msg);
    assert_int_equal(rc, LT_OK);
    assert_int_equal(lt_simulate(sc, sim, &err), LT_OK);
}

static void test_reproducible(void **state)
{
    (void)state;
    lt_scenario sc;
    lt_sim a, b;
    simulate(basic, &sc, &a);
    lt_scenario_free(&sc);
    simulate(basic, &sc, &b);
    assert_int_equal(a.n, 150);
    assert_memory_equal(a.survey->z, b.survey->z, a.n * sizeof(double));
    assert_memory_equal(a.survey->obs, b.survey->obs, a.n * sizeof(double));
    assert_memory_equal(a.survey->zhel, b.survey->zhel, a.n * sizeof(double));
    lt_sim_free(&b);
    lt_scenario_free(&sc);
    /* another seed, another survey */
    char other[2048];
    snprintf(other, sizeof other, "%s", basic);
    memcpy(strstr(other, "seed = 99"), "seed = 98", 9);
    simulate(other, &sc, &b);
    assert_true(memcmp(a.survey->obs, b.survey->obs, a.n * sizeof(double)) != 0);
    /* tiers in order, redshifts in range and sorted within each tier */
    for (size_t i = 0; i < a.n; i++) {
        const lt_sim_tier *t = &sc.tiers[a.tier[i]];
        assert_true(a.survey->z[i] >= t->z_min && a.survey->z[i] <= t->z_max);
        if (i && a.tier[i] == a.tier[i - 1])
            assert_true(a.survey->z[i] >= a.survey->z[i - 1]);
    }
    lt_sim_free(&a);
    lt_sim_free(&b);
    lt_scenario_free(&sc);
}

/* The reported errors describe the noise: pulls (obs - truth - calibration
 * offset) / err are standard normal. 20000 objects: the mean within 4
 * standard errors of 0, the variance within 4 of 1 (sd of a sample
 * variance: sqrt(2/N)). */
static void test_noise_model(void **state)
{
    (void)state;
    lt_scenario sc;
    lt_sim sim;
    simulate("[survey]\nseed = 5\nobservable = mu\nintrinsic_scatter = 0.12\n"
             "velocity_dispersion = 400\n[cosmology]\nmodel = lcdm-flat\n"
             "[tier.all]\nz_min = 0.01\nz_max = 1.2\ncount = 20000\nerror = 0.05\n"
             "calibration = 0.05\n",
             &sc, &sim);
    double sum = 0, sum2 = 0;
    size_t n = sim.n;
    for (size_t i = 0; i < n; i++) {
        double pull = (sim.survey->obs[i] - sim.truth[i] - sim.calib[0]) / sim.survey->err[i];
        sum += pull;
        sum2 += pull * pull;
    }
    double mean = sum / n, var = sum2 / n - mean * mean;
    assert_abs(mean, 0.0, 4.0 / sqrt((double)n));
    assert_abs(var, 1.0, 4.0 * sqrt(2.0 / n));
    /* the error budget: measurement, intrinsic and peculiar velocity,
     * sigma_pv = (5/ln10)(sigma_v/c)(1+z)/(z(1+z/2)) */
    for (size_t i = 0; i < n; i += 997) {
        double z = sim.survey->z[i];
        double pv = 5 / log(10.0) * 400 / 299792.458 * (1 + z) / (z * (1 + z / 2));
        assert_rel(sim.survey->err[i], sqrt(0.05 * 0.05 + 0.12 * 0.12 + pv * pv), 1e-14);
    }
    /* the Sun's motion: |(1+zhel)/(1+z) - 1| <= v/c */
    for (size_t i = 0; i < n; i++)
        assert_true(fabs((1 + sim.survey->zhel[i]) / (1 + sim.survey->z[i]) - 1) <=
                    369 / 299792.458 * (1 + 1e-12));
    lt_sim_free(&sim);
    lt_scenario_free(&sc);
}

/* The peculiar-velocity term tends to (5/ln10) sigma_v/(c z) at low z. */
static void test_peculiar_velocity_limit(void **state)
{
    (void)state;
    lt_scenario sc;
    lt_sim sim;
    simulate("[survey]\nseed = 1\nobservable = mu\nintrinsic_scatter = 0\n"
             "velocity_dispersion = 300\n[cosmology]\nmodel = lcdm-flat\n"
             "[tier.t]\nz_min = 0.0001\nz_max = 0.0001\ncount = 1\nerror = 0\n",
             &sc, &sim);
    double want = 5 / log(10.0) * 300 / 299792.458 / 0.0001;
    assert_rel(sim.survey->err[0], want, 1e-4);
    lt_sim_free(&sim);
    lt_scenario_free(&sc);
}

static double volume_density(double z, void *p)
{
    lt_cosmo *c = p;
    /* D_M^2 / E by the closed form for EdS: D_M H0/c = 2 (1 - 1/sqrt(1+z)) */
    double dm = 2 * (1 - 1 / sqrt(1 + z));
    return dm * dm / lt_cosmo_efunc(c, z);
}

/* spread = volume: redshifts follow dV/dz ~ D_M^2/E. In Einstein-de Sitter
 * the median of that density on [0.1, 2] is found with GSL's integrator;
 * the fraction of 4000 draws below it is binomial(4000, 1/2): within 4 sd. */
static void test_volume_spread(void **state)
{
    (void)state;
    lt_scenario sc;
    lt_sim sim;
    simulate("[survey]\nseed = 3\nobservable = mu\n[cosmology]\nmodel = lcdm\n"
             "omega_m = 1\nomega_de = 0\n[tier.t]\nz_min = 0.1\nz_max = 2\ncount = 4000\n"
             "error = 0.1\n",
             &sc, &sim);
    lt_cosmo c;
    lt_cosmo_init(&c, sc.model, &sc.params, NULL);
    gsl_integration_workspace *ws = gsl_integration_workspace_alloc(1000);
    gsl_function f = {volume_density, &c};
    double total, e, lo = 0.1, hi = 2.0;
    gsl_integration_qag(&f, 0.1, 2.0, 0, 1e-12, 1000, GSL_INTEG_GAUSS41, ws, &total, &e);
    for (int it = 0; it < 60; it++) { /* bisect for the median */
        double mid = 0.5 * (lo + hi), part;
        gsl_integration_qag(&f, 0.1, mid, 0, 1e-12, 1000, GSL_INTEG_GAUSS41, ws, &part, &e);
        if (part < 0.5 * total)
            lo = mid;
        else
            hi = mid;
    }
    gsl_integration_workspace_free(ws);
    size_t below = 0;
    for (size_t i = 0; i < sim.n; i++)
        below += sim.survey->z[i] < lo;
    assert_abs((double)below, 2000.0, 4.0 * sqrt(1000.0));
    lt_sim_free(&sim);
    lt_scenario_free(&sc);
}

/* Write, read back (CSV and FITS, dense and mode covariances): the same
 * numbers bit for bit and the same chi2. */
static void test_round_trip(void **state)
{
    (void)state;
    lt_scenario sc;
    lt_sim sim;
    simulate(basic, &sc, &sim);
    char out[512];
    snprintf(out, sizeof out, "%s/out", dir);
    lt_error err;
    assert_int_equal(lt_outdir_prepare(out, 0, &err), LT_OK);
    assert_int_equal(lt_sim_write(&sc, &sim, out, &err), LT_OK);
    char data_csv[600], data_fits[600], cov[600], modes[600];
    snprintf(data_csv, sizeof data_csv, "%s/survey.csv", out);
    snprintf(data_fits, sizeof data_fits, "%s/survey.fits", out);
    snprintf(cov, sizeof cov, "%s/covariance.txt", out);
    snprintf(modes, sizeof modes, "%s/modes.csv", out);
    const char *data[] = {data_csv, data_fits};
    size_t n = sim.n;
    double *r = malloc(n * sizeof *r), *work = malloc((n + 8) * sizeof *work);
    for (size_t i = 0; i < n; i++)
        r[i] = sim.survey->obs[i] - sim.truth[i];
    double want = lt_cov_chi2(sim.survey->cov, r, work);
    for (int d = 0; d < 2; d++) {
        for (int form = 0; form < 2; form++) {
            lt_survey_spec spec;
            lt_survey_spec_init(&spec);
            spec.data = data[d];
            spec.columns = "z=z,zhel=zhel,mag=mag,err=err,id=id";
            if (form == 0)
                spec.cov[spec.ncov++] = cov;
            else
                spec.modes = modes;
            lt_survey *s = lt_survey_read(&spec, &err);
            if (!s)
                print_error("%s: %s\n", err.file, err.msg);
            assert_non_null(s);
            assert_int_equal(s->n, n);
            assert_memory_equal(s->z, sim.survey->z, n * sizeof(double));
            assert_memory_equal(s->zhel, sim.survey->zhel, n * sizeof(double));
            assert_memory_equal(s->obs, sim.survey->obs, n * sizeof(double));
            assert_memory_equal(s->err, sim.survey->err, n * sizeof(double));
            for (size_t i = 0; i < n; i++)
                assert_string_equal(s->id[i], sim.survey->id[i]);
            assert_int_equal(lt_cov_kind_of(s->cov), form ? LT_COV_STRUCTURED : LT_COV_DENSE);
            assert_rel(lt_cov_chi2(s->cov, r, work), want, 1e-10);
            lt_survey_free(s);
        }
    }
    /* a second write into the same folder needs --force (the marker) */
    assert_int_equal(lt_outdir_mark(out, "test", &err), LT_OK);
    assert_int_equal(lt_outdir_prepare(out, 0, &err), LT_EINPUT);
    assert_int_equal(lt_outdir_prepare(out, 1, &err), LT_OK);
    /* and no temporary files are left behind */
    char cmd[700];
    snprintf(cmd, sizeof cmd, "ls %s | grep -q tmp", out);
    assert_int_not_equal(system(cmd), 0);
    free(r);
    free(work);
    lt_sim_free(&sim);
    lt_scenario_free(&sc);
}

/* dl data: the same magnitude noise as a factor 10^(d/5), errors
 * dl ln10/5 sigma, and modes scaled by dl ln10/5. */
static void test_distance_data(void **state)
{
    (void)state;
    lt_scenario sc;
    lt_sim sim;
    simulate("[survey]\nseed = 8\nobservable = dl\nintrinsic_scatter = 0.05\n"
             "velocity_dispersion = 0\n[cosmology]\nmodel = lcdm-flat\n"
             "[tier.sirens]\nz_min = 0.05\nz_max = 0.5\ncount = 5000\nerror = 0\n"
             "calibration = 0.01\n",
             &sc, &sim);
    assert_int_equal(sim.survey->kind, LT_OBS_DL);
    double k = log(10.0) / 5.0, sum = 0, sum2 = 0;
    for (size_t i = 0; i < sim.n; i++) {
        double dl = sim.truth[i];
        assert_rel(sim.survey->err[i], dl * k * 0.05, 1e-14);
        assert_rel(sim.modes[i], dl * k, 1e-14);
        /* 5 log10(obs/truth) is the magnitude noise: N(calibration offset, 0.05) */
        double d = 5 * log10(sim.survey->obs[i] / dl) - sim.calib[0];
        sum += d, sum2 += d * d;
    }
    double mean = sum / sim.n, sd = sqrt(sum2 / sim.n - mean * mean);
    assert_abs(mean, 0.0, 4 * 0.05 / sqrt((double)sim.n));
    assert_abs(sd, 0.05, 4 * 0.05 / sqrt(2.0 * sim.n));
    lt_sim_free(&sim);
    lt_scenario_free(&sc);
}

/* Light curves (observable = mb): the generative model of the latent
 * standardisation. With 30000 objects per tier: the observed x1 and colour
 * have the population means and variances plus the measurement variance
 * (means within 4 standard errors; variances within 4 sd of a sample
 * variance, sqrt(2/N) relative); mb minus its noiseless value given the
 * true x1 and colour has the variance of the noise model; calibrators hold
 * calib_mu = mu + N(0, calib_error) and no velocity or lensing scatter;
 * the files read back with the printed columns; and the truth of every
 * fitted name. The variances are the model's, written out here (common
 * practice for a Gaussian sum; no outside source needed). */
static const char *lightcurves =
    "[survey]\nseed = 12\nobservable = mb\noffset = -19.2\nalpha = 0.15\nbeta = 3.0\n"
    "gamma = -0.05\nmass_split = 10.2\nvelocity_dispersion = 200\n"
    "[cosmology]\nmodel = lcdm-flat\nh0 = 72\nomega_m = 0.3\n"
    "[tier.cal]\nz_min = 0.004\nz_max = 0.01\ncount = 30000\nerror = 0.07\n"
    "intrinsic_scatter = 0.08\ncalibrators = yes\ncalib_error = 0.04\nspread = uniform\n"
    "[tier.flow]\nz_min = 0.05\nz_max = 0.8\ncount = 30000\nerror = 0.1\n"
    "x1_mean = 0.4\nx1_sd = 0.9\ncolor_mean = -0.03\ncolor_sd = 0.08\nerr_x1 = 0.2\n"
    "err_color = 0.05\nmass_mean = 10.3\nmass_sd = 0.5\ncalibration = 0.02\n";

static void test_lightcurves(void **state)
{
    (void)state;
    lt_scenario sc;
    lt_sim sim;
    simulate(lightcurves, &sc, &sim);
    const lt_survey *s = sim.survey;
    const lt_lightcurve *lc = s->lc;
    assert_int_equal(s->kind, LT_OBS_MB);
    assert_non_null(lc);
    assert_int_equal(lc->ncalibrators, 30000);
    for (size_t t = 0; t < 2; t++) {
        const lt_sim_tier *tr = &sc.tiers[t];
        double n = 0, sx = 0, sxx = 0, sc_ = 0, scc = 0, sm = 0, smm = 0, hi = 0, sr = 0, srr = 0;
        for (size_t i = 0; i < sim.n; i++) {
            if (sim.tier[i] != t)
                continue;
            double x = lc->x1[i], c = lc->color[i], m = lc->mass[i], z = s->z[i];
            n += 1, sx += x, sxx += x * x, sc_ += c, scc += c * c, sm += m, smm += m * m;
            hi += m >= 10.2;
            assert_string_equal(lc->group[i], tr->name);
            assert_true(lc->calibrator[i] == tr->calibrators);
            assert_true(s->err[i] == tr->error && lc->err_x1[i] == tr->err_x1 &&
                        lc->err_color[i] == tr->err_color);
            /* mb's noise about its noiseless value, less the tier's offset */
            double d = (s->obs[i] - sim.truth[i] - sim.calib[t]);
            double pv = 5 / log(10.0) * 200 / 299792.458 * (1 + z) / (z * (1 + z / 2));
            double v = tr->error * tr->error + tr->intrinsic * tr->intrinsic +
                       (tr->calibrators ? 0.0 : pv * pv + 0.055 * z * 0.055 * z);
            sr += d / sqrt(v), srr += d * d / v;
            if (tr->calibrators) /* calib_mu itself: below */
                assert_true(lc->err_calib_mu[i] == 0.04);
            else
                assert_true(isnan(lc->calib_mu[i]) && isnan(lc->err_calib_mu[i]));
        }
        double mx = sx / n, vx = sxx / n - mx * mx, mc = sc_ / n, vc = scc / n - mc * mc;
        double mm = sm / n, vm = smm / n - mm * mm;
        double wx = tr->x1_sd * tr->x1_sd + tr->err_x1 * tr->err_x1;
        double wc = tr->color_sd * tr->color_sd + tr->err_color * tr->err_color;
        assert_abs(mx, tr->x1_mean, 4 * sqrt(wx / n));
        assert_abs(mc, tr->color_mean, 4 * sqrt(wc / n));
        assert_abs(mm, tr->mass_mean, 4 * tr->mass_sd / sqrt(n));
        assert_rel(vx, wx, 4 * sqrt(2 / n));
        assert_rel(vc, wc, 4 * sqrt(2 / n));
        assert_rel(vm, tr->mass_sd * tr->mass_sd, 4 * sqrt(2 / n));
        double pm = sr / n, pv2 = srr / n - pm * pm;
        assert_abs(pm, 0.0, 4 / sqrt(n));
        assert_abs(pv2, 1.0, 4 * sqrt(2 / n));
        /* the host-mass fraction above the split: Phi((mean - split) / sd) */
        double frac = 0.5 * erfc(-(tr->mass_mean - 10.2) / (tr->mass_sd * sqrt(2.0)));
        assert_abs(hi / n, frac, 4 * sqrt(frac * (1 - frac) / n));
    }
    /* calibrators: calib_mu - mu ~ N(0, calib_error), mu from the truth */
    double sum = 0, sum2 = 0, n = 0;
    for (size_t i = 0; i < sim.n; i++) {
        if (!lc->calibrator[i])
            continue;
        double m = lc->mass[i];
        double mu = sim.truth[i] - (-19.2 - 0.05 * (m >= 10.2) - 0.15 * sim.x1_true[i] +
                                    3.0 * sim.color_true[i]);
        double d = (lc->calib_mu[i] - mu) / 0.04;
        sum += d, sum2 += d * d, n += 1;
    }
    assert_abs(sum / n, 0.0, 4 / sqrt(n));
    assert_abs(sum2 / n - (sum / n) * (sum / n), 1.0, 4 * sqrt(2 / n));
    /* the truths a campaign compares fits with */
    assert_true(lt_scenario_truth(&sc, "alpha", NAN) == 0.15);
    assert_true(lt_scenario_truth(&sc, "beta", NAN) == 3.0);
    assert_true(lt_scenario_truth(&sc, "gamma", NAN) == -0.05);
    assert_true(lt_scenario_truth(&sc, "h0", NAN) == 72);
    assert_true(lt_scenario_truth(&sc, "offset", NAN) == -19.2);
    /* h0 held at 70: the offset absorbs 5 log10(70/72) */
    assert_rel(lt_scenario_truth(&sc, "offset", 70), -19.2 + 5 * log10(70.0 / 72.0), 1e-15);
    assert_true(lt_scenario_truth(&sc, "sigma_int@cal", NAN) == 0.08);
    assert_true(lt_scenario_truth(&sc, "sigma_int@flow", NAN) == 0.1);
    assert_true(isnan(lt_scenario_truth(&sc, "sigma_int", NAN))); /* the tiers differ */
    assert_true(lt_scenario_truth(&sc, "x1_mean@flow", NAN) == 0.4);
    assert_true(lt_scenario_truth(&sc, "color_sd@flow", NAN) == 0.08);
    assert_true(isnan(lt_scenario_truth(&sc, "x1_mean@nowhere", NAN)));
    assert_true(isnan(lt_scenario_truth(&sc, "delta", NAN)));

    /* written and read back with the columns simulate prints */
    char out[512], csv[600], fits[600], columns[LT_SIM_COLUMNS_MAX];
    snprintf(out, sizeof out, "%s/lc", dir);
    lt_error err;
    assert_int_equal(lt_outdir_prepare(out, 0, &err), LT_OK);
    assert_int_equal(lt_sim_write(&sc, &sim, out, &err), LT_OK);
    snprintf(csv, sizeof csv, "%s/survey.csv", out);
    snprintf(fits, sizeof fits, "%s/survey.fits", out);
    lt_sim_columns(&sim, columns, sizeof columns);
    const char *files[] = {csv, fits};
    for (int f = 0; f < 2; f++) {
        lt_survey_spec spec;
        lt_survey_spec_init(&spec);
        spec.data = files[f];
        spec.columns = columns;
        lt_survey *r = lt_survey_read(&spec, &err);
        if (!r)
            print_error("%s:%ld: %s\n", err.file, err.line, err.msg);
        assert_non_null(r);
        assert_int_equal(r->n, sim.n);
        assert_memory_equal(r->obs, s->obs, sim.n * sizeof(double));
        assert_memory_equal(r->lc->x1, lc->x1, sim.n * sizeof(double));
        assert_memory_equal(r->lc->color, lc->color, sim.n * sizeof(double));
        assert_memory_equal(r->lc->mass, lc->mass, sim.n * sizeof(double));
        assert_int_equal(r->lc->ncalibrators, 30000);
        for (size_t i = 0; i < sim.n; i += 101) {
            assert_string_equal(r->lc->group[i], lc->group[i]);
            if (lc->calibrator[i])
                assert_true(r->lc->calib_mu[i] == lc->calib_mu[i]);
        }
        lt_survey_free(r);
    }
    lt_sim_free(&sim);
    lt_scenario_free(&sc);
    /* the same seed, the same light curves */
    lt_sim again;
    simulate(lightcurves, &sc, &again);
    lt_sim first;
    lt_scenario sc2;
    simulate(lightcurves, &sc2, &first);
    assert_memory_equal(again.survey->obs, first.survey->obs, again.n * sizeof(double));
    assert_memory_equal(again.survey->lc->x1, first.survey->lc->x1, again.n * sizeof(double));
    lt_sim_free(&again);
    lt_sim_free(&first);
    lt_scenario_free(&sc);
    lt_scenario_free(&sc2);
}

static void expect_scenario_error(const char *text, long line, const char *what)
{
    lt_scenario sc;
    lt_error err;
    const char *p = write_scenario("bad.ini", text);
    assert_int_equal(lt_scenario_read(p, &sc, &err), LT_EINPUT);
    if (err.line != line || !strstr(err.msg, what))
        print_error("line %ld (want %ld): %s\n", err.line, line, err.msg);
    assert_string_equal(err.file, p);
    assert_int_equal(err.line, line);
    assert_non_null(strstr(err.msg, what));
}

static void test_scenario_errors(void **state)
{
    (void)state;
    const char *tier = "[tier.t]\nz_min = 0.1\nz_max = 0.5\ncount = 10\nerror = 0.1\n";
    char buf[1024];
#define CASE(head, line, what)                                  \
    do {                                                        \
        snprintf(buf, sizeof buf, "%s%s", head, tier);          \
        expect_scenario_error(buf, line, what);                 \
    } while (0)
    CASE("[survey]\n[cosmology]\nmodel = lcdm\n", 1, "needs the key 'seed'");
    CASE("[survey]\nseed = 1\nobservable = flux\n[cosmology]\nmodel = lcdm\n", 3,
         "observable = 'flux'");
    CASE("[survey]\nseed = 1\nobservable = mu\noffset = -19\n[cosmology]\nmodel = lcdm\n", 4,
         "offset");
    CASE("[survey]\nseed = 1\n[cosmology]\nmodel = lcdm-flat\nomega_de = 0.7\n", 5,
         "omega_de is derived");
    CASE("[survey]\nseed = 1\n[cosmology]\nmodel = lcdm-flats\n", 4, "unknown model");
    CASE("[survey]\nseed = 1\n[cosmology]\nmodel = lcdm\nh0 = -3\n", 4, "h0 must be positive");
    CASE("[survey]\nseed = 1\nseeds = 2\n[cosmology]\nmodel = lcdm\n", 3, "unknown key 'seeds'");
    CASE("[survey]\nseed = 1\n[cosmology]\nmodel = lcdm\n[extra]\n", 5, "unknown section");
    expect_scenario_error("[survey]\nseed = 1\n[cosmology]\nmodel = lcdm\n", 0, "no tiers");
    expect_scenario_error("[survey]\nseed = 1\n[cosmology]\nmodel = lcdm\n"
                          "[tier.t]\nz_min = 0\nz_max = 0.5\ncount = 10\nerror = 0.1\n",
                          5, "0 < z_min <= z_max");
    expect_scenario_error("[survey]\nseed = 1\n[cosmology]\nmodel = lcdm\n"
                          "[tier.t]\nz_min = 0.1\nz_max = 0.5\ncount = 0\nerror = 0.1\n",
                          8, "count = '0'");
    expect_scenario_error("[survey]\nseed = 1\n[cosmology]\nmodel = lcdm\n"
                          "[tier.t]\nz_min = 0.1\nz_max = 0.5\ncount = 5\nerror = 0.1\n"
                          "spread = log\n",
                          10, "spread = 'log'");
    /* light-curve keys belong to observable = mb */
    CASE("[survey]\nseed = 1\nobservable = mag\nalpha = 0.1\n[cosmology]\nmodel = lcdm\n", 4,
         "unknown key 'alpha'");
    expect_scenario_error("[survey]\nseed = 1\n[cosmology]\nmodel = lcdm\n"
                          "[tier.t]\nz_min = 0.1\nz_max = 0.5\ncount = 5\nerror = 0.1\n"
                          "x1_sd = 1\n",
                          10, "unknown key 'x1_sd'");
    expect_scenario_error("[survey]\nseed = 1\nobservable = mb\n[cosmology]\nmodel = lcdm\n"
                          "[tier.a.b]\nz_min = 0.1\nz_max = 0.5\ncount = 5\nerror = 0.1\n",
                          6, "group label");
    expect_scenario_error("[survey]\nseed = 1\nobservable = mb\n[cosmology]\nmodel = lcdm\n"
                          "[tier.t]\nz_min = 0.1\nz_max = 0.5\ncount = 5\nerror = 0.1\n"
                          "err_color = 0\n",
                          11, "err_color must be > 0");
    expect_scenario_error("[survey]\nseed = 1\nobservable = mb\n[cosmology]\nmodel = lcdm\n"
                          "[tier.t]\nz_min = 0.1\nz_max = 0.5\ncount = 5\nerror = 0.1\n"
                          "calibrators = maybe\n",
                          11, "calibrators = 'maybe'");
    expect_scenario_error("[survey]\nseed = 1\nobservable = mb\n[cosmology]\nmodel = lcdm\n"
                          "[tier.t]\nz_min = 0.1\nz_max = 0.5\ncount = 5\nerror = 0\n",
                          10, "error (err_mb) must be > 0");
#undef CASE
}

static int setup(void **state)
{
    (void)state;
    gsl_set_error_handler_off();
    return lt_test_tmpdir(dir, sizeof dir, "sim");
}

static int teardown(void **state)
{
    (void)state;
    return lt_test_rmtree(dir);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_reproducible),   cmocka_unit_test(test_noise_model),
        cmocka_unit_test(test_peculiar_velocity_limit), cmocka_unit_test(test_volume_spread),
        cmocka_unit_test(test_round_trip),     cmocka_unit_test(test_scenario_errors),
        cmocka_unit_test(test_distance_data), cmocka_unit_test(test_lightcurves),
    };
    return cmocka_run_group_tests_name("simulate", tests, setup, teardown);
}
