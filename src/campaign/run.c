/* A campaign's output folder while it runs: the manifest that ties it to
 * its campaign file, one record per finished task, and the resume that
 * keeps the records of an earlier run (see include/lantern/campaign.h). */
#include <dirent.h>
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#include <cjson/cJSON.h>

#include "lantern/campaign.h"
#include "lantern/file.h"
#include "lantern/json.h"
#include "lantern/outdir.h"
#include "lantern/report.h"
#include "lantern/version.h"

/* Records and manifests are small; anything bigger is not one of ours. */
#define RECORD_MAX_BYTES (64u << 20)

int lt_campaign_run_init(lt_campaign_run *r, const lt_campaign *c, const char *out, int threads,
                         volatile sig_atomic_t *stop, lt_error *err)
{
    memset(r, 0, sizeof *r);
    r->c = c;
    r->threads = threads;
    r->stop = stop;
    if (!(r->out = strdup(out)) || !(r->tasks = lt_path_join(out, "tasks", err)) ||
        lt_campaign_queue_init(&r->q, c->ntasks) ||
        !(r->results = calloc(c->ntasks + 1, sizeof *r->results))) {
        lt_campaign_run_free(r);
        return lt_error_set(err, LT_ENOMEM, c->path, 0, "out of memory for %zu tasks",
                            c->ntasks);
    }
    r->to_run = c->ntasks;
    return LT_OK;
}

void lt_campaign_run_free(lt_campaign_run *r)
{
    for (size_t i = 0; r->results && i < r->c->ntasks; i++)
        cJSON_Delete(r->results[i]);
    free(r->results);
    lt_campaign_queue_free(&r->q);
    free(r->out);
    free(r->tasks);
    memset(r, 0, sizeof *r);
}

/* dir/tasks/NNNNNN.json, the record of task index. */
static char *record_path(const char *tasks, size_t index, lt_error *err)
{
    char name[32];
    snprintf(name, sizeof name, "%06zu.json", index);
    return lt_path_join(tasks, name, err);
}

/* The JSON object in path; LT_EINPUT naming the file if it is not one. */
static int read_object(const char *path, cJSON **o, lt_error *err)
{
    char *text = NULL;
    size_t size;
    int rc = lt_file_read(path, RECORD_MAX_BYTES, &text, &size, err);
    if (rc)
        return rc;
    *o = cJSON_Parse(text);
    free(text);
    if (!cJSON_IsObject(*o)) {
        cJSON_Delete(*o);
        *o = NULL;
        return lt_error_set(err, LT_EINPUT, path, 0,
                            "is not a JSON object (damaged?); remove it to run its task again");
    }
    return LT_OK;
}

static int write_manifest(const lt_campaign_run *r, lt_error *err)
{
    cJSON *o = cJSON_CreateObject();
    char digest[32];
    snprintf(digest, sizeof digest, "%016llx", (unsigned long long)r->c->digest);
    cJSON_AddStringToObject(o, "campaign", r->c->name);
    cJSON_AddStringToObject(o, "file", r->c->path);
    cJSON_AddStringToObject(o, "digest", digest);
    cJSON_AddNumberToObject(o, "tasks", (double)r->c->ntasks);
    char *path = lt_path_join(r->out, "campaign.json", err);
    int rc = path ? lt_report_write_json(path, o, err) : err->code;
    free(path);
    cJSON_Delete(o);
    return rc;
}

/* tasks/, the manifest, and the marker saying a campaign runs here. */
static int open_folder(const lt_campaign_run *r, lt_error *err)
{
    if (mkdir(r->tasks, 0777) != 0 && errno != EEXIST)
        return lt_error_set(err, LT_EINPUT, r->tasks, 0, "cannot make the folder: %s",
                            strerror(errno));
    int rc = write_manifest(r, err);
    if (!rc)
        rc = lt_outdir_mark(r->out, "lantern " LT_VERSION " campaign (running)", err);
    return rc;
}

/* Remove the task records of an earlier campaign (--force): a record left
 * from it would be taken for a task of this one on a later resume. */
static int clear_tasks(const char *tasks, lt_error *err)
{
    DIR *d = opendir(tasks);
    if (!d)
        return LT_OK;
    struct dirent *e;
    int rc = LT_OK;
    while (!rc && (e = readdir(d))) {
        size_t n = strlen(e->d_name);
        if (n <= 5 || strcmp(e->d_name + n - 5, ".json"))
            continue;
        char *f = lt_path_join(tasks, e->d_name, err);
        if (f)
            remove(f);
        else
            rc = err->code;
        free(f);
    }
    closedir(d);
    return rc;
}

int lt_campaign_out_create(lt_campaign_run *r, int force, lt_error *err)
{
    int rc = lt_outdir_prepare(r->out, force, err);
    if (!rc)
        rc = clear_tasks(r->tasks, err);
    return rc ? rc : open_folder(r, err);
}

int lt_campaign_manifest_file(const char *dir, const char *given, char **file, lt_error *err)
{
    *file = NULL;
    char *path = lt_path_join(dir, "campaign.json", err);
    if (!path)
        return err->code;
    cJSON *o = NULL;
    lt_error e;
    int rc = read_object(path, &o, &e);
    if (rc)
        rc = lt_error_set(err, LT_EINPUT, dir, 0, "no campaign to resume here (campaign.json "
                                                  "is missing or unreadable)");
    const cJSON *f = cJSON_GetObjectItemCaseSensitive(o, "file");
    const char *stored = cJSON_IsString(f) ? f->valuestring : "";
    if (!rc && !given && !stored[0])
        rc = lt_error_set(err, LT_EINPUT, path, 0, "names no campaign file; give it");
    if (!rc && !(*file = strdup(given ? given : stored)))
        rc = lt_error_set(err, LT_ENOMEM, path, 0, "out of memory");
    cJSON_Delete(o);
    free(path);
    return rc;
}

/* Does the manifest of dir carry digest? (Not: another version of the file.) */
static int digest_matches(const char *dir, uint64_t digest, lt_error *err)
{
    char *path = lt_path_join(dir, "campaign.json", err);
    if (!path)
        return -1;
    char want[32];
    snprintf(want, sizeof want, "%016llx", (unsigned long long)digest);
    cJSON *o = NULL;
    lt_error e;
    read_object(path, &o, &e);
    const cJSON *d = cJSON_GetObjectItemCaseSensitive(o, "digest");
    int same = cJSON_IsString(d) && !strcmp(d->valuestring, want);
    cJSON_Delete(o);
    free(path);
    return same;
}

/* A number member, or null where a method may leave a value undefined. */
static int number_or_null(const cJSON *o, const char *key)
{
    const cJSON *v = cJSON_GetObjectItemCaseSensitive(o, key);
    return cJSON_IsNumber(v) || cJSON_IsNull(v);
}

static int string_is(const cJSON *o, const char *key, const char *want)
{
    const cJSON *v = cJSON_GetObjectItemCaseSensitive(o, key);
    return cJSON_IsString(v) && !strcmp(v->valuestring, want);
}

/* Is o the record lt_campaign_task_run wrote for task t of c? Returns
 * LT_OK, or LT_EINPUT naming path and what is wrong. */
static int check_record(const lt_campaign *c, const lt_campaign_task *t, const cJSON *o,
                        const char *path, lt_error *err)
{
    char label[512];
    lt_campaign_task_label(c, t->index, label, sizeof label);
    const cJSON *index = cJSON_GetObjectItemCaseSensitive(o, "task");
    if (!cJSON_IsNumber(index) || index->valuedouble != (double)t->index ||
        !string_is(o, "label", label) || !string_is(o, "dataset", c->data[t->data].name) ||
        !string_is(o, "model", c->models[t->model]->name) ||
        !string_is(o, "method", lt_method_name(t->method)))
        return lt_error_set(err, LT_EINPUT, path, 0,
                            "is not the record of task %zu (%s) of this campaign; remove the "
                            "folder's stray records or start anew with --out",
                            t->index, label);
    if (!string_is(o, "status", "ok"))
        return LT_OK; /* a failed task: it runs again */
    const char *fields[] = {"n_data", "dof", "chi2_min"};
    for (size_t k = 0; k < sizeof fields / sizeof fields[0]; k++)
        if (!number_or_null(o, fields[k]))
            return lt_error_set(err, LT_EINPUT, path, 0, "\"%s\" is missing or not a number",
                                fields[k]);
    if (!cJSON_IsBool(cJSON_GetObjectItemCaseSensitive(o, "converged")))
        return lt_error_set(err, LT_EINPUT, path, 0, "\"converged\" is missing or not true/false");
    const cJSON *params = cJSON_GetObjectItemCaseSensitive(o, "params"), *p;
    if (!cJSON_IsObject(params) || !params->child)
        return lt_error_set(err, LT_EINPUT, path, 0, "\"params\" is missing or empty");
    const char *keys[] = {"estimate", "sd", "lo68", "hi68", "lo95", "hi95"};
    cJSON_ArrayForEach(p, params)
    {
        for (size_t k = 0; k < sizeof keys / sizeof keys[0]; k++)
            if (!number_or_null(p, keys[k]))
                return lt_error_set(err, LT_EINPUT, path, 0,
                                    "params.%s.%s is missing or not a number", p->string,
                                    keys[k]);
        if (c->data[t->data].simulated && !number_or_null(p, "truth"))
            return lt_error_set(err, LT_EINPUT, path, 0,
                                "params.%s.truth is missing or not a number", p->string);
    }
    return LT_OK;
}

int lt_campaign_resume_scan(const lt_campaign *c, const char *dir, cJSON **results,
                            lt_error *err)
{
    char *tasks = lt_path_join(dir, "tasks", err);
    if (!tasks)
        return err->code;
    int rc = LT_OK;
    for (size_t i = 0; !rc && i < c->ntasks; i++) {
        char *path = record_path(tasks, i, err);
        if (!path) {
            rc = err->code;
            break;
        }
        struct stat st;
        cJSON *o = NULL;
        if (stat(path, &st) == 0) { /* no record: the task never finished */
            lt_campaign_task t;
            lt_campaign_task_get(c, i, &t);
            rc = read_object(path, &o, err);
            if (!rc)
                rc = check_record(c, &t, o, path, err);
        }
        if (!rc && string_is(o, "status", "ok"))
            results[i] = o;
        else
            cJSON_Delete(o);
        free(path);
    }
    free(tasks);
    if (rc)
        for (size_t i = 0; i < c->ntasks; i++) {
            cJSON_Delete(results[i]);
            results[i] = NULL;
        }
    return rc;
}

int lt_campaign_out_resume(lt_campaign_run *r, lt_error *err)
{
    int same = digest_matches(r->out, r->c->digest, err);
    if (same < 0)
        return err->code;
    if (!same)
        return lt_error_set(err, LT_EINPUT, r->out, 0,
                            "holds a campaign made from another version of %s (or of its "
                            "scenarios); start it anew with --out",
                            r->c->path);
    int rc = lt_campaign_resume_scan(r->c, r->out, r->results, err);
    if (rc)
        return rc;
    for (size_t i = 0; i < r->c->ntasks; i++)
        if (r->results[i]) {
            lt_campaign_queue_skip(&r->q, i);
            r->to_run--;
        }
    return open_folder(r, err);
}

static double seconds_since(const struct timespec *t0)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)(t.tv_sec - t0->tv_sec) + 1e-9 * (double)(t.tv_nsec - t0->tv_nsec);
}

char *lt_campaign_run_task(const lt_campaign_run *r, size_t index, int attempt, int rank,
                           int fail, int *code, lt_error *werr)
{
    struct timespec t0;
    clock_gettime(CLOCK_MONOTONIC, &t0);
    lt_error err;
    lt_error_clear(&err);
    lt_error_clear(werr);
    cJSON *rec = NULL;
    if (fail)
        *code = lt_error_set(&err, LT_EIO, NULL, 0,
                             "failure injected by LANTERN_TEST_FAIL_ONCE (a test of the retry)");
    else
        *code = lt_campaign_task_run(r->c, index, r->threads, r->stop, &rec, &err);
    if (*code == LT_EINTR)
        return NULL;
    if (*code)
        rec = lt_campaign_task_failed(r->c, index, &err);
    /* where and how long: for the user reading the record, never in the summary */
    char host[256] = "";
    gethostname(host, sizeof host - 1);
    cJSON *where = cJSON_AddObjectToObject(rec, "where");
    cJSON_AddNumberToObject(where, "rank", rank);
    cJSON_AddStringToObject(where, "host", host);
    cJSON_AddNumberToObject(where, "attempt", attempt);
    cJSON_AddNumberToObject(where, "seconds", round(seconds_since(&t0) * 1000) / 1000);
    char *path = record_path(r->tasks, index, werr);
    if (path)
        lt_report_write_json(path, rec, werr);
    free(path);
    char *text = cJSON_PrintUnformatted(rec);
    cJSON_Delete(rec);
    return text;
}

void lt_campaign_run_finished(lt_campaign_run *r, size_t index, int code, const char *text,
                              lt_campaign_progress *p)
{
    cJSON *rec = text ? cJSON_Parse(text) : NULL;
    memset(p, 0, sizeof *p);
    p->ok = code == LT_OK && cJSON_IsObject(rec);
    p->again = lt_campaign_queue_done(&r->q, index, p->ok);
    lt_campaign_task_label(r->c, index, p->label, sizeof p->label);
    const cJSON *where = cJSON_GetObjectItemCaseSensitive(rec, "where");
    const cJSON *secs = cJSON_GetObjectItemCaseSensitive(where, "seconds");
    const cJSON *rank = cJSON_GetObjectItemCaseSensitive(where, "rank");
    p->seconds = cJSON_IsNumber(secs) ? secs->valuedouble : NAN;
    p->rank = cJSON_IsNumber(rank) ? (int)rank->valuedouble : -1;
    const cJSON *e = cJSON_GetObjectItemCaseSensitive(rec, "error");
    snprintf(p->error, sizeof p->error, "%s", cJSON_IsString(e) ? e->valuestring : "no record");
    if (p->again) {
        cJSON_Delete(rec);
        return;
    }
    cJSON_Delete(r->results[index]);
    r->results[index] = rec;
    r->finished_now++;
}

int lt_campaign_out_finish(const lt_campaign_run *run, const lt_campaign_result *res,
                           cJSON *summary, lt_error *err)
{
    char *path = lt_path_join(run->out, "summary.json", err);
    int rc = path ? lt_report_write_json(path, summary, err) : err->code;
    free(path);
    if (!rc)
        rc = lt_campaign_result_write_csv(run->out, res, err);
    if (!rc)
        rc = lt_campaign_result_write_figures(run->out, res, err);
    if (!rc)
        rc = lt_outdir_finish(run->out, "lantern " LT_VERSION " campaign", err);
    return rc;
}
