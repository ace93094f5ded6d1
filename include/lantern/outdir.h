/*
 * lantern/outdir.h - output folders (--out DIR): taking, marking,
 * finishing and abandoning them, by the rules of DESIGN.md.
 */
#ifndef LANTERN_OUTDIR_H
#define LANTERN_OUTDIR_H

#include <stddef.h>

#include "lantern/error.h"

/*
 * Output folders (DESIGN.md): an absent or empty folder is used; a folder
 * holding lantern's marker file (LT_MARKER) is an earlier run and is
 * refused unless force; any other non-empty folder is refused always, so
 * that lantern never overwrites files it did not make.
 *
 * The life of a folder: lt_outdir_prepare takes it (making it if need be)
 * and writes the marker, noting what the folder holds; lt_outdir_mark
 * renames the command in the marker while the run goes on ("(running)");
 * then exactly one of
 *   lt_outdir_finish   the run succeeded: the earlier run's files that this
 *                      run did not rewrite are removed (a fit forced over a
 *                      sample leaves no chains behind), files the user put
 *                      there are kept, and the marker lists the run's files;
 *   lt_outdir_abandon  the run failed: nothing is removed; a folder this run
 *                      made (or found empty) that holds nothing of it is
 *                      removed, and a forced folder the run never wrote to
 *                      gets the earlier run's marker back, so that a failed
 *                      run neither destroys the earlier one nor leaves an
 *                      empty folder. A checkpoint to resume keeps the folder.
 * The state lives in the marker, so a resumed run finishes the same way.
 */
#define LT_MARKER ".lantern-output"
int lt_outdir_prepare(const char *dir, int force, lt_error *err);
/* Write the marker's first line, naming the command that makes the folder. */
int lt_outdir_mark(const char *dir, const char *what, lt_error *err);
int lt_outdir_finish(const char *dir, const char *what, lt_error *err);
void lt_outdir_abandon(const char *dir);
int lt_outdir_command(const char *dir, char *command, size_t size, lt_error *err);
/* Whether dir holds a finished lantern output (its marker says done): a
 * folder taken by a run still going, or stopped, does not. */
int lt_outdir_done(const char *dir);

#endif
