/* Run files, simulation scenarios, campaign and forecast files: lantern's
 * INI reader (lt_ini_read) and the readers on top of it (every key's value
 * parsed). A campaign names scenario files by path; those the fuzzer
 * invents mostly do not exist, which tests that error path too. */
#include "fuzz.h"
#include "lantern/lantern.h"
#include "lantern/simulate.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    const char *path = fuzz_file("run", ".ini", data, size);
    lt_error err;
    lt_ini *ini = lt_ini_read(path, &err);
    if (ini) {
        lt_ini_get(ini, "data", "table");
        lt_ini_check_used(ini, &err);
        lt_ini_free(ini);
    }
    lt_scenario sc;
    if (lt_scenario_read(path, &sc, &err) == LT_OK)
        lt_scenario_free(&sc);
    lt_campaign c;
    if (lt_campaign_read(path, &c, &err) == LT_OK)
        lt_campaign_free(&c);
    lt_like_spec spec;
    if (lt_forecast_read(path, &sc, &spec, &err) == LT_OK)
        lt_scenario_free(&sc);
    remove(path);
    return 0;
}
