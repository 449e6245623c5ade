#!/usr/bin/python3
"""Exact first-order solutions for stiff k*t, for mcr/kinetics tests.

Run: /usr/bin/python3 testdata/kinetics/make_expm_reference.py > testdata/kinetics/expm_reference.json
State y = [c; xi] (species, then reaction extents), dy/dt = M y with M built from the
scheme as in the IUPAC convention (r_j = k_j c_reactant, dc/dt = N r, dxi/dt = r).
y(t) = expm(M t) y0 by scipy.linalg.expm (Al-Mohy & Higham 2009) and, as a check, by
mpmath.expm at 60 significant digits; both are stored with their largest difference.
"""
import json
import platform
import sys

import mpmath
import numpy as np
import scipy
from scipy.linalg import expm


def matrix(species, steps, k):
    ns, nr = len(species), len(steps)
    m = np.zeros((ns + nr, ns + nr))
    for j, (src, dst) in enumerate(steps):
        a, b = species.index(src), species.index(dst)
        m[a, a] -= k[j]
        m[b, a] += k[j]
        m[ns + j, a] += k[j]
    return m


CASES = [
    ("A -> B -> C", ["A", "B", "C"], [("A", "B"), ("B", "C")], [1e6, 1.0], [1, 0, 0]),
    ("A -> B -> C", ["A", "B", "C"], [("A", "B"), ("B", "C")], [1e6, 1e6], [1, 0, 0]),
    ("A -> B; B -> A", ["A", "B"], [("A", "B"), ("B", "A")], [1e6, 5e5], [0.8, 0.2]),
    ("A -> B -> C; D -> E", ["A", "B", "C", "D", "E"], [("A", "B"), ("B", "C"), ("D", "E")], [3e5, 2e-3, 7.0], [1, 0, 0, 1, 0]),
    # Equal and nearly equal rate constants (the defective limit of the Bateman solution),
    # at ordinary and at stiff k*t.
    ("A -> B -> C", ["A", "B", "C"], [("A", "B"), ("B", "C")], [1.0, 1.0], [1, 0, 0]),
    ("A -> B -> C", ["A", "B", "C"], [("A", "B"), ("B", "C")], [1.0, 1.0 + 1e-9], [1, 0, 0]),
    ("A -> B -> C", ["A", "B", "C"], [("A", "B"), ("B", "C")], [1e6, 1e6 * (1 + 1e-7)], [1, 0, 0]),
    ("A -> B -> C -> D", ["A", "B", "C", "D"], [("A", "B"), ("B", "C"), ("C", "D")], [2e-3, 2e-3, 2e-3], [1, 0, 0, 0]),
    ("A -> B -> C -> D -> E", ["A", "B", "C", "D", "E"], [("A", "B"), ("B", "C"), ("C", "D"), ("D", "E")],
     [3.0, 3.0 * (1 + 1e-6), 1e4, 3.0], [1, 0, 0, 0, 0]),
    ("A -> B; A -> C; B -> D; C -> D", ["A", "B", "C", "D"], [("A", "B"), ("A", "C"), ("B", "D"), ("C", "D")],
     [0.5, 0.5, 1.0, 1.0], [1, 0.3, 0, 0]),
    ("A -> B -> C; D -> E", ["A", "B", "C", "D", "E"], [("A", "B"), ("B", "C"), ("D", "E")], [3e-3, 8e-4, 3e-3], [0.5, 0, 0, 0.5, 0]),
]
TIMES = [1e-7, 1e-6, 1e-5, 1e-3, 0.1, 1.0, 10.0, 1e3, 1e4]


def main():
    mpmath.mp.dps = 60
    out = {"generator": "testdata/kinetics/make_expm_reference.py", "python": platform.python_version(),
           "numpy": np.__version__, "scipy": scipy.__version__, "mpmath": mpmath.__version__, "cases": []}
    for text, species, steps, k, c0 in CASES:
        m = matrix(species, steps, k)
        y0 = np.array(c0 + [0.0] * len(steps), dtype=float)
        ys, ym, diff = [], [], 0.0
        for t in TIMES:
            a = expm(m * t) @ y0
            e = mpmath.expm(mpmath.matrix((m * t).tolist()))
            b = [float(sum(e[i, j] * mpmath.mpf(y0[j]) for j in range(len(y0)))) for i in range(len(y0))]
            ys.append(a.tolist())
            ym.append(b)
            diff = max(diff, float(np.max(np.abs(a - np.array(b)))))
        out["cases"].append({"scheme": text, "k": k, "c0": c0, "times": TIMES, "scipy_expm": ys,
                             "mpmath_expm": ym, "max_abs_diff_scipy_vs_mpmath": diff})
    json.dump(out, sys.stdout, indent=1)


if __name__ == "__main__":
    main()
