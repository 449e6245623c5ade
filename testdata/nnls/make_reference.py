#!/usr/bin/env python3
"""Stored reference values for bandsolve's NNLS tests.

Run once with Debian's python3-scipy / python3-numpy:
    /usr/bin/python3 make_reference.py > scipy_nnls.json
The versions used are written into the JSON file.
"""
import json
import numpy as np
import scipy
from scipy.optimize import nnls

rng = np.random.default_rng(20261201)
cases = []
for (m, n, kind) in [(6, 4, "gauss"), (20, 8, "gauss"), (50, 10, "gauss"),
                     (15, 15, "gauss"), (40, 6, "bands"), (8, 12, "wide")]:
    if kind == "bands":
        # Overlapping Gaussian bands: columns are nearly collinear, as in spectra.
        x = np.linspace(0, 1, m)
        centres = np.linspace(0.2, 0.8, n)
        A = np.exp(-0.5 * ((x[:, None] - centres[None, :]) / 0.12) ** 2)
    else:
        A = rng.standard_normal((m, n))
    b = rng.standard_normal(m) + A @ np.abs(rng.standard_normal(n)) * 0.5
    sol, rnorm = nnls(A, b, maxiter=100 * n)
    cases.append({"name": f"{kind}_{m}x{n}", "m": m, "n": n,
                  "A": A.tolist(), "b": b.tolist(), "x": sol.tolist(), "rnorm": rnorm})
print(json.dumps({"generator": "scipy.optimize.nnls",
                  "scipy": scipy.__version__, "numpy": np.__version__,
                  "cases": cases}, indent=1))
