#!/usr/bin/env python3
"""Reference values of svd.CheckVapour's coherence ratio and line counts on the
trimmed urethane ATR series (testdata/urethane-atr/vapour-catalyst-*; source
and licence in testdata/urethane-atr/README.md), computed with numpy/scipy
(Debian python3-numpy 1.24, python3-scipy 1.10) from the definitions in
svd/vapour.go, independently of the Go code: each range high-passed (less the
quadratic Savitzky-Golay smooth over about 8 cm-1), rows averaged into at most
64 runs and centred, every point divided by its noise (the root of the running
median over 2*(2h)+1 columns of the pair differences' mean squares), the
ranges side by side when several, the pattern turned so that its
sum of cubes is positive. Run from the repository root:
  python3 testdata/svd/vapour_reference.py
Not needed at test time: the values are copied into svd/vapour_test.go."""
import datetime, glob, os, re
import numpy as np
from scipy.signal import savgol_coeffs

def when(f):
    m = re.search(r'\w{3} (\w{3}) (\d+) (\d+)-(\d+)-(\d+) (\d{4})', os.path.basename(f))
    return datetime.datetime.strptime(' '.join(m.groups()), '%b %d %H %M %S %Y')

def read(folder, dec=1):
    """dec > 1 averages every dec neighbouring axis points first."""
    files = sorted(glob.glob(folder + '/*.CSV'), key=when)
    a = np.array([np.loadtxt(f, delimiter=',')[:, 1] for f in files])
    x = np.loadtxt(files[0], delimiter=',')[:, 0]
    m = (len(x) // dec) * dec
    return x[:m].reshape(-1, dec).mean(1), a[:, :m].reshape(len(a), -1, dec).mean(2)

def window(x, a, lo, hi):
    w2 = (x >= lo) & (x <= hi)
    step = abs(x[w2][-1] - x[w2][0]) / (w2.sum() - 1)
    h = max(2, int(round(8 / 2 / step)))
    c = savgol_coeffs(2 * h + 1, 2)
    n = len(a)
    bins = min(n, 64)
    size = -(-n // bins)
    nb = n // size
    dw = a[:nb * size, w2].reshape(nb, size, -1).mean(1)
    e = dw[:, h:-h] - np.array([np.convolve(r, c[::-1], 'valid') for r in dw])
    e = e - e.mean(0)
    d = (e[1::2][: len(e) // 2] - e[0::2][: len(e) // 2]) / np.sqrt(2)
    ms = (d ** 2).mean(0)
    q = 2 * h
    sig = np.sqrt([np.median(ms[max(0, j - q): j + q + 1]) for j in range(len(ms))])
    sig = np.maximum(sig, 1e-3 * np.median(sig))
    return e / sig, d / sig, h

def check(name, x, a, ranges):
    ws = [window(x, a, lo, hi) for lo, hi, _ in ranges]
    e = np.hstack([w[0] for w in ws])
    d = np.hstack([w[1] for w in ws])
    u, s, vt = np.linalg.svd(e, full_matrices=False)
    sd = np.linalg.svd(d, compute_uv=False)[0]
    r, k = e.shape
    ratio = (s[0] / (np.sqrt(r - 1) + np.sqrt(k))) / (sd / (np.sqrt(len(d)) + np.sqrt(k)))
    p = vt[0] * s[0]
    if np.sum(p ** 3) < 0:
        p = -p
    level = 5 * np.sqrt(np.median(np.mean(d ** 2, axis=1)))
    lines, at = [], 0
    for w in ws:
        q = p[at: at + w[0].shape[1]]
        at += w[0].shape[1]
        lines.append(sum(1 for i in range(1, len(q) - 1) if q[i] > level and q[i] > q[i - 1] and q[i] >= q[i + 1]))
    print('%s %s: %d spectra, half widths %s, ratio %.4f, lines %s' % (
        name, '+'.join('%g-%g' % (lo, hi) for lo, hi, _ in ranges), len(a), [w[2] for w in ws], ratio, lines))

S, B = (3550, 3950, 15), (1350, 1950, 60)
for run in ('0.01', '1.00'):
    check('vapour-catalyst-' + run, *read('testdata/urethane-atr/vapour-catalyst-' + run), [S])
check('vapour-bend-catalyst-0.01', *read('testdata/urethane-atr/vapour-bend-catalyst-0.01'), [B])
check('catalyst-1.00', *read('testdata/urethane-atr/catalyst-1.00'), [B])
for run in ('0.01', '1.00'):
    x, a = read('testdata/urethane-atr/vapour-catalyst-' + run, dec=4)
    check('vapour-catalyst-%s averaged by 4' % run, x, a, [S])
