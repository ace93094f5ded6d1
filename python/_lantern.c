/*
 * lantern's Python face, the C side: the module lantern._lantern, built by
 * `make python` against the library's -fPIC build. Functions take and give
 * numpy arrays; a library error becomes a ValueError (bad input) or a
 * RuntimeError (a failed computation) carrying lantern's message, prefixed
 * with its file and line where it has them, as the command line prints it.
 * Here: distances, surveys, finished runs and the shared helpers; like.c
 * holds the Likelihood type (fit and sample run on it). The Python layer
 * (python/lantern/__init__.py) documents the interface.
 */
#define LANTERN_PY_MODULE
#include "internal.h"

#include <cjson/cJSON.h>

PyObject *py_raise(const lt_error *err)
{
    char buf[LT_ERROR_MSG_MAX + LT_ERROR_FILE_MAX + 32];
    lt_error_format(err, buf, sizeof buf);
    PyErr_SetString(err->code == LT_EINPUT || err->code == LT_EDOMAIN ? PyExc_ValueError
                                                                       : PyExc_RuntimeError,
                    buf);
    return NULL;
}

PyObject *py_array1(const double *x, size_t n)
{
    npy_intp dims[1] = {(npy_intp)n};
    PyObject *a = PyArray_SimpleNew(1, dims, NPY_DOUBLE);
    if (a && x && n)
        memcpy(PyArray_DATA((PyArrayObject *)a), x, n * sizeof *x);
    return a;
}

PyObject *py_array2(size_t rows, size_t cols)
{
    npy_intp dims[2] = {(npy_intp)rows, (npy_intp)cols};
    return PyArray_SimpleNew(2, dims, NPY_DOUBLE);
}

int py_job_build(lt_job *j, PyObject *run, PyObject *settings, unsigned mask, const char *func)
{
    lt_error err;
    lt_error_clear(&err);
    if (run != Py_None) {
        PyObject *b = PyUnicode_EncodeFSDefault(run);
        if (!b)
            return -1;
        int rc;
        Py_BEGIN_ALLOW_THREADS
        rc = lt_job_read(j, PyBytes_AS_STRING(b), NULL, NULL, 0, &err);
        Py_END_ALLOW_THREADS
        Py_DECREF(b);
        if (rc)
            return py_raise(&err), -1;
    }
    PyObject *seq = PySequence_Fast(settings, "settings must be a sequence of (flag, value)");
    if (!seq)
        return -1;
    int status = 0;
    for (Py_ssize_t i = 0; !status && i < PySequence_Fast_GET_SIZE(seq); i++) {
        const char *flag, *value;
        if (!PyArg_ParseTuple(PySequence_Fast_GET_ITEM(seq, i), "sz", &flag, &value)) {
            status = -1;
            break;
        }
        unsigned section = 0;
        int takes = 0;
        if (!strcmp(flag, "--force") && (mask & LT_JOB_OUTPUT) && !value) {
            j->force = 1;
            continue;
        }
        if (strncmp(flag, "--", 2) || !lt_job_flag_find(flag, &section, &takes) ||
            !(section & mask)) {
            /* the keyword as the caller wrote it: the flag without its
             * dashes, '-' as '_' */
            char kw[64];
            snprintf(kw, sizeof kw, "%s", flag + (strncmp(flag, "--", 2) ? 0 : 2));
            for (char *c = kw; *c; c++)
                *c = *c == '-' ? '_' : *c;
            PyErr_Format(PyExc_TypeError, "%s() got an unexpected keyword argument '%s'", func,
                         kw);
            status = -1;
        } else if (!takes && value) {
            /* the Python layer passes a switch's True as no value */
            PyErr_Format(PyExc_ValueError, "%s: a switch, True or False", flag);
            status = -1;
        } else if (lt_job_flag(j, flag, value, &err))
            status = (py_raise(&err), -1);
    }
    Py_DECREF(seq);
    return status;
}

PyObject *py_survey_warnings(const lt_survey *s, const lt_job *j)
{
    PyObject *list = PyList_New(0);
    for (size_t k = 0; list && s && k < s->nwarnings; k++) {
        if (!lt_job_warning_shown(j, s->warning_ids[k]))
            continue;
        PyObject *t = Py_BuildValue("(ss)", s->warning_ids[k], s->warnings[k]);
        if (!t || PyList_Append(list, t))
            Py_CLEAR(list);
        Py_XDECREF(t);
    }
    return list;
}

/* The columns of `lantern distance --format csv`, in its order, and where
 * each comes from (z itself first). */
static const char *const columns[] = {"z",           "comoving_mpc", "transverse_mpc",
                                      "luminosity_mpc", "angular_mpc", "distmod",
                                      "lookback_gyr", "age_gyr",      "hubble_km_s_mpc"};
#define NCOLUMNS 9

/* distance(model, z, params): params a dict of parameter name to number
 * (the keyword arguments of lantern.distance). */
static PyObject *py_distance(PyObject *self, PyObject *args)
{
    (void)self;
    const char *name;
    PyObject *zobj, *params;
    if (!PyArg_ParseTuple(args, "sOO!", &name, &zobj, &PyDict_Type, &params))
        return NULL;
    lt_error err;
    lt_error_clear(&err);
    const lt_cosmo_model *m = lt_cosmo_model_lookup(name, "model", 0, &err);
    if (!m)
        return py_raise(&err);
    lt_cosmo_params p;
    lt_cosmo_params_default(&p);
    unsigned seen = 0;
    PyObject *key, *value;
    Py_ssize_t pos = 0;
    while (PyDict_Next(params, &pos, &key, &value)) {
        const char *k = PyUnicode_AsUTF8(key);
        double v = PyFloat_AsDouble(value);
        if (!k || (v == -1.0 && PyErr_Occurred()))
            return NULL;
        char text[128];
        /* %.17g: the parser reads back exactly this double */
        snprintf(text, sizeof text, "%s=%.17g", k, v);
        if (lt_cosmo_params_parse(&p, m, text, &seen, "distance", &err))
            return py_raise(&err);
    }
    if ((seen & (LT_PMASK(LT_P_M_NU) | LT_PMASK(LT_P_OMEGA_B_H2))) && p.t_cmb == 0.0) {
        PyErr_SetString(PyExc_ValueError, "distance: m_nu and omega_b_h2 act only with radiation "
                                          "on: set t_cmb too (2.7255)");
        return NULL;
    }
    lt_cosmo c;
    if (lt_cosmo_init(&c, m, &p, &err))
        return py_raise(&err);
    PyArrayObject *z = (PyArrayObject *)PyArray_FROMANY(zobj, NPY_DOUBLE, 0, 1,
                                                        NPY_ARRAY_IN_ARRAY);
    if (!z)
        return NULL;
    npy_intp n = PyArray_SIZE(z);
    const double *zs = PyArray_DATA(z);
    for (npy_intp i = 0; i < n; i++)
        if (!(zs[i] >= 0) || !isfinite(zs[i])) {
            char msg[128]; /* PyErr_Format knows no %g */
            snprintf(msg, sizeof msg, "distance: z[%zd] = %g: redshifts must be finite and >= 0",
                     (Py_ssize_t)i, zs[i]);
            Py_DECREF(z);
            PyErr_SetString(PyExc_ValueError, msg);
            return NULL;
        }
    PyObject *out = PyDict_New();
    PyArrayObject *col[NCOLUMNS] = {0};
    for (int k = 0; out && k < NCOLUMNS; k++) {
        npy_intp dims[1] = {n};
        col[k] = (PyArrayObject *)PyArray_SimpleNew(1, dims, NPY_DOUBLE);
        if (!col[k] || PyDict_SetItemString(out, columns[k], (PyObject *)col[k])) {
            Py_CLEAR(out);
            break;
        }
    }
    if (out) {
        double *d[NCOLUMNS];
        for (int k = 0; k < NCOLUMNS; k++)
            d[k] = PyArray_DATA(col[k]);
        memcpy(d[0], zs, (size_t)n * sizeof *zs);
        lt_cosmo_table t = {d[1], d[2], d[3], d[4], d[5], d[6], d[7], d[8]};
        lt_zgrid *g = NULL;
        int rc = LT_OK;
        /* the quadrature runs without the GIL: other Python threads go on */
        Py_BEGIN_ALLOW_THREADS
        g = lt_zgrid_alloc((size_t)n, zs, &err);
        rc = !g ? err.code : lt_cosmo_eval(&c, g, &t, &err);
        lt_zgrid_free(g);
        Py_END_ALLOW_THREADS
        if (rc) {
            Py_CLEAR(out);
            py_raise(&err);
        }
    }
    for (int k = 0; k < NCOLUMNS; k++)
        Py_XDECREF(col[k]);
    Py_DECREF(z);
    return out;
}

/* ---- surveys ---- */

/* d[key] = value, value's reference taken; -1 on failure (value NULL
 * included). */
static int put(PyObject *d, const char *key, PyObject *value)
{
    int rc = value ? PyDict_SetItemString(d, key, value) : -1;
    Py_XDECREF(value);
    return rc;
}

/* A list of n strings (NULL entries as None), or None for no list. */
static PyObject *str_list(char *const *s, size_t n)
{
    if (!s)
        Py_RETURN_NONE;
    PyObject *l = PyList_New((Py_ssize_t)n);
    for (size_t i = 0; l && i < n; i++) {
        PyObject *t = s[i] ? PyUnicode_FromString(s[i]) : (Py_INCREF(Py_None), Py_None);
        if (!t)
            Py_CLEAR(l);
        else
            PyList_SET_ITEM(l, (Py_ssize_t)i, t);
    }
    return l;
}

/* The largest survey whose covariance read_survey returns as a matrix:
 * 16384^2 doubles are 2 GiB. */
#define DENSE_MAX 16384

/* The survey's total covariance as an (n, n) array; None above DENSE_MAX
 * objects. */
static PyObject *dense_cov(const lt_survey *s)
{
    if (s->n > DENSE_MAX)
        Py_RETURN_NONE;
    PyObject *cov = py_array2(s->n, s->n);
    if (cov)
        lt_cov_to_dense(s->cov, PyArray_DATA((PyArrayObject *)cov));
    return cov;
}

/* Each object's 1-based data row in its table, as an integer array. */
static PyObject *data_rows(const lt_survey *s)
{
    npy_intp dim = (npy_intp)s->n;
    PyObject *rows = PyArray_SimpleNew(1, &dim, NPY_LONG);
    for (size_t i = 0; rows && i < s->n; i++)
        ((long *)PyArray_DATA((PyArrayObject *)rows))[i] = s->row[i];
    return rows;
}

/* read_survey(run, settings): the survey a run description reads, as a
 * dict of arrays (see lantern.read_survey). */
static PyObject *py_read_survey(PyObject *self, PyObject *args)
{
    (void)self;
    PyObject *run, *settings;
    if (!PyArg_ParseTuple(args, "OO", &run, &settings))
        return NULL;
    lt_job j;
    lt_job_init(&j);
    lt_survey *s = NULL;
    PyObject *d = NULL;
    if (py_job_build(&j, run, settings, LT_JOB_DATA, "read_survey"))
        goto done;
    if (!j.data.data) {
        PyErr_SetString(PyExc_ValueError, "read_survey: give the table (data=FILE, or a run "
                                          "file with [data] file)");
        goto done;
    }
    lt_error err;
    lt_error_clear(&err);
    Py_BEGIN_ALLOW_THREADS
    s = lt_survey_read(&j.data, &err);
    Py_END_ALLOW_THREADS
    if (!s) {
        py_raise(&err);
        goto done;
    }
    size_t n = s->n;
    npy_intp dim = (npy_intp)n;
    if (!(d = PyDict_New()))
        goto done;
    if (put(d, "kind", PyUnicode_FromString(lt_obs_name(s->kind))) ||
        put(d, "z", py_array1(s->z, n)) || put(d, "zhel", py_array1(s->zhel, n)) ||
        put(d, lt_obs_name(s->kind), py_array1(s->obs, n)) ||
        put(d, "err", s->err ? py_array1(s->err, n) : (Py_INCREF(Py_None), Py_None)) ||
        put(d, "cov", dense_cov(s)) ||
        put(d, "cov_kind", PyUnicode_FromString(lt_cov_kind_name(lt_cov_kind_of(s->cov)))) ||
        put(d, "id", str_list(s->id, n)) || put(d, "row", data_rows(s)) ||
        put(d, "n_read", PyLong_FromSize_t(s->n_read)) ||
        put(d, "warnings", py_survey_warnings(s, &j)))
        goto fail;
    const lt_lightcurve *lc = s->lc;
    if (lc) {
        const struct {
            const char *key;
            const double *x;
        } cols[] = {{"x1", lc->x1},
                    {"color", lc->color},
                    {"mass", lc->mass},
                    {"err_mass", lc->err_mass},
                    {"err_x1", lc->err_x1},
                    {"err_color", lc->err_color},
                    {"cov_mb_x1", lc->cov_mb_x1},
                    {"cov_mb_color", lc->cov_mb_color},
                    {"cov_x1_color", lc->cov_x1_color},
                    {"dz", lc->dz},
                    {"calib_mu", lc->calib_mu},
                    {"err_calib_mu", lc->err_calib_mu}};
        for (size_t k = 0; k < sizeof cols / sizeof *cols; k++)
            if (cols[k].x && put(d, cols[k].key, py_array1(cols[k].x, n)))
                goto fail;
        if (lc->calibrator) {
            PyObject *c = PyArray_SimpleNew(1, &dim, NPY_BOOL);
            if (c)
                for (size_t i = 0; i < n; i++)
                    ((npy_bool *)PyArray_DATA((PyArrayObject *)c))[i] = lc->calibrator[i] != 0;
            if (put(d, "calibrator", c))
                goto fail;
        }
        if (lc->group && put(d, "group", str_list(lc->group, n)))
            goto fail;
    }
    goto done;
fail:
    Py_CLEAR(d);
done:
    lt_survey_free(s);
    lt_job_free(&j);
    return d;
}

/* ---- finished runs ---- */

/* read_run(folder): (names, nparams, draws (n, k), weights or None,
 * logpost, chi2, nchains, ndraws) of a sampled model's folder. */
static PyObject *py_read_run(PyObject *self, PyObject *args)
{
    (void)self;
    const char *dir;
    if (!PyArg_ParseTuple(args, "s", &dir))
        return NULL;
    lt_run_model m;
    memset(&m, 0, sizeof m);
    lt_error err;
    lt_error_clear(&err);
    int rc;
    Py_BEGIN_ALLOW_THREADS
    rc = lt_run_model_load(dir, &m, &err);
    Py_END_ALLOW_THREADS
    if (rc)
        return py_raise(&err);
    size_t nc = m.nparams + m.nderived, n = m.nchains * m.ndraws;
    PyObject *draws = py_array2(n, nc);
    if (draws && n > 0 && nc > 0)
        memcpy(PyArray_DATA((PyArrayObject *)draws), m.draws, n * nc * sizeof(double));
    PyObject *res = Py_BuildValue(
        "(NnNNNNnn)", str_list(m.names, nc), (Py_ssize_t)m.nparams, draws,
        m.weights ? py_array1(m.weights, n) : (Py_INCREF(Py_None), Py_None),
        m.logpost ? py_array1(m.logpost, n) : (Py_INCREF(Py_None), Py_None),
        m.chi2 ? py_array1(m.chi2, n) : (Py_INCREF(Py_None), Py_None), (Py_ssize_t)m.nchains,
        (Py_ssize_t)m.ndraws);
    lt_run_model_free(&m);
    return res;
}

static PyObject *py_models(PyObject *self, PyObject *args)
{
    (void)self, (void)args;
    PyObject *list = PyList_New(0);
    for (size_t i = 0; list && i < lt_cosmo_model_count(); i++) {
        PyObject *s = PyUnicode_FromString(lt_cosmo_model_at(i)->name);
        if (!s || PyList_Append(list, s)) {
            Py_XDECREF(s);
            Py_CLEAR(list);
        } else
            Py_DECREF(s);
    }
    return list;
}

static PyMethodDef methods[] = {
    {"distance", py_distance, METH_VARARGS,
     "distance(model, z, params): columns of `lantern distance`, as a dict of arrays"},
    {"models", py_models, METH_NOARGS, "models(): the model names"},
    {"read_survey", py_read_survey, METH_VARARGS,
     "read_survey(run, settings): the survey's arrays, as a dict"},
    {"read_run", py_read_run, METH_VARARGS, "read_run(folder): a sampled model's draws"},
    {"like_from_run", py_like_from_run, METH_VARARGS,
     "like_from_run(folder): the likelihood a sample run was made with"},
    {NULL, NULL, 0, NULL}};

static struct PyModuleDef module = {PyModuleDef_HEAD_INIT, "_lantern",
                                    "lantern's C library (see the lantern package)", -1,
                                    methods, NULL, NULL, NULL, NULL};

PyMODINIT_FUNC PyInit__lantern(void);
PyMODINIT_FUNC PyInit__lantern(void)
{
    import_array();
    if (PyType_Ready(&py_like_type) < 0)
        return NULL;
    PyObject *m = PyModule_Create(&module);
    Py_INCREF(&py_like_type);
    if (m && (PyModule_AddStringConstant(m, "version", LT_VERSION) ||
              PyModule_AddObject(m, "Likelihood", (PyObject *)&py_like_type))) {
        Py_DECREF(m);
        return NULL;
    }
    return m;
}
