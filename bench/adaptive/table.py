#!/usr/bin/python3
"""Markdown tables from proto.py's JSON rows: one summary row per
(set, prior) and one detail row per configuration.
Usage: python3 bench/adaptive/table.py results/main_dev.json ...
       python3 bench/adaptive/table.py --solver results/solver.json ... """
import json
import sys

import numpy as np

CLS = ['edges', 'bright', 'dark', 'flat']


def ok(v, lo, hi):
    return '' if lo <= v <= hi else '*'


def main(paths):
    rows = []
    for p in paths:
        rows += json.load(open(p))
    for r in rows:                    # other frame sizes summarised apart
        if r.get('n', 48) != 48 and '@' not in r['prior']:
            r['prior'] = f"{r['prior']}@{r['n']}"
    dev = {'cell.png', 'hubble_deep_field.jpg', 'coins.png', 'text.png', 'gravel.png'}
    print('| set | prior | n cfg | cov95 mean [min,max] | cov50 mean | z sd mean [min,max] | '
          'Spearman mean | cov95 edges/bright/dark/flat (means) | worst-class cov95 (mean of per-cfg min) | flat z sd | RMSE ratio mean [max] | CG it/draw (chain) | in-target cfgs |')
    print('|' + '---|' * 13)
    for st in ('dev', 'held'):
        for pr in dict.fromkeys(r['prior'] for r in rows):
            R = [r for r in rows if r['prior'] == pr and ((r['image'] in dev) == (st == 'dev'))]
            if not R:
                continue
            g = lambda k: np.array([r[k] for r in R])
            worst = np.array([min(r['cov95_' + c] for c in CLS) for r in R])
            good = sum(0.93 <= r['cov95'] <= 0.97 and 0.45 <= r['cov50'] <= 0.55
                       and min(r['cov95_' + c] for c in CLS) >= 0.9 and 0.85 <= r['zsd'] <= 1.2
                       and r['spearman'] >= 0.3 and r['rmse_ratio'] <= 1.0 for r in R)
            print(f"| {st} | {pr} | {len(R)} | {g('cov95').mean():.3f} [{g('cov95').min():.3f},{g('cov95').max():.3f}] "
                  f"| {g('cov50').mean():.3f} | {g('zsd').mean():.2f} [{g('zsd').min():.2f},{g('zsd').max():.2f}] "
                  f"| {g('spearman').mean():.2f} | {'/'.join('%.2f' % g('cov95_' + c).mean() for c in CLS)} | {worst.mean():.3f} | {g('zsd_flat').mean():.2f} "
                  f"| {g('rmse_ratio').mean():.3f} [{g('rmse_ratio').max():.3f}] | {g('cg_it_mean').mean():.0f} | {good}/{len(R)} |")
    print()
    print('| image | noise | prior | cov95 | cov50 | z sd | Spearman | edges | bright | dark | flat | flat z sd | RMSE/best | RL it | CG it (chain) | it four/fgeo/scal | log10 w p1-p99 |')
    print('|' + '---|' * 17)
    for r in rows:
        f = lambda k, d=3: ('%.*f' % (d, r[k])) if k in r else '-'
        print(f"| {r['image'].split('.')[0]} | {r['noise']} | {r['prior']} | {f('cov95')}{ok(r['cov95'], .93, .97)} "
              f"| {f('cov50')}{ok(r['cov50'], .45, .55)} | {f('zsd', 2)}{ok(r['zsd'], .85, 1.2)} | {f('spearman', 2)}{ok(r['spearman'], .3, 9)} | "
              + ' | '.join(f('cov95_' + c) + ok(r['cov95_' + c], .9, 1.01) for c in CLS)
              + f" | {f('zsd_flat', 2)} | {f('rmse_ratio')}{ok(r['rmse_ratio'], 0, 1.0)} | {r['rl_iter']} | {r['cg_it_mean']:.0f} "
              f"| {f('it_four', 0)}/{f('it_fgeo', 0)}/{f('it_scal', 0)} | {f('w_log10_p1_p99', 1)} |")




def solver(paths):
    """Solver-study rows (proto.py --study --dense)."""
    rows = []
    for p in paths:
        rows += json.load(open(p))
    print('| image | prior | log10 w p1-p99 [range] | it four / fgeo / scal (tol 1e-6) | '
          'cond(M⁻¹P) four / fgeo | aux split: cond(P₀⁻¹P), τ slowest / median |')
    print('|' + '---|' * 6)
    for r in rows:
        if 'kappa_four' not in r:
            continue
        print(f"| {r['image'].split('.')[0]} {r['noise']} | {r['prior']} | {r['w_log10_p1_p99']:.1f} [{r['w_log10_range']:.1f}] "
              f"| {r['it_four']:.0f} / {r['it_fgeo']:.0f} / {r['it_scal']:.0f} "
              f"| {r['kappa_four']:.0f} / {r['kappa_fgeo']:.0f} "
              f"| {r['kappa_aux']:.0f}, {r['aux_tau_slowest']:.0f} / {r['aux_tau_median']:.0f} |")
    print()
    print('| image | prior | tol | four: it, max / rms err (chain sd), max err (cond. sd) | scal: it, max / rms err (chain sd) |')
    print('|' + '---|' * 5)
    for r in rows:
        if 'kappa_four' not in r:
            continue
        for t in ('1e-02', '1e-03', '1e-04', '1e-06'):
            f = r.get(f'tol{t}_four_it')
            cs = r.get(f'tol{t}_four_errmax_condsd')
            four = (f"{f}, {r[f'tol{t}_four_errmax_sd']:.3f} / {r[f'tol{t}_four_errrms_sd']:.4f}" if f is not None
                    else f"{r['it_four']:.0f} (it_four)")
            four += f", {cs:.4f}" if cs is not None else ', -'
            sc = (f"{r[f'tol{t}_scal_it']}, {r[f'tol{t}_scal_errmax_sd']:.3f} / {r[f'tol{t}_scal_errrms_sd']:.4f}"
                  if f is not None else f"{r['it_scal']:.0f} (it_scal)")
            print(f"| {r['image'].split('.')[0]} | {r['prior']} | {t} | {four} | {sc} |")


if __name__ == '__main__':
    if sys.argv[1:2] == ['--solver']:
        solver(sys.argv[2:])
    else:
        main(sys.argv[1:])
