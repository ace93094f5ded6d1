/*
 * lantern/util.h - the whole util module in one include, for programs that
 * want all of it. Library sources include the headers they use:
 *   lantern/error.h   error records and status codes
 *   lantern/text.h    lines, fields, trimming, strict numbers
 *   lantern/ini.h     run and scenario files
 *   lantern/file.h    whole-file reads, atomic writes
 *   lantern/outdir.h  output folders
 *   lantern/json.h    exact JSON numbers
 *   lantern/rng.h     random streams
 *   lantern/digest.h  FNV-1a digests
 */
#ifndef LANTERN_UTIL_H
#define LANTERN_UTIL_H

#include "lantern/error.h"
#include "lantern/text.h"
#include "lantern/ini.h"
#include "lantern/file.h"
#include "lantern/outdir.h"
#include "lantern/json.h"
#include "lantern/rng.h"
#include "lantern/digest.h"

#endif
