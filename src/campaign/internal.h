/* Internal to the campaign module: what campaign files, tasks and forecasts share. */
#ifndef LANTERN_CAMPAIGN_INTERNAL_H
#define LANTERN_CAMPAIGN_INTERNAL_H

#include "lantern/ini.h"
#include "lantern/campaign.h"

/* The value at which l holds h0, or NaN where h0 is free (the truth of
 * the offset depends on it: lt_scenario_truth). */
double campaign_h0_fixed(const lt_like *l);

#endif
