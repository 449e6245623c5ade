#!/usr/bin/python3
"""Reference values for mcr/kinetics tests, computed once with SciPy/NumPy (Debian packages).

Run: /usr/bin/python3 testdata/kinetics/make_reference.py > testdata/kinetics/reference.json
Rate convention (IUPAC): rate of reaction r_j = k_j * prod(c_i ** nu_ij) over reactants,
dc/dt = N r, reaction extents d(xi_j)/dt = r_j with xi(t0) = 0.
"""
import json
import platform
import sys

import numpy as np
import scipy
from scipy.integrate import solve_ivp
from scipy.optimize import least_squares


def network_rhs(k):
    # "A + B -> C; C -> D; 2 D -> E", species A B C D E, steps 3
    def f(t, y):
        a, b, c, d, e = y[:5]
        r1 = k[0] * a * b
        r2 = k[1] * c
        r3 = k[2] * d * d
        return [-r1, -r1, r1 - r2, r2 - 2 * r3, r3, r1, r2, r3]
    return f


def robertson_rhs(k):
    # "A -> B; 2 B -> B + C; B + C -> A + C" (Robertson 1966), species A B C, steps 3
    def f(t, y):
        a, b, c = y[:3]
        r1 = k[0] * a
        r2 = k[1] * b * b
        r3 = k[2] * b * c
        return [-r1 + r3, r1 - r2 - r3, r2, r1, r2, r3]
    return f


def robertson_jac(k):
    def j(t, y):
        a, b, c = y[:3]
        m = np.zeros((6, 6))
        dr = np.array([[k[0], 0, 0], [0, 2 * k[1] * b, 0], [0, k[2] * c, k[2] * b]])
        n = np.array([[-1, 0, 1], [1, -1, -1], [0, 1, 0]])
        m[:3, :3] = n @ dr
        m[3:, :3] = dr
        return m
    return j


def run_case(name, scheme, k, c0, nsteps, times, method, rhs, jac=None, rtol=1e-12, atol=1e-14):
    y0 = list(c0) + [0.0] * nsteps
    kw = {}
    if jac is not None:
        kw["jac"] = jac
    sol = solve_ivp(rhs, (0.0, times[-1]), y0, method=method, t_eval=times, rtol=rtol, atol=atol, **kw)
    assert sol.success, sol.message
    ns = len(c0)
    return {
        "name": name, "scheme": scheme, "k": list(k), "c0": list(c0), "t0": 0.0, "times": list(times),
        "method": method, "rtol": rtol, "atol": atol,
        "C": sol.y[:ns].T.tolist(), "extents": sol.y[ns:].T.tolist(),
    }


def main():
    out = {
        "generator": "testdata/kinetics/make_reference.py",
        "python": platform.python_version(), "numpy": np.__version__, "scipy": scipy.__version__,
        "cases": [],
    }
    times = [0.1, 0.25, 0.5, 1.0, 1.5, 2.0, 3.0, 4.0, 6.0, 8.0, 10.0]
    k = [2.0, 0.7, 1.5]
    c0 = [1.0, 0.8, 0.0, 0.0, 0.0]
    rk = run_case("network-rk45", "A + B -> C; C -> D; 2 D -> E", k, c0, 3, times, "RK45", network_rhs(k))
    rad = run_case("network-radau", "A + B -> C; C -> D; 2 D -> E", k, c0, 3, times, "Radau", network_rhs(k))
    # The two SciPy integrators must agree with each other before either is used as a reference.
    rk["max_abs_diff_rk45_vs_radau"] = float(np.max(np.abs(np.array(rk["C"]) - np.array(rad["C"]))))
    out["cases"].append(rk)

    kr = [0.04, 3e7, 1e4]
    tr = [1e-4, 1e-3, 1e-2, 0.1, 1.0, 10.0, 40.0]
    rob = run_case("robertson-radau", "A -> B; 2 B -> B + C; B + C -> A + C", kr, [1.0, 0.0, 0.0], 3, tr,
                   "Radau", robertson_rhs(kr), robertson_jac(kr), rtol=1e-11, atol=1e-16)
    bdf = run_case("robertson-bdf", "A -> B; 2 B -> B + C; B + C -> A + C", kr, [1.0, 0.0, 0.0], 3, tr,
                   "BDF", robertson_rhs(kr), robertson_jac(kr), rtol=1e-10, atol=1e-16)
    rob["max_rel_diff_radau_vs_bdf_C"] = float(np.max(np.abs(np.array(rob["C"]) - np.array(bdf["C"])) /
                                               np.maximum(np.abs(np.array(rob["C"])), 1e-30)))
    out["cases"].append(rob)

    # NIST StRD Misra1a fitted with scipy.optimize.least_squares (MINPACK lm).
    x = np.array([77.6, 114.9, 141.1, 190.8, 239.9, 289.0, 332.8, 378.4, 434.8, 477.3, 536.8, 593.1, 689.1, 760.0])
    y = np.array([10.07, 14.73, 17.94, 23.93, 29.61, 35.18, 40.02, 44.82, 50.76, 55.05, 61.01, 66.40, 75.47, 81.78])
    def res(b):
        return y - b[0] * (1 - np.exp(-b[1] * x))
    def jac(b):
        e = np.exp(-b[1] * x)
        return np.column_stack([-(1 - e), -b[0] * x * e])
    fit = least_squares(res, [500.0, 1e-4], jac=jac, method="lm", xtol=1e-15, ftol=1e-15, gtol=1e-15)
    ssr = float(np.sum(fit.fun ** 2))
    cov = np.linalg.inv(fit.jac.T @ fit.jac) * ssr / (len(x) - 2)
    out["misra1a"] = {"method": "scipy.optimize.least_squares(method='lm')", "b": fit.x.tolist(), "ssr": ssr,
                      "stderr": np.sqrt(np.diag(cov)).tolist()}
    json.dump(out, sys.stdout, indent=1)
    sys.stdout.write("\n")


if __name__ == "__main__":
    main()
