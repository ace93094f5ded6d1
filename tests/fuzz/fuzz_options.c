/* The option-value parsers: --prior (lt_prior_parse), --columns
 * (lt_colmap_parse), --set lists and --fix values (lt_cosmo_params_parse:
 * splitting, numbers, names, repeats), integers (lt_parse_long). The first byte
 * picks the parser; the rest, NUL-terminated, is the value. */
#include "fuzz.h"
#include "lantern/lantern.h"
#include "survey/internal.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    if (size < 1 || size > 4096)
        return 0;
    char *text = malloc(size);
    memcpy(text, data + 1, size - 1);
    text[size - 1] = '\0';
    lt_error err;
    switch (data[0] % 4) {
    case 0: {
        lt_prior p;
        lt_prior_parse(text, &p, &err);
        break;
    }
    case 1: {
        lt_colmap map;
        if (lt_colmap_parse(text, &map, &err) == LT_OK)
            lt_colmap_free(&map);
        break;
    }
    case 2: { /* --set's list name=value,... (and --fix's single NAME=VALUE) */
        const lt_cosmo_model *m = lt_cosmo_model_find(size % 2 ? "w0wa" : "lcdm-flat");
        lt_cosmo_params p;
        lt_cosmo_params_default(&p);
        unsigned seen = 0;
        lt_cosmo_params_parse(&p, m, text, &seen, "--set", &err);
        break;
    }
    default: {
        long v;
        lt_parse_long(text, -1000000, 1000000, &v);
        break;
    }
    }
    free(text);
    return 0;
}
