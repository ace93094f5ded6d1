/*
 * lantern/lantern.h - the whole public interface of liblantern.
 */
#ifndef LANTERN_LANTERN_H
#define LANTERN_LANTERN_H

#include "lantern/version.h"
#include "lantern/error.h"
#include "lantern/text.h"
#include "lantern/ini.h"
#include "lantern/file.h"
#include "lantern/outdir.h"
#include "lantern/json.h"
#include "lantern/rng.h"
#include "lantern/digest.h"
#include "lantern/cosmology.h"
#include "lantern/survey.h"
#include "lantern/simulate.h"
#include "lantern/likelihood.h"
#include "lantern/inference.h"
#include "lantern/pipeline.h"
#include "lantern/report.h"
#include "lantern/campaign.h"

#endif
