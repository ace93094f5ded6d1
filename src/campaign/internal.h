/* Internal to the campaign module: what campaign files, tasks and forecasts share. */
#ifndef LANTERN_CAMPAIGN_INTERNAL_H
#define LANTERN_CAMPAIGN_INTERNAL_H

#include "lantern/ini.h"
#include "lantern/campaign.h"

/* The [priors] (prior = 1) or [fixed] section of ini, appended to list. */
int campaign_read_kv(lt_ini *ini, lt_campaign_kv *list, size_t *nlist, int prior, lt_error *err);

/* The likelihood spec of model m: the offset mode, and each prior or fixed
 * value of a parameter the model has. */
void campaign_like_spec(const lt_cosmo_model *m, lt_offset_mode offset,
                        const lt_campaign_kv *kv, size_t nkv, lt_like_spec *spec);

/* The true value of parameter id in scenario sc (the offset: M for mag
 * data, none otherwise). */
double campaign_truth(const lt_scenario *sc, const char *name);

#endif
