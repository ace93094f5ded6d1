/*
 * Benchmark: reading a large survey with a structured covariance.
 *
 * Simulates 10^5 objects in 20 tiers (20 calibration modes), writes them
 * with lt_sim_write (survey.csv and modes.csv; no dense matrix at this
 * size), then reads them back with lt_survey_read in a fresh child process,
 * so that its peak memory is the reader's own: table, modes, checks and the
 * Woodbury factorisation. Memory must grow as N k, not N^2. Run by
 * 'make bench'.
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#include "lantern/lantern.h"

enum { N_TIERS = 20, PER_TIER = 5000 };

static double now(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

int main(void)
{
    char dir[] = "/tmp/lantern-bench-survey-XXXXXX";
    if (!mkdtemp(dir))
        return 1;
    char ini[600];
    snprintf(ini, sizeof ini, "%s/big.ini", dir);
    FILE *f = fopen(ini, "w");
    fprintf(f, "[survey]\nseed = 1\nobservable = mag\n[cosmology]\nmodel = lcdm-flat\n");
    for (int t = 0; t < N_TIERS; t++)
        fprintf(f, "[tier.t%02d]\nz_min = %g\nz_max = %g\ncount = %d\nerror = 0.1\n"
                   "calibration = 0.01\n",
                t, 0.01 + 0.07 * t, 0.08 + 0.07 * t, PER_TIER);
    fclose(f);
    lt_error err;
    lt_scenario sc;
    lt_sim sim;
    char out[600];
    snprintf(out, sizeof out, "%s/out", dir);
    if (lt_scenario_read(ini, &sc, &err) || lt_simulate(&sc, &sim, &err) ||
        lt_outdir_prepare(out, 0, &err) || lt_sim_write(&sc, &sim, out, &err)) {
        fprintf(stderr, "bench: %s\n", err.msg);
        return 1;
    }
    size_t n = sim.n;
    lt_sim_free(&sim);
    lt_scenario_free(&sc);

    pid_t pid = fork();
    if (pid == 0) {
        char data[700], modes[700];
        snprintf(data, sizeof data, "%s/survey.csv", out);
        snprintf(modes, sizeof modes, "%s/modes.csv", out);
        lt_survey_spec spec;
        lt_survey_spec_init(&spec);
        spec.data = data;
        spec.columns = "z=z,zhel=zhel,mag=mag,err=err,id=id";
        spec.modes = modes;
        double t0 = now();
        lt_survey *s = lt_survey_read(&spec, &err);
        double t1 = now();
        if (!s) {
            fprintf(stderr, "bench: %s\n", err.msg);
            fflush(stderr);
            _exit(1);
        }
        struct rusage r;
        getrusage(RUSAGE_SELF, &r);
        size_t k = lt_cov_nmodes(s->cov);
        printf("read %zu objects with %zu systematic modes (structured covariance)\n", s->n, k);
        printf("  read, check and factor: %.3f s\n", t1 - t0);
        printf("  peak memory of the reading process: %.1f MB\n", r.ru_maxrss / 1024.0);
        printf("  for scale: N k doubles = %.1f MB; a dense N x N matrix would be %.0f GB\n",
               8e-6 * (double)s->n * (double)k, 8e-9 * (double)s->n * (double)s->n);
        lt_survey_free(s);
        fflush(stdout); /* _exit does not flush */
        _exit(0);
    }
    int status = 1;
    waitpid(pid, &status, 0);
    char cmd[700];
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
    if (system(cmd) != 0)
        return 1;
    (void)n;
    return WIFEXITED(status) ? WEXITSTATUS(status) : 1;
}
