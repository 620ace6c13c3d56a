"""The predictive check's false-alarm and detection rates (README "Checks
of the fit"): N frames drawn from the camera model (tests/ppcheckref.py:
random bead scenes, 48 x 48, camera gain 2, offset 100, read 1.5 e-,
Gaussian PSF sigma 1.5) sampled with the right settings, and M of them with
each of the issue's misfits. Prints every frame's figures and the rates.

    PP_BIN=build/pixpost /usr/bin/python3 bench/ppcheck/run.py [N] [M] [G] > bench/ppcheck/RESULTS.md

Then G frames with Gaussian noise (sd 5) sampled under --noise gaussian
with the default prior (adaptive, gibbs), the right PSF and (G/3 frames)
one 30 % too wide. About 2 s per camera frame and 7 s per Gaussian frame
on one core (200 + 300 iterations).
"""
import os
import sys

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, "..", "..", "tests"))
os.environ.setdefault("PP_TMP", "/tmp/pp_bench_ppcheck")
import ppcheckref  # noqa: E402
import pptest  # noqa: E402

N = int(sys.argv[1]) if len(sys.argv) > 1 else 100
M = int(sys.argv[2]) if len(sys.argv) > 2 else 20
G = int(sys.argv[3]) if len(sys.argv) > 3 else 30
tmp = pptest.tmpdir()
KEYS = ["mean", "var", "beyond3", "lag1_row", "lag1_col", "psf_band_power", "curvature_corr"]


def row(label, seed, p):
    fired = len(p["warnings"])
    print("| %s | %d | %s | %d |" % (label, seed, " | ".join("%.3f" % p[k] for k in KEYS), fired))
    sys.stdout.flush()
    return fired > 0


print("| case | seed | " + " | ".join(KEYS) + " | warnings |")
print("|---|---|" + "---|" * len(KEYS) + "---|")
fires = {}
refused = {}
for case in ["correct"] + list(ppcheckref.MISFITS):
    n = N if case == "correct" else M
    psf, noise = (ppcheckref.PSF, ppcheckref.CAMERA) if case == "correct" else ppcheckref.MISFITS[case]
    hits = 0
    for seed in range(1000, 1000 + n):
        yp = ppcheckref.frame(tmp, seed)
        try:
            p, _ = ppcheckref.sample(yp, os.path.join(tmp, "out"), psf, noise)
        except AssertionError as e:  # refused before sampling by a data check
            print("| %s | %d | refused before sampling: %s |" % (case, seed, str(e).split("data check: ")[-1][:90]))
            refused[case] = refused.get(case, 0) + 1
            hits += 1
            continue
        hits += row(case, seed, p)
    fires[case] = (hits, n)
# Gaussian noise: G frames of the same scenes with Gaussian noise of sd 5,
# sampled with --noise gaussian (lambda sampled) and the default prior
# (adaptive, gibbs), right PSF and 30 % too wide.
for case, psf in (("gaussian, correct", ppcheckref.PSF), ("gaussian, PSF +30 %", "gaussian:sigma=1.95")):
    n = G if case.endswith("correct") else max(G // 3, 1)
    hits = 0
    for seed in range(3000, 3000 + n):
        yp = ppcheckref.frame(tmp, seed, noise="gaussian:sigma=5")
        p, _ = ppcheckref.sample(yp, os.path.join(tmp, "out"), psf, "gaussian")
        hits += row(case, seed, p)
    fires[case] = (hits, n)
print()
for case, (h, n) in fires.items():
    if not n:
        continue
    print("- %s: caught on %d of %d frames (%.1f %%; %d of them refused before sampling by a "
          "data check, the rest warned by the predictive check)"
          % (case, h, n, 100.0 * h / n, refused.get(case, 0)))
