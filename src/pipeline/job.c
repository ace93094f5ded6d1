/*
 * Run descriptions: a run file and the flags over it, under one set of
 * rules (see lantern/pipeline.h). Every setting is a row of one table,
 * which names its run-file key, its flag and how its value is checked; the
 * file and the flags both go through lt_job_set, so that they cannot drift
 * apart.
 */
#include <math.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "lantern/file.h"
#include "lantern/pipeline.h"
#include "lantern/text.h"
#include "lantern/version.h"
#include "internal.h"

void lt_job_init(lt_job *j)
{
    memset(j, 0, sizeof *j);
    lt_survey_spec_init(&j->data);
    j->seed = 1;
    j->starts = 8;
    j->format = "table";
    j->chains = 4;
    j->threads = 0;
    j->warmup = 0; /* 0: max(2000, 1000 d) */
    j->check_every = 1000;
    j->max_steps = 200000;
    j->target_ess = 1000;
    j->thin = 1;
    j->live_points = 1000;
    j->sampler = "auto";
    j->velocity_dispersion = j->mass_split = NAN; /* unset: the standardisation's defaults */
}

void lt_job_free(lt_job *j)
{
    for (size_t i = 0; i < j->npool; i++)
        free(j->pool[i]);
    free(j->pool);
    lt_ini_free(j->ini);
    j->pool = NULL, j->npool = j->cap = 0, j->ini = NULL;
}

/* Keep s (a new string, or NULL from a failed allocation) for j's life. */
static const char *keep(lt_job *j, char *s, lt_error *err)
{
    if (s && j->npool == j->cap) {
        size_t cap = j->cap ? 2 * j->cap : 32;
        char **p = realloc(j->pool, cap * sizeof *p);
        if (!p) {
            free(s);
            s = NULL;
        } else {
            j->pool = p, j->cap = cap;
        }
    }
    if (!s) {
        lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
        return NULL;
    }
    return j->pool[j->npool++] = s;
}

/* A path from a file (base), relative to that file's folder; a flag's
 * path is taken as given. */
static const char *resolve(lt_job *j, const char *base, const char *path, lt_error *err)
{
    if (!base || path[0] == '/' || !strchr(base, '/'))
        return keep(j, strdup(path), err);
    size_t dir = (size_t)(strrchr(base, '/') - base);
    char *s = malloc(dir + strlen(path) + 2);
    if (s)
        sprintf(s, "%.*s/%s", (int)dir, base, path);
    return keep(j, s, err);
}

/* How a setting's value is checked and stored. */
typedef enum {
    K_TEXT,  /* a string */
    K_PATH,  /* a path (relative to the run file) */
    K_COV,   /* a comma-separated list of paths; a flag adds one */
    K_BOOL,  /* true/false, yes/no, 1/0; a flag takes no value */
    K_Z,     /* a redshift >= 0 */
    K_LONG,  /* a whole number in [lo, hi] */
    K_SEED,  /* 0 to 2^32 - 1 */
    K_ESS,   /* a number >= 1 */
    K_ENTRY, /* NAME=VALUE from a flag into a list ([priors], ...) */
    K_RD,    /* how the BAO term makes r_d: free or formula */
    K_METHOD, /* the sampler: auto, importance or mcmc */
    K_STD,    /* the standardisation: latent or chi2 */
    K_SCATTER,/* the scatter: per-group or shared */
    K_NONNEG, /* a number >= 0 */
    K_NUMBER, /* a finite number */
    K_FIGSIZE, /* single, double or a width in inches (lt_report_figure_width) */
    K_WARN     /* kinds of warning (comma-separated ids), added to a mask */
} kind;

typedef struct {
    unsigned section_bit;
    const char *section, *key, *flag;
    kind k;
    long lo, hi;
    size_t off; /* into lt_job */
} rule;

#define AT(f) offsetof(lt_job, f)
static const rule rules[] = {
    {LT_JOB_RUN, "run", "name", NULL, K_TEXT, 0, 0, AT(name)},
    {LT_JOB_RUN, "run", "models", "--models", K_TEXT, 0, 0, AT(models)},
    {LT_JOB_RUN, "run", "probes", NULL, K_TEXT, 0, 0, AT(probes)},
    {LT_JOB_DATA, "data", "file", "--data", K_PATH, 0, 0, AT(data.data)},
    {LT_JOB_DATA, "data", "columns", "--columns", K_TEXT, 0, 0, AT(data.columns)},
    {LT_JOB_DATA, "data", "cov", "--cov", K_COV, 0, 0, AT(data.cov)},
    {LT_JOB_DATA, "data", "modes", "--modes", K_PATH, 0, 0, AT(data.modes)},
    {LT_JOB_DATA, "data", "no_err_diag", "--no-err-diag", K_BOOL, 0, 0, AT(data.no_err_diag)},
    {LT_JOB_DATA, "data", "zmin", "--zmin", K_Z, 0, 0, AT(data.zmin)},
    {LT_JOB_DATA, "data", "zmax", "--zmax", K_Z, 0, 0, AT(data.zmax)},
    {LT_JOB_DATA, "data", "keep_ids", "--keep-ids", K_PATH, 0, 0, AT(data.keep_ids)},
    {LT_JOB_DATA, "data", "drop_ids", "--drop-ids", K_PATH, 0, 0, AT(data.drop_ids)},
    {LT_JOB_DATA, "data", "calib_cov", "--calib-cov", K_PATH, 0, 0, AT(data.calib_cov)},
    {LT_JOB_DATA, "data", "name", "--table-name", K_TEXT, 0, 0, AT(data.name)},
    {LT_JOB_DATA, "data", "cross_cov", "--cross-cov", K_PATH, 0, 0, AT(data.cross_cov)},
    {LT_JOB_DATA, "data", "bao", "--bao", K_PATH, 0, 0, AT(bao)},
    {LT_JOB_DATA, "data", "bao_cov", "--bao-cov", K_PATH, 0, 0, AT(bao_cov)},
    {LT_JOB_DATA, "data", "rd", "--rd", K_RD, 0, 0, AT(rd)},
    {LT_JOB_DATA, "data", "cmb", "--cmb", K_PATH, 0, 0, AT(cmb)},
    {LT_JOB_DATA, "data", "cmb_cov", "--cmb-cov", K_PATH, 0, 0, AT(cmb_cov)},
    {LT_JOB_DATA, "data", "standardise", "--standardise", K_STD, 0, 0, AT(standardise)},
    {LT_JOB_DATA, "data", "scatter", "--scatter", K_SCATTER, 0, 0, AT(scatter)},
    {LT_JOB_DATA, "data", "velocity_dispersion", "--velocity-dispersion", K_NONNEG, 0, 0,
     AT(velocity_dispersion)},
    {LT_JOB_DATA, "data", "mass_split", "--mass-split", K_NUMBER, 0, 0, AT(mass_split)},
    /* in [data]: every command that reads data reads that section (inspect
     * no other), so the flag works wherever a warning can come from */
    {LT_JOB_DATA, "data", "no_warn", "--no-warn", K_WARN, 0, 0, AT(no_warn)},
    {LT_JOB_MODEL, "model", "name", "--model", K_TEXT, 0, 0, AT(model)},
    {LT_JOB_MODEL, "model", "offset", "--offset", K_TEXT, 0, 0, AT(offset)},
    {LT_JOB_PARAMS, "priors", NULL, "--prior", K_ENTRY, 0, 0, AT(priors)},
    {LT_JOB_PARAMS, "fixed", NULL, "--fix", K_ENTRY, 0, 0, AT(fixes)},
    {LT_JOB_PARAMS, "measurements", NULL, "--measure", K_ENTRY, 0, 0, AT(measures)},
    {LT_JOB_FIT, "fit", "starts", "--starts", K_LONG, 1, 1000, AT(starts)},
    {LT_JOB_FIT, "fit", "seed", "--seed", K_SEED, 0, 0, AT(seed)},
    {LT_JOB_SAMPLER, "sampler", "seed", NULL, K_SEED, 0, 0, AT(seed)},
    {LT_JOB_SAMPLER, "sampler", "method", "--sampler", K_METHOD, 0, 0, AT(sampler)},
    {LT_JOB_SAMPLER, "sampler", "chains", "--chains", K_LONG, 1, 256, AT(chains)},
    {LT_JOB_SAMPLER, "sampler", "threads", "--threads", K_LONG, 0, 256, AT(threads)},
    {LT_JOB_SAMPLER, "sampler", "warmup", "--warmup", K_LONG, 0, 100000000, AT(warmup)},
    {LT_JOB_SAMPLER, "sampler", "check_every", "--check-every", K_LONG, 10, 100000000,
     AT(check_every)},
    {LT_JOB_SAMPLER, "sampler", "max_steps", "--max-steps", K_LONG, 10, 1000000000,
     AT(max_steps)},
    {LT_JOB_SAMPLER, "sampler", "target_ess", "--target-ess", K_ESS, 0, 0, AT(target_ess)},
    {LT_JOB_SAMPLER, "sampler", "thin", "--thin", K_LONG, 1, 1000000000, AT(thin)},
    {LT_JOB_NESTED, "nested", "live_points", "--live-points", K_LONG, 20, 100000,
     AT(live_points)},
    {LT_JOB_OUTPUT, "output", "dir", "--out", K_PATH, 0, 0, AT(out)},
    {LT_JOB_OUTPUT, "output", "format", "--format", K_TEXT, 0, 0, AT(format)},
    /* a run file's key; run and report take --figure-size themselves (the
     * other commands draw no figures) */
    {LT_JOB_OUTPUT, "output", "figure_size", NULL, K_FIGSIZE, 0, 0, AT(figure_width)},
};
#undef AT
#define NRULES (sizeof rules / sizeof rules[0])

/* A refused value: "--flag: 'V' is not ..." or "FILE:LINE: key = 'V' is not ...". */
static int refuse(const rule *r, const char *value, const char *origin, long line, int from_file,
                  const char *what, lt_error *err)
{
    if (from_file)
        return lt_error_set(err, LT_EINPUT, origin, line, "%s = '%s' is not %s", r->key, value,
                            what);
    return lt_error_set(err, LT_EINPUT, origin, 0, "'%s' is not %s", value, what);
}

/* NAME=VALUE (a flag) or NAME with value (a file entry) into r's list. */
static int add_entry(lt_job *j, const rule *r, const char *name, const char *value,
                     const char *origin, long line, int from_file, lt_error *err)
{
    static const char *const forms[] = {"NAME=uniform:LO:HI or NAME=gauss:MEAN:SD",
                                        "NAME=VALUE", "NAME=MEAN:SD"};
    int which = !strcmp(r->section, "priors") ? 0 : !strcmp(r->section, "fixed") ? 1 : 2;
    lt_job_entry *list = which == 0 ? j->priors : which == 1 ? j->fixes : j->measures;
    size_t *n = which == 0 ? &j->npriors : which == 1 ? &j->nfixes : &j->nmeasures;
    const char *copy = NULL;
    if (!from_file) {
        /* a flag: "NAME=VALUE" split at its first '=' */
        char *text = (char *)keep(j, strdup(value), err);
        if (!text)
            return LT_ENOMEM;
        char *eq = strchr(text, '=');
        if (!eq || eq == text)
            return lt_error_set(err, LT_EINPUT, origin, 0, "'%s' is not %s", value,
                                forms[which]);
        *eq = '\0';
        name = text, copy = eq + 1;
    } else if (!(copy = keep(j, strdup(value), err)) || !(name = keep(j, strdup(name), err))) {
        return LT_ENOMEM;
    }
    /* a parameter's name is known without a model: say so where it is
     * written (a measurement's quantity depends on the likelihood's terms,
     * and is checked there) */
    if (which < 2 && !lt_param_known(name))
        return lt_error_set(err, LT_EINPUT, origin, from_file ? line : 0,
                            "unknown parameter '%s' (parameters: %s)", name,
                            lt_param_known_list());
    if (*n == LT_JOB_MAX_ENTRIES)
        return from_file ? lt_error_set(err, LT_EINPUT, origin, line, "too many entries")
                         : lt_error_set(err, LT_EINPUT, origin, 0, "given too many times");
    list[(*n)++] = (lt_job_entry){name, copy, origin, from_file ? line : 0, from_file};
    return LT_OK;
}

/* "ID[,ID...]" into the mask *mask (bits of lt_warning_kinds()); an unknown
 * id is refused with the list of the known ones. */
static int add_warnings(const char *value, uint64_t *mask, const char *origin, long line,
                        lt_error *err)
{
    char item[64];
    int any = 0;
    for (const char *p = value; *p;) {
        size_t n = strcspn(p, ",");
        snprintf(item, sizeof item, "%.*s", (int)(n < sizeof item ? n : sizeof item - 1), p);
        char *id = lt_text_trim(item);
        p += n + (p[n] == ',');
        if (!*id)
            continue;
        int k = pipeline_warning_index(id);
        if (k < 0) {
            char ids[1024];
            pipeline_warning_ids(ids, sizeof ids);
            return lt_error_set(err, LT_EINPUT, origin, line,
                                "unknown kind of warning '%s' (the kinds: %s)", id, ids);
        }
        *mask |= (uint64_t)1 << k;
        any = 1;
    }
    return any ? LT_OK
               : lt_error_set(err, LT_EINPUT, origin, line,
                              "name a kind of warning (ID, or ID,ID,...; each warning prints "
                              "its id in brackets)");
}

static int parse_bool(const char *v, int *out)
{
    if (!strcmp(v, "true") || !strcmp(v, "yes") || !strcmp(v, "1"))
        return *out = 1, 0;
    if (!strcmp(v, "false") || !strcmp(v, "no") || !strcmp(v, "0"))
        return *out = 0, 0;
    return -1;
}

/* Apply one rule. base: the file relative paths are relative to (NULL for
 * flags). */
/* The table keys: a table's own (each [survey.NAME] has them; a --data
 * flag starts a table that the ones after it describe). */
static int table_key(const rule *r)
{
    return r->off >= offsetof(lt_job, data) && r->off < offsetof(lt_job, data) + sizeof(lt_survey_spec) &&
           r->off != offsetof(lt_job, data.cross_cov);
}

/* The table a setting describes: the last added by a flag or section. */
static lt_survey_spec *current_table(lt_job *j)
{
    return j->nparts ? &j->parts[j->nparts - 1] : &j->data;
}

/* A second or later --data flag: a table of its own. The first replaces
 * the run file's tables (their other keys stay, as for one table). */
static int data_flag(lt_job *j, const char *origin, lt_error *err)
{
    if (j->data_flags++ == 0) {
        /* one table from the run file keeps its other keys (a new file,
         * the same columns); several [survey.NAME] tables are replaced
         * whole, cross-covariance included */
        if (j->nparts)
            lt_survey_spec_init(&j->data), j->cov_from_flags = 0;
        j->nparts = 0, j->data.more = NULL, j->data.nmore = 0, j->data.name = NULL;
        return LT_OK;
    }
    if (j->nparts == LT_SURVEY_MAX_PARTS - 1)
        return lt_error_set(err, LT_EINPUT, origin, 0, "more than %d tables to join",
                            LT_SURVEY_MAX_PARTS);
    lt_survey_spec_init(&j->parts[j->nparts++]);
    j->data.more = j->parts, j->data.nmore = j->nparts;
    return LT_OK;
}

static int apply(lt_job *j, const rule *r, const char *key, const char *value,
                 const char *origin, long line, int from_file, const char *base, lt_error *err)
{
    if (!from_file && r->off == offsetof(lt_job, data.data)) {
        int rc = data_flag(j, origin, err);
        if (rc)
            return rc;
    }
    /* with a run file's several tables, a table flag would not say which */
    if (!from_file && table_key(r) && j->nparts && !j->data_flags)
        return lt_error_set(err, LT_EINPUT, origin, 0,
                            "the run file joins %zu tables ([survey.NAME]): give this key in a "
                            "table's section, or --data to replace the tables",
                            j->nparts + 1);
    lt_survey_spec *table = table_key(r) ? current_table(j) : &j->data;
    char *slot = table_key(r) ? (char *)table + (r->off - offsetof(lt_job, data)) : (char *)j + r->off;
    if (r->k == K_RD && strcmp(value, "free") && strcmp(value, "formula"))
        return refuse(r, value, origin, line, from_file,
                      "free (sample r_d h) or formula (r_d from omega_b_h2 and omega_m h^2)", err);
    if (r->k == K_METHOD && strcmp(value, "auto") && strcmp(value, "importance") &&
        strcmp(value, "mcmc"))
        return refuse(r, value, origin, line, from_file,
                      "auto (importance sampling, then MCMC if its weights are poor), importance "
                      "or mcmc",
                      err);
    if (r->k == K_STD && lt_std_method_parse(value) < 0)
        return refuse(r, value, origin, line, from_file,
                      "latent (the populations of x1 and colour integrated out; the default) "
                      "or chi2 (sigma_int set so that chi2/dof = 1 per group)",
                      err);
    if (r->k == K_SCATTER && strcmp(value, "per-group") && strcmp(value, "shared"))
        return refuse(r, value, origin, line, from_file,
                      "per-group (one sigma_int for each group; the default) or shared", err);
    switch (r->k) {
    case K_STD:
    case K_SCATTER:
    case K_METHOD:
    case K_RD: /* checked above; kept as text */
    case K_TEXT: {
        const char *s = keep(j, strdup(value), err);
        if (!s)
            return LT_ENOMEM;
        *(const char **)slot = s;
        return LT_OK;
    }
    case K_PATH: {
        const char *s = resolve(j, base, value, err);
        if (!s)
            return LT_ENOMEM;
        *(const char **)slot = s;
        return LT_OK;
    }
    case K_COV:
        if (!from_file) {
            /* a --cov flag adds to the flags' list, which replaces the file's
             * (a table added by a flag starts with none) */
            if (table == &j->data && !j->cov_from_flags)
                j->data.ncov = 0, j->cov_from_flags = 1;
            if (table->ncov == LT_SURVEY_MAX_COV)
                return lt_error_set(err, LT_EINPUT, origin, 0, "given more than %d times",
                                    LT_SURVEY_MAX_COV);
            const char *s = resolve(j, NULL, value, err);
            if (!s)
                return LT_ENOMEM;
            table->cov[table->ncov++] = s;
            return LT_OK;
        } else {
            char *list = (char *)keep(j, strdup(value), err), *save = NULL;
            if (!list)
                return LT_ENOMEM;
            table->ncov = 0;
            for (char *p = strtok_r(list, ",", &save); p; p = strtok_r(NULL, ",", &save)) {
                p = lt_text_trim(p);
                if (!*p)
                    continue;
                if (table->ncov == LT_SURVEY_MAX_COV)
                    return lt_error_set(err, LT_EINPUT, origin, line,
                                        "cov lists more than %d files", LT_SURVEY_MAX_COV);
                if (!(table->cov[table->ncov++] = resolve(j, base, p, err)))
                    return LT_ENOMEM;
            }
            return LT_OK;
        }
    case K_BOOL:
        if (!from_file)
            return *(int *)slot = 1, LT_OK;
        if (parse_bool(value, (int *)slot))
            return refuse(r, value, origin, line, from_file, "true or false", err);
        return LT_OK;
    case K_Z:
        if (lt_parse_double(value, (double *)slot) || *(double *)slot < 0)
            return refuse(r, value, origin, line, from_file, "a redshift >= 0", err);
        return LT_OK;
    case K_LONG: {
        char what[64];
        snprintf(what, sizeof what, "a whole number from %ld to %ld", r->lo, r->hi);
        if (lt_parse_long(value, r->lo, r->hi, (long *)slot))
            return refuse(r, value, origin, line, from_file, what, err);
        return LT_OK;
    }
    case K_SEED: {
        long v;
        if (lt_parse_long(value, 0, 4294967295L, &v))
            return refuse(r, value, origin, line, from_file, "a seed (0 to 4294967295)", err);
        *(unsigned long *)slot = (unsigned long)v;
        return LT_OK;
    }
    case K_NONNEG:
    case K_NUMBER:
        if (lt_parse_double(value, (double *)slot) ||
            (r->k == K_NONNEG && !(*(double *)slot >= 0)))
            return refuse(r, value, origin, line, from_file,
                          r->k == K_NONNEG ? "a number >= 0" : "a number", err);
        return LT_OK;
    case K_FIGSIZE:
        if (lt_report_figure_width(value, (double *)slot))
            return refuse(r, value, origin, line, from_file, LT_FIGURE_WIDTH_TEXT, err);
        return LT_OK;
    case K_ESS:
        if (lt_parse_double(value, (double *)slot) || !(*(double *)slot >= 1))
            return refuse(r, value, origin, line, from_file, "a number >= 1", err);
        return LT_OK;
    case K_ENTRY:
        return add_entry(j, r, key, value, origin, line, from_file, err);
    case K_WARN:
        return add_warnings(value, (uint64_t *)slot, origin, from_file ? line : 0, err);
    }
    return LT_OK;
}

static const rule *find_rule(const char *section, const char *key)
{
    for (size_t i = 0; i < NRULES; i++)
        if (!strcmp(rules[i].section, section) && (!rules[i].key || !strcmp(rules[i].key, key)))
            return &rules[i];
    return NULL;
}

int lt_job_set(lt_job *j, const char *section, const char *key, const char *value,
               const char *origin, long line, int from_file, lt_error *err)
{
    const rule *r = find_rule(section, key);
    if (!r)
        return lt_error_set(err, LT_EINPUT, origin, line, "unknown setting %s.%s", section, key);
    return apply(j, r, key, value, origin, line, from_file, from_file ? origin : NULL, err);
}

int lt_job_flag_find(const char *flag, unsigned *section, int *takes_value)
{
    for (size_t i = 0; i < NRULES; i++)
        if (rules[i].flag && !strcmp(rules[i].flag, flag)) {
            if (section)
                *section = rules[i].section_bit;
            if (takes_value)
                *takes_value = rules[i].k != K_BOOL;
            return 1;
        }
    return 0;
}

int lt_job_flag(lt_job *j, const char *flag, const char *value, lt_error *err)
{
    for (size_t i = 0; i < NRULES; i++)
        if (rules[i].flag && !strcmp(rules[i].flag, flag))
            return apply(j, &rules[i], NULL, value ? value : "", rules[i].flag, 0, 0, NULL, err);
    return lt_error_set(err, LT_EINPUT, flag, 0, "not a setting of a run");
}

/* Section s of ini into j by the rules of section rs (s itself, or
 * [data.NAME] read as [data]). Paths are relative to ini's file; entries
 * name it, in a copy j keeps (the caller may free ini first). */
static int apply_section(lt_job *j, lt_ini *ini, const char *s, const char *rs, lt_error *err)
{
    lt_ini_has_section(ini, s);
    const char *origin = NULL;
    for (size_t i = 0; i < ini->n; i++) {
        lt_ini_entry *e = &ini->entries[i];
        const rule *r = strcmp(e->section, s) ? NULL : find_rule(rs, e->key);
        if (!r)
            continue; /* left unused: lt_ini_check_used names it */
        e->used = 1;
        if (!origin && !(origin = keep(j, strdup(ini->path), err)))
            return LT_ENOMEM;
        int rc = apply(j, r, e->key, e->value, origin, e->line, 1, ini->path, err);
        if (rc)
            return rc;
    }
    return LT_OK;
}

/* The [survey.NAME] sections of ini, in file order: the first is j->data,
 * the others parts. Only table keys belong there, and then none in
 * [data]. */
static int survey_sections(lt_job *j, lt_ini *ini, lt_error *err)
{
    size_t count = 0;
    for (size_t i = 0; i < ini->nsections; i++) {
        const char *sec = ini->sections[i];
        if (strncmp(sec, "survey.", 7))
            continue;
        long line = ini->section_lines[i];
        const char *name = sec + 7;
        if (!*name)
            return lt_error_set(err, LT_EINPUT, ini->path, line,
                                "[survey.NAME]: name the table after the dot");
        for (size_t e = 0; e < ini->n; e++) {
            const lt_ini_entry *en = &ini->entries[e];
            const rule *r = find_rule("data", en->key);
            if (!strcmp(en->section, "data") && r && table_key(r))
                return lt_error_set(err, LT_EINPUT, ini->path, en->line,
                                    "[data] %s describes a table, and the run file names its "
                                    "tables in [survey.NAME] sections: move it into one",
                                    en->key);
            if (!strcmp(en->section, sec) && r && r->off == offsetof(lt_job, data.name))
                return lt_error_set(err, LT_EINPUT, ini->path, en->line,
                                    "[%s] name: the section names its table (%s)", sec, name);
            if (!strcmp(en->section, sec) && !(r && table_key(r)))
                return lt_error_set(err, LT_EINPUT, ini->path, en->line,
                                    "[%s] %s: a survey section takes a table's keys (file, "
                                    "columns, cov, modes, no_err_diag, zmin, zmax, keep_ids, "
                                    "drop_ids, calib_cov); %s",
                                    sec, en->key,
                                    r ? "this one goes in [data]" : "this one is unknown");
        }
        if (count > 0) {
            if (j->nparts == LT_SURVEY_MAX_PARTS - 1)
                return lt_error_set(err, LT_EINPUT, ini->path, line,
                                    "more than %d tables to join", LT_SURVEY_MAX_PARTS);
            lt_survey_spec_init(&j->parts[j->nparts++]);
            j->data.more = j->parts, j->data.nmore = j->nparts;
        }
        lt_survey_spec *t = current_table(j);
        if (!(t->name = keep(j, strdup(name), err)))
            return LT_ENOMEM;
        int rc = apply_section(j, ini, sec, "data", err);
        if (rc)
            return rc;
        if (!t->data)
            return lt_error_set(err, LT_EINPUT, ini->path, line, "[%s] needs file = TABLE", sec);
        count++;
    }
    return LT_OK;
}

int lt_job_apply_ini(lt_job *j, lt_ini *ini, unsigned mask, lt_error *err)
{
    /* each section once, in the table's order */
    for (size_t i = 0; i < NRULES; i++) {
        if (!(rules[i].section_bit & mask) ||
            (i > 0 && !strcmp(rules[i - 1].section, rules[i].section)))
            continue;
        int rc = apply_section(j, ini, rules[i].section, rules[i].section, err);
        if (rc)
            return rc;
    }
    return mask & LT_JOB_DATA ? survey_sections(j, ini, err) : LT_OK;
}

int lt_job_data_section(lt_job *j, lt_ini *ini, const char *section, lt_survey_spec *spec,
                        lt_error *err)
{
    /* read into j's own spec, then hand it over: the rules write there */
    lt_survey_spec keep_spec = j->data;
    int keep_flags = j->cov_from_flags;
    lt_survey_spec_init(&j->data);
    int rc = apply_section(j, ini, section, "data", err);
    *spec = j->data;
    j->data = keep_spec, j->cov_from_flags = keep_flags;
    return rc;
}

/* "--override section.key=value" (flag: what the user typed, for errors):
 * replace the key's value in ini, or add the key. */
static int override(lt_ini *ini, const char *flag, const char *text, lt_error *err)
{
    /* the key follows the last dot before '=': sections may hold dots
     * ([survey.NAME]), keys do not */
    const char *eq = strchr(text, '='), *dot = NULL;
    for (const char *p = text; eq && p < eq; p++)
        if (*p == '.')
            dot = p;
    if (!dot || !eq || dot == text || eq == dot + 1)
        return lt_error_set(err, LT_EINPUT, flag, 0, "'%s' is not section.key=value", text);
    char *section = strndup(text, (size_t)(dot - text));
    char *key = strndup(dot + 1, (size_t)(eq - dot - 1)), *value = strdup(eq + 1);
    int rc = LT_OK;
    if (!section || !key || !value) {
        rc = lt_error_set(err, LT_ENOMEM, flag, 0, "out of memory");
        goto done;
    }
    for (size_t i = 0; i < ini->n; i++)
        if (!strcmp(ini->entries[i].section, section) && !strcmp(ini->entries[i].key, key)) {
            free(ini->entries[i].value);
            ini->entries[i].value = value, value = NULL;
            ini->entries[i].line = 0;
            goto done;
        }
    /* a new key: its section must exist or is made */
    const char *sec = NULL;
    for (size_t i = 0; i < ini->nsections; i++)
        if (!strcmp(ini->sections[i], section))
            sec = ini->sections[i];
    if (!sec) {
        char **ns = realloc(ini->sections, (ini->nsections + 1) * sizeof *ns);
        if (ns)
            ini->sections = ns;
        long *nl = ns ? realloc(ini->section_lines, (ini->nsections + 1) * sizeof *nl) : NULL;
        if (nl)
            ini->section_lines = nl;
        int *nu = nl ? realloc(ini->section_used, (ini->nsections + 1) * sizeof *nu) : NULL;
        if (nu)
            ini->section_used = nu;
        if (!nu) {
            rc = lt_error_set(err, LT_ENOMEM, flag, 0, "out of memory");
            goto done;
        }
        ini->sections[ini->nsections] = section;
        ini->section_lines[ini->nsections] = 0;
        ini->section_used[ini->nsections] = 0;
        sec = ini->sections[ini->nsections++];
        section = NULL;
    }
    lt_ini_entry *ne = realloc(ini->entries, (ini->n + 1) * sizeof *ne);
    if (!ne) {
        rc = lt_error_set(err, LT_ENOMEM, flag, 0, "out of memory");
        goto done;
    }
    ini->entries = ne;
    ne[ini->n++] = (lt_ini_entry){(char *)sec, key, value, 0, 0};
    key = value = NULL;
done:
    free(section);
    free(key);
    free(value);
    return rc;
}

int lt_job_read(lt_job *j, const char *path, const char *const *overrides,
                const char *const *origins, size_t noverrides, lt_error *err)
{
    if (!(j->ini = lt_ini_read(path, err)))
        return err->code;
    for (size_t i = 0; i < noverrides; i++) {
        int rc = override(j->ini, origins[i], overrides[i], err);
        if (rc)
            return rc;
    }
    int rc = lt_job_apply_ini(j, j->ini, LT_JOB_ALL, err);
    return rc ? rc : lt_ini_check_used(j->ini, err);
}

/* ---- the likelihood spec ---- */

/* Where each parameter's prior or fix came from, to tell an override (a
 * flag after the run file) from a mistake (two from the same place). */
typedef struct {
    size_t n;
    const char *name[2 * LT_JOB_MAX_ENTRIES];
    int from_file[2 * LT_JOB_MAX_ENTRIES];
    int prior[2 * LT_JOB_MAX_ENTRIES]; /* 1 prior, 0 fix */
} seen_list;

static int apply_param(const lt_job_entry *kv, int prior, lt_like_spec *spec, seen_list *seen,
                       lt_error *err)
{
    if (!lt_param_known(kv->name))
        return lt_error_set(err, LT_EINPUT, kv->origin, kv->line,
                            "unknown parameter '%s' (parameters: %s)", kv->name,
                            lt_param_known_list());
    size_t k = 0;
    while (k < seen->n && strcmp(seen->name[k], kv->name))
        k++;
    if (k < seen->n && seen->from_file[k] == kv->from_file)
        return seen->prior[k] == prior
                   ? lt_error_set(err, LT_EINPUT, kv->origin, kv->line, "%s is given twice",
                                  kv->name)
                   : lt_error_set(err, LT_EINPUT, kv->origin, kv->line,
                                  "%s has both a prior and a fixed value; give one", kv->name);
    if (k == seen->n)
        seen->n++;
    seen->name[k] = kv->name, seen->from_file[k] = kv->from_file, seen->prior[k] = prior;
    int rc;
    if (prior) {
        lt_prior p;
        rc = lt_prior_parse(kv->value, &p, err) || lt_like_spec_prior(spec, kv->name, p, err);
    } else {
        double v;
        if (lt_parse_double(kv->value, &v))
            return lt_error_set(err, LT_EINPUT, kv->origin, kv->line,
                                "%s = '%s' is not a finite number", kv->name, kv->value);
        rc = lt_like_spec_fix(spec, kv->name, v, err);
    }
    if (rc)
        return lt_error_locate(err, LT_EINPUT, kv->origin, kv->line);
    /* where it came from, for the likelihood's own checks */
    lt_param_setting *st = (lt_param_setting *)lt_like_spec_setting(spec, kv->name);
    st->origin = kv->from_file ? kv->origin : NULL, st->line = kv->line;
    return LT_OK;
}

/* NAME = MEAN:SD[, MEAN:SD...] (several measurements of one quantity, as a
 * run file must give them: a key appears once) into spec. */
static int apply_measure(const lt_job_entry *kv, lt_like_spec *spec, lt_error *err)
{
    char *buf = strdup(kv->value);
    if (!buf)
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    int rc = LT_OK;
    for (char *item = buf, *next; item && !rc; item = next) {
        next = strchr(item, ',');
        if (next)
            *next++ = '\0';
        char *colon = strchr(item, ':');
        double mean, sd;
        if (colon)
            *colon = '\0';
        if (!colon || lt_parse_double(lt_text_trim(item), &mean) ||
            lt_parse_double(lt_text_trim(colon + 1), &sd)) {
            rc = lt_error_set(err, LT_EINPUT, kv->origin, kv->line,
                              "%s = '%s' is not MEAN:SD (or MEAN:SD, MEAN:SD...)", kv->name,
                              kv->value);
        } else if (lt_like_spec_measure(spec, kv->name, mean, sd, err)) {
            /* whether the likelihood has the quantity is its check; the
             * origin lets its error name the file and line */
            rc = lt_error_locate(err, LT_EINPUT, kv->origin, kv->line);
        } else {
            lt_measurement *m = &spec->measurements[spec->nmeasurements - 1];
            m->origin = kv->from_file ? kv->origin : NULL, m->line = kv->line;
        }
    }
    free(buf);
    return rc;
}

/* Whether entry kv of pass (0 the run file's, 1 the flags') applies to m. */
static int applies(const lt_job *j, const lt_job_entry *kv, int pass, const lt_cosmo_model *m)
{
    return kv->from_file == (pass == 0) &&
           (!j->lenient || !lt_param_known(kv->name) || lt_param_of_model(m, kv->name));
}

int lt_job_like_spec(const lt_job *j, const lt_cosmo_model *m, lt_like_spec *spec,
                     lt_error *err)
{
    lt_like_spec_init(spec, m);
    spec->bao = j->bao, spec->bao_cov = j->bao_cov;
    spec->cmb = j->cmb, spec->cmb_cov = j->cmb_cov;
    spec->rd_free = j->rd && !strcmp(j->rd, "free");
    /* settings that need another: named where they were given */
    const struct {
        const char *value, *needs, *key, *flag, *what;
    } pair[] = {{j->bao_cov, j->bao, "bao_cov", "--bao-cov", "needs a BAO file (--bao, [data] bao)"},
                {j->rd, j->bao, "rd", "--rd", "applies to a BAO term: give a BAO file (--bao, "
                                              "[data] bao)"},
                {j->cmb_cov, j->cmb, "cmb_cov", "--cmb-cov", "needs a CMB file (--cmb, [data] "
                                                             "cmb)"}};
    for (size_t k = 0; k < sizeof pair / sizeof pair[0]; k++)
        if (pair[k].value && !pair[k].needs) {
            const lt_ini_entry *e = j->ini ? lt_ini_get(j->ini, "data", pair[k].key) : NULL;
            return e ? lt_error_set(err, LT_EINPUT, j->ini->path, e->line, "%s %s", pair[k].key,
                                    pair[k].what)
                     : lt_error_set(err, LT_EINPUT, pair[k].flag, 0, "%s", pair[k].what);
        }
    if (j->standardise)
        spec->std.method = (lt_std_method)lt_std_method_parse(j->standardise);
    if (j->scatter)
        spec->std.shared_scatter = !strcmp(j->scatter, "shared");
    if (!isnan(j->velocity_dispersion))
        spec->std.velocity_dispersion = j->velocity_dispersion;
    if (!isnan(j->mass_split))
        spec->std.mass_split = j->mass_split;
    spec->std_given = j->standardise || j->scatter || !isnan(j->velocity_dispersion) ||
                      !isnan(j->mass_split);
    if (j->offset) {
        int mode = lt_offset_parse(j->offset);
        if (mode < 0)
            return lt_error_set(err, LT_EINPUT, "--offset", 0,
                                "'%s' is not none, marginal or sampled", j->offset);
        spec->offset = (lt_offset_mode)mode;
    }
    seen_list seen;
    memset(&seen, 0, sizeof seen);
    int rc;
    /* file entries first, flags after: a flag overrides the file */
    for (int pass = 0; pass < 2; pass++) {
        for (size_t i = 0; i < j->npriors; i++)
            if (applies(j, &j->priors[i], pass, m) &&
                (rc = apply_param(&j->priors[i], 1, spec, &seen, err)))
                return rc;
        for (size_t i = 0; i < j->nfixes; i++)
            if (applies(j, &j->fixes[i], pass, m) &&
                (rc = apply_param(&j->fixes[i], 0, spec, &seen, err)))
                return rc;
    }
    /* every measurement counts, the run file's and the flags' (two
     * measurements of one quantity are two terms) */
    for (size_t i = 0; i < j->nmeasures; i++)
        if ((rc = apply_measure(&j->measures[i], spec, err)))
            return rc;
    return LT_OK;
}

int lt_job_model_spec(const lt_job *j, lt_like_spec *spec, lt_error *err)
{
    if (!j->model)
        return lt_error_set(err, LT_EINPUT, NULL, 0,
                            "--model is required (lcdm-flat, lcdm, wcdm-flat, wcdm, w0wa-flat, "
                            "w0wa)");
    const lt_cosmo_model *m = lt_cosmo_model_lookup(j->model, "--model", 0, err);
    return m ? lt_job_like_spec(j, m, spec, err) : err->code;
}

/* A table of the run file without columns: refused naming the file and
 * the line of its section ([data]'s file key, or [survey.NAME]), where the
 * library's reader could name only --columns. Tables from --data flags are
 * left to the reader, whose words name the flag. */
static int columns_check(const lt_job *j, lt_error *err)
{
    if (!j->ini || j->data_flags)
        return LT_OK;
    const lt_ini *ini = j->ini;
    size_t k = 0; /* the table: j->data, then the parts */
    for (size_t i = 0; i < ini->nsections; i++) {
        const char *sec = ini->sections[i];
        if (strncmp(sec, "survey.", 7))
            continue;
        const lt_survey_spec *t = k == 0 ? &j->data : k - 1 < j->nparts ? &j->parts[k - 1] : NULL;
        k++;
        if (t && t->data && (!t->columns || !*t->columns))
            return lt_error_set(err, LT_EINPUT, ini->path, ini->section_lines[i],
                                "[%s] has no columns: say which column holds what, e.g. "
                                "columns = z=zcmb,mag=mb,err=dmb",
                                sec);
    }
    if (k == 0 && j->data.data && (!j->data.columns || !*j->data.columns))
        for (size_t e = 0; e < ini->n; e++)
            if (!strcmp(ini->entries[e].section, "data") && !strcmp(ini->entries[e].key, "file"))
                return lt_error_set(err, LT_EINPUT, ini->path, ini->entries[e].line,
                                    "[data] names a table but no columns: say which column "
                                    "holds what, e.g. columns = z=zcmb,mag=mb,err=dmb");
    return LT_OK;
}

int lt_job_survey(const lt_job *j, lt_survey **s, lt_error *err)
{
    *s = NULL;
    if (columns_check(j, err))
        return err->code;
    if (!j->data.data && (j->nmeasures || j->bao || j->cmb)) {
        /* other terms alone: survey options would be silently lost */
        const lt_survey_spec *d = &j->data;
        if (d->columns || d->ncov || d->modes || d->keep_ids || d->drop_ids)
            return lt_error_set(err, LT_EINPUT, "--data", 0,
                                "--columns, --cov, --modes and the id lists need a --data "
                                "file");
        return LT_OK;
    }
    return (*s = lt_survey_read(&j->data, err)) ? LT_OK : err->code;
}

/* ---- paths and the settings file ---- */

/* An absolute form of a path (FITS extended names keep their suffix), or
 * NULL (out of memory). */
static char *absolute(const char *path)
{
    if (path[0] == '/')
        return strdup(path);
    char *cwd = getcwd(NULL, 0);
    size_t n = (cwd ? strlen(cwd) : 0) + strlen(path) + 2;
    char *s = malloc(n);
    if (s)
        snprintf(s, n, "%s/%s", cwd ? cwd : "", path);
    free(cwd);
    return s;
}

int lt_job_absolute(lt_job *j, lt_survey_spec *spec, lt_error *err)
{
    const char **paths[10 + LT_SURVEY_MAX_COV] = {
        &spec->data, &spec->modes, &spec->keep_ids, &spec->drop_ids,  &j->bao,
        &j->bao_cov, &j->cmb,      &j->cmb_cov,     &spec->calib_cov, &spec->cross_cov};
    size_t n = 10;
    for (size_t i = 0; i < spec->ncov; i++)
        paths[n++] = &spec->cov[i];
    for (size_t i = 0; i < n; i++)
        if (*paths[i] && (*paths[i])[0] != '/' && !(*paths[i] = keep(j, absolute(*paths[i]), err)))
            return LT_ENOMEM;
    return LT_OK;
}

/* A growing text. */
typedef struct {
    char *t;
    size_t len, cap;
    int failed;
} text;

static void add(text *b, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static void add(text *b, const char *fmt, ...)
{
    for (;;) {
        va_list ap;
        va_start(ap, fmt);
        int n = b->failed ? 0 : vsnprintf(b->t + b->len, b->cap - b->len, fmt, ap);
        va_end(ap);
        if (b->failed || (size_t)n < b->cap - b->len) {
            b->len += b->failed ? 0 : (size_t)n;
            return;
        }
        char *t = realloc(b->t, 2 * b->cap + (size_t)n);
        if (!t) {
            b->failed = 1;
            return;
        }
        b->t = t, b->cap = 2 * b->cap + (size_t)n;
    }
}

static void add_path(text *b, const char *key, const char *path)
{
    char *p = absolute(path);
    if (!p)
        b->failed = 1;
    else
        add(b, "%s = %s\n", key, p);
    free(p);
}

/* j's priors (prior 1) or fixed values (0) as they finally stand, for a
 * job of several models: a parameter's last entry (the file's, then the
 * flags') decides whether it has a prior or a value, and which. */
static void add_final(text *b, const lt_job *j, int prior)
{
    const lt_job_entry *all[2 * LT_JOB_MAX_ENTRIES];
    int is_prior[2 * LT_JOB_MAX_ENTRIES];
    size_t n = 0;
    for (int pass = 0; pass < 2; pass++)
        for (int pr = 1; pr >= 0; pr--) {
            const lt_job_entry *list = pr ? j->priors : j->fixes;
            size_t m = pr ? j->npriors : j->nfixes;
            for (size_t i = 0; i < m; i++) {
                if (list[i].from_file != (pass == 0))
                    continue;
                size_t k = 0;
                while (k < n && strcmp(all[k]->name, list[i].name))
                    k++;
                all[k] = &list[i], is_prior[k] = pr;
                n += k == n;
            }
        }
    for (size_t k = 0; k < n; k++)
        if (is_prior[k] == prior)
            add(b, "%s = %s\n", all[k]->name, all[k]->value);
}

/* A table's keys (as [data] or a [survey.NAME] section has them; a
 * section's header is its name). */
static void write_table(text *b, const lt_survey_spec *t, int section)
{
    char x[32];
    if (t->data) /* none for measurements alone */
        add_path(b, "file", t->data);
    if (t->columns)
        add(b, "columns = %s\n", t->columns);
    if (t->ncov) {
        add(b, "cov = ");
        for (size_t i = 0; i < t->ncov; i++) {
            char *p = absolute(t->cov[i]);
            add(b, "%s%s", i ? ", " : "", p ? p : "");
            b->failed |= !p;
            free(p);
        }
        add(b, "\n");
    }
    if (t->modes)
        add_path(b, "modes", t->modes);
    add(b, "no_err_diag = %s\n", t->no_err_diag ? "true" : "false");
    if (!isnan(t->zmin))
        lt_format_double(t->zmin, x, sizeof x), add(b, "zmin = %s\n", x);
    if (!isnan(t->zmax))
        lt_format_double(t->zmax, x, sizeof x), add(b, "zmax = %s\n", x);
    if (t->keep_ids)
        add_path(b, "keep_ids", t->keep_ids);
    if (t->drop_ids)
        add_path(b, "drop_ids", t->drop_ids);
    if (t->calib_cov)
        add_path(b, "calib_cov", t->calib_cov);
    if (t->name && !section)
        add(b, "name = %s\n", t->name);
}

int lt_job_write(const lt_job *j, const lt_like_spec *spec, const char *path, lt_error *err)
{
    text b = {malloc(4096), 0, 4096, 0};
    if (!b.t)
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
    char x[32], y[32];
    add(&b, "# written by lantern %s: the settings of this run, read by --resume\n", LT_VERSION);
    add(&b, "[run]\n");
    if (j->name)
        add(&b, "name = %s\n", j->name);
    if (j->models)
        add(&b, "models = %s\n", j->models);
    add(&b, "[data]\n");
    if (!j->nparts)
        write_table(&b, &j->data, 0);
    if (j->data.cross_cov)
        add_path(&b, "cross_cov", j->data.cross_cov);
    /* the other terms' files, and how r_d is made */
    const char *const terms[4][2] = {
        {"bao", j->bao}, {"bao_cov", j->bao_cov}, {"cmb", j->cmb}, {"cmb_cov", j->cmb_cov}};
    for (int k = 0; k < 4; k++)
        if (terms[k][1])
            add_path(&b, terms[k][0], terms[k][1]);
    if (j->rd)
        add(&b, "rd = %s\n", j->rd);
    if (j->standardise)
        add(&b, "standardise = %s\n", j->standardise);
    if (j->scatter)
        add(&b, "scatter = %s\n", j->scatter);
    if (!isnan(j->velocity_dispersion))
        lt_format_double(j->velocity_dispersion, x, sizeof x),
            add(&b, "velocity_dispersion = %s\n", x);
    if (!isnan(j->mass_split))
        lt_format_double(j->mass_split, x, sizeof x), add(&b, "mass_split = %s\n", x);
    if (j->no_warn) {
        add(&b, "no_warn = ");
        for (size_t k = 0, first = 1; lt_warning_kinds()[k].id; k++)
            if (j->no_warn >> k & 1u)
                add(&b, "%s%s", first ? "" : ", ", lt_warning_kinds()[k].id), first = 0;
        add(&b, "\n");
    }
    /* several tables: one [survey.NAME] section each, in order */
    for (size_t p = 0; j->nparts && p <= j->nparts; p++) {
        const lt_survey_spec *t = p ? &j->parts[p - 1] : &j->data;
        char name[256];
        lt_survey_spec_name(t, name, sizeof name);
        add(&b, "[survey.%s]\n", name);
        write_table(&b, t, 1);
    }
    if (j->model)
        add(&b, "[model]\nname = %s\n", j->model);
    else
        add(&b, "[model]\n");
    if (j->offset)
        add(&b, "offset = %s\n", j->offset);
    /* priors and fixes as they finally stand (flags over the file): from
     * the spec, or for several models (spec NULL) from j's entries */
    add(&b, "[priors]\n");
    for (size_t k = 0; spec && k < spec->nsettings; k++) {
        const lt_param_setting *st = &spec->settings[k];
        lt_format_double(st->prior.a, x, sizeof x);
        lt_format_double(st->prior.b, y, sizeof y);
        if (!st->fixed)
            add(&b, "%s = %s:%s:%s\n", st->name,
                st->prior.kind == LT_PRIOR_UNIFORM ? "uniform" : "gauss", x, y);
    }
    if (!spec)
        add_final(&b, j, 1);
    add(&b, "[fixed]\n");
    for (size_t k = 0; spec && k < spec->nsettings; k++) {
        lt_format_double(spec->settings[k].value, x, sizeof x);
        if (spec->settings[k].fixed)
            add(&b, "%s = %s\n", spec->settings[k].name, x);
    }
    if (!spec)
        add_final(&b, j, 0);
    /* one line a quantity (a key appears once in a run file), its
     * measurements in the order given */
    add(&b, "[measurements]\n");
    if (spec)
        for (size_t k = 0; k < spec->nmeasurements; k++) {
            const char *name = spec->measurements[k].name;
            size_t first = 0;
            while (strcmp(spec->measurements[first].name, name))
                first++;
            if (first < k)
                continue; /* written with the first of its name */
            add(&b, "%s = ", name);
            for (size_t q = k; q < spec->nmeasurements; q++) {
                if (strcmp(spec->measurements[q].name, name))
                    continue;
                lt_format_double(spec->measurements[q].mean, x, sizeof x);
                lt_format_double(spec->measurements[q].sd, y, sizeof y);
                add(&b, "%s%s:%s", q == k ? "" : ", ", x, y);
            }
            add(&b, "\n");
        }
    else
        for (size_t k = 0; k < j->nmeasures; k++) {
            const char *name = j->measures[k].name;
            size_t first = 0;
            while (strcmp(j->measures[first].name, name))
                first++;
            if (first < k)
                continue;
            add(&b, "%s = ", name);
            for (size_t q = k; q < j->nmeasures; q++)
                if (!strcmp(j->measures[q].name, name))
                    add(&b, "%s%s", q == k ? "" : ", ", j->measures[q].value);
            add(&b, "\n");
        }
    add(&b, "[fit]\nstarts = %ld\n", j->starts);
    add(&b,
        "[sampler]\nmethod = %s\nseed = %lu\nchains = %ld\nthreads = %ld\nwarmup = %ld\n"
        "check_every = %ld\nmax_steps = %ld\nthin = %ld\n",
        j->sampler, j->seed, j->chains, j->threads, j->warmup, j->check_every, j->max_steps,
        j->thin);
    lt_format_double(j->target_ess, x, sizeof x);
    add(&b, "target_ess = %s\n[nested]\nlive_points = %ld\n", x, j->live_points);
    int rc = b.failed ? lt_error_set(err, LT_ENOMEM, path, 0, "out of memory")
                      : lt_file_write_text(path, b.t, err);
    free(b.t);
    return rc;
}

int lt_job_resume(lt_job *j, const char *dir, const char *what, lt_error *err)
{
    char *settings = lt_path_join(dir, "checkpoint/settings.ini", err);
    int rc = !settings ? LT_ENOMEM
             : !lt_path_exists(settings)
                 ? lt_error_set(err, LT_EINPUT, dir, 0,
                                "no checkpoint here (checkpoint/settings.ini is missing): %s",
                                what)
                 : lt_job_read(j, settings, NULL, NULL, 0, err);
    free(settings);
    if (!rc)
        j->out = dir;
    return rc;
}
