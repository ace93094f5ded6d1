/* Internal to the campaign module: what campaign files, tasks and forecasts share. */
#ifndef LANTERN_CAMPAIGN_INTERNAL_H
#define LANTERN_CAMPAIGN_INTERNAL_H

#include "lantern/ini.h"
#include "lantern/campaign.h"

/* The true value of parameter id in scenario sc (the offset: M for mag
 * data, none otherwise). */
double campaign_truth(const lt_scenario *sc, const char *name);

#endif
