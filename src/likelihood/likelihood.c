/*
 * The likelihood as a sum of terms over a table of named parameters: see
 * include/lantern/likelihood.h. The terms themselves are in sn.c and
 * measure.c.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "internal.h"

/* The LaTeX label (size LT_LABEL) and unit of a parameter the table can
 * hold; a per-group one (NAME@GROUP) carries its group as a superscript. */
static void label_of(const char *name, char *label, size_t size, const char **unit)
{
    static const struct {
        const char *name, *label, *unit;
    } t[] = {{"h0", "H_0", "km/s/Mpc"},           {"omega_m", "\\Omega_\\mathrm{m}", ""},
             {"omega_de", "\\Omega_\\mathrm{DE}", ""}, {"w0", "w_0", ""},
             {"wa", "w_a", ""},                    {"t_cmb", "T_\\mathrm{CMB}", "K"},
             {"n_eff", "N_\\mathrm{eff}", ""},      {"offset", "M", "mag"},
             {"m_nu", "\\sum m_\\nu", "eV"},       {"omega_b_h2", "\\Omega_\\mathrm{b} h^2", ""},
             {"rd_h", "r_\\mathrm{d} h", "Mpc"},    {"alpha", "\\alpha", ""},
             {"beta", "\\beta", ""},                {"gamma", "\\gamma", "mag"},
             {"sigma_int", "\\sigma_\\mathrm{int}", "mag"},
             {"x1_mean", "\\bar{x}_1", ""},         {"x1_sd", "R_{x_1}", ""},
             {"color_mean", "\\bar{c}", ""},        {"color_sd", "R_c", ""}};
    char base[LT_NAME_MAX];
    const char *group = lt_param_split(name, base);
    const char *lab = name;
    *unit = "";
    for (size_t i = 0; i < sizeof t / sizeof t[0]; i++)
        if (!strcmp(t[i].name, base))
            lab = t[i].label, *unit = t[i].unit;
    if (group && lab != name)
        snprintf(label, size, "%s^{(%s)}", lab, group);
    else
        snprintf(label, size, "%s", lab == name ? name : lab);
}

size_t lt_like_ndata(const lt_like *l)
{
    size_t n = 0;
    for (size_t t = 0; t < l->nterms; t++)
        n += l->term[t].type->ndata(l->term[t].state);
    return n;
}

long lt_like_dof(const lt_like *l)
{
    return (long)lt_like_ndata(l) - (long)l->dim - (l->offset == LT_OFFSET_MARGINAL);
}

size_t lt_like_nparams_counted(const lt_like *l)
{
    return l->dim + (l->offset == LT_OFFSET_MARGINAL);
}

double lt_like_lognorm(const lt_like *l)
{
    double s = 0.0;
    for (size_t t = 0; t < l->nterms; t++)
        s += l->term[t].type->lognorm(l->term[t].state);
    return s;
}

void lt_like_free(lt_like *l)
{
    if (!l)
        return;
    for (size_t t = 0; t < l->nterms; t++)
        l->term[t].type->free(l->term[t].state);
    free(l);
}

/* ---- building the table ---- */

/* The offset mode of survey s under spec, or -1 with err set. */
static int offset_mode(const lt_survey *s, const lt_like_spec *spec, lt_error *err)
{
    const lt_param_setting *o = lt_like_spec_setting(spec, "offset");
    int prior = o && !o->fixed, fixed = o && o->fixed;
    lt_offset_mode offset = spec->offset;
    if (!s && offset != LT_OFFSET_DEFAULT && offset != LT_OFFSET_NONE)
        return lt_error_set(err, LT_EINPUT, "--offset", 0,
                            "there is no survey, so no offset to treat as %s",
                            lt_offset_name(offset)), -1;
    if (!s)
        return LT_OFFSET_NONE;
    if (s->kind == LT_OBS_MB) {
        /* the standardisation samples M beside alpha and beta */
        if (offset != LT_OFFSET_DEFAULT && offset != LT_OFFSET_SAMPLED)
            return lt_error_set(err, LT_EINPUT, "--offset", 0,
                                "a light-curve table's offset (M) is always sampled, beside "
                                "alpha and beta"), -1;
        return LT_OFFSET_SAMPLED;
    }
    /* calibrators measure M itself: marginalising it would throw that away */
    int calibrated = s->lc && s->lc->ncalibrators;
    if (calibrated && offset != LT_OFFSET_DEFAULT && offset != LT_OFFSET_SAMPLED)
        return lt_error_set(err, LT_EINPUT, "--offset", 0,
                            "the table has %zu calibrators, which measure the offset (M): it "
                            "is sampled, not %s",
                            s->lc->ncalibrators, lt_offset_name(offset)), -1;
    if (offset == LT_OFFSET_DEFAULT)
        offset = prior || calibrated ? LT_OFFSET_SAMPLED
                 : s->kind == LT_OBS_MAG ? LT_OFFSET_MARGINAL
                                         : LT_OFFSET_NONE;
    if (offset != LT_OFFSET_NONE && s->kind == LT_OBS_DL)
        return lt_error_set(err, LT_EINPUT, "--offset", 0, "dl data have no offset"), -1;
    if (offset == LT_OFFSET_NONE && s->kind == LT_OBS_MAG)
        return lt_error_set(err, LT_EINPUT, "--offset", 0,
                            "mag data need an offset (the absolute magnitude): marginal or "
                            "sampled"), -1;
    if (prior && offset == LT_OFFSET_MARGINAL)
        return lt_error_set(err, LT_EINPUT, o->origin ? o->origin : "--prior", o->line,
                            "a prior on offset makes it sampled; it cannot also be "
                            "marginalised"), -1;
    if (prior && offset == LT_OFFSET_NONE && s->kind != LT_OBS_DL)
        return lt_error_set(err, LT_EINPUT, o->origin ? o->origin : "--prior", o->line,
                            "a prior on offset needs the offset mode 'sampled' (or no "
                            "--offset), not 'none'"), -1;
    if (fixed && offset != LT_OFFSET_SAMPLED && spec->offset != LT_OFFSET_DEFAULT)
        return lt_error_set(err, LT_EINPUT, o->origin ? o->origin : "--fix", o->line,
                            "a fixed offset needs the offset mode 'sampled' (or no --offset)"),
               -1;
    if (fixed)
        offset = LT_OFFSET_SAMPLED; /* a fixed offset is a sampled one that does not move */
    return (int)offset;
}

/* The terms of a likelihood before set-up: each with its configuration,
 * and what they need of the table together (their add_params). */
typedef struct {
    size_t n;
    const lt_term_type *type[LT_MAX_TERMS];
    const void *config[LT_MAX_TERMS];
    lt_sn_config sn;
    lt_std_config std;
    lt_probe_config bao, cmb;
    lt_term_needs needs;
    int radiation; /* on: the early universe is needed or t_cmb fixed > 0 */
} plan;

static void plan_add(plan *p, const lt_term_type *type, const void *config)
{
    p->type[p->n] = type, p->config[p->n++] = config;
    if (type->add_params)
        type->add_params(config, &p->needs);
}

/* Check each setting against the table's parameters (the messages say
 * what to do instead). */
static int check_settings(const lt_survey *s, const lt_like_spec *spec, lt_offset_mode offset,
                          const plan *pl, lt_error *err)
{
    const lt_cosmo_model *m = spec->model;
    int h0_free = pl->needs.h0;
    for (size_t k = 0; k < spec->nsettings; k++) {
        const lt_param_setting *st = &spec->settings[k];
        const char *name = st->name, *what = st->origin ? st->origin : st->fixed ? "--fix" : "--prior";
        long line = st->line;
        if (!lt_param_known(name))
            return lt_error_set(err, LT_EINPUT, what, line, "unknown parameter '%s' (parameters: %s)",
                                name, lt_param_known_list());
        /* a parameter that no term of this likelihood has: refused, or
         * passed over when the spec is lenient */
        const char *absent = NULL;
        char text[200];
        int id = lt_cosmo_param_find(name);
        if (lt_param_is_standardisation(name)) {
            if (!s || s->kind != LT_OBS_MB)
                absent = text, snprintf(text, sizeof text,
                                        "%s belongs to the standardisation of a light-curve "
                                        "table (--columns mb=...,x1=...,color=...)",
                                        name);
            else if (!st->fixed && spec->std.method == LT_STD_CHI2 &&
                     !strncmp(name, "sigma_int", 9))
                return lt_error_set(err, LT_EINPUT, what, line,
                                    "the chi2 method sets %s so that chi2/dof = 1 in its "
                                    "group; fix it (--fix) to choose it yourself, or give "
                                    "--standardise latent to sample it",
                                    name);
        } else if (!strcmp(name, "rd_h")) {
            if (!spec->bao || !spec->rd_free)
                absent = "rd_h (r_d h) is a parameter only of BAO with --rd free";
        } else if (!strcmp(name, "offset")) {
            if (!s || s->kind == LT_OBS_DL)
                absent = text, snprintf(text, sizeof text, "%s; drop the %s on offset",
                                        s ? "dl data have no offset" : "there is no survey, so no offset",
                                        what);
        } else if (id == LT_P_M_NU && !pl->radiation) {
            absent = "m_nu acts only with radiation on: fix t_cmb (2.7255) or add a term of the "
                     "early universe (BAO with the r_d formula, CMB)";
        } else if (id == LT_P_OMEGA_B_H2 && !pl->needs.omega_b_h2) {
            absent = "nothing here reads omega_b_h2 (BAO with the r_d formula and the CMB do)";
        } else if (id == LT_P_H0 && !st->fixed && !h0_free) {
            absent = offset == LT_OFFSET_MARGINAL
                         ? "h0 is degenerate with the marginalised offset of mag data; give a "
                           "prior on offset (an absolute-magnitude calibration) or a measurement "
                           "of h0 to fit both"
                         : "nothing depends on h0 here; drop its prior";
        }
        if (absent && spec->lenient)
            continue;
        if (absent)
            return lt_error_set(err, LT_EINPUT, what, line, "%s", absent);
        if (!strcmp(name, "rd_h") || !strcmp(name, "offset") || lt_param_is_standardisation(name))
            continue;
        if (id == LT_P_T_CMB && st->fixed && st->value == 0.0 && pl->needs.early)
            return lt_error_set(err, LT_EINPUT, what, line,
                                "this likelihood needs the early universe (BAO with the r_d "
                                "formula, CMB): radiation cannot be off");
        if (LT_P_EARLY(id))
            continue;
        if (id == LT_P_OMEGA_DE && m->flat)
            return lt_error_set(err, LT_EINPUT, what, line,
                                "omega_de is derived in the flat model %s (1 - omega_m - "
                                "omega_r); use a curved model to constrain it",
                                m->name);
        if (!lt_cosmo_model_uses(m, id))
            return lt_error_set(err, LT_EINPUT, what, line, "model %s has no parameter %s",
                                m->name, name);
        if ((id == LT_P_T_CMB || id == LT_P_N_EFF) && !st->fixed)
            return lt_error_set(err, LT_EINPUT, st->origin ? st->origin : "--prior", line,
                                "%s can be fixed (--fix %s=...) but not fitted", name, name);
    }
    return LT_OK;
}

/* Add table entry name: free with its prior (the setting's, else
 * dflt_prior), or fixed at value (the setting's, else dflt). */
static int add_entry(lt_like *l, const char *name, int cosmo_id, int can_be_free, double dflt,
                     lt_prior dflt_prior, const lt_like_spec *spec, lt_error *err)
{
    const lt_param_setting *st = lt_like_spec_setting(spec, name);
    int free_par = can_be_free && !(st && st->fixed);
    if (l->npar == LT_MAX_PARAMS || (free_par && l->dim == LT_MAX_FREE))
        return lt_error_set(err, LT_EINPUT, NULL, 0, "more than %d parameters, or %d free ones",
                            LT_MAX_PARAMS, LT_MAX_FREE);
    lt_param *p = &l->par[l->npar];
    memset(p, 0, sizeof *p);
    snprintf(p->name, sizeof p->name, "%s", name);
    label_of(name, p->label, sizeof p->label, &p->unit);
    p->free = free_par;
    p->prior = st && !st->fixed ? st->prior : dflt_prior;
    p->value = st && st->fixed ? st->value : dflt;
    l->cosmo_id[l->npar] = cosmo_id;
    if (p->free)
        l->free_at[l->dim++] = l->npar;
    else
        l->fixed_at[l->nfixed++] = l->npar;
    l->npar++;
    return LT_OK;
}

static int add_term(lt_like *l, const lt_term_type *type, const void *config, lt_error *err)
{
    void *state = type->setup(config, l, err);
    if (!state)
        return err ? err->code : LT_EINPUT;
    l->term[l->nterms++] = (lt_term){type, state};
    return LT_OK;
}

/* The table: the model's parameters in id order, the early universe's,
 * then the terms' own (see lantern/likelihood.h). */
static int build_table(lt_like *l, const lt_like_spec *spec, const plan *pl, lt_obs kind,
                       lt_error *err)
{
    lt_cosmo_params_default(&l->base);
    if (pl->needs.early)
        l->base.t_cmb = 2.7255; /* DESIGN.md: T_CMB of the early universe */
    for (int id = 0; id < LT_P_COUNT; id++) {
        if (LT_P_EARLY(id) || !lt_cosmo_model_uses(l->model, id) ||
            (id == LT_P_OMEGA_DE && l->model->flat))
            continue;
        int can_be_free = id == LT_P_H0 ? pl->needs.h0 : id != LT_P_T_CMB && id != LT_P_N_EFF;
        const char *name = lt_cosmo_param_name(id);
        if (add_entry(l, name, id, can_be_free, *lt_cosmo_params_slot(&l->base, id),
                      lt_param_default_prior(name, kind), spec, err))
            return err ? err->code : LT_EINPUT;
        *lt_cosmo_params_slot(&l->base, id) = l->par[l->npar - 1].value;
    }
    /* m_nu where radiation is on (fixed unless given a prior), omega_b_h2
     * where a term reads it */
    for (int id = LT_P_M_NU; id <= LT_P_OMEGA_B_H2; id++) {
        const char *name = lt_cosmo_param_name(id);
        const lt_param_setting *st = lt_like_spec_setting(spec, name);
        int wanted = id == LT_P_M_NU ? l->base.t_cmb > 0.0 : pl->needs.omega_b_h2;
        int can_be_free = id == LT_P_M_NU ? st && !st->fixed : 1;
        if (!wanted)
            continue;
        if (add_entry(l, name, id, can_be_free, *lt_cosmo_params_slot(&l->base, id),
                      lt_param_default_prior(name, kind), spec, err))
            return err ? err->code : LT_EINPUT;
        *lt_cosmo_params_slot(&l->base, id) = l->par[l->npar - 1].value;
    }
    for (size_t k = 0; k < pl->needs.nown; k++) {
        const lt_term_param *tp = &pl->needs.own[k];
        if (!strcmp(tp->name, "offset"))
            l->offset_at = (int)l->npar;
        if (add_entry(l, tp->name, -1, !tp->fixed, tp->value, tp->prior, spec, err))
            return err ? err->code : LT_EINPUT;
    }
    return LT_OK;
}

/* The standardisation's settings name entries of the table (a group it
 * has, a method that has the parameter); the chi2 method's scatter
 * entries no setting fixed are the ones to tune. */
static int check_standardisation(lt_like *l, const lt_like_spec *spec, lt_error *err)
{
    for (size_t k = 0; k < spec->nsettings; k++) {
        const lt_param_setting *st = &spec->settings[k];
        if (!lt_param_is_standardisation(st->name) || lt_like_entry(l, st->name) >= 0 ||
            spec->lenient)
            continue;
        char list[1024] = "";
        for (size_t e = 0; e < l->npar; e++)
            if (lt_param_is_standardisation(l->par[e].name) && strlen(list) < 900)
                snprintf(list + strlen(list), sizeof list - strlen(list), "%s%s",
                         list[0] ? ", " : "", l->par[e].name);
        return lt_error_set(err, LT_EINPUT,
                            st->origin ? st->origin : st->fixed ? "--fix" : "--prior", st->line,
                            "this standardisation (%s, %s scatter) has no parameter '%s'; it "
                            "has %s",
                            lt_std_method_name(spec->std.method),
                            spec->std.shared_scatter ? "shared" : "per-group", st->name, list);
    }
    if (spec->std.method != LT_STD_CHI2)
        return LT_OK;
    for (size_t e = 0; e < l->npar; e++)
        if (!strncmp(l->par[e].name, "sigma_int", 9) && !l->par[e].free &&
            !lt_like_spec_setting(spec, l->par[e].name) && l->ntune < LT_STD_GROUPS_MAX)
            l->tune_at[l->ntune++] = (int)e;
    return LT_OK;
}

lt_like *lt_like_alloc(const lt_survey *s, const lt_like_spec *spec, lt_error *err)
{
    if (!spec->model) {
        lt_error_set(err, LT_EINPUT, "--model", 0, "no model given");
        return NULL;
    }
    if (!s && spec->nmeasurements == 0 && !spec->bao && !spec->cmb) {
        lt_error_set(err, LT_EINPUT, "--data", 0,
                     "nothing to fit: give a survey (--data), BAO (--bao), the CMB (--cmb) "
                     "or a measurement (--measure)");
        return NULL;
    }
    if (spec->std_given && (!s || s->kind != LT_OBS_MB)) {
        lt_error_set(err, LT_EINPUT, "--standardise", 0,
                     "the standardisation's options apply to a light-curve table (--columns "
                     "mb=...,x1=...,color=...)");
        return NULL;
    }
    int offset = offset_mode(s, spec, err);
    if (offset < 0)
        return NULL;
    lt_like *l = calloc(1, sizeof *l);
    plan *pl = calloc(1, sizeof *pl);
    if (!l || !pl) {
        lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        goto fail;
    }
    l->model = spec->model;
    l->offset = (lt_offset_mode)offset;
    l->offset_at = -1;
    lt_obs kind = s ? s->kind : LT_OBS_MU;
    /* the measurements by name, stably (insertion sort: they are few), so
     * that their order on the command line or in a settings file written
     * back for --resume makes no difference to the sum */
    for (size_t k = 0; k < spec->nmeasurements; k++) {
        size_t at = l->nmeas++;
        while (at > 0 && strcmp(l->meas[at - 1].name, spec->measurements[k].name) > 0) {
            l->meas[at] = l->meas[at - 1];
            at--;
        }
        l->meas[at] = spec->measurements[k];
    }
    /* the terms: supernovae first, the sum then adds the others to its
     * chi2; their needs make the table */
    if (s && s->kind == LT_OBS_MB) {
        if (lt_std_configure(&pl->std, s, spec, err))
            goto fail;
        plan_add(pl, &lt_term_std, &pl->std);
    } else if (s) {
        pl->sn = (lt_sn_config){.s = s, .offset = l->offset, .kind = kind};
        plan_add(pl, &lt_term_sn, &pl->sn);
    }
    if (spec->bao) {
        pl->bao = (lt_probe_config){spec->bao, spec->bao_cov, spec->rd_free};
        plan_add(pl, &lt_term_bao, &pl->bao);
    }
    if (spec->cmb) {
        pl->cmb = (lt_probe_config){spec->cmb, spec->cmb_cov, 0};
        plan_add(pl, &lt_term_cmb, &pl->cmb);
    }
    for (size_t k = 0; k < l->nmeas; k++)
        plan_add(pl, &lt_term_measure, &l->meas[k]);
    const lt_param_setting *tcmb = lt_like_spec_setting(spec, "t_cmb");
    pl->radiation = pl->needs.early || (tcmb && tcmb->fixed && tcmb->value > 0.0);
    if (pl->needs.overflow) {
        lt_error_set(err, LT_EINPUT, NULL, 0,
                     "the terms bring more than %d parameters of their own (the "
                     "standardisation has %zu groups: give --scatter shared, or merge groups)",
                     LT_TERM_OWN_MAX, pl->std.ngroups);
        goto fail;
    }
    if (check_settings(s, spec, l->offset, pl, err) || build_table(l, spec, pl, kind, err) ||
        check_standardisation(l, spec, err))
        goto fail;
    const lt_param_setting *h0 = lt_like_spec_setting(spec, "h0");
    l->h0_known = pl->needs.h0 || (h0 && h0->fixed);
    /* with rd_h sampled (--rd free) r_d is that, not the formula's: no
     * derived rd, rd_h beside it */
    l->rd_known = pl->needs.early && pl->needs.omega_b_h2 && l->h0_known && !spec->rd_free;
    lt_cosmo c;
    if (lt_cosmo_init(&c, l->model, &l->base, err))
        goto fail;
    for (size_t t = 0; t < pl->n; t++) {
        if (pl->type[t] == &lt_term_sn)
            l->sn_term = l->nterms;
        if (add_term(l, pl->type[t], pl->config[t], err))
            goto fail;
        if (pl->type[t] == &lt_term_sn) /* the later terms may ask for it */
            l->sn = l->term[l->sn_term].state, l->s_survey = s;
        if (pl->type[t] == &lt_term_std)
            l->std = l->term[l->nterms - 1].state, l->s_survey = s, l->std_spec = spec->std;
        /* the tables, kept here so that the accessors (table.c) need not
         * call back into the terms */
        if (pl->type[t] == &lt_term_bao)
            l->bao = lt_bao_table(l->term[l->nterms - 1].state), l->rd_free = spec->rd_free;
        if (pl->type[t] == &lt_term_cmb)
            l->cmb = lt_cmb_table(l->term[l->nterms - 1].state);
    }
    if (l->sn && !spec->exact && s->kind != LT_OBS_DL && lt_sn_compress(l, err))
        goto fail;
    free(pl);
    return l;
fail:
    free(pl);
    lt_like_free(l);
    return NULL;
}

lt_like_work *lt_like_work_alloc(const lt_like *l)
{
    lt_like_work *w = calloc(1, sizeof *w);
    if (!w)
        return NULL;
    for (size_t t = 0; t < l->nterms; t++) {
        w->type[t] = l->term[t].type;
        if (!(w->term[t] = l->term[t].type->work_alloc(l->term[t].state))) {
            lt_like_work_free(w);
            return NULL;
        }
        w->nterms = t + 1;
    }
    return w;
}

size_t lt_like_work_evals(const lt_like_work *w) { return w ? w->evals : 0; }

void lt_like_work_free(lt_like_work *w)
{
    if (!w)
        return;
    for (size_t t = 0; t < w->nterms; t++)
        w->type[t]->work_free(w->term[t]);
    free(w);
}

/* ---- evaluation ---- */
static void eval(const lt_like *l, lt_like_work *w, const double *theta, int exact,
                 lt_like_point *out)
{
    out->logprior = 0.0;
    for (size_t i = 0; i < l->dim; i++)
        out->logprior += lt_prior_logpdf(&l->par[l->free_at[i]].prior, theta[i]);
    out->chi2 = out->chi2_eff = INFINITY;
    out->loglike = out->logpost = -INFINITY;
    out->offset = 0.0;
    out->domain_ok = 0;
    if (!isfinite(out->logprior))
        return; /* outside the prior: no need to integrate anything */
    w->evals++;
    double values[LT_MAX_PARAMS];
    lt_cosmo_params p;
    lt_like_values(l, theta, values, &p);
    lt_cosmo c;
    if (lt_cosmo_init(&c, l->model, &p, NULL) != LT_OK)
        return;
    lt_term_in in = {.cosmo = &c, .values = values, .exact = exact};
    double chi2 = 0.0, chi2_eff = 0.0, offset = 0.0;
    for (size_t t = 0; t < l->nterms; t++) {
        lt_term_out o = {.chi2 = 0.0, .chi2_eff = 0.0, .offset = offset};
        if (l->term[t].type->eval(l->term[t].state, w->term[t], &in, &o))
            return;
        chi2 += o.chi2, chi2_eff += o.chi2_eff, offset = o.offset;
    }
    out->chi2 = chi2, out->chi2_eff = chi2_eff, out->offset = offset;
    out->domain_ok = 1;
    out->loglike = -0.5 * out->chi2_eff;
    out->logpost = out->loglike + out->logprior;
}

void lt_like_eval(const lt_like *l, lt_like_work *w, const double *theta, lt_like_point *out)
{
    eval(l, w, theta, 0, out);
}

void lt_like_eval_exact(const lt_like *l, lt_like_work *w, const double *theta, lt_like_point *out)
{
    eval(l, w, theta, 1, out);
}

int lt_like_eval_exact_many(const lt_like *l, const double *pts, size_t n, size_t stride,
                            lt_like_point *out, lt_error *err)
{
    int failed = 0;
    /* shared out over the threads, one point at a time (an exact evaluation
     * costs N to N^2): each writes its own slot, so the answer does not
     * depend on their number */
#pragma omp parallel reduction(| : failed)
    {
        lt_like_work *w = lt_like_work_alloc(l);
        failed |= !w;
#pragma omp for schedule(dynamic, 1)
        for (size_t k = 0; k < n; k++)
            if (w)
                lt_like_eval_exact(l, w, pts + k * stride, &out[k]);
        lt_like_work_free(w);
    }
    return failed ? lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory evaluating the exact likelihood")
                  : LT_OK;
}
