/* Exact JSON numbers: see include/lantern/json.h. */
#include <math.h>

#include <cjson/cJSON.h>

#include "lantern/json.h"
#include "lantern/text.h"

cJSON *lt_json_number(double v)
{
    if (!isfinite(v))
        return cJSON_CreateNull();
    char buf[32];
    lt_format_double(v, buf, sizeof buf);
    return cJSON_CreateRaw(buf);
}
