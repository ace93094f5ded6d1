"""lantern from Python: distances, surveys, likelihoods, fits and samples
computed by lantern's C library, with numpy arrays in and out.

    >>> import lantern
    >>> d = lantern.distance("lcdm-flat", [0.1, 0.5, 1.0], h0=70, omega_m=0.3)
    >>> d["distmod"]                     # the distance modulus at each redshift, mag
    >>> like = lantern.Likelihood(data="sn.csv", columns="z=zcmb,mu=mu", cov="sys.txt",
    ...                           model="lcdm-flat")
    >>> like.names                       # ('h0', 'omega_m'): theta's order
    >>> like([70.0, 0.3])                # the log-posterior at h0 = 70, omega_m = 0.3
    >>> fit = like.fit()                 # lantern's best fit: fit.best, fit.sd, fit.cov
    >>> post = like.sample(seed=7)       # lantern's sampler: post["omega_m"], post.weights

Settings are the command line's options as keywords: `--target-ess 2000` is
target_ess=2000, `--prior omega_m=uniform:0:1` is priors={"omega_m": (0, 1)},
`--fix h0=70` is fixed={"h0": 70}, `--measure h0=73:1` is
measurements={"h0": (73, 1)}. A run file (the command line's RUN.ini) may come
first; keywords then override it, as flags do.

Errors are Python exceptions carrying lantern's message as the command line
prints it, with the file and line: ValueError for bad input, RuntimeError for
a failed computation, TypeError for a keyword that is not a setting. Warnings
(a prior edge, chains that did not converge, a doubtful table) are Python
warnings of the class LanternWarning, their text starting with lantern's id
in brackets ("[prior-edge] ..."; no_warn="prior-edge" silences one kind).

fit() and sample() run without the GIL, so other Python threads go on. Called
from the main thread, Ctrl-C (or a notebook's interrupt) stops them at the
next safe point, then raises KeyboardInterrupt; a sample with an out folder
keeps its checkpoint, and lantern.sample(resume=FOLDER) continues it.

Build with `make python` (into build/python/); `make install` installs it.
"""
import json as _json
import os as _os
import threading as _threading
import warnings as _warnings

import numpy as _np

from . import _lantern

__version__ = _lantern.version
__all__ = ["distance", "read_survey", "Likelihood", "fit", "sample", "read_run", "Samples",
           "FitResult", "LanternWarning", "MODELS", "DISTANCE_COLUMNS"]

#: The cosmological models, by the names the command line uses.
MODELS = tuple(_lantern.models())

#: The keys of distance()'s result: the columns of `lantern distance --format
#: csv`, in its order.
DISTANCE_COLUMNS = ("z", "comoving_mpc", "transverse_mpc", "luminosity_mpc", "angular_mpc",
                    "distmod", "lookback_gyr", "age_gyr", "hubble_km_s_mpc")


class LanternWarning(UserWarning):
    """A warning of lantern's: its text starts with the kind's id in brackets."""


def distance(model, z, **params):
    """Distances, times and H(z) of one model at the redshifts z.

    model: a model name (see MODELS), e.g. "lcdm-flat", "w0wa".
    z: a number or a 1-D sequence of redshifts >= 0, in any order (kept).
    params: the model's parameters by name (h0, omega_m, omega_de, w0, wa,
        t_cmb, n_eff, m_nu, omega_b_h2), as `lantern distance --set`; the
        others keep lantern's defaults. omega_* are density fractions today.

    Returns a dict of 1-D float arrays keyed by DISTANCE_COLUMNS: z; comoving,
    transverse comoving, luminosity and angular-diameter distances (Mpc);
    the distance modulus (mag); lookback time and age at z (Gyr; an infinite
    age, a universe without a big bang, is inf); H(z) (km/s/Mpc).
    """
    zs = _np.atleast_1d(_np.asarray(z, dtype=float))
    if zs.ndim != 1:
        raise ValueError("distance: z must be a number or a 1-D sequence")
    return _lantern.distance(str(model), zs, {str(k): float(v) for k, v in params.items()})


# ---- settings: keywords into the command line's flags ----

def _number(v):
    """A number as the command line reads it: a whole float as a whole number
    (chains=4.0, max_steps=1e5), another float by repr, the shortest text
    that reads back as the same double."""
    if isinstance(v, (float, _np.floating)):
        v = float(v)
        return "%d" % v if v.is_integer() and abs(v) < 2.0 ** 53 else repr(v)
    return str(v)


def _prior_text(v):
    if isinstance(v, str):
        return v
    v = tuple(v)
    if len(v) == 2:
        return "uniform:%s:%s" % (_number(v[0]), _number(v[1]))
    if len(v) == 3 and v[0] in ("uniform", "gauss"):
        return "%s:%s:%s" % (v[0], _number(v[1]), _number(v[2]))
    raise ValueError("a prior is 'uniform:LO:HI', 'gauss:MEAN:SD', (LO, HI), "
                     "('uniform', LO, HI) or ('gauss', MEAN, SD); not %r" % (v,))


def _measure_texts(v):
    if isinstance(v, str):
        return [v]
    v = list(v)
    if len(v) == 2 and not isinstance(v[0], (tuple, list, str)):
        v = [v]
    out = []
    for m in v:
        if isinstance(m, str):
            out.append(m)
        elif len(m) == 2:
            out.append("%s:%s" % (_number(m[0]), _number(m[1])))
        else:
            raise ValueError("a measurement is (MEAN, SD) or 'MEAN:SD'; not %r" % (m,))
    return out


#: Settings that are switches (a flag without a value): any truth value.
_SWITCHES = {"no_err_diag", "force"}
#: Settings that take several values: a list, or the command line's text.
_LISTS = {"priors", "fixed", "measurements", "columns", "cov", "no_warn"}


def _settings(kw):
    """The (flag, value) pairs of keyword settings, in the order given."""
    out = []
    for key, v in kw.items():
        if isinstance(v, _np.bool_) or key in _SWITCHES:
            v = bool(v)
        if v is None or v is False:
            continue
        if key not in _LISTS and isinstance(v, (list, tuple, dict, set)):
            raise TypeError("%s takes one value, not %s" % (key, type(v).__name__))
        if key == "priors":
            out += [("--prior", "%s=%s" % (n, _prior_text(p))) for n, p in dict(v).items()]
        elif key == "fixed":
            out += [("--fix", "%s=%s" % (n, _number(x))) for n, x in dict(v).items()]
        elif key == "measurements":
            out += [("--measure", "%s=%s" % (n, t)) for n, m in dict(v).items()
                    for t in _measure_texts(m)]
        elif key in ("prior", "fix", "measure"):
            raise TypeError("use %s={NAME: ...} (a dict) for --%s"
                            % ({"prior": "priors", "fix": "fixed",
                                "measure": "measurements"}[key], key))
        elif key == "columns" and isinstance(v, dict):
            out.append(("--columns", ",".join("%s=%s" % (r, c) for r, c in v.items())))
        elif key == "cov" and not isinstance(v, (str, _os.PathLike)):
            out += [("--cov", _os.fspath(c)) for c in v]
        elif key == "no_warn" and not isinstance(v, str):
            out.append(("--no-warn", ",".join(v)))
        elif v is True:
            out.append(("--" + key.replace("_", "-"), None))
        elif isinstance(v, _os.PathLike):
            out.append(("--" + key.replace("_", "-"), _os.fspath(v)))
        else:
            out.append(("--" + key.replace("_", "-"), _number(v)))
    return out


def _run_path(run):
    return None if run is None else _os.fsdecode(_os.fspath(run))


_HERE = _os.path.dirname(_os.path.abspath(__file__))


def _caller_level():
    """The stack level of the first caller outside this package, so that a
    warning points at the user's line, however deep inside it was met."""
    import sys
    f, level = sys._getframe(1), 1
    while f is not None and _os.path.dirname(_os.path.abspath(f.f_code.co_filename)) == _HERE:
        f, level = f.f_back, level + 1
    return level


def _warn(pairs):
    level = _caller_level()
    for wid, text in pairs:
        _warnings.warn("[%s] %s" % (wid, text) if wid else text, LanternWarning,
                       stacklevel=level)


def _main_thread():
    """Whether a fit or sample may hold SIGINT while it runs: called from the
    main thread (where Python delivers signals), with Python's default
    handler in place (not a handler of the user's, nor SIG_IGN)."""
    import signal
    return (_threading.current_thread() is _threading.main_thread()
            and signal.getsignal(signal.SIGINT) is signal.default_int_handler)


# ---- surveys ----

def read_survey(run=None, **settings):
    """A survey table and covariance read as lantern reads them.

    run: a run file (its [data] section), or None. settings: the table's
    options as keywords: data (the file), columns (a dict of role to column,
    or "z=zcmb,mu=mb"), cov (a file or a list), modes, no_err_diag, zmin,
    zmax, keep_ids, drop_ids, calib_cov, table_name, no_warn.

    Returns a dict: kind ("mu", "mag", "dl" or "mb"); z, zhel, the observable
    under its kind's name, err (None without one): arrays of the objects
    kept, in the table's order; cov: the total covariance as lantern builds
    it (the err^2 diagonal, the cov files, the modes), an (n, n) array, or
    None above 16384 objects; cov_kind; id (a list, or None); row (each
    object's 1-based data row in the table); n_read (rows before cuts);
    warnings. A light-curve table also gives x1, color and the other
    columns it maps.
    """
    d = _lantern.read_survey(_run_path(run), _settings(settings))
    _warn(d["warnings"])
    return d


# ---- likelihoods ----

class Likelihood:
    """The log-posterior lantern samples: data, model, terms and priors.

    Likelihood(run=None, **settings): run a run file (its [data], [model],
    [priors], [fixed], [measurements] and, for fit() and sample(), [fit],
    [sampler], [nested] and [output] sections); settings the options of
    `lantern fit` as keywords, overriding the file: data, columns, cov,
    modes, zmin, zmax, bao, bao_cov, rd, cmb, cmb_cov, standardise, scatter,
    model, offset, priors, fixed, measurements, no_warn, ...

    like(theta) is the log-posterior (log-likelihood plus log-prior, -inf
    outside the prior or where the model is unphysical) at theta: a vector
    of len(like.names) values in that order, or a dict by name; a 2-D array
    of points (one a row) gives an array. It is what lantern's samplers
    sample, by the same path (the compressed supernova likelihood where
    lantern sets one up: see evaluate()), so any Python sampler can use it.
    """

    def __init__(self, run=None, **settings):
        self._make(run, settings, "Likelihood")

    def _make(self, run, settings, func):
        self._c = _lantern.Likelihood(_run_path(run), _settings(settings), func)
        _warn(self._c.survey_warnings)
        return self

    def __getattr__(self, name):
        # only for attributes not found: a subclass that skipped our __init__
        if name == "_c":
            raise RuntimeError("this Likelihood was not made: a subclass's __init__ must "
                               "call Likelihood.__init__")
        raise AttributeError(name)

    @classmethod
    def _wrap(cls, c):
        self = cls.__new__(cls)
        self._c = c
        return self

    @property
    def names(self):
        """The free parameters, in the order theta takes them."""
        return self._c.names

    @property
    def dim(self):
        return len(self._c.names)

    @property
    def priors(self):
        """Each free parameter's prior: ("uniform", lo, hi) or ("gauss", mean, sd)."""
        return dict(zip(self._c.names, self._c.priors))

    @property
    def bounds(self):
        """(dim, 2) array of each parameter's support: a uniform prior's edges,
        (-inf, inf) for a Gaussian one."""
        return _np.array([(a, b) if k == "uniform" else (-_np.inf, _np.inf)
                          for k, a, b in self._c.priors]).reshape(-1, 2)

    @property
    def fixed(self):
        """The parameters held fixed (by the user or by lantern's defaults)."""
        return self._c.fixed

    @property
    def info(self):
        """model, n_data, dof, k_params (counted by information criteria),
        lognorm (the likelihood's normalisation, ln), knots (the compressed
        path's, 0: exact), offset (mode), data (the table)."""
        return self._c.info

    def vector(self, params):
        """theta from a dict of every free parameter's value."""
        missing = [n for n in self.names if n not in params]
        extra = [n for n in params if n not in self.names]
        if missing or extra:
            raise ValueError("%s (the free parameters: %s)" % (
                "; ".join(["missing " + ", ".join(missing)] * bool(missing) +
                          ["not free here: " + ", ".join(extra)] * bool(extra)),
                ", ".join(self.names)))
        return _np.array([float(params[n]) for n in self.names])

    def _points(self, theta):
        if isinstance(theta, dict):
            theta = self.vector(theta)
        pts = _np.asarray(theta, dtype=float)
        if pts.ndim not in (1, 2):
            raise ValueError("theta: one point (1-D) or points one a row (2-D)")
        return pts

    def evaluate(self, theta, exact=False):
        """Every part of the posterior at theta (one point or rows of points):
        a dict of logpost, loglike (-chi2_eff / 2), logprior, chi2 and offset
        (the best or sampled offset; 0 without one), floats or arrays.
        exact=True evaluates every object's residual against the full
        covariance; by default a large supernova survey uses lantern's
        compressed path, within 2e-4 of it in chi2 near the posterior."""
        pts = self._points(theta)
        cols = self._c.eval(_np.atleast_2d(pts), bool(exact))
        keys = ("logpost", "loglike", "logprior", "chi2", "offset")
        if pts.ndim == 1:
            return {k: float(c[0]) for k, c in zip(keys, cols)}
        return dict(zip(keys, cols))

    def __call__(self, theta):
        pts = self._points(theta)
        lp = self._c.eval(_np.atleast_2d(pts), False)[0]
        return float(lp[0]) if pts.ndim == 1 else lp

    def guess(self):
        """A starting point: each prior's centre, or better where the data say."""
        return self._c.guess()

    def fit(self, progress=False, **settings):
        """lantern's best fit (`lantern fit`): settings starts, seed, out (a
        folder for summary.json and residuals.csv), force. Returns a FitResult."""
        text, warns = self._c.fit(_settings(settings), bool(progress), _main_thread())
        _warn(warns)
        return FitResult(_json.loads(text))

    def sample(self, progress=True, evidence=False, **settings):
        """lantern's sampler (`lantern sample`): settings seed, sampler
        ("auto", "importance", "mcmc"), chains, threads, warmup, check_every,
        max_steps, target_ess, thin, starts, live_points, out (a folder:
        summary.json, chain files, a checkpoint), force. progress: print a
        line at each convergence check to sys.stderr. evidence: add the
        Bayesian evidence ln Z by nested sampling, as `lantern run` does
        (Samples.ln_z; summary["evidence"]). Returns the posterior as
        Samples."""
        text, arrays, warns, folder = self._c.sample(_settings(settings), bool(progress),
                                                     _main_thread(), False, bool(evidence))
        _warn(warns)
        return Samples._from_posterior(_json.loads(text), arrays, self, folder)

    def __repr__(self):
        i = self.info
        return "<lantern.Likelihood %s: %d data, free %s>" % (i["model"], i["n_data"],
                                                              ", ".join(self.names))


# ---- results ----

class FitResult:
    """A best fit with its Laplace errors (the summary of `lantern fit
    --format json`, as the dict `summary`): best and sd (dicts over the free
    parameters), derived (best values of derived quantities), cov (the
    Laplace covariance, ordered as names), chi2_min, dof, aic, bic,
    converged."""

    def __init__(self, summary):
        self.summary = summary
        self.names = tuple(summary["params"])
        self.best = {n: p["best"] for n, p in summary["params"].items()}
        self.sd = {n: p.get("sd") for n, p in summary["params"].items()}
        self.derived = {n: p["best"] for n, p in summary.get("derived", {}).items()}
        c = summary.get("covariance")
        self.cov = _np.array(c["matrix"], dtype=float) if c else None
        for k in ("chi2_min", "dof", "aic", "bic", "converged"):
            setattr(self, k, summary.get(k))

    def __repr__(self):
        return "<lantern.FitResult %s: chi2_min %.4f, %s>" % (
            self.summary["model"], self.chi2_min,
            ", ".join("%s = %.5g" % (n, v) for n, v in self.best.items()))


class Samples:
    """Draws of a posterior: from sample(), Likelihood.sample() or read_run().

    draws: (n, k) array, the columns named by names (the free parameters,
    params, then the derived quantities, derived); post["omega_m"] is a
    column. weights: one per draw (ones unless weighted); logpost, chi2: per
    draw; chain: each draw's chain (0-based), nchains chains of ndraws
    draws one after another. summary: the run's summary.json as a dict.
    ln_z, ln_z_err: the evidence where it was computed, else NaN. folder:
    where it was written, or None.
    """

    def __init__(self, names, nparams, draws, weights, logpost, chi2, nchains, ndraws,
                 summary, folder=None, likelihood=None):
        self.names = tuple(names)
        self.params = self.names[:nparams]
        self.derived = self.names[nparams:]
        self.draws = draws
        self.weighted = weights is not None
        self.weights = weights if weights is not None else _np.ones(len(draws))
        self.logpost, self.chi2 = logpost, chi2
        self.nchains, self.ndraws = nchains, ndraws
        self.chain = _np.repeat(_np.arange(nchains), ndraws)
        self.summary = summary
        ev = summary.get("evidence") or {}
        #: ln Z and its error (NaN unless the evidence was computed)
        self.ln_z = float("nan") if ev.get("ln_z") is None else ev["ln_z"]
        self.ln_z_err = float("nan") if ev.get("ln_z_err") is None else ev["ln_z_err"]
        self.folder = folder
        self._likelihood = likelihood

    @classmethod
    def _from_posterior(cls, summary, arrays, likelihood, folder):
        cols, rows, w, nchains, ndraws, fp, npar, fd, nder = arrays
        return cls(cols[fp:fp + npar] + cols[fd:fd + nder],
                   npar, _np.ascontiguousarray(rows[:, fp:fd + nder]), w,
                   rows[:, cols.index("logpost")].copy(), rows[:, cols.index("chi2")].copy(),
                   nchains, ndraws, summary, folder, likelihood)

    def __len__(self):
        return len(self.draws)

    def __contains__(self, name):
        return name in self.names

    def __getitem__(self, name):
        try:
            return self.draws[:, self.names.index(name)]
        except ValueError:
            raise KeyError("%r is not a column (the columns: %s)"
                           % (name, ", ".join(self.names))) from None

    def mean(self, name):
        """The weighted posterior mean of a column (NaN entries left out)."""
        x, w = self._column(name)
        return float(_np.average(x, weights=w))

    def std(self, name):
        """The weighted posterior standard deviation of a column."""
        x, w = self._column(name)
        return float(_np.sqrt(_np.average((x - _np.average(x, weights=w)) ** 2, weights=w)))

    def _column(self, name):
        x = self[name]
        keep = ~_np.isnan(x)
        return x[keep], self.weights[keep]

    def likelihood(self):
        """The Likelihood these draws were sampled from: the sampler's own
        for sample()'s result; for a folder, rebuilt from its checkpoint's
        settings (refused if the data or model changed since), with the
        compression the chains were drawn with, so that it gives each draw
        the logpost the chain file holds."""
        if self._likelihood is None:
            if self.folder is None:
                raise ValueError("these draws have no folder to rebuild the likelihood from")
            self._likelihood = Likelihood._wrap(_lantern.like_from_run(self.folder))
        return self._likelihood

    def __repr__(self):
        return "<lantern.Samples %s: %d draws of %s%s>" % (
            self.summary.get("model"), len(self), ", ".join(self.params),
            ", weighted" if self.weighted else "")


def _has_chains(folder):
    return any(_os.path.exists(_os.path.join(folder, f)) for f in ("chains.fits", "chains.csv"))


def read_run(folder, model=None):
    """The draws of a finished `lantern sample --out FOLDER`, or of one model
    of `lantern run --out FOLDER` (model: its name; a run of one model needs
    none): its summary.json and chain file (chains.fits where there is one,
    read bit for bit, else chains.csv), as Samples."""
    folder = _os.fsdecode(_os.fspath(folder))
    if model is not None:
        folder = _os.path.join(folder, str(model))
    elif _os.path.isdir(folder) and not _has_chains(folder):
        models = sorted(d for d in _os.listdir(folder)
                        if _has_chains(_os.path.join(folder, d)))
        if len(models) > 1:
            raise ValueError("%s: a run of %d models (%s): name one with model="
                             % (folder, len(models), ", ".join(models)))
        if models:
            folder = _os.path.join(folder, models[0])
    names, npar, draws, w, lp, chi2, nchains, ndraws = _lantern.read_run(folder)
    with open(_os.path.join(folder, "summary.json")) as f:
        summary = _json.load(f)
    return Samples(names, npar, draws, w, lp, chi2, nchains, ndraws, summary, folder)


# ---- lantern's methods in one call ----

def fit(run=None, progress=False, **settings):
    """`lantern fit`: the best fit of Likelihood(run, **settings), with its
    fit settings (starts, seed, out, force) among the keywords. Returns a
    FitResult."""
    like_kw, method_kw = _split(settings, _FIT_KEYS)
    like = Likelihood.__new__(Likelihood)._make(run, like_kw, "fit")
    return like.fit(progress=progress, **method_kw)


def sample(run=None, resume=None, progress=True, evidence=False, **settings):
    """`lantern sample`: the posterior of Likelihood(run, **settings), with
    the sampler's settings (seed, sampler, chains, threads, warmup,
    check_every, max_steps, target_ess, thin, starts, live_points, out,
    force) among the keywords; evidence=True adds ln Z (see
    Likelihood.sample). resume=FOLDER continues a stopped run's checkpoint
    (the folder holds its settings: give no others; evidence as the run
    was started). Returns Samples."""
    if resume is not None:
        if run is not None or settings:
            raise TypeError("sample(resume=...) takes no other settings: the run's are in "
                            "its checkpoint")
        folder = _os.fspath(resume)
        c = _lantern.like_from_run(folder, True)
        like = Likelihood._wrap(c)
        text, arrays, warns, folder = c.sample([], bool(progress), _main_thread(), True,
                                               bool(evidence))
        _warn(warns)
        return Samples._from_posterior(_json.loads(text), arrays, like, folder)
    like_kw, method_kw = _split(settings, _SAMPLE_KEYS)
    like = Likelihood.__new__(Likelihood)._make(run, like_kw, "sample")
    return like.sample(progress=progress, evidence=evidence, **method_kw)


_FIT_KEYS = {"starts", "seed", "out", "force"}
_SAMPLE_KEYS = _FIT_KEYS | {"sampler", "chains", "threads", "warmup", "check_every",
                            "max_steps", "target_ess", "thin", "live_points"}


def _split(settings, method_keys):
    like = {k: v for k, v in settings.items() if k not in method_keys}
    method = {k: v for k, v in settings.items() if k in method_keys}
    return like, method
