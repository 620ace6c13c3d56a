"""tau (iterations per effective draw) of the sampled hyperparameters of
pixpost runs (issue 16).

Usage: /usr/bin/python3 bench/hyper/tau.py OUTDIR [OUTDIR ...]

For each OUTDIR written by `pixpost sample` (and, beside it, OUTDIR.log
holding the output of `time pixpost sample ...`, for the CPU seconds):
  tau_ess = chains * kept / bulk-ESS   (pixpost's rank-normalised bulk-ESS,
            summary.json, Vehtari et al. 2021)
  tau_iat = the integrated autocorrelation time of the chain-averaged ACF
            with Sokal's automatic window (c = 5; Sokal, Monte Carlo methods
            in statistical mechanics, 1997) -- it is biased low when the run
            is shorter than ~50 tau, so tau_ess is the number quoted
  ESS/cpu-s = bulk-ESS / user CPU seconds of the whole run (1 thread, so
            it does not depend on the machine's load, unlike wall time).
"""
import json
import re
import sys

import numpy as np


def iat(x):
    x = x - x.mean(axis=1, keepdims=True)
    n = x.shape[1]
    f = np.fft.rfft(x, 2 * n, axis=1)
    ac = np.fft.irfft(f * np.conj(f), axis=1)[:, :n].mean(axis=0)
    ac /= ac[0]
    tau = 1.0
    for m in range(1, n):
        tau += 2 * ac[m]
        if m >= 5 * tau:
            break
    return tau


for d in sys.argv[1:]:
    s = json.load(open(d + "/summary.json"))
    tr = np.genfromtxt(d + "/trace.csv", delimiter=",", names=True)
    ch = int(tr["chain"].max())
    kept = len(tr) // ch
    cpu = float("nan")
    try:
        log = open(d + ".log").read()
        m = re.search(r"user\s+(\d+)m([\d.]+)s", log)  # bash's time
        if m:
            cpu = int(m.group(1)) * 60 + float(m.group(2))
        else:  # /usr/bin/time's default format
            cpu = float(re.search(r"([\d.]+)user", log).group(1))
    except (OSError, AttributeError):
        pass
    out = []
    for h in ("lambda", "delta", "level"):
        if h not in tr.dtype.names or h not in s["hyper"] or s["hyper"][h]["ess_bulk"] is None:
            continue
        hv = s["hyper"][h]
        x = tr[h].reshape(ch, kept)
        out.append("%s tau_ess %.0f tau_iat %.0f ESS %.1f R-hat %.3f ESS/cpu-s %.3f" % (
            h, ch * kept / hv["ess_bulk"], iat(x), hv["ess_bulk"], hv["rhat"],
            hv["ess_bulk"] / cpu))
    print("%s: %d chains x %d kept, cpu %.1f s | %s" % (d, ch, kept, cpu, " | ".join(out)))
