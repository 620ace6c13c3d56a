"""tau of every global hyperparameter for gibbs with --boundary pad.

tau = iterations per effective draw = (chains x kept draws per chain) /
bulk-ESS, bulk-ESS as pixpost's summary.json reports it (rank-normalised,
Vehtari et al., Bayesian Analysis 16, 2021: Geyer's initial monotone
sequence over the chains' averaged autocorrelations). Seconds per
iteration from summary.json's timing (one thread, so per chain-iteration:
seconds_sampling / (chains x (burn + iters))).

Usage: /usr/bin/python3 bench/padmix/measure.py PIXPOST FRAMES_TXT OUT_CSV
        PRIOR CHAINS BURN ITERS [name,name,...]
Runs `pixpost sample FRAME --psf P --prior PRIOR --sampler gibbs --boundary
pad --chains C --burn B --iters N --seed 1 --threads 1` for each frame and
appends one row per hyperparameter to OUT_CSV. PADMIX_BOUNDARY=periodic in
the environment runs the same with --boundary periodic (the comparison that
tells the padding's share of the slowness).
"""
import csv
import json
import os
import subprocess
import sys
import tempfile


def main():
    pixpost, frames, out, prior, chains, burn, iters = sys.argv[1:8]
    only = set(sys.argv[8].split(",")) if len(sys.argv) > 8 else None
    rows = [l.split() for l in open(frames) if l.strip()]
    new = not os.path.exists(out)
    with open(out, "a", newline="") as fh:
        w = csv.writer(fh)
        if new:
            w.writerow(["frame", "prior", "hyper", "chains", "burn", "iters", "mean", "rhat",
                        "ess_bulk", "tau", "sec_per_iter"])
        for name, path, psf in rows:
            if only and name not in only:
                continue
            d = tempfile.mkdtemp(prefix="padmix_")
            cmd = [pixpost, "sample", path, "--psf", psf, "--prior", prior, "--sampler", "gibbs",
                   "--boundary", os.environ.get("PADMIX_BOUNDARY", "pad"), "--chains", chains, "--burn", burn, "--iters", iters,
                   "--seed", "1", "--threads", "1", "--quiet", "-o", d, "--overwrite"]
            r = subprocess.run(cmd, capture_output=True, text=True)
            if r.returncode not in (0, 3):
                print(name, "failed", r.stderr.strip(), flush=True)
                continue
            s = json.load(open(os.path.join(d, "summary.json")))
            c, b, n = int(chains), int(burn), int(iters)
            spi = s["timing"]["seconds_sampling"] / (c * (b + n))
            for k in ("lambda", "delta", "kappa"):
                h = s["hyper"].get(k)
                if not isinstance(h, dict) or h.get("fixed"):
                    continue
                tau = c * n / h["ess_bulk"]
                w.writerow([name, prior, k, c, b, n, "%.6g" % h["mean"], "%.3f" % h["rhat"],
                            "%.1f" % h["ess_bulk"], "%.1f" % tau, "%.4g" % spi])
                print(name, prior, k, "rhat %.3f tau %.1f" % (h["rhat"], tau), flush=True)
            fh.flush()


if __name__ == "__main__":
    main()
