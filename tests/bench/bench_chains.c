/*
 * Benchmark: writing and reading the chain files (chains.csv and
 * chains.fits, lt_report_write_chains) and loading them back for a report
 * (lt_run_model_load), at the size of a long flat w0-wa run on the 1048
 * Pantheon supernovae: 4 chains x 40000 draws of 11 columns (logpost, chi2,
 * 3 parameters, 4 derived), unweighted and weighted. The draws are seeded
 * normal deviates, so each value needs its full 17 digits as text, like real
 * draws. With a folder argument (one written by lantern sample), it times
 * loading that folder too. Run by 'make bench'.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>

#include <gsl/gsl_errno.h>

#include "lantern/lantern.h"
#include "../pantheon.h"

static double now(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

static double file_mb(const char *dir, const char *name)
{
    char path[600];
    snprintf(path, sizeof path, "%s/%s", dir, name);
    struct stat st;
    return stat(path, &st) ? NAN : (double)st.st_size / 1e6;
}

static int load(const char *dir, const char *what)
{
    lt_run_model m;
    lt_error err;
    lt_error_clear(&err);
    double t0 = now();
    int rc = lt_run_model_load(dir, &m, &err);
    double t1 = now();
    if (rc) {
        fprintf(stderr, "bench: %s:%ld: %s\n", err.file, err.line, err.msg);
        return 1;
    }
    printf("  load %-34s %8.3f s  (%zu chains x %zu draws)\n", what, t1 - t0, m.nchains, m.ndraws);
    lt_run_model_free(&m);
    return 0;
}

int main(int argc, char **argv)
{
    gsl_set_error_handler_off();
    lt_error err;
    lt_error_clear(&err);
    lt_survey *s = lt_test_pantheon_binned(&err);
    if (!s) {
        fprintf(stderr, "bench: %s\n", err.msg);
        return 1;
    }
    lt_like_spec ls;
    lt_like_spec_init(&ls, lt_cosmo_model_find("w0wa-flat"));
    lt_like *l = lt_like_alloc(s, &ls, &err);
    if (!l) {
        fprintf(stderr, "bench: %s\n", err.msg);
        return 1;
    }
    static const char *cols[] = {"logpost", "chi2",  "omega_m", "w0",    "wa",
                                 "omega_de", "q0",   "z_t",     "w_pivot"};
    enum { NC = 4, ND = 40000, NCOL = 9 };
    lt_posterior p;
    memset(&p, 0, sizeof p);
    p.method = LT_POST_MCMC;
    p.nchains = NC, p.ndraws = ND, p.ncols = NCOL, p.thin = 1;
    p.cols = (char **)cols;
    p.first_param = 2, p.nparams = 3, p.first_derived = 5, p.nderived = 4;
    p.rows = malloc((size_t)NC * ND * NCOL * sizeof *p.rows);
    p.converged = 1;
    p.diag.rhat_max = 1.001, p.diag.ess_min = 1000;
    double *w = malloc((size_t)NC * ND * sizeof *w);
    lt_rng r;
    lt_rng_seed(&r, 20, 4);
    for (size_t i = 0; i < (size_t)NC * ND * NCOL; i++)
        p.rows[i] = (i % NCOL == 1 ? 1030.0 : 0.3) + lt_rng_normal(&r);
    for (size_t i = 0; i < (size_t)NC * ND; i++)
        w[i] = exp(0.1 * lt_rng_normal(&r));
    char dir[] = "/tmp/lantern-bench-chains-XXXXXX";
    if (!mkdtemp(dir)) {
        perror("bench: mkdtemp");
        return 1;
    }
    /* the summary the reader checks the chain files' columns against */
    char path[600];
    snprintf(path, sizeof path, "%s/summary.json", dir);
    FILE *f = fopen(path, "w");
    fputs("{\"model\": \"w0wa-flat\", \"params\": {\"omega_m\": {}, \"w0\": {}, \"wa\": {}}, "
          "\"derived\": {\"omega_de\": {}, \"q0\": {}, \"z_t\": {}, \"w_pivot\": {}}, "
          "\"convergence\": {\"chains\": 4}}\n", f);
    fclose(f);
    lt_survey_spec spec;
    lt_survey_spec_init(&spec);
    spec.data = "lcparam_DS17f.txt";
    printf("chain files of 4 chains x 40000 draws, 9 columns (flat w0-wa)\n");
    int bad = 0;
    for (int weighted = 0; weighted < 2 && !bad; weighted++) {
        p.weights = weighted ? w : NULL;
        double t0 = now();
        int rc = lt_report_write_chains(dir, l, &p, &spec, 1, NULL, &err);
        double t1 = now();
        if (rc) {
            fprintf(stderr, "bench: %s\n", err.msg);
            return 1;
        }
        printf("  write %-33s %8.3f s  (chains.csv %.1f MB, chains.fits %.1f MB)\n",
               weighted ? "weighted" : "unweighted", t1 - t0, file_mb(dir, "chains.csv"),
               file_mb(dir, "chains.fits"));
        bad |= load(dir, weighted ? "weighted (what report reads)" : "unweighted (what report reads)");
    }
    for (int i = 1; i < argc && !bad; i++)
        bad |= load(argv[i], argv[i]);
    snprintf(path, sizeof path, "rm -rf '%s'", dir);
    if (system(path))
        bad = 1;
    p.cols = NULL;
    free(p.rows);
    free(w);
    lt_like_free(l);
    lt_survey_free(s);
    return bad;
}
