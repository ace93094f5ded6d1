/* The text/CSV table reader (lt_survey_read on a text file). The first
 * byte picks the column map, so that both the mu and mag paths, the id
 * column and column numbers (a table without a header) are reached. */
#include "fuzz.h"
#include "lantern/lantern.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    static const char *maps[] = {"z=z,mag=mag,err=err", "z=zcmb,zhel=zhel,mu=mu,err=err",
                                 "id=id,z=z,zhel=zhel,mag=mag,err=err", "z=z,dl=dl,err=err",
                                 "z=1,zhel=2,mu=3,err=4,id=5"};
    if (size < 1)
        return 0;
    const char *path = fuzz_file("table", ".txt", data + 1, size - 1);
    lt_survey_spec spec;
    lt_survey_spec_init(&spec);
    spec.data = path;
    spec.columns = maps[data[0] % 5];
    lt_error err;
    lt_survey *s = lt_survey_read(&spec, &err);
    lt_survey_free(s);
    remove(path);
    return 0;
}
