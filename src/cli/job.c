/*
 * What a fitting command is asked to do: the run file (RUN.ini) first, then
 * the flags, which override it. Shared by fit and, as they land, sample,
 * compare and run.
 *
 * Run files (our own layout; paths are relative to the run file's folder):
 *   [run]     name
 *   [data]    file, columns, cov (comma-separated), modes, no_err_diag,
 *             zmin, zmax, keep_ids, drop_ids
 *   [model]   name, offset (none | marginal | sampled)
 *   [priors]  PARAM = uniform:LO:HI | gauss:MEAN:SD
 *   [fixed]   PARAM = VALUE
 *   [measurements]  NAME = MEAN:SD  (a Gaussian measurement of a parameter
 *             or derived quantity)
 *   [fit]     starts, seed
 *   [output]  dir, format
 * Unknown sections and keys, over-long lines and bad values are errors
 * naming the file and line.
 */
#include <math.h>
#include <signal.h>
#include <stddef.h>
#include <stdio.h>
#include <unistd.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

void cli_job_init(cli_job *j)
{
    memset(j, 0, sizeof *j);
    lt_survey_spec_init(&j->data);
    j->seed = 1;
    j->starts = 8;
    j->format = "table";
    j->chains = 4;
    j->threads = 0;
    j->warmup = 0; /* 0: max(1000, 250 d) */
    j->check_every = 1000;
    j->max_steps = 200000;
    j->target_ess = 1000;
}

void cli_job_free(cli_job *j)
{
    for (size_t i = 0; i < j->npool; i++)
        free(j->pool[i]);
    lt_ini_free(j->ini);
}

static const char *keep(cli_job *j, char *s)
{
    if (!s || j->npool == sizeof j->pool / sizeof j->pool[0]) {
        free(s);
        return NULL;
    }
    return j->pool[j->npool++] = s;
}

/* A path from the run file, relative to the run file's folder. */
static const char *resolve(cli_job *j, const char *path)
{
    if (path[0] == '/' || !strchr(j->ini->path, '/'))
        return path;
    size_t dir = (size_t)(strrchr(j->ini->path, '/') - j->ini->path);
    char *s = malloc(dir + strlen(path) + 2);
    if (s)
        sprintf(s, "%.*s/%s", (int)dir, j->ini->path, path);
    return keep(j, s);
}

static int parse_bool(const char *v, int *out)
{
    if (!strcmp(v, "true") || !strcmp(v, "yes") || !strcmp(v, "1"))
        return *out = 1, 0;
    if (!strcmp(v, "false") || !strcmp(v, "no") || !strcmp(v, "0"))
        return *out = 0, 0;
    return -1;
}

static int file_error(const cli_job *j, const lt_ini_entry *e, const char *fmt, const char *v)
{
    char msg[512];
    snprintf(msg, sizeof msg, fmt, e->key, v);
    lt_error err;
    lt_error_set(&err, LT_EINPUT, j->ini->path, e->line, "%s", msg);
    return cli_report(&err);
}

/* The job's three lists of NAME = VALUE entries. */
enum { KV_FIX = 0, KV_PRIOR = 1, KV_MEASURE = 2 };
static cli_kv *kv_list(cli_job *j, int kind)
{
    return kind == KV_PRIOR ? j->priors : kind == KV_FIX ? j->fixes : j->measures;
}
static size_t *kv_count(cli_job *j, int kind)
{
    return kind == KV_PRIOR ? &j->npriors : kind == KV_FIX ? &j->nfixes : &j->nmeasures;
}

static int add_kv(cli_kv *list, size_t *n, const char *name, const char *value,
                  const char *file, long line)
{
    if (*n == CLI_MAX_PAR)
        return -1;
    list[(*n)++] = (cli_kv){name, value, file, line};
    return 0;
}

/* "--override section.key=value" (flag: what the user typed, for errors):
 * replace the key's value, or add the key. */
static int apply_set(cli_job *j, const char *flag, const char *text)
{
    const char *dot = strchr(text, '.'), *eq = strchr(text, '=');
    if (!dot || !eq || dot > eq || dot == text || eq == dot + 1)
        return cli_usage_error(flag, "'%s' is not section.key=value", text);
    char section[128], key[128];
    snprintf(section, sizeof section, "%.*s", (int)(dot - text), text);
    snprintf(key, sizeof key, "%.*s", (int)(eq - dot - 1), dot + 1);
    lt_ini *ini = j->ini;
    for (size_t i = 0; i < ini->n; i++)
        if (!strcmp(ini->entries[i].section, section) && !strcmp(ini->entries[i].key, key)) {
            char *v = strdup(eq + 1);
            if (!v)
                return cli_usage_error(flag, "out of memory");
            free(ini->entries[i].value);
            ini->entries[i].value = v;
            ini->entries[i].line = 0;
            return CLI_OK;
        }
    /* a new key: its section must exist or is made */
    const char *sec = NULL;
    for (size_t i = 0; i < ini->nsections; i++)
        if (!strcmp(ini->sections[i], section))
            sec = ini->sections[i];
    if (!sec) {
        char **ns = realloc(ini->sections, (ini->nsections + 1) * sizeof *ns);
        long *nl = ns ? realloc(ini->section_lines, (ini->nsections + 1) * sizeof *nl) : NULL;
        int *nu = nl ? realloc(ini->section_used, (ini->nsections + 1) * sizeof *nu) : NULL;
        if (ns)
            ini->sections = ns;
        if (nl)
            ini->section_lines = nl;
        if (nu)
            ini->section_used = nu;
        char *copy = strdup(section);
        if (!ns || !nl || !nu || !copy) {
            free(copy);
            return cli_usage_error(flag, "out of memory");
        }
        ini->sections[ini->nsections] = copy;
        ini->section_lines[ini->nsections] = 0;
        ini->section_used[ini->nsections] = 0;
        sec = ini->sections[ini->nsections++];
    }
    lt_ini_entry *ne = realloc(ini->entries, (ini->n + 1) * sizeof *ne);
    if (!ne)
        return cli_usage_error(flag, "out of memory");
    ini->entries = ne;
    ne[ini->n] = (lt_ini_entry){(char *)sec, strdup(key), strdup(eq + 1), 0, 0};
    if (!ne[ini->n].key || !ne[ini->n].value)
        return cli_usage_error(flag, "out of memory");
    ini->n++;
    return CLI_OK;
}

int cli_job_load(cli_job *j, const char *path)
{
    return cli_job_load_sets(j, path, NULL, NULL, 0);
}

int cli_job_load_sets(cli_job *j, const char *path, const char *const *sets,
                      const char *const *flags, size_t nsets)
{
    lt_error err;
    lt_error_clear(&err);
    j->ini = lt_ini_read(path, &err);
    if (!j->ini)
        return cli_report(&err);
    for (size_t i = 0; i < nsets; i++)
        if (apply_set(j, flags[i], sets[i]))
            return CLI_USAGE;
    lt_ini *ini = j->ini;
    lt_ini_entry *e;
    lt_ini_has_section(ini, "run");
    if ((e = lt_ini_get(ini, "run", "name")))
        j->name = e->value;
    if ((e = lt_ini_get(ini, "run", "models")))
        j->models = e->value;

    /* [data] */
    if ((e = lt_ini_get(ini, "data", "file")))
        j->data.data = resolve(j, e->value);
    if ((e = lt_ini_get(ini, "data", "columns")))
        j->data.columns = e->value;
    if ((e = lt_ini_get(ini, "data", "cov"))) {
        char *list = strdup(e->value), *save = NULL;
        keep(j, list);
        for (char *p = list ? strtok_r(list, ",", &save) : NULL; p; p = strtok_r(NULL, ",", &save)) {
            p = lt_text_trim(p);
            if (!*p)
                continue;
            if (j->data.ncov == LT_SURVEY_MAX_COV)
                return file_error(j, e, "%s lists more than 16 files%s", "");
            j->data.cov[j->data.ncov++] = resolve(j, p);
        }
    }
    if ((e = lt_ini_get(ini, "data", "modes")))
        j->data.modes = resolve(j, e->value);
    if ((e = lt_ini_get(ini, "data", "no_err_diag")) && parse_bool(e->value, &j->data.no_err_diag))
        return file_error(j, e, "%s = '%s' is not true or false", e->value);
    const char *zkeys[2] = {"zmin", "zmax"};
    double *zs[2] = {&j->data.zmin, &j->data.zmax};
    for (int k = 0; k < 2; k++)
        if ((e = lt_ini_get(ini, "data", zkeys[k])) &&
            (lt_parse_double(e->value, zs[k]) || *zs[k] < 0))
            return file_error(j, e, "%s = '%s' is not a redshift >= 0", e->value);
    if ((e = lt_ini_get(ini, "data", "keep_ids")))
        j->data.keep_ids = resolve(j, e->value);
    if ((e = lt_ini_get(ini, "data", "drop_ids")))
        j->data.drop_ids = resolve(j, e->value);

    /* [model], [priors], [fixed], [measurements] */
    if ((e = lt_ini_get(ini, "model", "name")))
        j->model = e->value;
    if ((e = lt_ini_get(ini, "model", "offset")))
        j->offset = e->value;
    lt_ini_has_section(ini, "priors");
    lt_ini_has_section(ini, "fixed");
    lt_ini_has_section(ini, "measurements");
    for (size_t i = 0; i < ini->n; i++) {
        lt_ini_entry *x = &ini->entries[i];
        int kind = !strcmp(x->section, "priors")         ? KV_PRIOR
                   : !strcmp(x->section, "fixed")        ? KV_FIX
                   : !strcmp(x->section, "measurements") ? KV_MEASURE
                                                         : -1;
        if (kind < 0)
            continue;
        x->used = 1;
        if (add_kv(kv_list(j, kind), kv_count(j, kind), x->key, x->value, ini->path, x->line))
            return file_error(j, x, "too many entries (%s%s)", "");
    }

    /* [fit], [output] */
    long v;
    if ((e = lt_ini_get(ini, "fit", "starts"))) {
        if (lt_parse_long(e->value, 1, 1000, &v))
            return file_error(j, e, "%s = '%s' is not a whole number from 1 to 1000", e->value);
        j->starts = v;
    }
    if ((e = lt_ini_get(ini, "fit", "seed"))) {
        if (lt_parse_long(e->value, 0, 4294967295L, &v))
            return file_error(j, e, "%s = '%s' is not a seed (0 to 4294967295)", e->value);
        j->seed = (unsigned long)v;
    }
    static const struct {
        const char *key;
        long lo, hi;
        size_t off;
    } sk[] = {
        {"chains", 1, 256, offsetof(cli_job, chains)},
        {"threads", 0, 256, offsetof(cli_job, threads)},
        {"warmup", 0, 100000000, offsetof(cli_job, warmup)},
        {"check_every", 10, 100000000, offsetof(cli_job, check_every)},
        {"max_steps", 10, 1000000000, offsetof(cli_job, max_steps)},
    };
    for (size_t k = 0; k < sizeof sk / sizeof sk[0]; k++)
        if ((e = lt_ini_get(ini, "sampler", sk[k].key))) {
            char fmt[96];
            snprintf(fmt, sizeof fmt, "%%s = '%%s' is not a whole number from %ld to %ld",
                     sk[k].lo, sk[k].hi);
            if (lt_parse_long(e->value, sk[k].lo, sk[k].hi, (long *)((char *)j + sk[k].off)))
                return file_error(j, e, fmt, e->value);
        }
    if ((e = lt_ini_get(ini, "sampler", "seed"))) {
        if (lt_parse_long(e->value, 0, 4294967295L, &v))
            return file_error(j, e, "%s = '%s' is not a seed (0 to 4294967295)", e->value);
        j->seed = (unsigned long)v;
    }
    if ((e = lt_ini_get(ini, "sampler", "target_ess")) &&
        (lt_parse_double(e->value, &j->target_ess) || j->target_ess < 1))
        return file_error(j, e, "%s = '%s' is not a number >= 1", e->value);
    if ((e = lt_ini_get(ini, "output", "dir")))
        j->out = resolve(j, e->value);
    if ((e = lt_ini_get(ini, "output", "format")))
        j->format = e->value;
    if (lt_ini_check_used(ini, &err))
        return cli_report(&err);
    return CLI_OK;
}

/* "--prior NAME=SPEC", "--fix NAME=VALUE" or "--measure NAME=MEAN:SD"
 * into the job's lists. */
static void take_entry(cli_args *a, cli_job *j, int kind, const char *v)
{
    static const char *const flags[] = {"--fix", "--prior", "--measure"};
    static const char *const forms[] = {"VALUE", "uniform:LO:HI or NAME=gauss:MEAN:SD",
                                        "MEAN:SD"};
    char *copy = (char *)keep(j, strdup(v));
    char *eq = copy ? strchr(copy, '=') : NULL;
    if (!eq || eq == copy) {
        cli_usage_error(flags[kind], "'%s' is not NAME=%s", v, forms[kind]);
        a->failed = 1;
        return;
    }
    *eq = '\0';
    if (add_kv(kv_list(j, kind), kv_count(j, kind), copy, eq + 1, NULL, 0)) {
        cli_usage_error(flags[kind], "given too many times");
        a->failed = 1;
    }
}

static void take_long(cli_args *a, const char *flag, const char *v, long lo, long hi, long *out)
{
    if (lt_parse_long(v, lo, hi, out)) {
        cli_usage_error(flag, "'%s' is not a whole number from %ld to %ld", v, lo, hi);
        a->failed = 1;
    }
}

int cli_take_job(cli_args *a, cli_job *j)
{
    const char *v, *arg = a->argv[a->i];
    if (!strcmp(arg, "--cov") || !strncmp(arg, "--cov=", 6)) {
        /* a --cov on the command line replaces the run file's list */
        if (!j->cov_from_flags) {
            j->data.ncov = 0;
            j->cov_from_flags = 1;
        }
        return cli_take_data(a, &j->data);
    }
    if (cli_take_data(a, &j->data))
        return 1;
    if (cli_take(a, "--model", &v)) {
        j->model = v;
    } else if (cli_take(a, "--offset", &v)) {
        j->offset = v;
    } else if (cli_take(a, "--prior", &v)) {
        take_entry(a, j, KV_PRIOR, v);
    } else if (cli_take(a, "--fix", &v)) {
        take_entry(a, j, KV_FIX, v);
    } else if (cli_take(a, "--measure", &v)) {
        take_entry(a, j, KV_MEASURE, v);
    } else if (cli_take(a, "--seed", &v)) {
        long s;
        if (lt_parse_long(v, 0, 4294967295L, &s)) {
            cli_usage_error("--seed", "'%s' is not a seed (0 to 4294967295)", v);
            a->failed = 1;
        }
        j->seed = (unsigned long)s;
    } else if (cli_take(a, "--starts", &v)) {
        if (lt_parse_long(v, 1, 1000, &j->starts)) {
            cli_usage_error("--starts", "'%s' is not a whole number from 1 to 1000", v);
            a->failed = 1;
        }
    } else if (cli_take(a, "--chains", &v)) {
        take_long(a, "--chains", v, 1, 256, &j->chains);
    } else if (cli_take(a, "--threads", &v)) {
        take_long(a, "--threads", v, 0, 256, &j->threads);
    } else if (cli_take(a, "--warmup", &v)) {
        take_long(a, "--warmup", v, 0, 100000000, &j->warmup);
    } else if (cli_take(a, "--check-every", &v)) {
        take_long(a, "--check-every", v, 10, 100000000, &j->check_every);
    } else if (cli_take(a, "--max-steps", &v)) {
        take_long(a, "--max-steps", v, 10, 1000000000, &j->max_steps);
    } else if (cli_take(a, "--target-ess", &v)) {
        if (lt_parse_double(v, &j->target_ess) || j->target_ess < 1) {
            cli_usage_error("--target-ess", "'%s' is not a number >= 1", v);
            a->failed = 1;
        }
    } else if (cli_flag(a, "--quiet")) {
        j->quiet = 1;
    } else if (cli_flag(a, "--verbose")) {
        j->verbose = 1;
    } else if (cli_take(a, "--out", &v)) {
        j->out = v;
    } else if (cli_take(a, "--format", &v)) {
        j->format = v;
    } else if (cli_flag(a, "--force")) {
        j->force = 1;
    } else {
        return 0;
    }
    return 1;
}

/* Where each parameter's prior or fix came from, to tell an override (a
 * flag after the run file) from a mistake (two from the same place). */
typedef struct {
    size_t n;
    const char *name[2 * CLI_MAX_PAR];
    const char *src[2 * CLI_MAX_PAR]; /* "file" or "flag" */
    int prior[2 * CLI_MAX_PAR];       /* 1 prior, 0 fix */
} kv_seen;

/* One prior or fix entry into spec; prints the error. */
static int apply_kv(const cli_kv *kv, int prior, lt_like_spec *spec, kv_seen *seen)
{
    const char *where = kv->file ? kv->file : prior ? "--prior" : "--fix";
    lt_error err;
    if (!lt_param_known(kv->name)) {
        lt_error_set(&err, LT_EINPUT, where, kv->line, "unknown parameter '%s' (parameters: %s)",
                     kv->name, lt_param_known_list());
        return cli_report(&err);
    }
    const char *src = kv->file ? "file" : "flag";
    size_t k = 0;
    while (k < seen->n && strcmp(seen->name[k], kv->name))
        k++;
    if (k < seen->n && !strcmp(seen->src[k], src)) {
        if (seen->prior[k] == prior)
            lt_error_set(&err, LT_EINPUT, where, kv->line, "%s is given twice", kv->name);
        else
            lt_error_set(&err, LT_EINPUT, where, kv->line,
                         "%s has both a prior and a fixed value; give one", kv->name);
        return cli_report(&err);
    }
    if (k == seen->n)
        seen->n++;
    seen->name[k] = kv->name, seen->src[k] = src, seen->prior[k] = prior;
    int rc;
    if (prior) {
        lt_prior p;
        rc = lt_prior_parse(kv->value, &p, &err) || lt_like_spec_prior(spec, kv->name, p, &err);
    } else {
        double v;
        if (lt_parse_double(kv->value, &v)) {
            lt_error_set(&err, LT_EINPUT, where, kv->line, "%s = '%s' is not a finite number",
                         kv->name, kv->value);
            return cli_report(&err);
        }
        rc = lt_like_spec_fix(spec, kv->name, v, &err);
    }
    if (rc) {
        lt_error_locate(&err, LT_EINPUT, where, kv->line);
        return cli_report(&err);
    }
    /* where it came from, for the likelihood's own checks */
    lt_param_setting *st = (lt_param_setting *)lt_like_spec_setting(spec, kv->name);
    st->origin = kv->file, st->line = kv->line;
    return CLI_OK;
}

/* One entry NAME = MEAN:SD[, MEAN:SD...] (several measurements of one
 * quantity, as a run file must give them: a key appears once) into spec;
 * prints the error. */
static int apply_measure(const cli_kv *kv, lt_like_spec *spec)
{
    const char *where = kv->file ? kv->file : "--measure";
    lt_error err;
    char buf[1024];
    snprintf(buf, sizeof buf, "%s", kv->value);
    for (char *item = buf, *next; item; item = next) {
        next = strchr(item, ',');
        if (next)
            *next++ = '\0';
        char *colon = strchr(item, ':');
        double mean, sd;
        if (colon)
            *colon = '\0';
        if (!colon || lt_parse_double(lt_text_trim(item), &mean) ||
            lt_parse_double(lt_text_trim(colon + 1), &sd)) {
            lt_error_set(&err, LT_EINPUT, where, kv->line,
                         "%s = '%s' is not MEAN:SD (or MEAN:SD, MEAN:SD...)", kv->name, kv->value);
            return cli_report(&err);
        }
        /* whether the likelihood has the quantity is its check; the
         * origin lets its error name the file and line */
        if (lt_like_spec_measure(spec, kv->name, mean, sd, &err)) {
            lt_error_locate(&err, LT_EINPUT, where, kv->line);
            return cli_report(&err);
        }
        lt_measurement *m = &spec->measurements[spec->nmeasurements - 1];
        m->origin = kv->file, m->line = kv->line;
    }
    return CLI_OK;
}


int cli_job_like_spec(const cli_job *j, const lt_cosmo_model *m, lt_like_spec *spec)
{
    lt_like_spec_init(spec, m);
    if (j->offset) {
        int mode = lt_offset_parse(j->offset);
        if (mode < 0)
            return cli_usage_error("--offset", "'%s' is not none, marginal or sampled", j->offset);
        spec->offset = (lt_offset_mode)mode;
    }
    kv_seen seen;
    memset(&seen, 0, sizeof seen);
    /* file entries first, flags after: a flag overrides the file */
    for (int pass = 0; pass < 2; pass++) {
        for (size_t i = 0; i < j->npriors; i++)
            if ((j->priors[i].file != NULL) == (pass == 0) &&
                (!j->lenient || !lt_param_known(j->priors[i].name) ||
                 lt_param_of_model(m, j->priors[i].name)) &&
                apply_kv(&j->priors[i], 1, spec, &seen))
                return CLI_USAGE;
        for (size_t i = 0; i < j->nfixes; i++)
            if ((j->fixes[i].file != NULL) == (pass == 0) &&
                (!j->lenient || !lt_param_known(j->fixes[i].name) ||
                 lt_param_of_model(m, j->fixes[i].name)) &&
                apply_kv(&j->fixes[i], 0, spec, &seen))
                return CLI_USAGE;
    }
    /* every measurement counts, the run file's and the flags' (two
     * measurements of one quantity are two terms) */
    for (size_t i = 0; i < j->nmeasures; i++)
        if (apply_measure(&j->measures[i], spec))
            return CLI_USAGE;
    return CLI_OK;
}

/* An absolute form of a path (FITS extended names keep their suffix). */
static void absolute(const char *path, char *out, size_t size)
{
    if (path[0] == '/') {
        snprintf(out, size, "%s", path);
        return;
    }
    char cwd[2048];
    if (!getcwd(cwd, sizeof cwd))
        cwd[0] = '\0';
    snprintf(out, size, "%s/%s", cwd, path);
}

int cli_job_write(const cli_job *j, const lt_like_spec *spec, const char *path, lt_error *err)
{
    size_t cap = 65536, len = 0;
    char *t = malloc(cap), p[4200];
    if (!t)
        return lt_error_set(err, LT_ENOMEM, NULL, 0, "out of memory");
#define ADD(...) (len += (size_t)snprintf(t + len, len < cap ? cap - len : 0, __VA_ARGS__))
    ADD("# written by lantern %s: the settings of this run, read by --resume\n", LT_VERSION);
    ADD("[run]\nname = %s\n[data]\n", j->name ? j->name : "sample");
    if (j->data.data) { /* none for measurements alone */
        absolute(j->data.data, p, sizeof p);
        ADD("file = %s\n", p);
    }
    if (j->data.columns)
        ADD("columns = %s\n", j->data.columns);
    if (j->data.ncov) {
        ADD("cov = ");
        for (size_t i = 0; i < j->data.ncov; i++) {
            absolute(j->data.cov[i], p, sizeof p);
            ADD("%s%s", i ? ", " : "", p);
        }
        ADD("\n");
    }
    if (j->data.modes)
        absolute(j->data.modes, p, sizeof p), ADD("modes = %s\n", p);
    ADD("no_err_diag = %s\n", j->data.no_err_diag ? "true" : "false");
    char buf[32];
    if (!isnan(j->data.zmin))
        lt_format_double(j->data.zmin, buf, sizeof buf), ADD("zmin = %s\n", buf);
    if (!isnan(j->data.zmax))
        lt_format_double(j->data.zmax, buf, sizeof buf), ADD("zmax = %s\n", buf);
    if (j->data.keep_ids)
        absolute(j->data.keep_ids, p, sizeof p), ADD("keep_ids = %s\n", p);
    if (j->data.drop_ids)
        absolute(j->data.drop_ids, p, sizeof p), ADD("drop_ids = %s\n", p);
    ADD("[model]\nname = %s\n", j->model);
    if (j->offset)
        ADD("offset = %s\n", j->offset);
    /* priors and fixes as they finally stand (flags over the file) */
    ADD("[priors]\n");
    for (size_t k = 0; k < spec->nsettings; k++) {
        const lt_param_setting *st = &spec->settings[k];
        char a[32], b[32];
        lt_format_double(st->prior.a, a, sizeof a);
        lt_format_double(st->prior.b, b, sizeof b);
        if (!st->fixed)
            ADD("%s = %s:%s:%s\n", st->name,
                st->prior.kind == LT_PRIOR_UNIFORM ? "uniform" : "gauss", a, b);
    }
    ADD("[fixed]\n");
    for (size_t k = 0; k < spec->nsettings; k++) {
        char a[32];
        lt_format_double(spec->settings[k].value, a, sizeof a);
        if (spec->settings[k].fixed)
            ADD("%s = %s\n", spec->settings[k].name, a);
    }
    /* one line a quantity (a key appears once in a run file), its
     * measurements in the order given */
    ADD("[measurements]\n");
    for (size_t k = 0; k < spec->nmeasurements; k++) {
        const char *name = spec->measurements[k].name;
        size_t first = 0;
        while (strcmp(spec->measurements[first].name, name))
            first++;
        if (first < k)
            continue; /* written with the first of its name */
        ADD("%s = ", name);
        for (size_t q = k; q < spec->nmeasurements; q++) {
            char a[32], b[32];
            if (strcmp(spec->measurements[q].name, name))
                continue;
            lt_format_double(spec->measurements[q].mean, a, sizeof a);
            lt_format_double(spec->measurements[q].sd, b, sizeof b);
            ADD("%s%s:%s", q == k ? "" : ", ", a, b);
        }
        ADD("\n");
    }
    ADD("[fit]\nstarts = %ld\n", j->starts);
    ADD("[sampler]\nseed = %lu\nchains = %ld\nthreads = %ld\nwarmup = %ld\ncheck_every = %ld\n"
        "max_steps = %ld\n",
        j->seed, j->chains, j->threads, j->warmup, j->check_every, j->max_steps);
    lt_format_double(j->target_ess, buf, sizeof buf);
    ADD("target_ess = %s\n", buf);
#undef ADD
    int rc = len >= cap ? lt_error_set(err, LT_EINPUT, path, 0, "settings too long")
                        : lt_file_write_text(path, t, err);
    free(t);
    return rc;
}

int cli_job_survey(const cli_job *j, lt_survey **s, lt_error *err)
{
    *s = NULL;
    if (!j->data.data && j->nmeasures) {
        /* measurements alone: survey options would be silently lost */
        const lt_survey_spec *d = &j->data;
        if (d->columns || d->ncov || d->modes || d->keep_ids || d->drop_ids)
            return lt_error_set(err, LT_EINPUT, "--data", 0,
                                "--columns, --cov, --modes and the id lists need a --data "
                                "file");
        return LT_OK;
    }
    return (*s = lt_survey_read(&j->data, err)) ? LT_OK : err->code;
}

int cli_job_model(const cli_job *j, const char *command, lt_like_spec *spec)
{
    if (!j->model)
        return cli_usage_error(command, "--model is required (lcdm-flat, lcdm, wcdm-flat, "
                                        "wcdm, w0wa-flat, w0wa)");
    const lt_cosmo_model *m = lt_cosmo_model_find(j->model);
    if (!m)
        return cli_usage_error("--model",
                               "unknown model '%s' (models: lcdm-flat, lcdm, wcdm-flat, wcdm, "
                               "w0wa-flat, w0wa)",
                               j->model);
    return cli_job_like_spec(j, m, spec);
}

void cli_job_absolute(cli_job *j)
{
    char p[4200];
#define ABS(field)                                    \
    if (field && field[0] != '/') {                   \
        absolute(field, p, sizeof p);                 \
        const char *k = keep(j, strdup(p));           \
        if (k)                                        \
            field = k;                                \
    }
    ABS(j->data.data);
    for (size_t i = 0; i < j->data.ncov; i++)
        ABS(j->data.cov[i]);
    ABS(j->data.modes);
    ABS(j->data.keep_ids);
    ABS(j->data.drop_ids);
#undef ABS
}

/* ---- interruption and checkpoints ---- */

/* The one piece of global state in lantern: set by the signal handler,
 * read by the samplers between steps (the library gets a pointer to it). */
static volatile sig_atomic_t stop_requested;

static void on_signal(int sig)
{
    (void)sig;
    stop_requested = 1;
}

volatile sig_atomic_t *cli_catch_signals(void)
{
    struct sigaction sa;
    memset(&sa, 0, sizeof sa);
    sa.sa_handler = on_signal;
    sigaction(SIGINT, &sa, NULL);
    sigaction(SIGTERM, &sa, NULL);
    sigaction(SIGHUP, &sa, NULL);
    return &stop_requested;
}
