#!/usr/bin/env python3
"""lantern's Python likelihood, fit and sampler (make python; build/python)
against outside sources and against the command line they wrap:

- read_survey against numpy reading the Pantheon 2018 release files itself
  (SOURCE.md: the total covariance is diag(dmb^2) + sys);
- the likelihood against a chi2 written here with astropy's distances
  (astropy.cosmology.FlatLambdaCDM.comoving_transverse_distance) and the
  analytic marginalisation over the offset (Goliath et al. 2001, A&A 380, 6,
  eqs. 8-9: chi2 = A - B^2/C, and ln C/2pi in the marginal likelihood);
- the log-posterior at 1000 draws of the command line's chain files (importance
  sampling with the compressed likelihood; adaptive Metropolis chains) equals
  their logpost column to 1e-10 relative;
- fit and sample from Python equal the command line's for the same seed, bit
  for bit, and a sample stopped by SIGINT raises KeyboardInterrupt, keeps its
  checkpoint, and resumed ends where an unstopped run ends;
- a Metropolis loop written here, driven by the likelihood object, recovers
  the binned Pantheon Omega_m of Scolnic et al. 2018 (ApJ 859, 101; flat LCDM,
  stat+sys: 0.298 +- 0.022, as data/pantheon2018/SOURCE.md quotes it);
- bad input raises ValueError with the command line's message and file:line.
Prints one "ok"/"not ok" line per check."""
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
from pyharness import LAMP, PAN, PYPATH, ROOT, cli, finish, import_lantern, report  # noqa: E402



def flags(kw):
    """The command line's flags for the same settings."""
    out = []
    for k, v in kw.items():
        out += ["--" + k.replace("_", "-"), str(v)]
    return out


def cli_message(stderr):
    """The command line's error, without its "lantern: " prefix."""
    line = [s for s in stderr.splitlines() if s.startswith("lantern: ")][-1]
    return line[len("lantern: "):]


lantern = import_lantern()

tmp = tempfile.mkdtemp(prefix="lantern-py-")
try:
    # ---- surveys: read_survey against numpy on the release files ----
    s = lantern.read_survey(**PAN)
    table = np.loadtxt(PAN["data"], usecols=(1, 2, 4, 5))  # zcmb zhel mb dmb
    sysm = np.loadtxt(PAN["cov"], skiprows=1).reshape(40, 40)
    cov = np.diag(table[:, 3] ** 2) + sysm
    report(s["kind"] == "mag" and np.array_equal(s["z"], table[:, 0])
           and np.array_equal(s["zhel"], table[:, 1]) and np.array_equal(s["mag"], table[:, 2])
           and np.array_equal(s["err"], table[:, 3]) and list(s["row"]) == list(range(1, 41)),
           "read_survey: Pantheon's columns as numpy reads them")
    report(np.max(np.abs(s["cov"] - cov)) <= 1e-15 * np.max(np.abs(cov)),
           "read_survey: the covariance is diag(dmb^2) + sys (SOURCE.md)",
           "max diff %.1e" % np.max(np.abs(s["cov"] - cov)))
    with warnings.catch_warnings(record=True) as w:
        warnings.simplefilter("always")
        lantern.read_survey(**{k: v for k, v in PAN.items() if k != "no_warn"})
    report(len(w) == 1 and issubclass(w[0].category, lantern.LanternWarning)
           and str(w[0].message).startswith("[header-extra-names] " + PAN["data"] + ":1: "),
           "a survey's warning is a LanternWarning with its id, file and line",
           str(w[0].message)[:70] if w else "none")

    # ---- the likelihood against astropy and the marginalised chi2 ----
    from astropy.cosmology import FlatLambdaCDM
    like = lantern.Likelihood(**PAN, model="lcdm-flat")
    report(like.names == ("omega_m",) and like.priors == {"omega_m": ("uniform", 0.0, 1.0)}
           and like.info["n_data"] == 40 and like.info["dof"] == 38,
           "the likelihood's parameters, prior and dof", repr(like))
    cinv = np.linalg.inv(cov)
    worst, good_lp = 0.0, True
    for om in (0.2, 0.3, 0.45):
        dm = FlatLambdaCDM(H0=70, Om0=om, Tcmb0=0).comoving_transverse_distance(
            table[:, 0]).to("Mpc").value
        r = table[:, 2] - 5 * np.log10((1 + table[:, 1]) * dm * 1e5)
        A, B, C = r @ cinv @ r, np.sum(cinv @ r), np.sum(cinv)
        chi2 = A - B * B / C
        e = like.evaluate({"omega_m": om})
        worst = max(worst, abs(e["chi2"] - chi2) / chi2,
                    abs(e["loglike"] + 0.5 * (chi2 + np.log(C / (2 * np.pi)))) / chi2,
                    abs(e["offset"] - B / C) / abs(B / C))
        good_lp &= e["logpost"] == e["loglike"] + e["logprior"] and e["logprior"] == 0.0
    report(worst < 1e-6 and good_lp,
           "chi2, marginal loglike and best offset against astropy (Goliath et al. 2001)",
           "worst relative difference %.1e" % worst)
    report(like([1.2]) == -np.inf and like([0.3]) == like({"omega_m": 0.3})
           and np.array_equal(like(np.array([[0.2], [0.3]])),
                              [like([0.2]), like([0.3])]),
           "-inf outside the prior; a dict, a vector and rows agree")

    # ---- logpost at 1000 draws of the command line's chain files ----
    for name, kw in (("importance sampling, compressed", dict(model="lcdm", seed=4)),
                     ("adaptive Metropolis chains", dict(model="w0wa-flat", sampler="mcmc",
                                                         seed=4, target_ess=500))):
        out = os.path.join(tmp, "cli-" + kw["model"])
        run = cli("sample", *flags(LAMP), *flags(kw), "--out", out, "--quiet")
        post = lantern.read_run(out)
        csv = np.genfromtxt(os.path.join(out, "chains.csv"), delimiter=",", names=True)
        rl = post.likelihood()
        idx = np.linspace(0, len(post) - 1, 1000).astype(int)
        lp = rl(post.draws[idx, :rl.dim])
        rel = np.max(np.abs(lp - post.logpost[idx]) / np.abs(post.logpost[idx]))
        report(run.returncode in (0, 3) and np.array_equal(post.logpost, csv["logpost"])
               and np.array_equal(post["omega_m"], csv["omega_m"]) and rel <= 1e-10,
               "logpost at 1000 draws equals the chain file's column: " + name,
               "%d rows, %d knots, worst relative difference %.1e"
               % (len(post), rl.info["knots"], rel))

    # ---- fit and sample from Python equal the command line's ----
    fit_cli = json.loads(cli("fit", *flags(PAN), "--model", "lcdm", "--format", "json").stdout)
    fit = lantern.fit(**PAN, model="lcdm")
    fit_cli.pop("command"), fit.summary.pop("command")
    report(fit.summary == fit_cli and fit.best["omega_m"] == fit_cli["params"]["omega_m"]["best"]
           and fit.cov.shape == (2, 2), "fit: the summary of 'lantern fit --format json'",
           repr(fit))

    # a run file with BAO and CMB terms, a measurement added by keyword
    combined = os.path.join(ROOT, "configs", "combined-probes.ini")
    fit_cli = json.loads(cli("fit", combined, "--model", "w0wa-flat", "--measure", "h0=73:1",
                             "--no-warn", "header-extra-names", "--format", "json").stdout)
    like_all = lantern.Likelihood(combined, model="w0wa-flat", measurements={"h0": (73, 1)},
                                  no_warn="header-extra-names")
    fit = like_all.fit()
    fit_cli.pop("command"), fit.summary.pop("command")
    report(fit.summary == fit_cli and like_all.names == ("h0", "omega_m", "w0", "wa",
                                                          "omega_b_h2", "rd_h"),
           "a run file's BAO and CMB terms with a measurement: the command line's fit",
           "free: " + ", ".join(like_all.names))

    out_cli, out_py = os.path.join(tmp, "cli-same"), os.path.join(tmp, "py-same")
    cli("sample", *flags(LAMP), "--model", "lcdm-flat", "--seed", "11", "--out", out_cli,
        "--quiet")
    got = lantern.sample(**LAMP, model="lcdm-flat", seed=11, out=out_py, progress=False)
    ref = lantern.read_run(out_cli)
    same = (np.array_equal(got.draws, ref.draws, equal_nan=True) and np.array_equal(got.weights, ref.weights)
            and np.array_equal(got.logpost, ref.logpost) and got.names == ref.names)
    sj = [json.load(open(os.path.join(d, "summary.json"))) for d in (out_cli, out_py)]
    for j in sj:
        j.pop("command")
    report(same and sj[0] == sj[1] and got.folder == out_py
           and open(os.path.join(out_cli, "chains.csv")).read()
           == open(os.path.join(out_py, "chains.csv")).read(),
           "sample: the same draws, weights, summary and chains.csv as the command line",
           "%d draws" % len(got))

    # ---- the evidence: lantern run's, and a quadrature of the likelihood ----
    one = os.path.join(tmp, "one.ini")
    with open(one, "w") as f:
        f.write("[run]\nname = one\nmodels = lcdm-flat\n[data]\nfile = %s\ncolumns = %s\n"
                "cov = %s\nno_warn = header-extra-names\n[sampler]\nseed = 5\n"
                % (PAN["data"], PAN["columns"], PAN["cov"]))
    cli("run", one, "--out", os.path.join(tmp, "run-one"), "--quiet")
    ev_run = json.load(open(os.path.join(tmp, "run-one", "lcdm-flat", "summary.json")))["evidence"]
    ev = lantern.sample(one, model="lcdm-flat", evidence=True, progress=False)
    # Z = e^lognorm * int exp(loglike) dOmega_m over the U(0, 1) prior, by
    # scipy.integrate.quad (the likelihood's exact path)
    from scipy.integrate import quad
    peak = like.evaluate([0.3], exact=True)["loglike"]
    area, _ = quad(lambda om: np.exp(like.evaluate([om], exact=True)["loglike"] - peak), 0, 1,
                   points=[0.3], epsabs=0, epsrel=1e-10, limit=200)
    ln_z = like.info["lognorm"] + peak + np.log(area)
    report(ev.ln_z == ev_run["ln_z"] and ev.ln_z_err == ev_run["ln_z_err"]
           and abs(ev.ln_z - ln_z) < 3 * ev.ln_z_err,
           "sample(evidence=True): lantern run's ln Z, within 3 sigma of scipy's quadrature",
           "ln Z %.4f +- %.4f, quadrature %.4f" % (ev.ln_z, ev.ln_z_err, ln_z))

    # ---- Ctrl-C: KeyboardInterrupt, the checkpoint kept, resumed to the same end ----
    long_kw = dict(model="w0wa-flat", sampler="mcmc", seed=9, target_ess=3000)
    out_full, out_stop = os.path.join(tmp, "cli-full"), os.path.join(tmp, "py-stop")
    cli("sample", *flags(LAMP), *flags(long_kw), "--out", out_full, "--quiet")
    script = ("import lantern, sys\n"
              "try:\n"
              "    lantern.sample(**%r, **%r, out=%r)\n"
              "except KeyboardInterrupt as e:\n"
              "    print('KeyboardInterrupt:', e); sys.exit(7)\n" % (LAMP, long_kw, out_stop))
    p = subprocess.Popen([sys.executable, "-c", script], stdout=subprocess.PIPE,
                         stderr=subprocess.PIPE, text=True,
                         env=dict(os.environ, PYTHONPATH=PYPATH))
    line = p.stderr.readline()
    while line and not line.startswith("sampling:"):
        line = p.stderr.readline()      # the first convergence check: sampling has begun
    p.send_signal(signal.SIGINT)
    t0 = time.time()
    stdout, _ = p.communicate(timeout=120)
    waited = time.time() - t0
    report(line.startswith("sampling:") and p.returncode == 7
           and "lantern.sample(resume='%s')" % out_stop in stdout
           and os.path.exists(os.path.join(out_stop, "checkpoint", "state.bin")),
           "SIGINT stops a sample: KeyboardInterrupt, the checkpoint kept",
           "%.2f s after the signal; %s" % (waited, stdout.strip()[:60]))
    resumed = lantern.sample(resume=out_stop, progress=False)
    full = lantern.read_run(out_full)
    # derived columns hold NaN where a quantity does not exist (no z_t
    # without acceleration): equal NaNs are equal here
    report(np.array_equal(resumed.draws, full.draws, equal_nan=True)
           and np.array_equal(resumed.logpost, full.logpost),
           "resumed from Python, the chains end as the command line's unstopped run",
           "%d chains x %d draws" % (resumed.nchains, resumed.ndraws))

    # ---- a Metropolis loop of our own recovers Pantheon's Omega_m ----
    rng = np.random.default_rng(2018)
    x, lp, chain = np.array([0.5]), like([0.5]), []
    for step in range(24000):
        y = x + 0.03 * rng.standard_normal(1)
        ly = like(y)
        if np.log(rng.uniform()) < ly - lp:
            x, lp = y, ly
        if step >= 4000:
            chain.append(x[0])
    m, sd = np.mean(chain), np.std(chain)
    report(abs(m - 0.298) < 0.25 * 0.022 and abs(sd / 0.022 - 1) < 0.15,
           "a Metropolis loop on the likelihood recovers Omega_m = 0.298 +- 0.022 "
           "(Scolnic et al. 2018)", "%.4f +- %.4f" % (m, sd))

    # ---- the GIL is free while lantern samples ----
    # A thread ticking every millisecond runs all through a GIL-free sample;
    # were the GIL held, it could tick only when a progress line (the one
    # moment lantern takes the GIL) let it: at most a few ticks a line.
    class Lines:
        def __init__(self):
            self.n = 0

        def write(self, text):
            self.n += text.count("\n")

        def flush(self):
            pass

    ticks, done = [0], threading.Event()

    def count():
        while not done.is_set():
            ticks[0] += 1
            time.sleep(0.001)

    lines, stderr = Lines(), sys.stderr
    t = threading.Thread(target=count)
    t.start()
    try:
        sys.stderr = lines
        lantern.sample(**LAMP, model="w0wa-flat", sampler="mcmc", seed=3, target_ess=400,
                       no_warn="prior-edge")
    finally:
        sys.stderr = stderr
        done.set()
        t.join()
    report(lines.n > 0 and ticks[0] >= max(50, 10 * lines.n),
           "another Python thread runs while sample() works (the GIL released)",
           "%d ticks of the other thread, %d progress lines" % (ticks[0], lines.n))

    # ---- parallel batches equal points one at a time ----
    lk = lantern.Likelihood(**LAMP, model="w0wa-flat")
    pts = np.column_stack([rng.uniform(0.1, 0.5, 500), rng.uniform(-1.3, -0.7, 500),
                           rng.uniform(-1, 1, 500)])
    batch = lk(pts)
    one = np.array([lk(p) for p in pts])
    ex = lk.evaluate(pts, exact=True)
    report(np.array_equal(batch, one) and np.all(np.isfinite(batch))
           and np.max(np.abs(lk.evaluate(pts)["chi2"] - ex["chi2"])) < 2e-3,
           "a batch (threads) equals one point at a time; the exact path within 2e-3 in chi2",
           "%d knots, max |dchi2| %.1e" % (lk.info["knots"],
                                           np.max(np.abs(lk.evaluate(pts)["chi2"] - ex["chi2"]))))

    # ---- bad input: the command line's message, file and line ----
    bad = os.path.join(tmp, "bad.ini")
    with open(bad, "w") as f:
        f.write("[data]\nfile = %s\ncolumns = %s\n\n[sampler]\nchains = 0\n"
                % (LAMP["data"], LAMP["columns"]))
    try:
        lantern.Likelihood(bad, model="lcdm")
        msg = None
    except ValueError as e:
        msg = str(e)
    want = cli_message(cli("sample", bad, "--model", "lcdm").stderr)
    report(msg == want and msg.startswith(bad + ":6: "), "a bad run file: ValueError, file:line",
           str(msg))
    table = os.path.join(tmp, "bad.csv")
    with open(table, "w") as f:
        f.write("z,mu,err\n0.1,38.3,0.1\n0.2,forty,0.1\n0.3,40.9,0.1\n")
    try:
        lantern.Likelihood(data=table, columns="z=z,mu=mu,err=err", model="lcdm-flat")
        msg = None
    except ValueError as e:
        msg = str(e)
    want = cli_message(cli("fit", "--data", table, "--columns", "z=z,mu=mu,err=err",
                           "--model", "lcdm-flat").stderr)
    report(msg == want and msg.startswith(table + ":3: "), "a bad table: ValueError, file:line",
           str(msg))
    cases = []
    for call, kind in ((lambda: lantern.Likelihood(**PAN, model="lcdm-flat", chains=4),
                        TypeError),
                       (lambda: lantern.Likelihood(**PAN, model="lcdm-flat",
                                                   priors={"omega_x": (0, 1)}), ValueError),
                       (lambda: like([0.3, 70]), ValueError),
                       (lambda: like({"h0": 70}), ValueError),
                       (lambda: like.fit(chains=4), TypeError),
                       (lambda: lantern.sample(resume=os.path.join(tmp, "nowhere")),
                        ValueError)):
        try:
            call()
            cases.append("no error")
        except kind:
            cases.append("")
        except Exception as e:
            cases.append("%s: %s" % (type(e).__name__, e))
    report(cases == [""] * len(cases),
           "unknown keywords, parameters, points and folders are refused",
           "; ".join(c for c in cases if c))
finally:
    shutil.rmtree(tmp, ignore_errors=True)

finish()
