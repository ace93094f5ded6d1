/*
 * Timing a likelihood (lantern bench, see lantern/pipeline.h): the set-up,
 * evaluations per second on one thread, the peak memory, and how closely
 * the compressed path follows the exact one near the best fit.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <time.h>

#include "lantern/inference.h"
#include "lantern/pipeline.h"
#include "lantern/rng.h"

static double now(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

enum { NP = 200 }; /* points near the best fit */

int lt_pipeline_bench(const lt_job *j, const lt_like_spec *spec, long evals, lt_bench *b,
                      lt_error *err)
{
    memset(b, 0, sizeof *b);
    lt_survey *s = NULL;
    lt_like *l = NULL, *lx = NULL;
    lt_like_work *w = NULL, *wx = NULL;
    double (*pts)[LT_MAX_FREE] = NULL;
    int rc = LT_OK;
    double t0 = now();
    if (!(s = lt_survey_read(&j->data, err)) || !(l = lt_like_alloc(s, spec, err))) {
        rc = err->code;
        goto done;
    }
    b->setup_s = now() - t0;
    b->n_data = s->n;
    b->model = lt_like_model(l)->name;
    b->covariance = lt_cov_kind_name(lt_cov_kind_of(s->cov));
    b->compressed = lt_like_compression(l, &b->knots, &(double){0});
    /* The other path: the exact one to compare with, or (with spec->exact)
     * the compressed one, which finds the best fit faster on large surveys. */
    lt_like_spec other = *spec;
    other.exact = !spec->exact;
    if (!(lx = lt_like_alloc(s, &other, err)) || !(wx = lt_like_work_alloc(lx)) ||
        !(w = lt_like_work_alloc(l)) || !(pts = malloc(NP * sizeof *pts))) {
        rc = err->code ? err->code : lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        goto done;
    }
    /* points near the best fit, for the timing and the comparison: the
     * Laplace posterior widened three times */
    lt_fit_opts fo = {.seed = j->seed, .starts = 4, .stop = NULL};
    lt_fit_result fr;
    if ((rc = lt_fit_run(spec->exact ? lx : l, &fo, &fr, err)))
        goto done;
    size_t d = lt_like_dim(l);
    lt_rng r;
    lt_rng_seed(&r, j->seed, 7);
    for (int k = 0; k < NP; k++)
        for (size_t i = 0; i < d; i++) {
            double sd = fr.laplace_ok ? sqrt(fr.cov[i * d + i]) : 0.01;
            pts[k][i] = fr.best[i] + 3.0 * sd * lt_rng_normal(&r);
        }
    lt_like_point pt;
    double t1 = now();
    for (long e = 0; e < evals; e++)
        lt_like_eval(l, w, pts[e % NP], &pt);
    b->evals_per_s = (double)evals / (now() - t1);
    for (int k = 0; b->compressed && k < NP; k++) {
        lt_like_point pe, pc;
        lt_like_eval_exact(lx, wx, pts[k], &pe);
        lt_like_eval(l, w, pts[k], &pc);
        if (pe.domain_ok && pe.chi2 - fr.at_best.chi2 < 50.0)
            b->max_abs_dchi2 = fmax(b->max_abs_dchi2, pc.domain_ok ? fabs(pc.chi2 - pe.chi2) : INFINITY);
    }
    struct rusage ru;
    getrusage(RUSAGE_SELF, &ru);
    b->peak_rss_mb = (double)ru.ru_maxrss / 1024.0;
done:
    free(pts);
    lt_like_work_free(w);
    lt_like_work_free(wx);
    lt_like_free(l);
    lt_like_free(lx);
    lt_survey_free(s);
    return rc;
}
