"""The predictive check's curvature figure on dim bead scenes (beads of
30-150 photons instead of 300-1500; otherwise tests/ppcheckref.py's scenes,
camera and runs): N frames with the right PSF and M with a PSF 30 % too
wide, seeds 5000+ (not used anywhere else). Prints each frame's figures,
whether the check fired, and the rates.

    PP_BIN=build/pixpost /usr/bin/python3 bench/ppcheck/dim.py [N] [M] >> bench/ppcheck/RESULTS.md
"""
import os
import sys

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, "..", "..", "tests"))
os.environ.setdefault("PP_TMP", "/tmp/pp_bench_ppcheck_dim")
import ppcheckref  # noqa: E402
import pptest  # noqa: E402

N = int(sys.argv[1]) if len(sys.argv) > 1 else 40
M = int(sys.argv[2]) if len(sys.argv) > 2 else 20
BEADS = (30, 150)
tmp = pptest.tmpdir()
KEYS = ["var", "lag1_row", "lag1_col", "psf_band_power", "curvature_corr"]
print("| case | seed | " + " | ".join(KEYS) + " | warnings |")
print("|---|---|" + "---|" * len(KEYS) + "---|")
for case, psf, n in (("dim, right PSF", ppcheckref.PSF, N),
                     ("dim, PSF +30 %", "gaussian:sigma=1.95", M)):
    fired, curv = 0, []
    for seed in range(5000, 5000 + n):
        yp = ppcheckref.frame(tmp, seed, beads=BEADS)
        p, _ = ppcheckref.sample(yp, os.path.join(tmp, "out"), psf)
        w = len(p["warnings"])
        fired += w > 0
        curv.append(p["curvature_corr"])
        print("| %s | %d | %s | %d |" % (case, seed, " | ".join("%.3f" % p[k] for k in KEYS), w))
        sys.stdout.flush()
    print("\n%s: fired on %d of %d frames; curvature %.3f to %.3f\n" % (case, fired, n, min(curv),
                                                                       max(curv)))
