#!/usr/bin/env python3
"""make bench's side-by-side table: lantern's exact and compressed
likelihood paths against the same likelihood in numpy/scipy, for N = 40
(Pantheon 2018 binned with its systematics), 1048 (the Pantheon 2018 table
with a dense covariance simulated here), 10^4 (dense, simulated by
lantern simulate) and 10^5, 10^6 (structured: 100 calibration modes, simulated), plus
MCMC wall time to convergence for flat LCDM and flat w0-wa.
Run from the repository's top folder with /usr/bin/python3."""
import json
import os
import subprocess
import sys
import tempfile
import time

import numpy as np

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
LANTERN = os.path.join(ROOT, "bin", "lantern")
SHARED = os.environ.get("LANTERN_SHARED", os.path.join(ROOT, "..", "shared"))
P = os.path.join(SHARED, "data", "pantheon2018")


def bench(data, extra, exact, evals):
    cmd = [LANTERN, "bench"] + data + ["--model", "lcdm-flat", "--format", "json", "--evals", str(evals)]
    cmd += extra + (["--exact"] if exact else [])
    out = subprocess.run(cmd, capture_output=True, text=True, check=True).stdout
    return json.loads(out)


def mcmc(data, extra, model):
    """Wall time to convergence. The cap is raised to 10^6 steps per chain:
    the w0-wa posterior of the large structured surveys is a curved banana
    that needs several hundred thousand steps; an unconverged run is marked."""
    t0 = time.perf_counter()
    out = subprocess.run([LANTERN, "sample"] + data + extra + ["--model", model, "--format", "json", "--quiet",
                                                              "--max-steps", "1000000"],
                         capture_output=True, text=True)
    wall = time.perf_counter() - t0
    j = json.loads(out.stdout)
    return wall, j["convergence"]["ess_min"], j["converged"]


def mc(m):
    return f"{m[0]:.2f}" + ("" if m[2] else "*")


def numpy_rate(table, cols, cov, evals):
    out = subprocess.run(["/usr/bin/python3", os.path.join(ROOT, "scripts", "bench_numpy.py"), table] + cols +
                         [cov, "lcdm-flat", str(evals)], capture_output=True, text=True, check=True).stdout
    return float(out.split()[0])


def simulate(tmp, n, tiers):
    ini = os.path.join(tmp, f"s{n}.ini")
    with open(ini, "w") as f:
        f.write("[survey]\nseed = 5\nobservable = mag\n[cosmology]\nmodel = lcdm-flat\n")
        per = n // tiers
        for t in range(tiers):
            lo = 0.01 + 1.4 * t / tiers
            f.write(f"[tier.t{t:02d}]\nz_min = {lo}\nz_max = {lo + 1.4 / tiers}\ncount = {per}\n"
                    "error = 0.12\ncalibration = 0.01\n")
    out = os.path.join(tmp, f"sim{n}")
    subprocess.run([LANTERN, "simulate", ini, "--out", out], check=True, capture_output=True)
    return out


def main():
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        # N = 1048: a dense covariance simulated here (smooth modes plus a correlated kernel)
        d = np.genfromtxt(os.path.join(P, "lcparam_full_long_zhel.txt"), names=True, usecols=range(18))
        z = d["zcmb"]
        lz = np.log(z)
        modes = np.array([np.cos(k * np.pi * (lz - lz.min()) / np.ptp(lz)) for k in range(10)])
        sysc = 0.01 ** 2 * (modes.T @ modes) + 0.02 ** 2 * np.exp(-np.abs(z[:, None] - z[None, :]) / 0.05)
        cov1048 = os.path.join(tmp, "cov1048.txt")
        with open(cov1048, "w") as f:
            f.write(f"{len(z)}\n")
            np.savetxt(f, sysc.ravel(), fmt="%.17g")
        pant = ["--columns", "z=zcmb,zhel=zhel,mag=mb,err=dmb"]
        cases = [
            ("40 (dense)", ["--data", os.path.join(P, "lcparam_DS17f.txt")] + pant, ["--cov", os.path.join(P, "sys_DS17f.txt")],
             (os.path.join(P, "lcparam_DS17f.txt"), ["zcmb", "zhel", "mb", "dmb"], os.path.join(P, "sys_DS17f.txt"), 2000)),
            ("1048 (dense)", ["--data", os.path.join(P, "lcparam_full_long_zhel.txt")] + pant, ["--cov", cov1048],
             (os.path.join(P, "lcparam_full_long_zhel.txt"), ["zcmb", "zhel", "mb", "dmb"], cov1048, 300)),
        ]
        s4 = simulate(tmp, 10000, 5)
        cols = ["--columns", "id=id,z=z,zhel=zhel,mag=mag,err=err"]
        cases.append(("10^4 (dense)", ["--data", s4 + "/survey.csv"] + cols, ["--cov", s4 + "/covariance.fits"],
                      (s4 + "/survey.csv", ["z", "zhel", "mag", "err"], s4 + "/covariance.fits", 10)))
        for n in (100000, 1000000):
            sn = simulate(tmp, n, 100)
            cases.append((f"10^{len(str(n)) - 1} (100 modes)", ["--data", sn + "/survey.csv"] + cols,
                          ["--modes", sn + "/modes.csv"], None))
        for label, data, extra, np_case in cases:
            n = label.split()[0]
            ex = bench(data, extra, True, 20 if "modes" in label or n == "10^4" else 2000)
            co = bench(data, extra, False, 200000)
            npr = numpy_rate(*np_case) if np_case else float("nan")
            m1 = mcmc(data, extra, "lcdm-flat")
            m2 = mcmc(data, extra, "w0wa-flat")
            rows.append((label, ex, co, npr, m1, m2))
    print("likelihood evaluations per second (one thread), set-up, memory; MCMC wall time to convergence (2 cores)")
    print(f"{'N':>16} {'exact/s':>10} {'compr./s':>10} {'numpy/s':>9} {'compr./numpy':>12} {'set-up s':>9}"
          f" {'MB':>7} {'max dchi2':>9} {'MCMC LCDM s':>11} {'MCMC w0wa s':>11}")
    for label, ex, co, npr, m1, m2 in rows:
        ratio = co["evals_per_s"] / npr if npr == npr else float("nan")
        print(f"{label:>16} {ex['evals_per_s']:10.4g} {co['evals_per_s']:10.4g} {npr:9.4g} {ratio:12.4g}"
              f" {co['setup_s']:9.3f} {co['peak_rss_mb']:7.0f} {co['max_abs_dchi2']:9.1e} {mc(m1):>11} {mc(m2):>11}")
    print("MCMC: 4 chains, R-hat - 1 < 0.01 and bulk and tail ESS >= 1000; wall time includes reading the data"
          " and the set-up; * marks a run that reached 10^6 steps per chain unconverged")
    return 0


if __name__ == "__main__":
    sys.exit(main())
