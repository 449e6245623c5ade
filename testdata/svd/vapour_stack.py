#!/usr/bin/env python3
"""The numbers docs/constraints.md ("Several experiments") and
docs/measurement.md (section 9) give for the two urethane ATR series stacked,
computed with numpy/scipy outside bandsolve (Debian python3-numpy 1.24,
python3-scipy 1.10). Reads ../shared/real-data/urethane-atr (source and
licence in its README). Run from the repository root:
  python3 testdata/svd/vapour_stack.py [REAL_DATA_DIR]
Not needed at test time.

Each series less a cubic polynomial of the axis per spectrum (least squares);
the vapour's course is its largest line's height per spectrum, measured as
svd/vapour.go does (3550-3950 cm-1, quadratic Savitzky-Golay over about
8 cm-1, pattern from the stack's centred rows); projecting that course out of
the rows shows what is left without it. Also: removing only the high-passed
line pattern from every spectrum."""
import datetime, glob, os, re, sys
import numpy as np
from scipy.signal import savgol_coeffs

root = sys.argv[1] if len(sys.argv) > 1 else '../shared/real-data'

def when(f):
    m = re.search(r'\w{3} (\w{3}) (\d+) (\d+)-(\d+)-(\d+) (\d{4})', os.path.basename(f))
    return datetime.datetime.strptime(' '.join(m.groups()), '%b %d %H %M %S %Y')

def load(run):
    files = sorted(glob.glob(os.path.join(root, 'urethane-atr', run, '*')), key=when)
    x = np.loadtxt(files[0], delimiter=',')[:, 0]
    return x, np.array([np.loadtxt(f, delimiter=',')[:, 1] for f in files])

x, a1 = load('catalyst-1.00')
_, a2 = load('catalyst-0.01')
n1 = len(a1)
q = np.linalg.qr(np.vander((x - x.mean()) / (np.ptp(x) / 2), 4))[0]
less_cubic = lambda d: d - (d @ q) @ q.T
w2 = (x >= 3550) & (x <= 3950)
h = max(2, int(round(8 / 2 / (abs(x[w2][-1] - x[w2][0]) / (w2.sum() - 1)))))
c = savgol_coeffs(2 * h + 1, 2)
high = lambda d: d[:, w2][:, h:-h] - np.array([np.convolve(r, c[::-1], 'valid') for r in d[:, w2]])

stack_a = np.vstack([a1, a2])
stack_d = np.vstack([a1 - a1[0], a2 - a2[0]])
e = high(stack_a)
e[:n1] -= e[:n1].mean(0)
e[n1:] -= e[n1:].mean(0)
pattern = np.linalg.svd(e, full_matrices=False)[2][0]
sv = lambda d: np.round(np.linalg.svd(d, compute_uv=False)[:5], 3)
for name, d in (('absorbance', stack_a), ('differences', stack_d)):
    course = high(d) @ pattern
    g = course / np.linalg.norm(course)
    m = less_cubic(d)
    print(name, 'singular values', sv(m), '-> without the vapour course', sv(m - np.outer(g, g @ m)))
# Removing the high-passed lines only: their pattern over both of the
# vapour's ranges (1300-2000 and 3450-4000 cm-1), regressed on its course,
# taken out of every spectrum by least squares.
both = ((x >= 1300) & (x <= 2000)) | ((x >= 3450) & (x <= 4000))
hp_all = lambda d: d - np.array([np.convolve(r, c[::-1], 'same') for r in d])
course = high(stack_d) @ pattern
v = np.where(both, hp_all(stack_d).T @ course / (course @ course), 0)
lines_only = lambda d: d - np.outer(d @ v / (v @ v), v)
print('differences without the high-passed lines', sv(less_cubic(lines_only(stack_d))))
