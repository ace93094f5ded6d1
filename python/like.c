/*
 * lantern._lantern.Likelihood: a run description (lt_job: a run file and
 * keyword settings), its survey and its likelihood, held together; the
 * log-posterior at arrays of points, and lantern's fit and sampler run on
 * it. The Python class lantern.Likelihood wraps it (python/lantern/).
 *
 * Threads: every call that touches the likelihood releases the GIL and
 * takes the object's own lock, so that Python threads may share one
 * object (a sampler may refine the likelihood's compression while it
 * runs). Signals: a fit or sample called from Python's main thread holds
 * SIGINT for its duration, so that Ctrl-C stops it at the library's next
 * safe point (the checkpoint saved, nothing lost) and then raises
 * KeyboardInterrupt; Python's own handler is put back first.
 */
#include <math.h>
#include <signal.h>
#include <string.h>
#include <time.h>

#include <cjson/cJSON.h>
#include <omp.h>

#include "internal.h"

typedef struct {
    PyObject_HEAD
    lt_job job;
    lt_like_spec spec;
    lt_survey *survey;
    lt_like *like;
    lt_like_work *work;       /* for evaluations one point at a time */
    PyThread_type_lock lock;
    PyObject *warnings;       /* the survey's, as (id, text) tuples */
    int ready;                /* job, survey and like all made */
} py_like;

/* The object's lock, taken with the GIL held: the wait, for another
 * thread's sample, say, goes without the GIL, in steps of 50 ms between
 * which Python's signal handlers run, so that Ctrl-C breaks it
 * (KeyboardInterrupt). 0 with the lock, or -1 with a Python error. Nobody
 * waits for the GIL while holding the lock, so this cannot deadlock. */
static int lock_take(py_like *o)
{
    if (PyThread_acquire_lock(o->lock, NOWAIT_LOCK))
        return 0;
    for (;;) {
        PyLockStatus got;
        Py_BEGIN_ALLOW_THREADS
        got = PyThread_acquire_lock_timed(o->lock, 50000, 0);
        Py_END_ALLOW_THREADS
        if (got == PY_LOCK_ACQUIRED)
            return 0;
        if (PyErr_CheckSignals())
            return -1;
    }
}
#define UNLOCK(o) PyThread_release_lock((o)->lock)

/* The work space for one point at a time, made again if a sample's
 * refinement could not (under the lock). */
static lt_like_work *serial_work(py_like *o)
{
    if (!o->work)
        o->work = lt_like_work_alloc(o->like);
    return o->work;
}

/* ---- building ---- */

static void like_clear(py_like *o)
{
    lt_like_work_free(o->work);
    lt_like_free(o->like);
    lt_survey_free(o->survey);
    if (o->ready)
        lt_job_free(&o->job);
    o->work = NULL, o->like = NULL, o->survey = NULL, o->ready = 0;
}

static void like_dealloc(py_like *o)
{
    like_clear(o);
    if (o->lock)
        PyThread_free_lock(o->lock);
    Py_XDECREF(o->warnings);
    Py_TYPE(o)->tp_free((PyObject *)o);
}

/* The survey and likelihood of o->job (which is set); 0 or -1 with a
 * Python error. */
static int like_make(py_like *o)
{
    lt_error err;
    lt_error_clear(&err);
    int rc;
    Py_BEGIN_ALLOW_THREADS
    rc = lt_job_model_spec(&o->job, &o->spec, &err) || lt_job_survey(&o->job, &o->survey, &err) ||
         !(o->like = lt_like_alloc(o->survey, &o->spec, &err)) ||
         !(o->work = lt_like_work_alloc(o->like));
    Py_END_ALLOW_THREADS
    if (rc) {
        if (o->like && !o->work)
            PyErr_NoMemory();
        else
            py_raise(&err);
        return -1;
    }
    if (!(o->warnings = py_survey_warnings(o->survey, &o->job)))
        return -1;
    return 0;
}

static PyObject *like_alloc_object(PyTypeObject *type)
{
    py_like *o = (py_like *)type->tp_alloc(type, 0);
    if (o && !(o->lock = PyThread_allocate_lock())) {
        Py_DECREF(o);
        return PyErr_NoMemory();
    }
    return (PyObject *)o;
}

static PyObject *like_new(PyTypeObject *type, PyObject *args, PyObject *kw)
{
    (void)args, (void)kw;
    return like_alloc_object(type);
}

/* Likelihood(run, settings, func): run a run file's path or None;
 * settings the (flag, value) pairs of the data, model and parameter
 * sections; func the Python function that was called, for its errors. An
 * object is made once: a second __init__ could free the likelihood under
 * another thread's sample. */
static int like_init(py_like *o, PyObject *args, PyObject *kw)
{
    PyObject *run, *settings;
    const char *func = "Likelihood";
    static char *names[] = {"run", "settings", "func", NULL};
    if (!PyArg_ParseTupleAndKeywords(args, kw, "OO|s", names, &run, &settings, &func))
        return -1;
    if (o->ready) {
        PyErr_SetString(PyExc_TypeError, "a Likelihood is made once: make another");
        return -1;
    }
    lt_job_init(&o->job);
    o->ready = 1;
    if (py_job_build(&o->job, run, settings, LT_JOB_DATA | LT_JOB_MODEL | LT_JOB_PARAMS, func) ||
        like_make(o)) {
        like_clear(o);
        return -1;
    }
    return 0;
}

/* The knots a finished run's chains were drawn with: its summary's
 * compression (the exact path, knots 0, where its draws were weighted by
 * the exact likelihood: their logpost is then the exact one). */
static long run_knots(const char *folder, lt_error *err)
{
    char *path = lt_path_join(folder, "summary.json", err), *text = NULL;
    size_t size;
    if (!path || lt_file_read(path, (size_t)64 << 20, &text, &size, err)) {
        free(path);
        return -1;
    }
    cJSON *j = cJSON_Parse(text);
    free(text);
    const cJSON *c = cJSON_GetObjectItemCaseSensitive(j, "compression");
    const cJSON *k = cJSON_GetObjectItemCaseSensitive(c, "knots");
    const cJSON *w = cJSON_GetObjectItemCaseSensitive(c, "importance_weights");
    long knots = cJSON_IsNumber(k) ? (cJSON_IsTrue(w) ? 0 : (long)k->valuedouble) : -2;
    cJSON_Delete(j);
    if (knots == -2)
        lt_error_set(err, LT_EINPUT, path, 0,
                     "not the summary of a sampled model (no compression object)");
    free(path);
    return knots;
}

PyObject *py_like_from_run(PyObject *self, PyObject *args)
{
    (void)self;
    const char *folder;
    int resume = 0;
    if (!PyArg_ParseTuple(args, "s|p", &folder, &resume))
        return NULL;
    py_like *o = (py_like *)like_alloc_object(&py_like_type);
    if (!o)
        return NULL;
    lt_job_init(&o->job);
    o->ready = 1;
    lt_error err;
    lt_error_clear(&err);
    int rc;
    long knots = 0;
    Py_BEGIN_ALLOW_THREADS
    rc = lt_job_resume(&o->job, folder, "not the folder of a lantern sample run", &err);
    /* a stopped run has no summary yet: resuming, the sampler's state
     * says what the run had (and lt_pipeline_run checks the digests) */
    if (!rc && !resume && (knots = run_knots(folder, &err)) < 0)
        rc = err.code;
    Py_END_ALLOW_THREADS
    if (rc) {
        Py_DECREF(o);
        return py_raise(&err);
    }
    if (like_make(o)) {
        Py_DECREF(o);
        return NULL;
    }
    if (resume)
        return (PyObject *)o;
    /* the run's own data and model: its checkpoint's digests say so */
    char *settings = lt_path_join(folder, "checkpoint/settings.ini", &err);
    lt_fingerprint fp;
    lt_fingerprint_like(o->like, &fp);
    fp.part[LT_FP_SETTINGS] = 0;
    size_t K = 0;
    double dchi2;
    lt_like_compression(o->like, &K, &dchi2);
    rc = !settings ? err.code : lt_fingerprint_check(settings, &fp, &err);
    free(settings);
    if (!rc && (size_t)knots != K) {
        lt_like_work_free(o->work);
        o->work = NULL;
        if (!(rc = lt_like_compression_set(o->like, (size_t)knots, &err)) &&
            !(o->work = lt_like_work_alloc(o->like)))
            rc = lt_error_set(&err, LT_ENOMEM, NULL, 0, "out of memory");
    }
    if (rc) {
        Py_DECREF(o);
        return py_raise(&err);
    }
    return (PyObject *)o;
}

/* ---- what it is ---- */

/* 0 if o holds a likelihood, else -1 with a RuntimeError (a subclass's
 * __init__ that failed or never called ours). */
static int check_ready(py_like *o)
{
    if (o->like)
        return 0;
    PyErr_SetString(PyExc_RuntimeError, "this Likelihood was not made (its __init__ failed)");
    return -1;
}
#define READY(o)                                                                              \
    do {                                                                                      \
        if (check_ready(o))                                                                   \
            return NULL;                                                                      \
    } while (0)

/* A tuple of one item a free parameter, item(l, i) each (NULL: failed). */
static PyObject *per_param(py_like *o, PyObject *(*item)(const lt_like *l, size_t i))
{
    READY(o);
    size_t d = lt_like_dim(o->like);
    PyObject *t = PyTuple_New((Py_ssize_t)d);
    for (size_t i = 0; t && i < d; i++) {
        PyObject *e = item(o->like, i);
        if (!e) {
            Py_CLEAR(t);
            break;
        }
        PyTuple_SET_ITEM(t, (Py_ssize_t)i, e);
    }
    return t;
}

static PyObject *param_name(const lt_like *l, size_t i)
{
    return PyUnicode_FromString(lt_like_param_name(l, i));
}

/* A prior as ("uniform", lo, hi) or ("gauss", mean, sd). */
static PyObject *param_prior(const lt_like *l, size_t i)
{
    const lt_prior *p = lt_like_prior(l, i);
    return Py_BuildValue("(sdd)", p->kind == LT_PRIOR_GAUSS ? "gauss" : "uniform", p->a, p->b);
}

static PyObject *like_get_names(py_like *o, void *unused)
{
    (void)unused;
    return per_param(o, param_name);
}

static PyObject *like_get_priors(py_like *o, void *unused)
{
    (void)unused;
    return per_param(o, param_prior);
}

static PyObject *like_get_fixed(py_like *o, void *unused)
{
    (void)unused;
    READY(o);
    PyObject *d = PyDict_New();
    for (size_t k = 0; d && k < lt_like_nfixed(o->like); k++) {
        const lt_param *p = lt_like_fixed(o->like, k);
        PyObject *v = PyFloat_FromDouble(p->value);
        if (!v || PyDict_SetItemString(d, p->name, v))
            Py_CLEAR(d);
        Py_XDECREF(v);
    }
    return d;
}

static PyObject *like_get_info(py_like *o, void *unused)
{
    (void)unused;
    READY(o);
    size_t K = 0;
    double dchi2 = NAN;
    if (lock_take(o)) /* a sample may refine the compression */
        return NULL;
    lt_like_compression(o->like, &K, &dchi2);
    UNLOCK(o);
    return Py_BuildValue("{s:s,s:n,s:l,s:n,s:d,s:n,s:s,s:s}", "model",
                         lt_like_model(o->like)->name, "n_data",
                         (Py_ssize_t)lt_like_ndata(o->like), "dof", lt_like_dof(o->like),
                         "k_params", (Py_ssize_t)lt_like_nparams_counted(o->like), "lognorm",
                         lt_like_lognorm(o->like), "knots", (Py_ssize_t)K, "offset",
                         lt_offset_name(lt_like_offset_mode(o->like)), "data",
                         o->job.data.data ? o->job.data.data : "");
}

static PyObject *like_get_warnings(py_like *o, void *unused)
{
    (void)unused;
    READY(o);
    Py_INCREF(o->warnings);
    return o->warnings;
}

static PyObject *like_guess(py_like *o, PyObject *unused)
{
    (void)unused;
    READY(o);
    size_t d = lt_like_dim(o->like);
    PyObject *a = py_array1(NULL, d);
    if (a)
        lt_like_guess(o->like, PyArray_DATA((PyArrayObject *)a));
    return a;
}

/* ---- evaluating ---- */


/* The points' rows at which a batch is worth OpenMP threads. */
#define PAR_ROWS 64

/* eval(points, exact): points an (n, dim) array; returns the tuple of
 * arrays (logpost, loglike, logprior, chi2, offset), each of n. */
static PyObject *like_eval(py_like *o, PyObject *args)
{
    PyObject *pobj;
    int exact = 0;
    if (!PyArg_ParseTuple(args, "Op", &pobj, &exact))
        return NULL;
    READY(o);
    PyArrayObject *pts =
        (PyArrayObject *)PyArray_FROMANY(pobj, NPY_DOUBLE, 2, 2, NPY_ARRAY_IN_ARRAY);
    if (!pts)
        return NULL;
    size_t d = lt_like_dim(o->like);
    if ((size_t)PyArray_DIM(pts, 1) != d) {
        PyErr_Format(PyExc_ValueError, "a point has %zd values where the likelihood has %zu "
                                       "free parameters",
                     (Py_ssize_t)PyArray_DIM(pts, 1), d);
        Py_DECREF(pts);
        return NULL;
    }
    size_t n = (size_t)PyArray_DIM(pts, 0);
    PyObject *out[5] = {0};
    for (int k = 0; k < 5; k++)
        if (!(out[k] = py_array1(NULL, n))) {
            for (int q = 0; q < k; q++)
                Py_DECREF(out[q]);
            Py_DECREF(pts);
            return NULL;
        }
    double *col[5];
    for (int k = 0; k < 5; k++)
        col[k] = PyArray_DATA((PyArrayObject *)out[k]);
    const double *x = PyArray_DATA(pts);
    int failed = 0;
    if (lock_take(o)) {
        for (int k = 0; k < 5; k++)
            Py_DECREF(out[k]);
        Py_DECREF(pts);
        return NULL;
    }
    Py_BEGIN_ALLOW_THREADS
    const lt_like *l = o->like;
#pragma omp parallel if (n >= PAR_ROWS)
    {
        /* one work space a thread; the object's serves one thread */
        lt_like_work *w = omp_get_num_threads() > 1 ? lt_like_work_alloc(l) : serial_work(o);
        if (!w) {
#pragma omp atomic write
            failed = 1;
        }
#pragma omp for schedule(dynamic, 8)
        for (size_t i = 0; i < n; i++) {
            if (!w)
                continue;
            lt_like_point p;
            (exact ? lt_like_eval_exact : lt_like_eval)(l, w, x + i * d, &p);
            col[0][i] = p.logpost, col[1][i] = p.loglike, col[2][i] = p.logprior;
            col[3][i] = p.chi2, col[4][i] = p.offset;
        }
        if (w != o->work)
            lt_like_work_free(w);
    }
    Py_END_ALLOW_THREADS
    UNLOCK(o);
    Py_DECREF(pts);
    if (failed) {
        for (int k = 0; k < 5; k++)
            Py_DECREF(out[k]);
        return PyErr_NoMemory();
    }
    return Py_BuildValue("(NNNNN)", out[0], out[1], out[2], out[3], out[4]);
}

/* ---- running lantern's methods ---- */

/* The settings a fit or sample call may change, put back after it: a
 * method's keyword arguments hold for that call only (and a sampler
 * settles its warm-up in the job). */
typedef struct {
    unsigned long seed;
    long starts, chains, threads, warmup, check_every, max_steps, thin, live_points;
    double target_ess, figure_width;
    const char *sampler, *out, *format;
    int force, quiet, verbose;
} method_settings;

static void settings_save(const lt_job *j, method_settings *s)
{
    *s = (method_settings){j->seed,        j->starts,     j->chains,     j->threads,
                           j->warmup,      j->check_every, j->max_steps,  j->thin,
                           j->live_points, j->target_ess, j->figure_width, j->sampler,
                           j->out,         j->format,     j->force,      j->quiet,
                           j->verbose};
}

static void settings_restore(lt_job *j, const method_settings *s)
{
    j->seed = s->seed, j->starts = s->starts, j->chains = s->chains, j->threads = s->threads;
    j->warmup = s->warmup, j->check_every = s->check_every, j->max_steps = s->max_steps;
    j->thin = s->thin, j->live_points = s->live_points, j->target_ess = s->target_ess;
    j->figure_width = s->figure_width, j->sampler = s->sampler, j->out = s->out;
    j->format = s->format, j->force = s->force, j->quiet = s->quiet, j->verbose = s->verbose;
}

/* What the hooks need: whether to print progress, the warnings met (as
 * (id, text) tuples: the Python layer warns with them), and the clock. */
typedef struct {
    int progress;
    double target;
    struct timespec start;
    PyObject *warnings;
    const lt_job *job; /* its no_warn: kinds not to warn of, as the command line */
} notes;

static double seconds_since(const struct timespec *t0)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)(t.tv_sec - t0->tv_sec) + 1e-9 * (double)(t.tv_nsec - t0->tv_nsec);
}

/* A line to sys.stderr, with the GIL taken by the caller; Python's own
 * stream, so that a notebook shows it under the cell. */
static void say(const char *text)
{
    PyObject *err = PySys_GetObject("stderr"); /* borrowed */
    if (!err || err == Py_None)
        return;
    PyObject *r = PyObject_CallMethod(err, "write", "s", text);
    if (r) {
        Py_DECREF(r);
        r = PyObject_CallMethod(err, "flush", NULL);
    }
    if (!r)
        PyErr_Clear(); /* a closed stream: progress is not worth failing for */
    Py_XDECREF(r);
}

/* The hooks may be called from any thread, without the GIL: each takes it. */
static void on_check(const lt_progress *d, void *ctx)
{
    notes *n = ctx;
    if (!n->progress)
        return;
    char line[256];
    lt_pipeline_progress_text(d, seconds_since(&n->start), n->target, line, sizeof line - 1);
    strcat(line, "\n");
    PyGILState_STATE g = PyGILState_Ensure();
    say(line);
    PyGILState_Release(g);
}

static void on_note(lt_note_kind kind, const char *id, const char *text, void *ctx)
{
    notes *n = ctx;
    PyGILState_STATE g = PyGILState_Ensure();
    if (kind == LT_NOTE_WARNING && !lt_job_warning_shown(n->job, id)) {
        /* silenced (no_warn) */
    } else if (kind == LT_NOTE_WARNING) {
        PyObject *t = Py_BuildValue("(ss)", id ? id : "", text);
        if (!t || PyList_Append(n->warnings, t))
            PyErr_Clear(); /* out of memory: the warning is lost, the run is not */
        Py_XDECREF(t);
    } else if (n->progress) {
        size_t len = strlen(text);
        char *line = PyMem_Malloc(len + 16);
        if (line) {
            snprintf(line, len + 16, "%s%s\n", kind == LT_NOTE_NEWS ? "lantern: " : "", text);
            say(line);
            PyMem_Free(line);
        }
    }
    clock_gettime(CLOCK_MONOTONIC, &n->start);
    PyGILState_Release(g);
}

static void on_nested(const lt_nested_progress *d, void *ctx)
{
    notes *n = ctx;
    if (!n->progress)
        return;
    char line[320];
    lt_pipeline_nested_text(d, line, sizeof line - 1);
    strcat(line, "\n");
    PyGILState_STATE g = PyGILState_Ensure();
    say(line);
    PyGILState_Release(g);
}

/* SIGINT while a method runs from Python's main thread: the one flag a
 * signal handler can set (a signal has no other way in). */
static volatile sig_atomic_t sigint_seen;

static void on_sigint(int sig)
{
    (void)sig;
    sigint_seen = 1;
}

typedef struct {
    int held;
    struct sigaction old;
    volatile sig_atomic_t local; /* the flag of a call from another thread: never set */
} sig_guard;

/* The stop flag for a run: SIGINT's, held from here to sig_release, when
 * called from the main thread (main_thread), else one no signal sets
 * (Python delivers signals to its main thread only). */
static volatile sig_atomic_t *sig_hold(sig_guard *g, int main_thread)
{
    g->held = 0, g->local = 0;
    if (!main_thread)
        return &g->local;
    struct sigaction sa;
    memset(&sa, 0, sizeof sa);
    sa.sa_handler = on_sigint;
    sa.sa_flags = SA_RESTART; /* a library thread's read or write goes on */
    sigemptyset(&sa.sa_mask);
    sigint_seen = 0;
    if (sigaction(SIGINT, &sa, &g->old))
        return &g->local;
    g->held = 1;
    return &sigint_seen;
}

/* Python's handler back. A SIGINT the method did not act on (stopped 0:
 * it came after the last safe point) is passed on to Python, which raises
 * KeyboardInterrupt at its next check. */
static void sig_release(sig_guard *g, int stopped)
{
    if (g->held) {
        sigaction(SIGINT, &g->old, NULL);
        if (sigint_seen && !stopped)
            PyErr_SetInterrupt();
    }
    g->held = 0;
}

/* One fit or sample call: what it changed in the job, its notes and
 * hooks, what it makes, and SIGINT held. */
typedef struct {
    method_settings saved;
    notes n;
    lt_pipeline_hooks hooks;
    lt_posterior post;
    cJSON *summary;
    lt_error err;
    sig_guard g;
    volatile sig_atomic_t *stop;
} method_call;

/* Apply a method's settings (flags of mask) to the job, saving what they
 * replace; set up the notes (progress printed or not; the target ESS read
 * after the settings) and hold SIGINT. 0, or -1 with a Python error. */
static int method_begin(py_like *o, PyObject *settings, unsigned mask, const char *func,
                        int progress, int main_thread, method_call *c)
{
    memset(c, 0, sizeof *c);
    /* the job's settings are the object's: held from here to method_end */
    if (lock_take(o))
        return -1;
    settings_save(&o->job, &c->saved);
    if (py_job_build(&o->job, Py_None, settings, mask, func) ||
        !(c->n.warnings = PyList_New(0))) {
        settings_restore(&o->job, &c->saved);
        UNLOCK(o);
        return -1;
    }
    c->n.progress = progress, c->n.target = o->job.target_ess, c->n.job = &o->job;
    clock_gettime(CLOCK_MONOTONIC, &c->n.start);
    c->hooks = (lt_pipeline_hooks){.check = on_check, .note = on_note, .ctx = &c->n,
                                   .nested = on_nested};
    lt_error_clear(&c->err);
    c->stop = sig_hold(&c->g, main_thread);
    return 0;
}

/* After the method ran (rc): SIGINT and the job's settings back, the
 * lock released. */
static void method_end(py_like *o, method_call *c, int rc)
{
    sig_release(&c->g, rc == LT_EINTR);
    settings_restore(&o->job, &c->saved);
    UNLOCK(o);
}

static void method_free(method_call *c)
{
    cJSON_Delete(c->summary);
    lt_posterior_free(&c->post);
    Py_XDECREF(c->n.warnings);
}

/* A summary as Python text (the Python layer parses it with json). */
static PyObject *json_text(const cJSON *j)
{
    char *s = cJSON_PrintUnformatted(j);
    if (!s)
        return PyErr_NoMemory();
    PyObject *t = PyUnicode_FromString(s);
    free(s);
    return t;
}

/* fit(settings, progress, main_thread): lantern fit on the likelihood;
 * returns (summary JSON text, warnings). */
static PyObject *like_fit(py_like *o, PyObject *args)
{
    PyObject *settings;
    int progress, main_thread, rc;
    if (!PyArg_ParseTuple(args, "Opp", &settings, &progress, &main_thread))
        return NULL;
    READY(o);
    method_call c;
    if (method_begin(o, settings, LT_JOB_FIT | LT_JOB_OUTPUT, "fit", progress, main_thread, &c))
        return NULL;
    Py_BEGIN_ALLOW_THREADS
    rc = lt_pipeline_fit(o->like, &o->job, c.stop, &c.hooks, &c.post, &c.summary, &c.err);
    Py_END_ALLOW_THREADS
    method_end(o, &c, rc);
    PyObject *res = NULL;
    if (rc == LT_EINTR)
        PyErr_SetString(PyExc_KeyboardInterrupt,
                        "interrupted during the best fit: nothing written");
    else if (rc)
        py_raise(&c.err);
    else {
        PyObject *text = json_text(c.summary);
        res = text ? Py_BuildValue("(NO)", text, c.n.warnings) : NULL;
    }
    method_free(&c);
    return res;
}

/* The posterior's rows as an (n, ncols) array and its weights (None when
 * unweighted). */
static PyObject *posterior_arrays(const lt_posterior *p)
{
    npy_intp dims[2] = {(npy_intp)(p->nchains * p->ndraws), (npy_intp)p->ncols};
    PyObject *rows = py_array2((size_t)dims[0], (size_t)dims[1]);
    PyObject *cols = PyList_New(0);
    PyObject *w = p->weights ? py_array1(p->weights, (size_t)dims[0]) : (Py_INCREF(Py_None), Py_None);
    if (!rows || !cols || !w) {
        Py_XDECREF(rows), Py_XDECREF(cols), Py_XDECREF(w);
        return NULL;
    }
    if (dims[0] > 0)
        memcpy(PyArray_DATA((PyArrayObject *)rows), p->rows,
               (size_t)(dims[0] * dims[1]) * sizeof(double));
    for (size_t c = 0; c < p->ncols; c++) {
        PyObject *s = PyUnicode_FromString(p->cols[c]);
        if (!s || PyList_Append(cols, s)) {
            Py_XDECREF(s), Py_DECREF(rows), Py_DECREF(cols), Py_DECREF(w);
            return NULL;
        }
        Py_DECREF(s);
    }
    return Py_BuildValue("(NNNnnnnnn)", cols, rows, w, (Py_ssize_t)p->nchains,
                         (Py_ssize_t)p->ndraws, (Py_ssize_t)p->first_param,
                         (Py_ssize_t)p->nparams, (Py_ssize_t)p->first_derived,
                         (Py_ssize_t)p->nderived);
}

/* sample(settings, progress, main_thread, resume, evidence): lantern
 * sample on the likelihood (resume: continue the checkpoint of the job's
 * out folder; evidence: add ln Z by nested sampling, as lantern run does);
 * returns (summary JSON text, posterior arrays, warnings, the folder
 * written or None). */
static PyObject *like_sample(py_like *o, PyObject *args)
{
    PyObject *settings;
    int progress, main_thread, resume, evidence, rc, stage = 0;
    if (!PyArg_ParseTuple(args, "Opppp", &settings, &progress, &main_thread, &resume, &evidence))
        return NULL;
    READY(o);
    method_call c;
    if (method_begin(o, settings, LT_JOB_FIT | LT_JOB_SAMPLER | LT_JOB_NESTED | LT_JOB_OUTPUT,
                     "sample", progress, main_thread, &c))
        return NULL;
    const char *out = o->job.out;
    lt_sample_opts so = {out, resume, evidence ? lt_like_model(o->like)->name : NULL, c.stop,
                         &c.hooks};
    Py_BEGIN_ALLOW_THREADS
    rc = lt_pipeline_sample(o->like, &o->job, &o->spec, &so, &c.post, &c.summary, &stage,
                            &c.err);
    /* a refined compression changed the likelihood: its work space too
     * (made again by the next evaluation if there is no room now) */
    lt_like_work_free(o->work);
    o->work = lt_like_work_alloc(o->like);
    Py_END_ALLOW_THREADS
    method_end(o, &c, rc);
    PyObject *res = NULL;
    if (rc == LT_EINTR) {
        char msg[1024];
        if (stage == 0)
            snprintf(msg, sizeof msg, "interrupted during the best fit, before sampling began");
        else if (stage == 2 && out)
            snprintf(msg, sizeof msg,
                     "interrupted during the evidence; the checkpoints in %s/checkpoint are "
                     "kept: continue with lantern.sample(resume='%s', evidence=True)",
                     out, out);
        else if (out)
            snprintf(msg, sizeof msg,
                     "interrupted; the checkpoint in %s/checkpoint holds every draw so far: "
                     "continue with lantern.sample(resume='%s')",
                     out, out);
        else
            snprintf(msg, sizeof msg, "interrupted (no out folder, so nothing was saved)");
        PyErr_SetString(PyExc_KeyboardInterrupt, msg);
    } else if (rc)
        py_raise(&c.err);
    else {
        PyObject *text = json_text(c.summary), *arrays = text ? posterior_arrays(&c.post) : NULL;
        res = arrays ? Py_BuildValue("(NNOz)", text, arrays, c.n.warnings, out) : NULL;
        if (!arrays)
            Py_XDECREF(text);
    }
    method_free(&c);
    return res;
}

static PyGetSetDef like_getset[] = {
    {"names", (getter)like_get_names, NULL, "the free parameters, in order", NULL},
    {"priors", (getter)like_get_priors, NULL, "each free parameter's prior", NULL},
    {"fixed", (getter)like_get_fixed, NULL, "the fixed parameters and their values", NULL},
    {"info", (getter)like_get_info, NULL, "model, data points, dof, ...", NULL},
    {"survey_warnings", (getter)like_get_warnings, NULL, "(id, text) of the survey", NULL},
    {NULL, NULL, NULL, NULL, NULL}};

static PyMethodDef like_methods[] = {
    {"eval", (PyCFunction)like_eval, METH_VARARGS,
     "eval(points, exact): (logpost, loglike, logprior, chi2, offset) arrays"},
    {"guess", (PyCFunction)like_guess, METH_NOARGS, "the fit's first start"},
    {"fit", (PyCFunction)like_fit, METH_VARARGS, "fit(settings, progress, main_thread)"},
    {"sample", (PyCFunction)like_sample, METH_VARARGS,
     "sample(settings, progress, main_thread, resume, evidence)"},
    {NULL, NULL, 0, NULL}};

PyTypeObject py_like_type = {
    PyVarObject_HEAD_INIT(NULL, 0).tp_name = "lantern._lantern.Likelihood",
    .tp_basicsize = sizeof(py_like),
    .tp_flags = Py_TPFLAGS_DEFAULT | Py_TPFLAGS_BASETYPE,
    .tp_doc = "a run description, its survey and likelihood (see lantern.Likelihood)",
    .tp_new = like_new,
    .tp_init = (initproc)like_init,
    .tp_dealloc = (destructor)like_dealloc,
    .tp_methods = like_methods,
    .tp_getset = like_getset,
};
