/*
 * lantern/version.h - the version written into output files (FITS
 * provenance cards, summaries) and printed by --version.
 */
#ifndef LANTERN_VERSION_H
#define LANTERN_VERSION_H

#define LT_VERSION "0.1.0"

#endif
