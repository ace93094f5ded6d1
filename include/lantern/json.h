/*
 * lantern/json.h - numbers in JSON that read back exactly, so that a value
 * a script reads from a summary is the double lantern held.
 */
#ifndef LANTERN_JSON_H
#define LANTERN_JSON_H

/* A cJSON number item that reads back exactly (lt_format_double), or null
 * where v is not finite: JSON has no infinities. cJSON's own printing keeps
 * 15 digits whenever they match within an epsilon, dropping the last bit. */
struct cJSON;
struct cJSON *lt_json_number(double v);

#endif
