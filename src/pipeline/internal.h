/* Internal to the pipeline module: what its files share. */
#ifndef LANTERN_PIPELINE_INTERNAL_H
#define LANTERN_PIPELINE_INTERNAL_H

#include "lantern/pipeline.h"

/* Hand a line to the caller's note hook, if it has one. */
void pipeline_say(const lt_pipeline_hooks *h, lt_note_kind kind, const char *text);

#endif
