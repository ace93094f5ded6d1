/*
 * lantern's Python face, the C side: the module lantern._lantern, built by
 * `make python` against build/liblantern.a. Functions take and give numpy
 * arrays; a library error becomes a ValueError (bad input) or a
 * RuntimeError (a failed computation) carrying lantern's message, prefixed
 * with its file and line where it has them, as the command line prints it.
 * The Python layer (python/lantern/__init__.py) documents the interface.
 */
#define PY_SSIZE_T_CLEAN
#include <Python.h>
#define NPY_NO_DEPRECATED_API NPY_1_7_API_VERSION
#include <numpy/arrayobject.h>

#include "lantern/lantern.h"

/* Raise lantern's error as the command line would print it. */
static PyObject *raise_error(const lt_error *err)
{
    char buf[LT_ERROR_MSG_MAX + LT_ERROR_FILE_MAX + 32];
    lt_error_format(err, buf, sizeof buf);
    PyErr_SetString(err->code == LT_EINPUT || err->code == LT_EDOMAIN ? PyExc_ValueError
                                                                       : PyExc_RuntimeError,
                    buf);
    return NULL;
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
        return raise_error(&err);
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
            return raise_error(&err);
    }
    if ((seen & (LT_PMASK(LT_P_M_NU) | LT_PMASK(LT_P_OMEGA_B_H2))) && p.t_cmb == 0.0) {
        PyErr_SetString(PyExc_ValueError, "distance: m_nu and omega_b_h2 act only with radiation "
                                          "on: set t_cmb too (2.7255)");
        return NULL;
    }
    lt_cosmo c;
    if (lt_cosmo_init(&c, m, &p, &err))
        return raise_error(&err);
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
            raise_error(&err);
        }
    }
    for (int k = 0; k < NCOLUMNS; k++)
        Py_XDECREF(col[k]);
    Py_DECREF(z);
    return out;
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
    {NULL, NULL, 0, NULL}};

static struct PyModuleDef module = {PyModuleDef_HEAD_INIT, "_lantern",
                                    "lantern's C library (see the lantern package)", -1,
                                    methods, NULL, NULL, NULL, NULL};

PyMODINIT_FUNC PyInit__lantern(void);
PyMODINIT_FUNC PyInit__lantern(void)
{
    import_array();
    PyObject *m = PyModule_Create(&module);
    if (m && PyModule_AddStringConstant(m, "version", LT_VERSION)) {
        Py_DECREF(m);
        return NULL;
    }
    return m;
}
