/* The text covariance reader (lt_matrix_read), and the same bytes as a
 * covariance term of a fixed three-object table (size, symmetry and
 * positive-definiteness checks, Cholesky). */
#include "fuzz.h"
#include "lantern/lantern.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    static const char table[] = "z mag err\n0.1 18.0 0.1\n0.5 22.0 0.1\n1.0 24.0 0.2\n";
    const char *tpath = fuzz_file("cov-table", ".txt", (const uint8_t *)table, sizeof table - 1);
    const char *path = fuzz_file("cov", ".txt", data, size);
    double *m = NULL;
    size_t n = 0;
    lt_error err;
    if (lt_matrix_read(path, &m, &n, &err) == LT_OK)
        free(m);
    lt_survey_spec spec;
    lt_survey_spec_init(&spec);
    spec.data = tpath;
    spec.columns = "z=z,mag=mag,err=err";
    spec.cov[spec.ncov++] = path;
    lt_survey_free(lt_survey_read(&spec, &err));
    remove(path);
    remove(tpath);
    return 0;
}
