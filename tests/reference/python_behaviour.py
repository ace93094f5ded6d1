#!/usr/bin/env python3
"""How lantern's Python package behaves beyond its numbers (make python;
build/python): threads sharing one Likelihood, signals while one waits,
settings that hold for one call, switches and whole numbers given the Python
way, warnings silenced and pointed at the caller's line, folders refused or
written as the command line does, light-curve tables read as lantern reads
them (against numpy on the simulated table), and Samples' weighted moments
(against numpy.average). Prints one "ok"/"not ok" line per check."""
import json
import os
import shutil
import signal
import subprocess
import sys
import tempfile
import threading
import time
import warnings

import numpy as np

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "helpers"))
from pyharness import LAMP, LANTERN, PAN, ROOT, finish, import_lantern, report  # noqa: E402



def raises(call, kind):
    """The message of the exception of kind that call raises, or None."""
    try:
        call()
    except kind as e:
        return str(e) or kind.__name__
    except Exception:  # another kind: not what was asked
        return None
    return None


lantern = import_lantern()

tmp = tempfile.mkdtemp(prefix="lantern-pyb-")
try:
    like = lantern.Likelihood(**LAMP, model="w0wa-flat")

    # ---- a method's settings hold for its call only, whatever other threads do ----
    got = {}

    def background():
        got["bg"] = like.sample(sampler="mcmc", chains=2, target_ess=300, seed=5,
                                progress=False)

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", lantern.LanternWarning)
        t = threading.Thread(target=background)
        t.start()
        fits = [like.fit(starts=1, seed=k) for k in (1, 2)]
        t.join()
        after = like.sample(sampler="mcmc", target_ess=300, seed=5, progress=False)
    report(got["bg"].nchains == 2 and after.nchains == 4
           and all(f.summary["optimizer"]["seed"] == k for f, k in zip(fits, (1, 2))),
           "settings given to one call do not stick or leak into another thread's",
           "background %d chains, then %d; fit seeds %s"
           % (got["bg"].nchains, after.nchains, [f.summary["optimizer"]["seed"] for f in fits]))

    # ---- Ctrl-C breaks a wait for another thread's sample ----
    done = threading.Event()

    def long_sample():
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            like.sample(sampler="mcmc", target_ess=6000, seed=8, progress=False)
        done.set()

    t = threading.Thread(target=long_sample)
    t.start()
    time.sleep(0.2)                     # the sample holds the likelihood
    threading.Timer(0.3, lambda: os.kill(os.getpid(), signal.SIGINT)).start()
    msg = raises(lambda: like([0.3, -1.0, 0.0]), KeyboardInterrupt)
    broke_early = not done.is_set()
    t.join()
    report(msg is not None and broke_early,
           "Ctrl-C breaks a call waiting for another thread's sample (KeyboardInterrupt)",
           "interrupted before the sample ended" if broke_early else "waited for the sample")

    # ---- an object is made once ----
    msg = raises(lambda: like._c.__init__(None, [("--model", "lcdm")]), TypeError)
    report(msg is not None and like.names == ("omega_m", "w0", "wa"),
           "a second __init__ is refused and the object stays whole", str(msg))

    class Mine(lantern.Likelihood):
        def __init__(self):
            pass

    msg = raises(lambda: Mine()([0.3]), RuntimeError)
    report(msg is not None and "Likelihood.__init__" in msg,
           "a subclass that skipped Likelihood.__init__ is told so", str(msg))

    # ---- switches, whole numbers, lists, paths the Python way ----
    plain = lantern.read_survey(**PAN)
    off = lantern.read_survey(**PAN, no_err_diag=np.False_)
    off0 = lantern.read_survey(**PAN, no_err_diag=0)
    on = lantern.read_survey(**PAN, no_err_diag=True)
    report(np.array_equal(plain["cov"], off["cov"]) and np.array_equal(plain["cov"], off0["cov"])
           and np.allclose(np.diag(plain["cov"]) - np.diag(on["cov"]), plain["err"] ** 2,
                           rtol=1e-12, atol=0),
           "no_err_diag=False, 0 or numpy's False leave the err^2 diagonal; True drops it")
    s = lantern.Likelihood(**LAMP, model="lcdm-flat").sample(chains=2.0, max_steps=1e5,
                                                             seed=3.0, progress=False)
    report(s.summary["sampler"]["seed"] == 3, "whole numbers given as floats are accepted",
           "chains=2.0, max_steps=1e5, seed=3.0")
    msg = raises(lambda: lantern.read_survey(**dict(LAMP, modes=[LAMP["modes"]])), TypeError)
    report(msg is not None and "modes" in msg, "a list where one file goes is refused", str(msg))
    msg = raises(lambda: lantern.read_survey(**LAMP, force=True), TypeError)
    report(msg is not None and "force" in msg, "force is a setting of fit and sample only",
           str(msg))
    msg = raises(lambda: lantern.fit(**LAMP, model="lcdm", chains=4), TypeError)
    report(msg is not None and msg.startswith("fit() got an unexpected keyword argument 'chains'"),
           "an unknown keyword names the function called", str(msg))
    run_file = os.path.join(tmp, "run.ini")
    with open(run_file, "w") as f:
        f.write("[data]\nfile = %s\ncolumns = %s\nmodes = %s\n[model]\nname = lcdm-flat\n"
                % (LAMP["data"], LAMP["columns"], LAMP["modes"]))
    report(lantern.Likelihood(run_file.encode()).names == ("omega_m",),
           "a run file's path may be bytes")

    # ---- warnings: silenced by no_warn, pointed at the caller's line ----
    with warnings.catch_warnings(record=True) as w:
        warnings.simplefilter("always")
        lantern.sample(**LAMP, model="w0wa-flat", sampler="mcmc", seed=4, target_ess=300,
                       progress=False); line = sys._getframe().f_lineno  # noqa: E702
        lantern.sample(**LAMP, model="w0wa-flat", sampler="mcmc", seed=4, target_ess=300,
                       progress=False, no_warn="prior-edge")
    edge = [x for x in w if "[prior-edge]" in str(x.message)]
    report(len(edge) == 1 and edge[0].filename == __file__ and edge[0].lineno in (line - 1, line),
           "a sample's warning points at the caller's line; no_warn silences it",
           "%d prior-edge warnings at %s" % (len(edge), [(os.path.basename(x.filename),
                                                          x.lineno) for x in edge]))

    # ---- folders: written, and an earlier one refused without force ----
    out = os.path.join(tmp, "fit")
    f = lantern.fit(**LAMP, model="lcdm-flat", out=out)
    with open(os.path.join(out, "summary.json")) as fh:
        on_disk = json.load(fh)
    report(on_disk["chi2_min"] == f.chi2_min
           and os.path.exists(os.path.join(out, "residuals.csv")),
           "fit(out=) writes summary.json and residuals.csv")
    out = os.path.join(tmp, "sample")
    lantern.sample(**LAMP, model="lcdm-flat", out=out, progress=False)
    msg = raises(lambda: lantern.sample(**LAMP, model="lcdm-flat", out=out, progress=False),
                 ValueError)
    again = lantern.sample(**LAMP, model="lcdm-flat", out=out, force=True, progress=False)
    report(msg is not None and "--force" in msg and again.folder == out,
           "sample(out=) refuses an earlier run's folder without force", str(msg))

    # ---- a lantern run folder: its model by name, or its only one ----
    run_out = os.path.join(tmp, "run")
    subprocess.run([LANTERN, "run", run_file, "--override", "run.models=lcdm-flat,lcdm",
                    "--out", run_out, "--quiet"], capture_output=True)
    both = [lantern.read_run(run_out, model=m) for m in ("lcdm-flat", "lcdm")]
    msg = raises(lambda: lantern.read_run(run_out), ValueError)
    shutil.rmtree(os.path.join(run_out, "lcdm"))
    only = lantern.read_run(run_out)
    report([b.params for b in both] == [("omega_m",), ("omega_m", "omega_de")]
           and msg is not None and "lcdm, lcdm-flat" in msg
           and np.array_equal(only.draws, both[0].draws, equal_nan=True),
           "read_run of a lantern run folder: a model by name, or the only one", str(msg))

    # ---- Samples' weighted moments against numpy.average ----
    x, wts = again["omega_m"], again.weights
    m = np.average(x, weights=wts)
    sd = np.sqrt(np.average((x - m) ** 2, weights=wts))
    report(again.weighted and abs(again.mean("omega_m") - m) <= 1e-15 * m
           and abs(again.std("omega_m") - sd) <= 1e-13 * sd
           and abs(again.mean("omega_m") - again.summary["params"]["omega_m"]["mean"]) < 1e-12,
           "Samples.mean and std are numpy's weighted moments and the summary's mean",
           "%.6f +- %.6f" % (m, sd))

    # ---- a light-curve table, against numpy reading the simulated CSV ----
    sim = os.path.join(tmp, "lc")
    r = subprocess.run([LANTERN, "simulate", os.path.join(ROOT, "data",
                                                          "lamplighter-lightcurves.ini"),
                        "--out", sim], capture_output=True, text=True)
    table = np.genfromtxt(os.path.join(sim, "survey.csv"), delimiter=",", names=True,
                          dtype=None, encoding="utf-8")
    names = table.dtype.names
    cols = ",".join("%s=%s" % (c, c) for c in ("z", "zhel", "mb", "err_mb", "x1", "color", "mass")
                    if c in names)
    lc = lantern.read_survey(data=os.path.join(sim, "survey.csv"), columns=cols)
    same = all(np.array_equal(lc[k], table[c]) for k, c in (("z", "z"), ("mb", "mb"),
                                                              ("x1", "x1"), ("color", "color")))
    report(r.returncode == 0 and lc["kind"] == "mb" and same and len(lc["z"]) == len(table),
           "a light-curve table's columns as numpy reads them (simulated Lamplighter)",
           "%d objects; columns %s" % (len(lc["z"]), cols))
finally:
    shutil.rmtree(tmp, ignore_errors=True)

finish()
