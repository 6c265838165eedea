#!/usr/bin/env python3
"""Compare whole-route results of two or three grid settings (see README.md).

  compare.py REF CUR          how far CUR's whole fits lie from REF's
  compare.py REF CUR CAND     the same for CAND, and how far CAND moves from CUR

Each argument is a directory written by TestWholeGridStudyDump (one JSON
result per check spectrum). Differences of n_e and T_exc are in units of
the fit's statistical 1σ (the parameter's unc in whole_fit.params) of the
first directory named in each difference; the model difference is the
largest |Δ model| over the fitted range divided by the model's span
(max − min). Plain Python 3, no packages.
"""
import glob
import json
import os
import statistics as st
import sys


def load(d, name):
    x = json.load(open(os.path.join(d, name)))
    w = x.get('whole_fit')
    if not w:
        return None
    return x, w, {q['name']: q for q in w['params']}


def flags(x):
    return sorted(q['code'] for q in x.get('flags', []))


def two(ref, cur):
    rows, issues = [], []
    for f in sorted(glob.glob(os.path.join(ref, '*.json'))):
        n = os.path.basename(f)
        a, b = load(ref, n), load(cur, n)
        if (a is None) != (b is None):
            issues.append((n, 'whole fit present in one only'))
        if a is None or b is None:
            continue
        r = {'name': n[:-5]}
        for k in ('n_e', 'T_exc'):
            if k in a[2] and not a[2][k]['fixed'] and a[2][k]['unc'] > 0:
                r[k] = (b[2][k]['value'] - a[2][k]['value']) / a[2][k]['unc']
                r[k + ' σ_stat rel'] = b[2][k]['unc'] / a[2][k]['unc'] - 1
        for k in ('electron_density_unc_m3', 'electron_density_unc_sys_m3',
                  'excitation_temperature_unc_K', 'excitation_temperature_unc_sys_K'):
            va, vb = a[0].get(k), b[0].get(k)
            if va and vb:
                r[k + ' rel'] = vb / va - 1
        if flags(a[0]) != flags(b[0]):
            issues.append((n, 'flags %s -> %s' % (flags(a[0]), flags(b[0]))))
        ma, mb = a[1].get('model') or [], b[1].get('model') or []
        if ma and len(ma) == len(mb):
            r['model'] = max(abs(x - y) for x, y in zip(ma, mb)) / (max(ma) - min(ma))
        rows.append(r)
    keys = []
    for r in rows:
        keys += [k for k in r if k != 'name' and k not in keys]
    for k in keys:
        v = [(abs(r[k]), r['name']) for r in rows if k in r]
        print('%-38s n=%3d |Δ| median %.3g  max %.3g (%s)' % (k, len(v), st.median(x for x, _ in v), *max(v)))
    print('issues:', issues or 'none')


def three(ref, cur, cand):
    out = {'n_e': [], 'T_exc': []}
    flagdiff = 0
    for f in sorted(glob.glob(os.path.join(ref, '*.json'))):
        n = os.path.basename(f)
        a, b, c = load(ref, n), load(cur, n), load(cand, n)
        if a is None or b is None or c is None:
            continue
        flagdiff += flags(b[0]) != flags(c[0])
        for k in out:
            if k not in a[2] or a[2][k]['fixed']:
                continue
            s = a[2][k]['unc']
            er = abs(b[2][k]['value'] - a[2][k]['value']) / s
            ec = abs(c[2][k]['value'] - a[2][k]['value']) / s
            inc = abs(c[2][k]['value'] - b[2][k]['value']) / b[2][k]['unc']
            out[k].append((ec, inc, er, n[:-5]))
    for k, v in out.items():
        ec, inc, er = [x[0] for x in v], [x[1] for x in v], [x[2] for x in v]
        mi = max(v, key=lambda x: x[1])
        print('%-5s n=%3d |cand−ref|/σ median %.3f max %.3f (cur: median %.3f max %.3f) | '
              '|cand−cur|/σ median %.4f max %.3f (%s) | spectra with |cand−ref| ≥ 0.05σ: %d, '
              '|cand−cur| ≥ 0.05σ: %d, |cand−ref| > max(|cur−ref|, 0.05σ): %d' % (
                  k, len(v), st.median(ec), max(ec), st.median(er), max(er), st.median(inc), max(inc), mi[3],
                  sum(x >= 0.05 for x in ec), sum(x >= 0.05 for x in inc),
                  sum(x[0] > max(x[2], 0.05) for x in v)))
    print('spectra whose flags changed from cur:', flagdiff)


if __name__ == '__main__':
    if len(sys.argv) == 3:
        two(*sys.argv[1:])
    elif len(sys.argv) == 4:
        three(*sys.argv[1:])
    else:
        sys.exit(__doc__)
