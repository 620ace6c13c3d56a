"""Per-chain integrated autocorrelation time (Sokal window c = 5) of delta
and the level on the second half of each chain of pixpost runs, which leaves
out what burn-in did not remove; biased low when a chain holds < ~50 tau.
Usage: /usr/bin/python3 bench/hyper/iat_half.py OUTDIR [OUTDIR ...]"""
import numpy as np, sys
def iat(x):
    x = x - x.mean(); n = len(x)
    f = np.fft.rfft(x, 2 * n); ac = np.fft.irfft(f * np.conj(f))[:n]; ac /= ac[0]
    tau = 1.0
    for m in range(1, n):
        tau += 2 * ac[m]
        if m >= 5 * tau: break
    return tau
for f in sys.argv[1:]:
    tr = np.genfromtxt(f + '/trace.csv', delimiter=',', names=True)
    out = []
    for h in ('delta', 'level'):
        if h not in tr.dtype.names: continue
        t = []
        for c in np.unique(tr['chain']):
            d = tr[h][tr['chain'] == c]; d = d[len(d) // 2:]
            t.append(iat(d))
        out.append('%s IAT per chain (2nd half) %s' % (h, ' '.join('%.0f' % v for v in t)))
    print(f, ' | '.join(out))
