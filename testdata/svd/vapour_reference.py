#!/usr/bin/env python3
"""Reference values of svd.CheckVapour's coherence ratio and line count on the
trimmed urethane ATR series (testdata/urethane-atr/vapour-catalyst-*; source
and licence in testdata/urethane-atr/README.md), computed with numpy/scipy
(Debian python3-numpy 1.24, python3-scipy 1.10) from the definitions in
svd/vapour.go, independently of the Go code. Run from the repository root:
  python3 testdata/svd/vapour_reference.py
Not needed at test time: the values are copied into svd/vapour_test.go."""
import datetime, glob, os, re
import numpy as np
from scipy.signal import savgol_coeffs

def when(f):
    m = re.search(r'\w{3} (\w{3}) (\d+) (\d+)-(\d+)-(\d+) (\d{4})', os.path.basename(f))
    return datetime.datetime.strptime(' '.join(m.groups()), '%b %d %H %M %S %Y')

def check(folder, lo, hi, dec=1):
    """dec > 1 averages every dec neighbouring axis points first."""
    files = sorted(glob.glob(folder + '/*.CSV'), key=when)
    a = np.array([np.loadtxt(f, delimiter=',')[:, 1] for f in files])
    x = np.loadtxt(files[0], delimiter=',')[:, 0]
    m = (len(x) // dec) * dec
    x = x[:m].reshape(-1, dec).mean(1)
    a = a[:, :m].reshape(len(a), -1, dec).mean(2)
    w2 = (x >= lo) & (x <= hi)
    step = abs(x[w2][-1] - x[w2][0]) / (w2.sum() - 1)
    h = max(2, int(round(8 / 2 / step)))
    c = savgol_coeffs(2 * h + 1, 2)
    dw = a[:, w2]
    e = dw[:, h:-h] - np.array([np.convolve(r, c[::-1], 'valid') for r in dw])
    e = e - e.mean(0)
    d = (e[1::2][: len(e) // 2] - e[0::2][: len(e) // 2]) / np.sqrt(2)
    u, s, vt = np.linalg.svd(e, full_matrices=False)
    sd = np.linalg.svd(d, compute_uv=False)[0]
    r, k = e.shape
    ratio = (s[0] / (np.sqrt(r - 1) + np.sqrt(k))) / (sd / (np.sqrt(len(d)) + np.sqrt(k)))
    p = vt[0] * s[0]
    if p[np.argmax(abs(p))] < 0:
        p = -p
    level = 5 * np.sqrt(np.median(np.mean(d ** 2, axis=1)))
    lines = sum(1 for i in range(1, len(p) - 1) if p[i] > level and p[i] > p[i - 1] and p[i] >= p[i + 1])
    print('%s %g-%g (points averaged by %d): %d spectra, half width %d, ratio %.4f, lines %d' % (folder, lo, hi, dec, len(files), h, ratio, lines))

for run in ('0.01', '1.00'):
    check('testdata/urethane-atr/vapour-catalyst-' + run, 3550, 3950)
check('testdata/urethane-atr/vapour-bend-catalyst-0.01', 1350, 1950)
check('testdata/urethane-atr/catalyst-1.00', 1350, 1950)
for run in ('0.01', '1.00'):
    check('testdata/urethane-atr/vapour-catalyst-' + run, 3550, 3950, dec=4)
