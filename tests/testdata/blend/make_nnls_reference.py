#!/usr/bin/python3
"""Writes the reference values that tests/pipeline/blend_test.cc checks.

Run with Debian's python (python3-scipy 1.10.1, python3-numpy 1.24.2):
    /usr/bin/python3 make_nnls_reference.py
Non-negative least squares comes from scipy.optimize.nnls (scipy's wrapper of the Lawson-Hanson
Fortran routine); plain least squares from numpy.linalg.lstsq. The inputs are drawn from numpy's
legacy RandomState (MT19937) with fixed seeds and written out in full (shortest round-trip
decimals), so the C++ test reads exactly the doubles used here. Output: nnls_reference.json.
"""
import json
import os
import platform

import numpy as np
import scipy
from scipy.optimize import nnls

HERE = os.path.dirname(os.path.abspath(__file__))


def tolist(a):
    return np.asarray(a, dtype=float).tolist()


def nnls_case(name, A, b):
    x, rnorm = nnls(A, b)
    return {"name": name, "A": tolist(A), "b": tolist(b), "x": tolist(x), "rnorm": float(rnorm)}


def weights_case(name, P, y, nonnegative):
    """y ~ intercept + P w: centre, solve for w, intercept = mean(y) - mean(P) w."""
    pm, ym = P.mean(axis=0), y.mean()
    Pc, yc = P - pm, y - ym
    if nonnegative:
        w, _ = nnls(Pc, yc)
    else:
        w = np.linalg.lstsq(Pc, yc, rcond=None)[0]
    return {"name": name, "P": tolist(P), "y": tolist(y), "nonnegative": nonnegative,
            "weights": tolist(w), "intercept": float(ym - pm @ w)}


def main():
    cases = []
    r = np.random.RandomState(1)
    cases.append(nnls_case("gaussian_20x5", r.normal(size=(20, 5)), r.normal(size=20)))
    r = np.random.RandomState(2)
    A = r.uniform(size=(60, 8))
    x_true = np.array([1.5, -0.7, 0.0, 2.0, -1.2, 0.3, 0.0, 0.9])
    cases.append(nnls_case("tall_60x8", A, A @ x_true + 0.05 * r.normal(size=60)))
    r = np.random.RandomState(3)
    cases.append(nnls_case("all_zero_10x3", r.uniform(size=(10, 3)), -r.uniform(size=10)))
    r = np.random.RandomState(4)
    A = r.normal(size=(12, 4))
    cases.append(nnls_case("exact_12x4", A, A @ np.array([1.0, 0.0, 2.0, 0.5])))
    r = np.random.RandomState(5)
    cases.append(nnls_case("wide_4x7", r.normal(size=(4, 7)), r.normal(size=4)))

    weights = []
    # Members that predict a target with different noise, one of them anti-correlated.
    r = np.random.RandomState(6)
    y = r.normal(size=40) * 3 + 10
    P = np.column_stack([y + r.normal(size=40), y + 2 * r.normal(size=40),
                         20 - y + r.normal(size=40)])
    weights.append(weights_case("three_members", P, y, False))
    weights.append(weights_case("three_members", P, y, True))
    # Probabilities of class 1 from three classifiers of a 0/1 target.
    r = np.random.RandomState(7)
    y = (r.uniform(size=50) < 0.4).astype(float)
    P = np.clip(np.column_stack([0.6 * y + 0.2 + 0.15 * r.normal(size=50),
                                 0.3 * y + 0.35 + 0.2 * r.normal(size=50),
                                 0.5 + 0.1 * r.normal(size=50)]), 0, 1)
    weights.append(weights_case("binary_probabilities", P, y, False))
    weights.append(weights_case("binary_probabilities", P, y, True))

    out = {
        "provenance": {
            "script": "tests/testdata/blend/make_nnls_reference.py",
            "python": platform.python_version(),
            "numpy": np.__version__,
            "scipy": scipy.__version__,
            "nnls": "scipy.optimize.nnls(A, b) -> (x, rnorm)",
            "weights": "centred: nnls or numpy.linalg.lstsq(rcond=None) on P - mean(P), "
                       "y - mean(y); intercept = mean(y) - mean(P) @ w",
        },
        "nnls": cases,
        "weights": weights,
    }
    with open(os.path.join(HERE, "nnls_reference.json"), "w") as f:
        json.dump(out, f, indent=1)
        f.write("\n")


if __name__ == "__main__":
    main()
