#!/usr/bin/env python3
"""Reference singular values for bandsolve's svd package tests.

Run once with Debian's python3-numpy (see VERSIONS.txt):
    /usr/bin/python3 testdata/svd/make_reference.py
Writes, next to this script:
  small.csv        a seeded 7 x 5 Gaussian matrix (numpy.random.default_rng(20240611)), 17 digits
  small_svd.json   numpy.linalg.svd of it: s, U (7 x 5), V (5 x 5); each factor's sign fixed so
                   that the largest-magnitude entry of its V column is positive
  formula_svd.json numpy.linalg.svd singular values of matrices defined by formula(n, m) below,
                   which the Go tests rebuild with the same expression (no stored matrix needed)
"""
import json
import math
import os
import sys

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))


def gauss(x, centre, width):
    return math.exp(-0.5 * ((x - centre) / width) ** 2)


def formula(n, m):
    """Three smooth bilinear components plus a deterministic rough term.

    D[i][j] = exp(-3t) g(v; .30, .05) + (1 - exp(-3t)) g(v; .60, .08)
              + 0.3 sin(pi t) g(v; .45, .03)
              + 1e-3 sin(0.37 (i+1)^2 + 1.91 (j+1) + 0.13 (i+1)(j+1)),
    t = i/(n-1), v = j/(m-1), g(v; c, w) = exp(-((v-c)/w)^2 / 2).
    Built with math.exp / math.sin element by element, as the Go test does.
    """
    d = np.empty((n, m))
    for i in range(n):
        t = i / (n - 1)
        for j in range(m):
            v = j / (m - 1)
            d[i, j] = (math.exp(-3 * t) * gauss(v, 0.30, 0.05)
                       + (1 - math.exp(-3 * t)) * gauss(v, 0.60, 0.08)
                       + 0.3 * math.sin(math.pi * t) * gauss(v, 0.45, 0.03)
                       + 1e-3 * math.sin(0.37 * (i + 1) ** 2 + 1.91 * (j + 1) + 0.13 * (i + 1) * (j + 1)))
    return d


def fix_signs(u, vt):
    for k in range(vt.shape[0]):
        j = int(np.argmax(np.abs(vt[k])))  # first maximum on ties, as in Go
        if vt[k, j] < 0:
            vt[k] *= -1
            u[:, k] *= -1
    return u, vt


def main():
    rng = np.random.default_rng(20240611)
    small = rng.normal(size=(7, 5))
    with open(os.path.join(HERE, "small.csv"), "w") as fh:
        for row in small:
            fh.write(",".join(repr(float(x)) for x in row) + "\n")
    u, s, vt = np.linalg.svd(small, full_matrices=False)
    u, vt = fix_signs(u, vt)
    with open(os.path.join(HERE, "small_svd.json"), "w") as fh:
        json.dump({"source": "numpy.linalg.svd " + np.__version__,
                   "s": s.tolist(), "U": u.tolist(), "V": vt.T.tolist()}, fh, indent=1)
    out = {"source": "numpy.linalg.svd " + np.__version__, "formula": formula.__doc__.strip(), "cases": []}
    for n, m in [(90, 240), (240, 60)]:
        s = np.linalg.svd(formula(n, m), compute_uv=False)
        out["cases"].append({"n": n, "m": m, "s": s.tolist(),
                             "frobenius_sq": float(np.sum(formula(n, m) ** 2))})
    with open(os.path.join(HERE, "formula_svd.json"), "w") as fh:
        json.dump(out, fh, indent=1)
    with open(os.path.join(HERE, "VERSIONS.txt"), "w") as fh:
        fh.write("python " + sys.version.split()[0] + "\n")
        fh.write("numpy " + np.__version__ + " (Debian package python3-numpy)\n")
        fh.write("LAPACK: Debian liblapack3 (numpy.linalg.svd calls dgesdd)\n")
        try:
            import subprocess
            fh.write(subprocess.run(["dpkg-query", "-W", "python3-numpy", "liblapack3"],
                                    capture_output=True, text=True).stdout)
        except OSError:
            pass


if __name__ == "__main__":
    main()
