/*
 * Benchmark: likelihood evaluations per second, one thread, for the
 * Pantheon 2018 tables (40 binned with the dense systematic covariance;
 * 1048 with statistical errors) and the demo survey (800 objects, dense or
 * as modes). Each figure is the best of 3 loops of at least 0.2 s. Run by
 * 'make bench' from the repository's top folder.
 */
#include <stdio.h>
#include <stdlib.h>
#include <time.h>

#include "lantern/lantern.h"

static double now(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

static double rate(const lt_like *l)
{
    lt_like_work *w = lt_like_work_alloc(l);
    double theta[LT_MAX_FREE];
    for (size_t i = 0; i < lt_like_dim(l); i++) {
        const lt_prior *p = lt_like_prior(l, i);
        theta[i] = p->kind == LT_PRIOR_UNIFORM ? 0.5 * (p->a + p->b) : p->a;
    }
    double best = 0;
    lt_like_point pt;
    for (int rep = 0; rep < 3; rep++) {
        long n = 0;
        double t0 = now(), t1;
        do {
            for (int k = 0; k < 20; k++, n++) {
                theta[0] += n % 2 ? 1e-6 : -1e-6; /* not the same point each time */
                lt_like_eval(l, w, theta, &pt);
            }
            t1 = now();
        } while (t1 - t0 < 0.2);
        if (n / (t1 - t0) > best)
            best = n / (t1 - t0);
    }
    lt_like_work_free(w);
    return best;
}

int main(void)
{
    const char *shared = getenv("LANTERN_SHARED");
    if (!shared)
        shared = "../shared";
    char p40[512], sys[512], p1048[512];
    snprintf(p40, sizeof p40, "%s/data/pantheon2018/lcparam_DS17f.txt", shared);
    snprintf(sys, sizeof sys, "%s/data/pantheon2018/sys_DS17f.txt", shared);
    snprintf(p1048, sizeof p1048, "%s/data/pantheon2018/lcparam_full_long_zhel.txt", shared);
    struct {
        const char *label, *data, *columns, *cov, *modes;
    } sets[] = {
        {"Pantheon 40 binned, dense sys", p40, "z=zcmb,zhel=zhel,mag=mb,err=dmb", sys, NULL},
        {"Pantheon 1048, stat only", p1048, "z=zcmb,zhel=zhel,mag=mb,err=dmb", NULL, NULL},
        {"demo 800, dense", "data/lamplighter/survey.csv", "z=z,zhel=zhel,mag=mag,err=err",
         "data/lamplighter/covariance.txt", NULL},
        {"demo 800, 3 modes", "data/lamplighter/survey.csv", "z=z,zhel=zhel,mag=mag,err=err",
         NULL, "data/lamplighter/modes.csv"},
    };
    const char *models[] = {"lcdm-flat", "w0wa"};
    printf("likelihood evaluations per second, one thread (offset marginalised):\n"
           "the exact path (every object) and the compressed one (the default)\n");
    printf("%-32s %14s %14s %14s %14s\n", "data", "lcdm-flat ex.", "lcdm-flat co.", "w0wa ex.",
           "w0wa co.");
    for (size_t k = 0; k < sizeof sets / sizeof sets[0]; k++) {
        lt_survey_spec spec;
        lt_survey_spec_init(&spec);
        spec.data = sets[k].data;
        spec.columns = sets[k].columns;
        if (sets[k].cov)
            spec.cov[spec.ncov++] = sets[k].cov;
        spec.modes = sets[k].modes;
        lt_error err;
        lt_survey *s = lt_survey_read(&spec, &err);
        if (!s) {
            fprintf(stderr, "bench: %s: %s\n", err.file, err.msg);
            return 1;
        }
        printf("%-32s", sets[k].label);
        for (int m = 0; m < 2; m++)
            for (int exact = 1; exact >= 0; exact--) {
                lt_like_spec ls;
                lt_like_spec_init(&ls, lt_cosmo_model_find(models[m]));
                ls.exact = exact;
                lt_like *l = lt_like_alloc(s, &ls, &err);
                printf(" %14.0f", l ? rate(l) : 0.0);
                lt_like_free(l);
            }
        printf("\n");
        lt_survey_free(s);
    }
    return 0;
}
