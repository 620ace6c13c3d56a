"""scikit-image's restoration.unsupervised_wiener (Debian python3-skimage;
parameter names read in /usr/lib/python3/dist-packages/skimage/restoration/
deconvolution.py) on a frame, for bench/run's side-by-side rows: it is a
Gibbs sampler for the same model as pixpost's gmrf2/Jeffreys gibbs (see
tests/ref_skimage.py). A fixed number of iterations: min_num_iter =
max_num_iter = ITERS and threshold -1 (its stopping rule never fires),
burnin BURN, clip=False, is_real=True, random_state=1.

Usage: /usr/bin/python3 bench/skimage_bench.py FRAME.tif PSF.tif ITERS BURN OUT.txt
Prints "sk_sec_iter=S" (wall time of the call / ITERS) and writes
chains['prior'] (its delta, one value per iteration) after BURN draws to
OUT.txt on one line, for tests' probe_diag (pixpost's pp_diag_compute).
"""
import sys
import time

import numpy as np
import tifffile
from skimage.restoration import unsupervised_wiener


def main():
    y = tifffile.imread(sys.argv[1]).astype(np.float64)
    psf = tifffile.imread(sys.argv[2]).astype(np.float64)
    iters, burn, out = int(sys.argv[3]), int(sys.argv[4]), sys.argv[5]
    params = {"threshold": -1.0, "min_num_iter": iters, "max_num_iter": iters, "burnin": burn}
    t0 = time.perf_counter()
    _, chains = unsupervised_wiener(y, psf, user_params=params, clip=False, is_real=True,
                                    random_state=1)
    sec = (time.perf_counter() - t0) / iters
    d = np.asarray(chains["prior"])[burn:]
    with open(out, "w") as f:
        f.write(" ".join("%.17g" % v for v in d) + "\n")
    print("sk_sec_iter=%.6g sk_kept=%d" % (sec, len(d)))


if __name__ == "__main__":
    main()
