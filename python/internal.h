/*
 * What the C files of lantern._lantern share: raising lantern's errors,
 * building a run description from the Python layer's settings, and the
 * Likelihood type (like.c). The file that initialises the module defines
 * LANTERN_PY_MODULE before including this: numpy's C API is one table,
 * filled by import_array there and shared by name with the other files.
 */
#ifndef LANTERN_PY_INTERNAL_H
#define LANTERN_PY_INTERNAL_H

#define PY_SSIZE_T_CLEAN
#include <Python.h>
#define NPY_NO_DEPRECATED_API NPY_1_7_API_VERSION
#define PY_ARRAY_UNIQUE_SYMBOL lantern_numpy_api
#ifndef LANTERN_PY_MODULE
#define NO_IMPORT_ARRAY
#endif
#include <numpy/arrayobject.h>

#include "lantern/lantern.h"

/* Raise err as the command line prints it (file:line: message):
 * ValueError for bad input or a domain error, RuntimeError for the rest.
 * Returns NULL. */
PyObject *py_raise(const lt_error *err);

/*
 * Apply settings, a sequence of (flag, value) pairs the Python layer made
 * from keyword arguments ("--chains", "4"; value None for a flag that takes
 * none), to j, after reading run (a run file's path, or None). A flag
 * outside the sections of mask is a TypeError naming the keyword, as
 * Python says of an unexpected one (func: the function's name). "--force"
 * sets j->force. Returns 0, or -1 with a Python error set.
 */
int py_job_build(lt_job *j, PyObject *run, PyObject *settings, unsigned mask, const char *func);

/* The survey's warnings as a list of (id, text) tuples, those j silences
 * left out; NULL with a Python error set. */
PyObject *py_survey_warnings(const lt_survey *s, const lt_job *j);

/* A new 1-D float64 array holding n values of x (NULL: uninitialised). */
PyObject *py_array1(const double *x, size_t n);
/* A new (rows, cols) float64 array, uninitialised. */
PyObject *py_array2(size_t rows, size_t cols);

extern PyTypeObject py_like_type;

/* like_from_run(folder[, resume]): the likelihood a finished sample run
 * was made with, its digests checked and its compression set as the chains
 * had it; with resume, a stopped run's, to continue (like.c). */
PyObject *py_like_from_run(PyObject *self, PyObject *args);

#endif
