#!/usr/bin/env python3
"""Ordered logit and ordered probit reference numbers on statsmodels' anes96.

Run from the repository root (/work/main):

    pip install numpy scipy pandas statsmodels && python3 tests/reference/ordered_reference.py

Reads  tests/data/anes96.csv (written by make_reference.py; not changed here)
Writes tests/fixtures/ordered_reference.json

Model: selfLR (7-point self-placement, categories 1..7) on age, educ, income,
no constant (the cut-points absorb it):
    P(y = k | x) = F(cut_k - x'b) - F(cut_{k-1} - x'b),  cut_0 = -inf, cut_7 = +inf
F = logistic cdf (distr='logit') or standard normal cdf (distr='probit').

Sources of the numbers
----------------------
* params, bse, llf, converged, average predicted probabilities:
  statsmodels.miscmodels.ordinal_model.OrderedModel (version recorded in the
  fixture).  statsmodels parameterises the thresholds as
  (cut_1, log(cut_2 - cut_1), ..., log(cut_6 - cut_5)); its bse come from a
  numerical Hessian of the log-likelihood (statsmodels.tools.numdiff).
  Fit: BFGS, then statsmodels' Newton from the BFGS point; if the analytic
  score below is not yet < 1e-9 in max-abs, Newton polish with the analytic
  score (Hessian by central differences of it), after which the statsmodels
  results object is rebuilt at the polished point (fit with maxiter=0), so
  params/llf/bse are still statsmodels' own evaluations.
* Everything else is computed in this file with numpy/scipy (an independent
  implementation of the ordered likelihood and its analytic score):
  - max |score| at the optimum (analytic score; statsmodels' score is a
    numerical derivative, also recorded);
  - thresholds cut_1..cut_6 = cut_1, cut_{k-1} + exp(param) and their
    delta-method standard errors from statsmodels' covariance matrix
    (Jacobian d cut_k / d param_1 = 1, d cut_k / d param_m = exp(param_m) for
    2 <= m <= k);
  - bse_analytic_score_hessian: standard errors from the central-difference
    Hessian (step 1e-5 * max(1, |theta_i|)) of the analytic score, as a cross
    check of statsmodels' bse;
  - thresholds-only log-likelihood sum_k n_k log(n_k / N) (closed form), also
    checked by evaluating the likelihood at b = 0, cut_k = F^-1(cum. share);
  - average predicted probability of each category at the optimum (checked
    against statsmodels' predict());
  - average marginal effects dP(y=k)/dx_v = [f(cut_{k-1}-x'b) - f(cut_k-x'b)] b_v
    averaged over the sample (closed form; checked against central finite
    differences of the averaged probabilities and checked to sum to zero over
    categories).

Naming for the Rust side: coefficients age, educ, income; cut-points
cut_1..cut_6 (cut_k = upper threshold of category k).
"""

import json
import math
import os
import sys
import warnings

import numpy as np
import pandas as pd
import scipy
import statsmodels
import statsmodels.api as sm
from scipy import stats
from statsmodels.miscmodels.ordinal_model import OrderedModel

ROOT = os.getcwd()
DATA_FILE = os.path.join("tests", "data", "anes96.csv")
FIX_FILE = os.path.join("tests", "fixtures", "ordered_reference.json")

ENDOG = "selfLR"
EXOG = ["age", "educ", "income"]
CATS = [1, 2, 3, 4, 5, 6, 7]
CUT_NAMES = ["cut_%d" % k for k in range(1, len(CATS))]
HESS_STEP_REL = 1e-5


def fnum(x):
    """Python float (full double precision) or None for NaN/inf."""
    x = float(x)
    if not math.isfinite(x):
        return None
    return x


def flist(a):
    return [fnum(v) for v in np.ravel(np.asarray(a, dtype=float))]


# --------------------------------------------------------------------------
# independent numpy implementation (statsmodels' parameterisation)
# --------------------------------------------------------------------------

DISTR = {
    "logit": (stats.logistic.cdf, stats.logistic.pdf, stats.logistic.ppf),
    "probit": (stats.norm.cdf, stats.norm.pdf, stats.norm.ppf),
}


class Ordered:
    def __init__(self, y, X, distr):
        self.y = np.asarray(y, dtype=int)         # categories 1..J
        self.X = np.asarray(X, dtype=float)
        self.J = len(CATS)
        self.kx = self.X.shape[1]
        self.k = self.kx + self.J - 1
        self.F, self.f, self.Finv = DISTR[distr]

    def cuts(self, theta):
        a = theta[self.kx:]
        return np.concatenate(([a[0]], np.exp(a[1:]))).cumsum()

    def cut_jacobian(self, theta):
        """d cut_k / d theta_threshold_m (J-1 x J-1, lower triangular)."""
        a = theta[self.kx:]
        d = np.concatenate(([1.0], np.exp(a[1:])))
        return np.tril(np.ones((self.J - 1, self.J - 1))) * d[None, :]

    def _bounds(self, beta, cuts, X=None):
        X = self.X if X is None else X
        xb = X @ beta
        c = np.concatenate(([-np.inf], cuts, [np.inf]))
        return xb, c

    def probs(self, beta, cuts, X=None):
        """n x J matrix of category probabilities."""
        xb, c = self._bounds(beta, cuts, X)
        Fc = self.F(c[None, :] - xb[:, None])          # n x (J+1)
        return np.diff(Fc, axis=1)

    def loglike_bc(self, beta, cuts):
        xb, c = self._bounds(beta, cuts)
        up = self.F(c[self.y] - xb)
        lo = self.F(c[self.y - 1] - xb)
        return float(np.log(up - lo).sum())

    def loglike(self, theta):
        return self.loglike_bc(theta[: self.kx], self.cuts(theta))

    def score(self, theta):
        beta = theta[: self.kx]
        cuts = self.cuts(theta)
        xb, c = self._bounds(beta, cuts)
        zu = c[self.y] - xb
        zl = c[self.y - 1] - xb
        P = self.F(zu) - self.F(zl)
        fu = np.where(np.isfinite(zu), self.f(np.where(np.isfinite(zu), zu, 0.0)), 0.0)
        fl = np.where(np.isfinite(zl), self.f(np.where(np.isfinite(zl), zl, 0.0)), 0.0)
        g_beta = ((fl - fu) / P) @ self.X
        # gradient with respect to the cut-points themselves
        g_cut = np.zeros(self.J - 1)
        n_up = self.y <= self.J - 1            # cut_y exists (index y)
        np.add.at(g_cut, self.y[n_up] - 1, (fu / P)[n_up])
        n_lo = self.y >= 2                     # cut_{y-1} exists
        np.add.at(g_cut, self.y[n_lo] - 2, -(fl / P)[n_lo])
        g_a = self.cut_jacobian(theta).T @ g_cut
        return np.concatenate((g_beta, g_a))

    def fd_hessian(self, theta, step_rel=HESS_STEP_REL):
        H = np.zeros((self.k, self.k))
        for i in range(self.k):
            h = step_rel * max(1.0, abs(theta[i]))
            e = np.zeros(self.k)
            e[i] = h
            H[:, i] = (self.score(theta + e) - self.score(theta - e)) / (2 * h)
        return 0.5 * (H + H.T)

    def ame(self, beta, cuts):
        """Average marginal effects, shape (n_exog, J): d P(y=k) / d x_v averaged."""
        xb, c = self._bounds(beta, cuts)
        z = c[None, :] - xb[:, None]
        fz = np.where(np.isfinite(z), self.f(np.where(np.isfinite(z), z, 0.0)), 0.0)
        d = fz[:, :-1] - fz[:, 1:]                        # n x J: f(c_{k-1}-xb) - f(c_k-xb)
        return beta[:, None] * d.mean(axis=0)[None, :]

    def ame_fd(self, beta, cuts, h=1e-6):
        out = np.zeros((self.kx, self.J))
        for v in range(self.kx):
            Xp = self.X.copy()
            Xm = self.X.copy()
            Xp[:, v] += h
            Xm[:, v] -= h
            out[v] = (self.probs(beta, cuts, Xp).mean(axis=0)
                      - self.probs(beta, cuts, Xm).mean(axis=0)) / (2 * h)
        return out


def check_score(om, theta):
    """Analytic score vs central differences of the log-likelihood."""
    ga = om.score(theta)
    gf = np.zeros(om.k)
    for i in range(om.k):
        h = 1e-6 * max(1.0, abs(theta[i]))
        e = np.zeros(om.k)
        e[i] = h
        gf[i] = (om.loglike(theta + e) - om.loglike(theta - e)) / (2 * h)
    err = np.max(np.abs(ga - gf) / np.maximum(1.0, np.abs(ga)))
    assert err < 1e-5, (ga, gf)
    return float(err)


# --------------------------------------------------------------------------
# one model
# --------------------------------------------------------------------------

def fit_one(df, distr):
    y = df[ENDOG]
    X = df[EXOG].astype(float)
    model = OrderedModel(y, X, distr=distr)
    om = Ordered(y.to_numpy(), X.to_numpy(), distr)
    sm_names = list(model.exog_names)
    assert sm_names[: len(EXOG)] == EXOG

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        r_bfgs = model.fit(method="bfgs", maxiter=20000, gtol=1e-12, disp=0)
        r_newton = model.fit(method="newton", start_params=np.asarray(r_bfgs.params),
                             maxiter=200, tol=1e-12, disp=0)
    # statsmodels' loglike must agree with ours
    th = np.asarray(r_newton.params, dtype=float)
    assert abs(model.loglike(th) - om.loglike(th)) < 1e-9
    check_err = check_score(om, th)

    theta = th.copy()
    polish = 0
    for _ in range(20):
        g = om.score(theta)
        if np.max(np.abs(g)) < 1e-9:
            break
        theta = theta - np.linalg.solve(om.fd_hessian(theta), g)
        polish += 1
    if polish:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            res = model.fit(method="newton", start_params=theta, maxiter=0, disp=0)
        assert np.array_equal(np.asarray(res.params), theta)
    else:
        res = r_newton
    polish_change = float(np.max(np.abs(np.asarray(res.params) - th)))
    theta = np.asarray(res.params, dtype=float)
    score_an = om.score(theta)
    max_score = float(np.max(np.abs(score_an)))
    assert max_score < 1e-6, score_an
    assert np.allclose(theta, np.asarray(r_bfgs.params), rtol=1e-4, atol=1e-6)

    llf = float(res.llf)
    assert abs(llf - om.loglike(theta)) < 1e-9
    cov = np.asarray(res.cov_params())
    bse = np.asarray(res.bse)
    assert np.allclose(np.sqrt(np.diag(cov)), bse, rtol=1e-14)
    H = om.fd_hessian(theta)
    bse_an = np.sqrt(np.diag(np.linalg.inv(-H)))
    bse_an6 = np.sqrt(np.diag(np.linalg.inv(-om.fd_hessian(theta, 1e-6))))
    assert np.max(np.abs(bse_an6 / bse_an - 1)) < 1e-6
    bse_rel_diff = float(np.max(np.abs(bse / bse_an - 1)))
    assert bse_rel_diff < 1e-4, (bse, bse_an)

    # thresholds and delta-method standard errors
    kx = len(EXOG)
    cuts = om.cuts(theta)
    sm_thresh = model.transform_threshold_params(theta)[1:-1]
    assert np.allclose(cuts, sm_thresh, rtol=1e-15, atol=1e-15)
    assert np.all(np.diff(cuts) > 0)
    Jc = om.cut_jacobian(theta)
    cov_cut = Jc @ cov[kx:, kx:] @ Jc.T
    cut_se = np.sqrt(np.diag(cov_cut))

    # predicted probabilities averaged over the sample
    beta = theta[:kx]
    Pm = om.probs(beta, cuts)
    P_sm = np.asarray(res.predict())
    assert P_sm.shape == Pm.shape
    assert np.allclose(Pm, P_sm, rtol=1e-10, atol=1e-13)
    avg_prob = Pm.mean(axis=0)
    assert abs(avg_prob.sum() - 1.0) < 1e-12

    # average marginal effects
    ame = om.ame(beta, cuts)
    ame_fd = om.ame_fd(beta, cuts)
    assert np.allclose(ame, ame_fd, rtol=1e-6, atol=1e-9), (ame, ame_fd)
    assert np.max(np.abs(ame.sum(axis=1))) < 1e-14

    # statsmodels' own numerical score at the optimum (for the record)
    sm_score = np.asarray(model.score(theta))

    names = EXOG + CUT_NAMES
    return {
        "source": ("statsmodels.miscmodels.ordinal_model.OrderedModel %s on "
                   "statsmodels' anes96 dataset (American National Election "
                   "Survey 1996, subset as shipped by statsmodels), data file "
                   "tests/data/anes96.csv" % statsmodels.__version__),
        "model": "OrderedModel",
        "distr": distr,
        "endog": ENDOG,
        "exog": EXOG,
        "constant": False,
        "fit": {
            "steps": ("statsmodels BFGS (gtol=1e-12, maxiter=20000), then "
                      "statsmodels Newton (tol=1e-12, maxiter=200) from the BFGS "
                      "point, then Newton polish with the analytic score of "
                      "tests/reference/ordered_reference.py if max|score| >= 1e-9"),
            "statsmodels_newton_converged_flag": bool(r_newton.mle_retvals["converged"]),
            "statsmodels_newton_iterations": int(r_newton.mle_retvals["iterations"]),
            "analytic_newton_polish_steps": int(polish),
            "polish_max_abs_param_change": fnum(polish_change),
            "statsmodels_newton_max_abs_analytic_score": fnum(np.max(np.abs(om.score(th)))),
            "note": ("statsmodels' convergence flags use its numerical score; "
                     "convergence is judged by the analytic score below"),
        },
        "param_names": names,
        "statsmodels_param_names": sm_names,
        "params": flist(theta),
        "params_note": ("statsmodels parameterisation: coefficients, cut_1, then "
                        "log(cut_k - cut_{k-1}) for k = 2..6 under the names "
                        "cut_2..cut_6"),
        "bse": flist(bse),
        "bse_note": ("statsmodels bse: inverse of its numerical Hessian of the "
                     "log-likelihood"),
        "bse_analytic_score_hessian": flist(bse_an),
        "bse_analytic_score_hessian_note": ("numpy: inverse of the central-"
                                            "difference Hessian (step 1e-5*max(1,|theta_i|)) "
                                            "of the analytic score; statsmodels bse agree "
                                            "to %.1e relative" % bse_rel_diff),
        "llf": fnum(llf),
        "statsmodels_llnull": fnum(res.llnull),
        "statsmodels_llnull_note": ("statsmodels OrderedResults.llnull (its own "
                                    "fit of the thresholds-only model)"),
        "max_abs_score": fnum(max_score),
        "max_abs_score_note": "analytic score (numpy) at params",
        "statsmodels_numerical_score_max_abs": fnum(np.max(np.abs(sm_score))),
        "score_check_max_rel_diff": fnum(check_err),
        "nobs": int(len(y)),
        "thresholds": {
            "names": CUT_NAMES,
            "values": flist(cuts),
            "std_errors": flist(cut_se),
            "note": ("cut_1 = param cut_1, cut_k = cut_{k-1} + exp(param cut_k); "
                     "std errors by the delta method from statsmodels' "
                     "covariance matrix (numpy)"),
            "covariance": [flist(r) for r in cov_cut],
        },
        "average_predicted_probabilities": {
            "categories": CATS,
            "values": flist(avg_prob),
            "note": "mean over the sample of P(y=k | x_n) at params (numpy, matches statsmodels predict())",
        },
        "average_marginal_effects": {
            "categories": CATS,
            "variables": EXOG,
            "values": [flist(r) for r in ame],
            "layout": "values[v][k-1] = average over n of dP(y=k|x_n)/dx_v",
            "formula": "[f(cut_{k-1}-x'b) - f(cut_k-x'b)] * b_v, averaged; closed form (numpy)",
            "finite_difference_max_abs_diff": fnum(np.max(np.abs(ame - ame_fd))),
            "sum_over_categories_max_abs": fnum(np.max(np.abs(ame.sum(axis=1)))),
        },
    }


def main():
    df = pd.read_csv(os.path.join(ROOT, DATA_FILE))
    y = df[ENDOG].to_numpy()
    counts = np.array([int((y == k).sum()) for k in CATS])
    print("selfLR counts:", dict(zip(CATS, counts.tolist())))
    assert set(np.unique(y).tolist()) == set(CATS)
    assert np.all(counts > 0)
    N = int(counts.sum())
    assert N == len(df)
    ll_thresholds_only = float((counts * np.log(counts / N)).sum())

    out = {
        "versions": {
            "statsmodels": statsmodels.__version__,
            "numpy": np.__version__,
            "scipy": scipy.__version__,
            "pandas": pd.__version__,
            "python": sys.version.split()[0],
        },
        "generator": "tests/reference/ordered_reference.py",
        "data_file": DATA_FILE,
        "endog": ENDOG,
        "categories": CATS,
        "category_counts": counts.tolist(),
        "nobs": N,
        "ll_thresholds_only": fnum(ll_thresholds_only),
        "ll_thresholds_only_note": ("model with cut-points only, no regressors: "
                                    "sum_k n_k log(n_k/N) (closed form, numpy); "
                                    "same for logit and probit"),
    }

    for distr in ("logit", "probit"):
        entry = fit_one(df, distr)
        # thresholds-only likelihood by evaluation at b = 0, cut_k = F^-1(cum share)
        om = Ordered(y, df[EXOG].to_numpy(dtype=float), distr)
        c0 = om.Finv(np.cumsum(counts)[:-1] / N)
        ll0 = om.loglike_bc(np.zeros(len(EXOG)), c0)
        assert abs(ll0 - ll_thresholds_only) < 1e-9, (ll0, ll_thresholds_only)
        assert abs(entry["statsmodels_llnull"] - ll_thresholds_only) < 1e-6
        entry["ll_thresholds_only"] = fnum(ll_thresholds_only)
        entry["lr_statistic_vs_thresholds_only"] = fnum(2 * (entry["llf"] - ll_thresholds_only))
        out["anes96_ordered_" + distr] = entry
        print(f"{distr}: llf={entry['llf']!r} max|score|={entry['max_abs_score']:.2e} "
              f"polish={entry['fit']['analytic_newton_polish_steps']}")
        for n, v, s, s2 in zip(entry["param_names"], entry["params"], entry["bse"],
                               entry["bse_analytic_score_hessian"]):
            print(f"   {n:8s} {v: .10g} ({s:.6g}; {s2:.6g})")
        print("   thresholds", np.round(entry["thresholds"]["values"], 6),
              "se", np.round(entry["thresholds"]["std_errors"], 6))
        print("   avg probs", np.round(entry["average_predicted_probabilities"]["values"], 6))
    print("thresholds-only llf", ll_thresholds_only, "observed shares", np.round(counts / N, 6))

    # The unordered multinomial logit of the same regressors (with a constant),
    # for the single-index check: statsmodels MNLogit, Newton to a tight tolerance.
    exog = sm.add_constant(df[EXOG].astype(float), prepend=True)
    mnl = sm.MNLogit(y, exog).fit(method="newton", tol=1e-12, maxiter=200, disp=False)
    out["unordered_mnlogit"] = {
        "source": "statsmodels MNLogit %s on the same data: selfLR on const, %s" % (
            statsmodels.__version__, ", ".join(EXOG)),
        "llf": fnum(mnl.llf),
        "df_model_parameters": int(mnl.params.size),
        "converged": bool(mnl.mle_retvals.get("converged", False)),
    }
    print("unordered MNLogit llf", mnl.llf, "parameters", mnl.params.size)

    with open(os.path.join(ROOT, FIX_FILE), "w") as f:
        json.dump(out, f, indent=2, allow_nan=False)
        f.write("\n")
    print("wrote", FIX_FILE)


if __name__ == "__main__":
    main()
