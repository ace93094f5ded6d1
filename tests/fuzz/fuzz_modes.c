/* The systematic-mode table reader, against a fixed three-object table
 * with ids (ids and row numbers are both accepted in the first field). */
#include "fuzz.h"
#include "lantern/lantern.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    static const char table[] = "id z mag err\na 0.1 18.0 0.1\nb 0.5 22.0 0.1\nc 1.0 24.0 0.2\n";
    const char *tpath = fuzz_file("modes-table", ".txt", (const uint8_t *)table, sizeof table - 1);
    const char *path = fuzz_file("modes", ".csv", data, size);
    lt_survey_spec spec;
    lt_survey_spec_init(&spec);
    spec.data = tpath;
    spec.columns = "id=id,z=z,mag=mag,err=err";
    spec.modes = path;
    lt_error err;
    lt_survey_free(lt_survey_read(&spec, &err));
    remove(path);
    remove(tpath);
    return 0;
}
