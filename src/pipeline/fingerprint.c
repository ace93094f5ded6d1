/*
 * Checkpoint fingerprints: digests of what makes a run what it is, in
 * parts, so that a refused --resume can say which part changed. The
 * samplers store one number (the digest of the parts) in their state file;
 * the checkpoint's settings.ini keeps the parts in a comment line,
 * "# fingerprint data=HEX covariance=HEX model=HEX settings=HEX", which the
 * INI reader skips. A checkpoint without that line (made before it existed)
 * is still checked by the number alone.
 */
#include <stdlib.h>
#include <string.h>

#include "lantern/digest.h"
#include "lantern/file.h"
#include "lantern/pipeline.h"
#include "lantern/text.h"

static const char *part_name[LT_FP_NPARTS] = {"data", "covariance", "model", "settings"};
/* What each part covers, as the refusal names it. */
static const char *part_words[LT_FP_NPARTS] = {
    "the data (redshifts, observations or measurements)", "the covariance",
    "the model's settings (model, priors, fixed values)", "the seed or sampler settings"};

void lt_fingerprint_like(const lt_like *l, lt_fingerprint *fp)
{
    const lt_survey *s = lt_like_table(l);
    uint64_t h = LT_DIGEST_START;
    if (s) { /* none for measurements alone */
        int kind = (int)s->kind;
        lt_digest_add(&h, &kind, sizeof kind);
        lt_digest_add(&h, &s->n, sizeof s->n);
        lt_digest_add(&h, s->z, s->n * sizeof *s->z);
        lt_digest_add(&h, s->zhel, s->n * sizeof *s->zhel);
        lt_digest_add(&h, s->obs, s->n * sizeof *s->obs);
        lt_survey_digest_lightcurve(s, &h);
    }
    /* the measurements are data too (the likelihood holds them by name, so
     * their order as given does not matter) */
    for (size_t k = 0; k < lt_like_nmeasurements(l); k++) {
        const lt_measurement *m = lt_like_measurement(l, k);
        double v[2] = {m->mean, m->sd};
        lt_digest_add(&h, m->name, strlen(m->name) + 1);
        lt_digest_add(&h, v, sizeof v);
    }
    /* the BAO and CMB tables: names, redshifts, values; their covariances */
    const lt_probe *probe[2] = {lt_like_bao(l, NULL), lt_like_cmb(l)};
    for (int k = 0; k < 2; k++) {
        const lt_probe *d = probe[k];
        for (size_t i = 0; d && i < d->n; i++) /* the names only: the rest is not set */
            lt_digest_add(&h, d->quantity[i], strlen(d->quantity[i]) + 1);
        if (d) {
            lt_digest_add(&h, d->z, d->n * sizeof *d->z);
            lt_digest_add(&h, d->value, d->n * sizeof *d->value);
        }
    }
    fp->part[LT_FP_DATA] = h;
    h = LT_DIGEST_START;
    if (s)
        lt_cov_digest(s->cov, &h);
    for (int k = 0; k < 2; k++)
        if (probe[k])
            lt_digest_add(&h, probe[k]->cov, probe[k]->n * probe[k]->n * sizeof *probe[k]->cov);
    fp->part[LT_FP_COV] = h;
    h = LT_DIGEST_START;
    lt_digest_add(&h, lt_like_model(l)->name, strlen(lt_like_model(l)->name));
    /* the parameter table as it stands, in its own order (not the order
     * the settings were given in, which a settings file written back for
     * --resume does not keep), field by field (struct padding holds no
     * defined bytes) */
    for (size_t i = 0; i < lt_like_dim(l); i++) {
        const lt_param *p = lt_like_param(l, i);
        int kind = p->prior.kind;
        double v[2] = {p->prior.a, p->prior.b};
        lt_digest_add(&h, p->name, strlen(p->name) + 1);
        lt_digest_add(&h, &kind, sizeof kind);
        lt_digest_add(&h, v, sizeof v);
    }
    for (size_t k = 0; k < lt_like_nfixed(l); k++) {
        const lt_param *p = lt_like_fixed(l, k);
        lt_digest_add(&h, p->name, strlen(p->name) + 1);
        lt_digest_add(&h, &p->value, sizeof p->value);
    }
    int offset = lt_like_offset_mode(l);
    lt_digest_add(&h, &offset, sizeof offset);
    const lt_std_spec *std = lt_like_std(l);
    if (std) { /* nothing without one: other runs' fingerprints are as they were */
        int v[2] = {(int)std->method, std->shared_scatter};
        double x[2] = {std->velocity_dispersion, std->mass_split};
        lt_digest_add(&h, v, sizeof v);
        lt_digest_add(&h, x, sizeof x);
    }
    fp->part[LT_FP_MODEL] = h;
    fp->part[LT_FP_SETTINGS] = LT_DIGEST_START;
}

uint64_t lt_fingerprint_value(const lt_fingerprint *fp)
{
    uint64_t h = LT_DIGEST_START;
    lt_digest_add(&h, fp->part, sizeof fp->part);
    return h;
}

/* The line in settings.ini that holds the parts: a comment, which the INI
 * reader skips, so the file stays a plain run file. */
#define FP_LINE "# fingerprint"

int lt_fingerprint_write(const char *settings, const lt_fingerprint *fp, lt_error *err)
{
    char *text = NULL;
    size_t size = 0;
    int rc = lt_file_read(settings, 1u << 20, &text, &size, err);
    if (rc)
        return rc;
    char line[256];
    size_t used = (size_t)snprintf(line, sizeof line, FP_LINE);
    for (int i = 0; i < LT_FP_NPARTS; i++)
        used += (size_t)snprintf(line + used, sizeof line - used, " %s=%016llx", part_name[i],
                                 (unsigned long long)fp->part[i]);
    char *all = malloc(size + sizeof line + 64);
    if (!all) {
        free(text);
        return lt_error_set(err, LT_ENOMEM, settings, 0, "out of memory");
    }
    snprintf(all, size + sizeof line + 64,
             "%s# digests (FNV-1a) of what the checkpoint was made from; --resume compares them\n"
             "%s\n",
             text, line);
    rc = lt_file_write_text(settings, all, err);
    free(all);
    free(text);
    return rc;
}

int lt_fingerprint_check(const char *settings, const lt_fingerprint *fp, lt_error *err)
{
    char *text = NULL;
    size_t size = 0;
    int rc = lt_file_read(settings, 1u << 20, &text, &size, err);
    if (rc)
        return rc;
    int differs[LT_FP_NPARTS] = {0}, seen[LT_FP_NPARTS] = {0}, ndiff = 0;
    lt_lines it;
    lt_lines_start(&it, text);
    char *s, *f[LT_FP_NPARTS + 3];
    size_t len;
    long nf = -1;
    while ((s = lt_lines_next(&it, &len)))
        if (strncmp(s, FP_LINE " ", strlen(FP_LINE) + 1) == 0) {
            nf = lt_line_split(s + strlen(FP_LINE), 0, f, LT_FP_NPARTS + 1);
            break;
        }
    for (long n = 0; n < nf; n++) {
        char *eq = strchr(f[n], '='), *end = NULL;
        int i = 0;
        if (eq)
            *eq = '\0';
        while (eq && i < LT_FP_NPARTS && strcmp(f[n], part_name[i]) != 0)
            i++;
        unsigned long long v = eq ? strtoull(eq + 1, &end, 16) : 0;
        if (!eq || i == LT_FP_NPARTS || seen[i] || strlen(eq + 1) != 16 || *end) {
            free(text);
            return lt_error_set(err, LT_EINPUT, settings, it.line,
                                "not a fingerprint: data=, covariance=, model= and settings=, "
                                "each with 16 hexadecimal digits");
        }
        seen[i] = 1;
        if (fp->part[i] != 0 && v != fp->part[i]) /* 0: a part the caller does not know */
            differs[i] = 1, ndiff++;
    }
    free(text);
    if (nf < 0)
        return LT_OK; /* an older checkpoint: the samplers check the number alone */
    if (nf != LT_FP_NPARTS)
        return lt_error_set(err, LT_EINPUT, settings, it.line,
                            "the fingerprint must give data=, covariance=, model= and settings=");
    if (!ndiff)
        return LT_OK;
    char what[256] = "";
    for (int i = 0, k = 0; i < LT_FP_NPARTS; i++)
        if (differs[i]) {
            size_t used = strlen(what);
            snprintf(what + used, sizeof what - used, "%s%s",
                     k == 0 ? "" : (k == ndiff - 1 ? " and " : ", "), part_words[i]);
            k++;
        }
    return lt_error_set(err, LT_EINPUT, settings, it.line,
                        "the checkpoint belongs to another run: %s %s from %s it was made with",
                        what, ndiff > 1 ? "differ" : "differs", ndiff > 1 ? "those" : "the one");
}
