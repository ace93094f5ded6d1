/*
 * One likelihood evaluation allocates nothing. This program replaces
 * malloc, calloc, realloc and free for the whole process (the dynamic
 * linker resolves every library's calls, OpenBLAS and GSL included, to the
 * executable's definitions) and counts the calls while lt_like_eval runs,
 * for dense, structured and diagonal covariances and every offset mode.
 *
 * AddressSanitizer owns malloc itself, so under make asan the replacement
 * is left out and the test reports itself skipped; the normal build runs it.
 */
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
#include "../pantheon.h"

#if defined(__SANITIZE_ADDRESS__)
int main(void)
{
    puts("[  SKIPPED ] test_no_allocation: malloc belongs to AddressSanitizer in this build");
    return 0;
}
#else
/* glibc's own allocator, under the names it exports for this purpose. */
extern void *__libc_malloc(size_t);
extern void *__libc_calloc(size_t, size_t);
extern void *__libc_realloc(void *, size_t);
extern void __libc_free(void *);

static volatile int counting;
static volatile long calls;

void *malloc(size_t n)
{
    if (counting)
        calls++;
    return __libc_malloc(n);
}
void *calloc(size_t a, size_t b)
{
    if (counting)
        calls++;
    return __libc_calloc(a, b);
}
void *realloc(void *p, size_t n)
{
    if (counting)
        calls++;
    return __libc_realloc(p, n);
}
void free(void *p)
{
    if (counting)
        calls++;
    __libc_free(p);
}

static char dir[256];

static lt_survey *simulate(const char *obs, int n)
{
    char path[512], text[1024];
    snprintf(path, sizeof path, "%s/%s.ini", dir, obs);
    snprintf(text, sizeof text,
             "[survey]\nseed = 3\nobservable = %s\n[cosmology]\nmodel = lcdm-flat\n"
             "[tier.a]\nz_min = 0.02\nz_max = 0.5\ncount = %d\nerror = 0.1\ncalibration = 0.02\n"
             "[tier.b]\nz_min = 0.5\nz_max = 1.5\ncount = %d\nerror = 0.1\ncalibration = 0.03\n",
             obs, n, n);
    FILE *f = fopen(path, "w");
    fputs(text, f);
    fclose(f);
    lt_scenario sc;
    lt_sim sim;
    lt_error err;
    assert_int_equal(lt_scenario_read(path, &sc, &err), LT_OK);
    assert_int_equal(lt_simulate(&sc, &sim, &err), LT_OK);
    lt_survey *s = sim.survey;
    sim.survey = NULL;
    lt_sim_free(&sim);
    lt_scenario_free(&sc);
    return s;
}

/* Evaluate 200 times at varied parameters inside the prior and count. */
static long count_allocations(const lt_survey *s, lt_like_spec *spec)
{
    lt_error err;
    lt_like *l = lt_like_alloc(s, spec, &err);
    assert_non_null(l);
    lt_like_work *w = lt_like_work_alloc(l);
    size_t d = lt_like_dim(l);
    double theta[LT_MAX_FREE];
    lt_like_point pt;
    unsigned long long seed = 5;
    for (size_t i = 0; i < d; i++) {
        const lt_prior *p = lt_like_prior(l, i);
        theta[i] = p->kind == LT_PRIOR_UNIFORM ? 0.5 * (p->a + p->b) : p->a;
    }
    lt_like_eval(l, w, theta, &pt); /* warm up (OpenBLAS sets itself up once) */
    assert_true(pt.domain_ok);
    calls = 0;
    counting = 1;
    for (int k = 0; k < 200; k++) {
        for (size_t i = 0; i < d; i++) {
            const lt_prior *p = lt_like_prior(l, i);
            if (p->kind == LT_PRIOR_UNIFORM)
                theta[i] = lt_test_uniform(&seed, p->a + 0.3 * (p->b - p->a), p->b - 0.3 * (p->b - p->a));
        }
        lt_like_eval(l, w, theta, &pt);
    }
    counting = 0;
    long n = calls;
    lt_like_work_free(w);
    lt_like_free(l);
    return n;
}

static void test_no_allocation(void **state)
{
    (void)state;
    const lt_cosmo_model *flat = lt_cosmo_model_find("lcdm-flat"), *w0wa = lt_cosmo_model_find("w0wa");
    lt_survey *mag = simulate("mag", 40), *dl = simulate("dl", 30);
    lt_like_spec spec;
    /* structured covariance (diagonal + 2 modes), marginal offset */
    lt_like_spec_init(&spec, w0wa);
    assert_int_equal(count_allocations(mag, &spec), 0);
    /* sampled offset */
    lt_like_spec_init(&spec, flat);
    lt_like_spec_prior(&spec, "offset", (lt_prior){LT_PRIOR_GAUSS, -19.3, 0.1}, NULL);
    assert_int_equal(count_allocations(mag, &spec), 0);
    /* measurement terms: of a parameter (h0, which they free), a derived
     * quantity (the age integrates E(z)), and one the model holds fixed */
    lt_like_spec_init(&spec, w0wa);
    lt_like_spec_measure(&spec, "h0", 73.0, 1.0, NULL);
    lt_like_spec_measure(&spec, "age_gyr", 13.8, 0.2, NULL);
    lt_like_spec_measure(&spec, "omega_k", 0.0, 0.01, NULL);
    assert_int_equal(count_allocations(mag, &spec), 0);
    lt_like_spec_init(&spec, flat);
    lt_like_spec_measure(&spec, "w0", -1.0, 0.1, NULL);
    assert_int_equal(count_allocations(NULL, &spec), 0); /* measurements alone */
    /* dl data */
    lt_like_spec_init(&spec, flat);
    assert_int_equal(count_allocations(dl, &spec), 0);
    lt_survey_free(mag);
    lt_survey_free(dl);

    /* a dense covariance (Pantheon 2018 binned with systematics) */
    lt_error err;
    lt_survey *p = lt_test_pantheon_binned(&err);
    assert_non_null(p);
    lt_like_spec_init(&spec, lt_cosmo_model_find("lcdm"));
    assert_int_equal(count_allocations(p, &spec), 0);
    lt_survey_free(p);

    /* and the counter does count: a grid allocation is seen */
    counting = 1;
    calls = 0;
    double z[] = {0.5};
    lt_zgrid *g = lt_zgrid_alloc(1, z, NULL);
    counting = 0;
    assert_true(calls > 0);
    lt_zgrid_free(g);
}

static int setup(void **state)
{
    (void)state;
    gsl_set_error_handler_off();
    return lt_test_tmpdir(dir, sizeof dir, "noalloc");
}

static int teardown(void **state)
{
    (void)state;
    return lt_test_rmtree(dir);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_no_allocation),
    };
    return cmocka_run_group_tests_name("no allocation", tests, setup, teardown);
}
#endif
