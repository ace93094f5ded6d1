/* FITS through CFITSIO: the bytes as a table (first binary-table HDU) and
 * as a covariance image. CFITSIO's own parsing is under test only as far
 * as lantern drives it; what must hold is that lantern never trusts a
 * header's sizes beyond what CFITSIO confirms. */
#include "fuzz.h"
#include "lantern/lantern.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    const char *path = fuzz_file("fits", ".fits", data, size);
    lt_survey_spec spec;
    lt_survey_spec_init(&spec);
    spec.data = path;
    spec.columns = "z=z,mag=mag,err=err";
    lt_error err;
    lt_survey_free(lt_survey_read(&spec, &err));
    double *m = NULL;
    size_t n = 0;
    if (lt_matrix_read(path, &m, &n, &err) == LT_OK)
        free(m);
    remove(path);
    return 0;
}
