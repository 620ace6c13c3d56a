#!/usr/bin/python3
"""Round-2 tables (NOTES.md "Round 2") from proto.py / round2.py JSON rows.
Usage: python3 bench/adaptive/table2.py [--rows] results/r2/*.json
Summary row per (set, prior, chain length); --rows adds one row per
configuration with the misses starred (targets as table.py)."""
import json
import sys

import numpy as np

DEV = {'cell.png', 'hubble_deep_field.jpg', 'coins.png', 'text.png', 'gravel.png'}
CLS = ['edges', 'bright', 'dark', 'flat']


def chain(r):
    b = r.get('burn')
    if b is None:        # proto.py rows do not store it; set by the caller's file name
        b = r.get('_burn', '?')
    return f"{b}+{r.get('keep', r.get('_keep', '?'))}"


def star(v, lo, hi, f='{:.3f}'):
    return f.format(v) + ('' if lo <= v <= hi else '*')


def main(args):
    rows_mode = '--rows' in args
    paths = [a for a in args if not a.startswith('--')]
    rows = []
    for p in paths:
        for r in json.load(open(p)):
            r['_src'] = p.rsplit('/', 1)[-1]
            rows.append(r)
    print('| set | prior | chain | n cfg | cov95 mean [min,max] | cov50 mean | z sd mean [min,max] | Spearman mean | '
          'cov95 edges/bright/dark/flat | flat z sd | RMSE ratio mean [max] | CG it/draw mean [max] | src |')
    print('|' + '---|' * 13)
    keys = dict.fromkeys((('dev' if r['image'] in DEV else 'held'), r['prior'], chain(r), r['_src']) for r in rows)
    for st, pr, ch, src in keys:
        R = [r for r in rows if r['prior'] == pr and chain(r) == ch and r['_src'] == src
             and (r['image'] in DEV) == (st == 'dev')]
        g = lambda k: np.array([r[k] for r in R], float)
        cls = '/'.join(f"{g('cov95_' + c).mean():.2f}" for c in CLS)
        print(f"| {st} | {pr} | {ch} | {len(R)} | {g('cov95').mean():.3f} [{g('cov95').min():.3f},{g('cov95').max():.3f}] "
              f"| {g('cov50').mean():.3f} | {g('zsd').mean():.2f} [{g('zsd').min():.2f},{g('zsd').max():.2f}] "
              f"| {g('spearman').mean():.2f} | {cls} | {g('zsd_flat').mean():.2f} "
              f"| {g('rmse_ratio').mean():.3f} [{g('rmse_ratio').max():.3f}] "
              f"| {g('cg_it_mean').mean():.1f} [{g('cg_it_max').max():.0f}] | {src} |")
    if not rows_mode:
        return
    print()
    print('| image | noise | prior | chain | cov95 | cov50 | edges | bright | dark | flat | z sd | Spearman | RMSE ratio | CG it mean/max | hyper |')
    print('|' + '---|' * 15)
    for r in rows:
        hyp = ', '.join(f"{k[4:]}={r[k]:.3g}" for k in ('hyp_beta', 'hyp_delta_v') if k in r)
        print(f"| {r['image'].split('.')[0]} | {r['noise']} | {r['prior']} | {chain(r)} | {star(r['cov95'], .93, .97)} "
              f"| {star(r['cov50'], .45, .55)} | " + ' | '.join(star(r['cov95_' + c], .9, 1) for c in CLS)
              + f" | {star(r['zsd'], .85, 1.2, '{:.2f}')} | {star(r['spearman'], .3, 9, '{:.2f}')} "
              f"| {star(r['rmse_ratio'], 0, 1.0)} | {r['cg_it_mean']:.1f}/{r['cg_it_max']} | {hyp} |")


if __name__ == '__main__':
    main(sys.argv[1:])
