/* The reader of plain tables of draws for lantern plot
 * (lt_run_model_load_table on a text file): headers, weights, nan, quotes,
 * pandas' unnamed index column, rows of the wrong length. */
#include "fuzz.h"
#include "lantern/lantern.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    const char *path = fuzz_file("draws", ".csv", data, size);
    lt_run_model m;
    lt_error err;
    if (lt_run_model_load_table(path, &m, &err) == LT_OK)
        lt_run_model_free(&m);
    remove(path);
    return 0;
}
