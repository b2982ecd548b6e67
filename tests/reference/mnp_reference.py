#!/usr/bin/env python3
"""Independent reference for the three-alternative multinomial probit (MNP).

Alternatives, in order: walk (base), tram, cab. V_walk = time*time_walk,
V_j = asc_j + time*time_j + cost*cost_j for j = tram, cab. The error differences
(e_tram, e_cab) = (eps_tram - eps_walk, eps_cab - eps_walk) ~ N(0, S), S = L L',
L = [[1, 0], [chol_cab_tram, chol_cab_cab]] (L[0][0] = 1 fixes the scale).
Parameters: asc_tram, asc_cab, time, cost, chol_cab_tram, chol_cab_cab.

Exact probabilities: P_i = P(e_k - e_i < V_i - V_k for both k != i), a bivariate
normal CDF with covariance D S D' from scipy.stats.multivariate_normal.cdf (in two
dimensions scipy uses a deterministic bivariate-normal routine, not simulation;
cross-checked here by scipy.integrate.quad). Maximum likelihood: scipy.optimize.minimize
(BFGS, central-difference gradients) then Newton polish; standard errors from a
central finite-difference Hessian. numpy and scipy only; the data are invented and
simulated from the error differences directly (argmax of utility), independently
of the probability code. Run: python3 tests/reference/mnp_reference.py
(rewrites tests/fixtures/mnp3.csv and tests/fixtures/mnp_reference.json).
"""

import json
import math
import os
import time as clock

import numpy as np
import scipy
from scipy import integrate, optimize
from scipy.stats import multivariate_normal, norm

HERE = os.path.dirname(os.path.abspath(__file__))
FIXTURES = os.path.join(HERE, "..", "fixtures")
ALTS = ["walk", "tram", "cab"]
NAMES = ["asc_tram", "asc_cab", "time", "cost", "chol_cab_tram", "chol_cab_cab"]
TRUTH = np.array([0.4, -0.3, -0.9, -0.6, 0.9, 0.6])
INDEP_CHOL = (0.5, math.sqrt(0.75))  # S = [[1, .5], [.5, 1]]: iid errors, variance 1/2
N = 1500
SEED = 20240611
TOL = 1e-12  # abseps/releps for multivariate_normal (scipy 1.17's 2-d routine ignores them)
HSTEP = 1e-4  # Hessian step: HSTEP * max(1, |theta_j|)

# D maps (e_tram, e_cab) to (e_k - e_i) for the two k != i, k in alternative order.
D = {
    0: np.array([[1.0, 0.0], [0.0, 1.0]]),    # i = walk: k = tram, cab
    1: np.array([[-1.0, 0.0], [-1.0, 1.0]]),  # i = tram: k = walk, cab
    2: np.array([[0.0, -1.0], [1.0, -1.0]]),  # i = cab:  k = walk, tram
}


def make_data():
    """Draw attributes (rounded to 4 decimals, as written to the CSV) and choices."""
    rng = np.random.default_rng(SEED)
    t = np.column_stack([rng.uniform(1.0, 3.5, N),    # time_walk (minutes/10)
                         rng.uniform(0.8, 2.4, N),    # time_tram
                         rng.uniform(0.3, 1.4, N)])   # time_cab
    c = np.column_stack([np.zeros(N),                  # walking is free
                         rng.uniform(0.5, 1.5, N),    # cost_tram
                         rng.uniform(0.8, 2.6, N)])   # cost_cab
    income = np.exp(rng.normal(0.0, 0.3, N))          # characteristic (not used here)
    t, c, income = t.round(4), c.round(4), income.round(4)
    # Error differences against walk: (e_tram, e_cab) = L z, z ~ N(0, I).
    L = np.array([[1.0, 0.0], [TRUTH[4], TRUTH[5]]])
    e = rng.standard_normal((N, 2)) @ L.T
    u = utilities(TRUTH, t, c) + np.column_stack([np.zeros(N), e])
    return t, c, income, u.argmax(axis=1)


def utilities(theta, t, c):
    asc = np.array([0.0, theta[0], theta[1]])
    return asc + theta[2] * t + theta[3] * c


def cov_S(theta):
    L = np.array([[1.0, 0.0], [theta[4], theta[5]]])
    return L @ L.T


def prob_of(i, v, S):
    """P(alternative i) for each row of utilities v (n x 3), via the bivariate normal CDF."""
    others = [k for k in range(3) if k != i]
    limits = v[:, [i]] - v[:, others]          # upper limits V_i - V_k
    cov = D[i] @ S @ D[i].T                     # covariance of (e_k - e_i)
    mvn = multivariate_normal(mean=np.zeros(2), cov=cov, abseps=TOL, releps=TOL)
    return np.atleast_1d(mvn.cdf(limits))


def all_probs(theta, t, c):
    v, S = utilities(theta, t, c), cov_S(theta)
    return np.column_stack([prob_of(i, v, S) for i in range(3)])


def loglik(theta, t, c, y):
    theta = np.asarray(theta, float)
    if abs(theta[5]) < 1e-6:                    # singular S: outside the model
        return -np.inf
    v, S = utilities(theta, t, c), cov_S(theta)
    ll = 0.0
    for i in range(3):
        rows = y == i
        ll += np.log(prob_of(i, v[rows], S)).sum()
    return ll


def grad(f, x, h=1e-5):
    """Central finite-difference gradient."""
    g = np.zeros_like(x)
    for j in range(len(x)):
        s = h * max(1.0, abs(x[j]))
        e = np.zeros_like(x); e[j] = s
        g[j] = (f(x + e) - f(x - e)) / (2 * s)
    return g


def hessian(f, x, h=HSTEP):
    """Central finite-difference Hessian, step h * max(1, |x_j|)."""
    k = len(x)
    s = h * np.maximum(1.0, np.abs(x))
    H = np.zeros((k, k))
    f0 = f(x)
    for a in range(k):
        ea = np.zeros(k); ea[a] = s[a]
        H[a, a] = (f(x + ea) - 2 * f0 + f(x - ea)) / s[a] ** 2
        for b in range(a):
            eb = np.zeros(k); eb[b] = s[b]
            H[a, b] = H[b, a] = (f(x + ea + eb) - f(x + ea - eb) - f(x - ea + eb)
                                 + f(x - ea - eb)) / (4 * s[a] * s[b])
    return H


def fit(ll, start):
    """Maximise ll: scipy BFGS with central-difference gradients, then Newton polish."""
    neg = lambda x: -ll(x)
    res = optimize.minimize(neg, start, jac=lambda x: grad(neg, x), method="BFGS",
                            options={"gtol": 1e-7, "maxiter": 1000})
    x = res.x
    for _ in range(5):  # Newton steps on the FD Hessian (BFGS stops on precision loss)
        g, H = grad(ll, x), hessian(ll, x)
        step = np.linalg.solve(H, -g)
        if ll(x + step) < ll(x) - 1e-9:
            break
        x = x + step
        if np.abs(step).max() < 1e-10:
            break
    H = hessian(ll, x)
    se = np.sqrt(np.diag(np.linalg.inv(-H)))
    return x, ll(x), se, np.abs(grad(ll, x)).max(), res


def quad_bvn(b, s):
    """Cross-check of the 2-d CDF by 1-d quadrature (scipy.integrate.quad)."""
    s1, s2 = math.sqrt(s[0][0]), math.sqrt(s[1][1])
    r = s[0][1] / (s1 * s2)
    f = lambda x: norm.pdf(x) * norm.cdf((b[1] / s2 - r * x) / math.sqrt(1 - r * r))
    return integrate.quad(f, -np.inf, b[0] / s1, epsabs=1e-14, epsrel=1e-13, limit=200)[0]


def main():
    t0 = clock.time()
    t, c, income, y = make_data()
    shares = np.bincount(y, minlength=3) / N
    print("shares walk/tram/cab:", shares.round(4))
    assert shares.min() >= 0.15, "an alternative is chosen less than 15% of the time"
    with open(os.path.join(FIXTURES, "mnp3.csv"), "w") as fh:
        fh.write("id,choice,time_walk,time_tram,time_cab,cost_tram,cost_cab,income\n")
        for r in range(N):
            fh.write(f"{r + 1},{ALTS[y[r]]},{t[r, 0]:.4f},{t[r, 1]:.4f},{t[r, 2]:.4f},"
                     f"{c[r, 1]:.4f},{c[r, 2]:.4f},{income[r]:.4f}\n")

    # Parameter vectors for the probability table (all under the full structure).
    points = [("truth", TRUTH),
              ("independent errors", np.array([0.4, -0.3, -0.9, -0.6, *INDEP_CHOL])),
              ("strong negative correlation", np.array([0.2, 0.1, -0.7, -0.8, -0.8, 0.4])),
              ("large cab variance", np.array([-0.5, 0.6, -1.2, -0.3, 0.3, 1.5])),
              ("all utilities zero", np.array([0.0, 0.0, 0.0, 0.0, 0.9, 0.6]))]
    table, max_sum_err = [], 0.0
    for label, th in points:
        p = all_probs(th, t[:20], c[:20])
        max_sum_err = max(max_sum_err, np.abs(p.sum(axis=1) - 1).max())
        table.append({"label": label, "params": th.tolist(), "probabilities": p.tolist()})
    print(f"max |p_walk + p_tram + p_cab - 1| over the table: {max_sum_err:.2e}")
    assert max_sum_err < 1e-8
    # scipy's CDF against quadrature, a few limits/covariances of the table's kind.
    quad_err = 0.0
    for th in (TRUTH, points[2][1]):
        v, S = utilities(th, t[:3], c[:3]), cov_S(th)
        for i in range(3):
            cov = D[i] @ S @ D[i].T
            for r in range(3):
                b = [v[r, i] - v[r, k] for k in range(3) if k != i]
                quad_err = max(quad_err, abs(prob_of(i, v[[r]], S)[0] - quad_bvn(b, cov)))
    print(f"max |scipy cdf - quadrature|: {quad_err:.2e}")

    ll_truth = loglik(TRUTH, t, c, y)
    print(f"log-likelihood at the truth: {ll_truth:.10f}")

    # 1. Full model: six parameters.
    full_ll = lambda th: loglik(th, t, c, y)
    start = np.array([0.0, 0.0, 0.0, 0.0, *INDEP_CHOL])
    est, llf, se, gmax, res = fit(full_ll, start)
    est[5] = abs(est[5])                        # S depends on chol_cab_cab only via its square
    S = cov_S(est)
    print(f"full: ll={llf:.10f} max|grad|={gmax:.1e} BFGS iterations={res.nit}")
    # 2. Independent structure: four utility parameters, S fixed.
    ind_ll = lambda b: loglik(np.r_[b, INDEP_CHOL], t, c, y)
    est_i, lli, se_i, gmax_i, res_i = fit(ind_ll, np.zeros(4))
    print(f"independent: ll={lli:.10f} max|grad|={gmax_i:.1e} BFGS iterations={res_i.nit}")

    # Sanity check: full estimates within 3.5 standard errors of the truth.
    print(f"{'param':>14} {'truth':>8} {'full':>12} {'se':>10} {'z':>7} {'indep':>12} {'se':>10}")
    for j, n in enumerate(NAMES):
        z = (est[j] - TRUTH[j]) / se[j]
        ind = f"{est_i[j]:12.6f} {se_i[j]:10.6f}" if j < 4 else ""
        print(f"{n:>14} {TRUTH[j]:8.3f} {est[j]:12.6f} {se[j]:10.6f} {z:7.2f} {ind}")
    assert np.all(np.abs(est - TRUTH) < 3.5 * se), "estimate more than 3.5 se from truth"

    out = {
        "description": {
            "model": "3-alternative multinomial probit; alternatives walk (base), tram, cab; "
                     "V_j = asc_j + time*time_j + cost*cost_j (asc and cost only for tram, cab); "
                     "(eps_tram-eps_walk, eps_cab-eps_walk) ~ N(0, S), S = L L', "
                     "L = [[1,0],[chol_cab_tram, chol_cab_cab]]",
            "probabilities": "exact: bivariate normal CDF of (e_k - e_i), k != i, at V_i - V_k, "
                             "scipy.stats.multivariate_normal.cdf (deterministic 2-d routine; "
                             "abseps/releps are passed but unused by it in scipy 1.17)",
            "data": "tests/fixtures/mnp3.csv, written by this script; income is not used",
            "full": "ML estimates of all 6 parameters, log-likelihood, standard errors "
                    "sqrt(diag(inv(-H))) with H the central finite-difference Hessian, "
                    "implied S entries and correlation S21/sqrt(S22)",
            "independent": "ML with S fixed at [[1,0.5],[0.5,1]] (chol 0.5, sqrt(0.75)); "
                           "4 utility parameters",
            "points": "for 5 parameter vectors (full structure), probabilities "
                      "[p_walk, p_tram, p_cab] for the first 20 data rows",
            "ll_at_truth": "log-likelihood of the data at the true parameters",
            "hessian_step": "finite-difference step for parameter j: hessian_step * max(1, |theta_j|)",
        },
        "versions": {"numpy": np.__version__, "scipy": scipy.__version__},
        "cdf_tolerance": {"abseps": TOL, "releps": TOL},
        "seed": SEED, "n": N, "alternatives": ALTS, "base": "walk",
        "parameter_names": NAMES, "truth": TRUTH.tolist(),
        "shares": dict(zip(ALTS, shares.tolist())),
        "hessian_step": HSTEP,
        "ll_at_truth": ll_truth,
        "full": {"estimates": est.tolist(), "standard_errors": se.tolist(),
                 "log_likelihood": llf, "max_abs_gradient": gmax,
                 "S11": 1.0, "S21": S[1, 0], "S22": S[1, 1],
                 "correlation": S[1, 0] / math.sqrt(S[1, 1])},
        "independent": {"parameter_names": NAMES[:4], "estimates": est_i.tolist(),
                        "standard_errors": se_i.tolist(), "log_likelihood": lli,
                        "max_abs_gradient": gmax_i, "S11": 1.0, "S21": 0.5, "S22": 1.0,
                        "correlation": 0.5},
        "points": table,
        "checks": {"max_abs_probability_sum_error": max_sum_err,
                   "max_abs_cdf_minus_quadrature": quad_err},
    }
    with open(os.path.join(FIXTURES, "mnp_reference.json"), "w") as fh:
        json.dump(out, fh, indent=1)
        fh.write("\n")
    print(f"wrote mnp3.csv and mnp_reference.json in {clock.time() - t0:.1f} s")


if __name__ == "__main__":
    main()
