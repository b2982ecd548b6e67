#!/usr/bin/env python3
"""Exact multivariate normal rectangle probabilities P(w < b), w ~ N(0, S),
for checking the GHK simulator (src/model/ghk.rs).

Two dimensions: by one-dimensional quadrature of phi(x) Phi((b2 - r x) / sqrt(1 - r^2))
after standardising (scipy.integrate.quad, tolerance 1e-13). Three dimensions:
scipy.stats.multivariate_normal.cdf with tight tolerances. Writes
tests/fixtures/ghk_reference.json. Run: python3 tests/reference/ghk_reference.py
"""

import json
import math
import os

import numpy as np
import scipy
from scipy import integrate
from scipy.stats import multivariate_normal, norm


def bivariate(b, s):
    s1, s2 = math.sqrt(s[0][0]), math.sqrt(s[1][1])
    r = s[0][1] / (s1 * s2)
    a1, a2 = b[0] / s1, b[1] / s2
    f = lambda x: norm.pdf(x) * norm.cdf((a2 - r * x) / math.sqrt(1 - r * r))
    val, _ = integrate.quad(f, -np.inf, a1, epsabs=1e-14, epsrel=1e-13, limit=200)
    return val


def main():
    cases = []
    for b, s in [
        ([0.3, -0.2], [[1.0, 0.5], [0.5, 2.0]]),
        ([1.2, 0.4], [[1.0, -0.3], [-0.3, 0.8]]),
        ([-0.7, -1.1], [[2.0, 1.2], [1.2, 1.5]]),
        ([0.0, 0.0], [[1.0, 0.5], [0.5, 1.0]]),
    ]:
        cases.append({"upper": b, "covariance": s, "probability": bivariate(b, s), "method": "quadrature"})
    for b, s in [
        ([0.5, -0.1, 0.8], [[1.0, 0.5, 0.2], [0.5, 1.5, 0.4], [0.2, 0.4, 1.2]]),
        ([-0.4, 0.9, 0.1], [[1.0, -0.2, 0.3], [-0.2, 0.9, 0.1], [0.3, 0.1, 2.0]]),
    ]:
        p = multivariate_normal.cdf(
            np.array(b), mean=np.zeros(3), cov=np.array(s),
            abseps=1e-10, releps=1e-10, maxpts=20_000_000, rng=np.random.default_rng(1),
        )
        cases.append({"upper": b, "covariance": s, "probability": float(p), "method": "scipy multivariate_normal.cdf"})
    out = {"scipy": scipy.__version__, "numpy": np.__version__, "cases": cases}
    here = os.path.dirname(os.path.abspath(__file__))
    path = os.path.join(here, "..", "fixtures", "ghk_reference.json")
    with open(path, "w") as f:
        json.dump(out, f, indent=1)
    # The 2-D case at b = 0 with correlation 1/2 is 1/4 + asin(1/2)/(2 pi) = 1/3 (Sheppard).
    print("b = 0, r = 0.5:", cases[3]["probability"], "exact", 1 / 3)
    for c in cases:
        print(c["method"], c["upper"], c["probability"])


if __name__ == "__main__":
    main()
