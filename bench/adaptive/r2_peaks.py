#!/usr/bin/python3
"""Round 2 (NOTES.md): truth, posterior mean and sd at the 12 brightest
pixels of hubble_deep_field 5 % for sb1, sp1:0.5:1 and sp1:0.5:0 (300 + 600
iterations, chain seed 1, so not the table's chains). Usage: nice -n 19 /usr/bin/python3 r2_peaks.py"""
import sys
import numpy as np, round2, proto
from proto import Ops, load_truth, seed_of
n=48; ops=Ops(n); truth=load_truth('hubble_deep_field.jpg', n)
for noise in (0.05,):
    rng=np.random.default_rng(seed_of('hubble_deep_field.jpg', noise)); y=ops.A(truth)+noise*rng.standard_normal((n,n))
    for model, kw in (('sb1', None), ('sp1:0.5:1', dict(a=0.5, fixed_beta=1.0, sg=1.0)), ('sp1:0.5:0', dict(a=0.5, fixed_beta=1.0, sg=0.0))):
        rng=np.random.default_rng(1)
        if kw is None: d,info=round2.run_sb(ops,y,rng,300,600,fixed_beta=1.0)
        else: d,info=round2.run_sp(ops,y,rng,300,600,**kw)
        m,s=d.mean(0),d.std(0,ddof=1)
        b=truth>=np.quantile(truth,0.98)
        idx=np.argsort(-truth[b])[:12]
        print(model, 'truth', np.round(truth[b][idx],2)); print(' mean', np.round(m[b][idx],2)); print(' sd  ', np.round(s[b][idx],2))
        print(' whole cov95', np.mean(np.abs(m-truth)<=1.96*s), 'bright', np.mean((np.abs(m-truth)<=1.96*s)[b]))
