#!/usr/bin/env python3
"""Nested logit reference numbers for Greene's travel mode data.

Run from the repository root (/work/main):

    pip install numpy scipy pandas && python3 tests/reference/nested_reference.py

Reads  tests/data/modechoice_long.csv (written by make_reference.py; not changed here)
Writes tests/fixtures/nested_reference.json

Source of every number in the fixture: this file, an independent numpy/scipy
implementation of the nested logit (log-likelihood, analytic gradient,
probabilities, elasticities) written for this repository.  The one external
value is Greene's published conditional logit log-likelihood -199.1284
(Greene, Econometric Analysis, 7th ed., data table F18-2), which the
"logit_check" structure must reproduce; it is also compared with the
statsmodels ConditionalLogit llf stored in tests/fixtures/statsmodels_reference.json.

Model (random-utility consistent form, normalised at the top level)
-------------------------------------------------------------------
Utilities (car is the base, no constant):
    V_air   = asc_air   + gc*b_gc + ttme*b_ttme + hinc*hinc_air
    V_train = asc_train + gc*b_gc + ttme*b_ttme
    V_bus   = asc_bus   + gc*b_gc + ttme*b_ttme
    V_car   =             gc*b_gc + ttme*b_ttme
For alternative i in nest k with dissimilarity parameter l_k:
    S_k  = sum_{j in k} exp(V_j / l_k)
    P_i  = exp(V_i / l_k) * S_k^(l_k - 1) / sum_m S_m^(l_m)
Alternatives in no nest form their own nest with l = 1.  Computed in log
space: I_k = log S_k = logsumexp_{j in k}(V_j / l_k),
    log P_i = V_i / l_k - I_k + l_k I_k - logsumexp_m(l_m I_m).

Analytic gradient of log P_c (c = chosen alternative, in nest g):
  q_{j|k} = exp(V_j/l_k - I_k) (within-nest share), Q_k = nest probability,
  xbar_k = sum_{j in k} q_{j|k} x_j, vbar_k = sum_{j in k} q_{j|k} V_j
  d/d beta     : x_c / l_g + (1 - 1/l_g) xbar_g - sum_j P_j x_j
  d/d l_k      : [k == g] (-V_c/l_k^2 + (l_k - 1) dI_k + I_k) - Q_k (I_k + l_k dI_k)
                 with dI_k = dI_k/dl_k = -vbar_k / l_k^2

Elasticity of P_j with respect to V_t (the closed form used below):
  d log P_j / d V_t = [j == t]/l_{k(j)} + [k(j) == k(t)] (1 - 1/l_{k(t)}) q_{t|k(t)} - P_t
so d log P_nj / d log gc_n,train = b_gc * gc_n,train * d log P_nj / d V_n,train.
Aggregate (sample-enumeration) elasticity of alternative j's demand
D_j = sum_n P_nj with respect to gc of train (all individuals):
  E_j = sum_n P_nj * (d log P_nj / d log gc_n,train) / sum_n P_nj.

Numerical settings
------------------
* Fit: scipy.optimize.minimize L-BFGS-B (lambdas bounded in (0.01, 5)),
  then Newton polish with a symmetrised central-difference Hessian of the
  analytic gradient until max |gradient| < 1e-8 (asserted).
* Standard errors: sqrt(diag(inv(-H))) with H the central-difference
  Hessian of the analytic gradient, step h_i = 1e-5 * max(1, |theta_i|),
  symmetrised (H + H') / 2.  Recomputing with step 1e-6 changes them by
  less than 1e-6 relative (asserted; the value is stored per structure).
* The analytic gradient is checked against five-point central differences
  of the log-likelihood (step 1e-3 / sqrt(|H_ii|), i.e. 1e-3 of each
  parameter's natural scale) at the fixed point and at the optimum:
  max_i |analytic - numeric| / max(1, |analytic|) < 1e-6 asserted.
"""

import json
import math
import os
import sys

import numpy as np
import pandas as pd
import scipy
from scipy.optimize import minimize
from scipy.special import logsumexp

ROOT = os.getcwd()
DATA_FILE = os.path.join("tests", "data", "modechoice_long.csv")
FIX_FILE = os.path.join("tests", "fixtures", "nested_reference.json")
SM_FIX_FILE = os.path.join("tests", "fixtures", "statsmodels_reference.json")

ALTS = ["air", "train", "bus", "car"]
BETA_NAMES = ["asc_air", "asc_train", "asc_bus", "gc", "ttme", "hinc_air"]
GREENE_LOGIT_LLF = -199.1284  # Greene, Econometric Analysis 7th ed. (published)

HESS_STEP_REL = 1e-5
FD_GRAD_STEP_NATURAL = 1e-3


def fnum(x):
    """Python float (full double precision) or None for NaN/inf."""
    x = float(x)
    if not math.isfinite(x):
        return None
    return x


def flist(a):
    return [fnum(v) for v in np.ravel(np.asarray(a, dtype=float))]


# --------------------------------------------------------------------------
# data
# --------------------------------------------------------------------------

def load_data():
    df = pd.read_csv(os.path.join(ROOT, DATA_FILE))
    df = df.sort_values(["individual", "mode"], kind="stable")
    n_ind = df["individual"].nunique()
    assert len(df) == 4 * n_ind
    alt = df["alt"].to_numpy().reshape(n_ind, 4)
    assert (alt == np.array(ALTS)).all(), "every individual must have air, train, bus, car in this order"
    ch = df["choice"].to_numpy().reshape(n_ind, 4)
    assert (ch.sum(axis=1) == 1).all()
    gc = df["gc"].to_numpy(dtype=float).reshape(n_ind, 4)
    ttme = df["ttme"].to_numpy(dtype=float).reshape(n_ind, 4)
    hinc = df["hinc"].to_numpy(dtype=float).reshape(n_ind, 4)
    # X[n, j, :] = design row of alternative j for individual n
    X = np.zeros((n_ind, 4, len(BETA_NAMES)))
    X[:, 0, 0] = 1.0           # asc_air
    X[:, 1, 1] = 1.0           # asc_train
    X[:, 2, 2] = 1.0           # asc_bus
    X[:, :, 3] = gc
    X[:, :, 4] = ttme
    X[:, 0, 5] = hinc[:, 0]    # hinc_air
    chosen = ch.argmax(axis=1)
    ids = df["individual"].to_numpy().reshape(n_ind, 4)[:, 0]
    return {"X": X, "chosen": chosen, "n": n_ind, "ids": ids, "gc": gc}


# --------------------------------------------------------------------------
# model
# --------------------------------------------------------------------------

class Nested:
    """Nested logit with a given nest structure.

    nests: list of (name, [alternative names], lambda) where lambda is either
    the string "free" (estimated, parameter lambda_<name>) or a fixed float.
    Alternatives not named in any nest become their own nest with l = 1.
    """

    def __init__(self, data, nests):
        self.d = data
        self.nest_spec = nests
        self.groups = []       # list of (alternative index array, lambda slot or None, fixed value)
        self.param_names = list(BETA_NAMES)
        seen = set()
        for name, alts, lam in nests:
            idx = np.array([ALTS.index(a) for a in alts])
            for i in idx:
                assert i not in seen
                seen.add(int(i))
            if lam == "free":
                self.groups.append((idx, len(self.param_names), None))
                self.param_names.append("lambda_" + name)
            else:
                self.groups.append((idx, None, float(lam)))
        for j in range(4):
            if j not in seen:
                self.groups.append((np.array([j]), None, 1.0))
        self.nest_of = np.empty(4, dtype=int)
        for g, (idx, _, _) in enumerate(self.groups):
            self.nest_of[idx] = g
        self.k = len(self.param_names)

    def lambdas(self, theta):
        return np.array([theta[s] if s is not None else f for _, s, f in self.groups])

    def pieces(self, theta, X=None):
        X = self.d["X"] if X is None else X
        beta = theta[: len(BETA_NAMES)]
        lam = self.lambdas(theta)
        V = X @ beta                                  # (n, 4)
        G = len(self.groups)
        I = np.empty((V.shape[0], G))
        for g, (idx, _, _) in enumerate(self.groups):
            I[:, g] = logsumexp(V[:, idx] / lam[g], axis=1)
        top = lam[None, :] * I                         # (n, G)
        lse_top = logsumexp(top, axis=1)               # (n,)
        lam_alt = lam[self.nest_of]                    # (4,)
        logq = V / lam_alt[None, :] - I[:, self.nest_of]   # log q_{j|k}
        logQ = top - lse_top[:, None]                  # log nest probability
        logP = logq + logQ[:, self.nest_of]
        return V, lam, I, logq, logQ, logP

    def probs(self, theta, X=None):
        return np.exp(self.pieces(theta, X)[5])

    def loglike(self, theta):
        logP = self.pieces(theta)[5]
        n = self.d["n"]
        return float(logP[np.arange(n), self.d["chosen"]].sum())

    def score(self, theta):
        """Analytic gradient of the log-likelihood."""
        X = self.d["X"]
        n = self.d["n"]
        c = self.d["chosen"]
        rows = np.arange(n)
        V, lam, I, logq, logQ, logP = self.pieces(theta)
        q = np.exp(logq)
        Q = np.exp(logQ)
        P = np.exp(logP)
        g_c = self.nest_of[c]                           # chosen nest per individual
        lam_c = lam[g_c]
        grad = np.zeros(self.k)
        # beta part
        xc = X[rows, c, :]                              # (n, kb)
        xbar = np.zeros((n, len(self.groups), X.shape[2]))
        vbar = np.zeros((n, len(self.groups)))
        for g, (idx, _, _) in enumerate(self.groups):
            xbar[:, g, :] = np.einsum("nj,njk->nk", q[:, idx], X[:, idx, :])
            vbar[:, g] = (q[:, idx] * V[:, idx]).sum(axis=1)
        xbar_c = xbar[rows, g_c, :]
        xP = np.einsum("nj,njk->nk", P, X)
        gb = xc / lam_c[:, None] + (1.0 - 1.0 / lam_c)[:, None] * xbar_c - xP
        grad[: len(BETA_NAMES)] = gb.sum(axis=0)
        # lambda part
        for g, (idx, slot, _) in enumerate(self.groups):
            if slot is None:
                continue
            lk = lam[g]
            dI = -vbar[:, g] / lk ** 2
            term = -Q[:, g] * (I[:, g] + lk * dI)
            inn = g_c == g
            vc = V[rows, c]
            term = term + inn * (-vc / lk ** 2 + (lk - 1.0) * dI + I[:, g])
            grad[slot] = term.sum()
        return grad

    # ---- elasticities ----------------------------------------------------
    def dlogP_dV(self, theta, t):
        """d log P_nj / d V_nt for all n, j (closed form)."""
        V, lam, I, logq, logQ, logP = self.pieces(theta)
        q = np.exp(logq)
        P = np.exp(logP)
        kt = self.nest_of[t]
        out = np.empty_like(V)
        for j in range(4):
            kj = self.nest_of[j]
            v = -P[:, t].copy()
            if j == t:
                v += 1.0 / lam[kj]
            if kj == kt:
                v += (1.0 - 1.0 / lam[kt]) * q[:, t]
            out[:, j] = v
        return out

    def aggregate_elasticity_gc(self, theta, t):
        """Closed form aggregate elasticity of each alternative's demand wrt gc of t."""
        P = self.probs(theta)
        b_gc = theta[BETA_NAMES.index("gc")]
        el = b_gc * self.d["gc"][:, t][:, None] * self.dlogP_dV(theta, t)  # (n, 4)
        return (P * el).sum(axis=0) / P.sum(axis=0)

    def aggregate_elasticity_gc_fd(self, theta, t, h=1e-6):
        """Same by central differences in log gc of alternative t (all individuals)."""
        def logD(s):
            X = self.d["X"].copy()
            X[:, t, 3] *= math.exp(s)
            return np.log(self.probs(theta, X).sum(axis=0))
        return (logD(h) - logD(-h)) / (2 * h)


# --------------------------------------------------------------------------
# numerics
# --------------------------------------------------------------------------

def fd_gradient(m, theta):
    """Five-point central differences of the log-likelihood.

    Step h_i = 1e-3 * s_i with s_i = 1/sqrt(|H_ii|) (H = central-difference
    Hessian of the analytic gradient), i.e. 1e-3 of each parameter's natural
    scale, so that truncation and rounding errors are both small.
    """
    H = fd_hessian(m, theta)
    g = np.zeros(m.k)
    for i in range(m.k):
        h = FD_GRAD_STEP_NATURAL / math.sqrt(abs(H[i, i]))
        e = np.zeros(m.k)
        e[i] = h
        f = lambda s: m.loglike(theta + s * e)
        g[i] = (-f(2) + 8 * f(1) - 8 * f(-1) + f(-2)) / (12 * h)
    return g


def check_gradient(m, theta, label):
    """Max over parameters of |analytic - numeric| / max(1, |analytic|)."""
    ga = m.score(theta)
    gf = fd_gradient(m, theta)
    scale = np.maximum(1.0, np.abs(ga))
    rel = np.max(np.abs(ga - gf) / scale)
    assert rel < 1e-6, (label, ga, gf, rel)
    return float(rel)


def fd_hessian(m, theta, step_rel=None):
    step_rel = HESS_STEP_REL if step_rel is None else step_rel
    H = np.zeros((m.k, m.k))
    for i in range(m.k):
        h = step_rel * max(1.0, abs(theta[i]))
        e = np.zeros(m.k)
        e[i] = h
        H[:, i] = (m.score(theta + e) - m.score(theta - e)) / (2 * h)
    return 0.5 * (H + H.T)


def fit(m, start):
    bounds = [(None, None)] * len(BETA_NAMES) + [(0.01, 5.0)] * (m.k - len(BETA_NAMES))
    res = minimize(lambda t: -m.loglike(t), start, jac=lambda t: -m.score(t),
                   method="L-BFGS-B", bounds=bounds,
                   options={"maxiter": 20000, "maxfun": 50000, "ftol": 1e-15, "gtol": 1e-10})
    theta = res.x.copy()
    for b in theta[len(BETA_NAMES):]:
        assert 0.01 + 1e-6 < b < 5.0 - 1e-6, ("lambda at a bound", theta)
    newton = 0
    for _ in range(50):
        g = m.score(theta)
        if np.max(np.abs(g)) < 1e-10:
            break
        H = fd_hessian(m, theta)
        step = np.linalg.solve(H, g)
        theta = theta - step
        newton += 1
    g = m.score(theta)
    assert np.max(np.abs(g)) < 1e-8, (g, theta)
    H = fd_hessian(m, theta)
    assert np.all(np.linalg.eigvalsh(-H) > 0), "negative Hessian not positive definite"
    return theta, res, newton, H


# --------------------------------------------------------------------------
# direct (non-log-space) probabilities, as an independent check of pieces()
# --------------------------------------------------------------------------

def direct_probs(m, theta):
    V = m.d["X"] @ theta[: len(BETA_NAMES)]
    lam = m.lambdas(theta)
    S = np.stack([np.exp(V[:, idx] / lam[g]).sum(axis=1) for g, (idx, _, _) in enumerate(m.groups)], axis=1)
    denom = (S ** lam[None, :]).sum(axis=1)
    P = np.empty_like(V)
    for j in range(4):
        g = m.nest_of[j]
        P[:, j] = np.exp(V[:, j] / lam[g]) * S[:, g] ** (lam[g] - 1.0) / denom
    return P


# --------------------------------------------------------------------------
# main
# --------------------------------------------------------------------------

STRUCTURES = {
    "ground": {
        "nests": [("ground", ["train", "bus", "car"], "free")],
        "at_point_lambdas": [0.6],
    },
    "public": {
        "nests": [("public", ["train", "bus"], "free")],
        "at_point_lambdas": [0.6],
    },
    "two_nests": {
        "nests": [("public", ["train", "bus"], "free"), ("private", ["air", "car"], "free")],
        "at_point_lambdas": [0.6, 0.8],
    },
    "logit_check": {
        "nests": [("public", ["train", "bus"], 1.0), ("private", ["air", "car"], 1.0)],
        "at_point_lambdas": [],
    },
}

# fixed point for likelihood checks: rounded conditional-logit estimates
AT_POINT_BETA = [5.2, 3.9, 3.2, -0.0155, -0.096, 0.0133]


def main():
    data = load_data()
    with open(os.path.join(ROOT, SM_FIX_FILE)) as f:
        smfix = json.load(f)
    sm_cl = smfix["modechoice_condlogit"]
    logit_start = np.array(sm_cl["params"], dtype=float)

    out = {
        "versions": {
            "numpy": np.__version__,
            "scipy": scipy.__version__,
            "pandas": pd.__version__,
            "python": sys.version.split()[0],
        },
        "generator": "tests/reference/nested_reference.py",
        "source": ("independent numpy/scipy implementation in "
                   "tests/reference/nested_reference.py on Greene's travel mode "
                   "data (statsmodels dataset modechoice, Greene table F18-2), "
                   "data file tests/data/modechoice_long.csv"),
        "data_file": DATA_FILE,
        "alternatives": ALTS,
        "model": ("nested logit, random-utility-consistent form normalised at "
                  "the top: P_i = exp(V_i/l_k) S_k^(l_k-1) / sum_m S_m^l_m, "
                  "S_k = sum_{j in k} exp(V_j/l_k); alternatives in no nest "
                  "are their own nest with l = 1"),
        "utility": {
            "air": "asc_air + gc*gc + ttme*ttme + hinc*hinc_air",
            "train": "asc_train + gc*gc + ttme*ttme",
            "bus": "asc_bus + gc*gc + ttme*ttme",
            "car": "gc*gc + ttme*ttme",
        },
        "numerics": {
            "optimizer": ("scipy.optimize.minimize L-BFGS-B (lambda bounds "
                          "(0.01, 5)) then Newton polish with a central-"
                          "difference Hessian of the analytic gradient"),
            "bse": ("sqrt(diag(inv(-H))), H = central differences of the "
                    "analytic gradient, step 1e-5*max(1,|theta_i|), symmetrised"),
            "gradient_check": ("analytic gradient vs five-point central "
                               "differences of the log-likelihood, step "
                               "1e-3/sqrt(|H_ii|); reported value is max_i "
                               "|analytic-numeric|/max(1,|analytic|)"),
        },
        "structures": {},
    }

    gc_t = ALTS.index("train")
    for sname, spec in STRUCTURES.items():
        m = Nested(data, spec["nests"])
        # ---- fixed point ---------------------------------------------------
        tp = np.array(AT_POINT_BETA + spec["at_point_lambdas"], dtype=float)
        assert len(tp) == m.k
        P_tp = m.probs(tp)
        assert np.allclose(P_tp, direct_probs(m, tp), rtol=1e-12, atol=1e-15)
        assert np.allclose(P_tp.sum(axis=1), 1.0, atol=1e-13)
        rel_tp = check_gradient(m, tp, sname + " at_point")
        # ---- optimum -------------------------------------------------------
        start = np.concatenate([logit_start, 0.8 * np.ones(m.k - len(BETA_NAMES))])
        theta, res, n_newton, H = fit(m, start)
        # a second start to make sure the optimum is the same
        start2 = np.concatenate([np.zeros(len(BETA_NAMES)), 0.5 * np.ones(m.k - len(BETA_NAMES))])
        theta2, _, _, _ = fit(m, start2)
        assert np.allclose(theta, theta2, rtol=1e-7, atol=1e-9), (theta, theta2)
        rel_opt = check_gradient(m, theta, sname + " optimum")
        cov = np.linalg.inv(-H)
        bse = np.sqrt(np.diag(cov))
        # sensitivity of the standard errors to the Hessian step (1e-5 vs 1e-6)
        bse_alt = np.sqrt(np.diag(np.linalg.inv(-fd_hessian(m, theta, 1e-6))))
        bse_step_sens = float(np.max(np.abs(bse_alt / bse - 1.0)))
        assert bse_step_sens < 1e-6, bse_step_sens
        llf = m.loglike(theta)
        lam_hat = theta[len(BETA_NAMES):]
        grad = m.score(theta)
        P = m.probs(theta)
        shares = P.sum(axis=0)
        assert abs(shares.sum() - data["n"]) < 1e-9
        el = m.aggregate_elasticity_gc(theta, gc_t)
        el_fd = m.aggregate_elasticity_gc_fd(theta, gc_t)
        assert np.allclose(el, el_fd, rtol=1e-6, atol=1e-9), (el, el_fd)
        # aggregate demands add to N, so sum_j D_j E_j = 0
        assert abs((shares * el).sum()) < 1e-9

        entry = {
            "nests": [
                {"name": nm, "alternatives": alts,
                 "lambda_param": ("lambda_" + nm) if lam == "free" else None,
                 "lambda_fixed": None if lam == "free" else float(lam)}
                for nm, alts, lam in spec["nests"]
            ],
            "unnested_alternatives": [a for a in ALTS if all(a not in n[1] for n in spec["nests"])],
            "param_names": m.param_names,
            "params": flist(theta),
            "bse": flist(bse),
            "bse_step_sensitivity": fnum(bse_step_sens),
            "bse_step_sensitivity_note": ("max relative change of bse when "
                                          "the Hessian step goes from 1e-5 to "
                                          "1e-6 (times max(1,|theta_i|))"),
            "llf": fnum(llf),
            "lambdas_in_unit_interval": bool(np.all((lam_hat > 0) & (lam_hat <= 1))),
            "max_abs_gradient": fnum(np.max(np.abs(grad))),
            "nobs": int(data["n"]),
            "n_rows": int(4 * data["n"]),
            "lbfgsb_iterations": int(res.nit),
            "newton_polish_steps": int(n_newton),
            "gradient_check_max_rel_diff": fnum(rel_opt),
            "predicted_counts": {
                "note": "sum over individuals of P_nj at the optimum (sample enumeration); divide by nobs for shares",
                "alternatives": ALTS,
                "values": flist(shares),
            },
            "predicted_shares": flist(shares / data["n"]),
            "aggregate_elasticity_gc_train": {
                "definition": ("E_j = d log(sum_n P_nj) / d log(gc_n,train) = "
                               "sum_n P_nj * dlogP_nj/dlog gc_n,train / sum_n P_nj, "
                               "gc of train scaled for all individuals; closed form"),
                "alternatives": ALTS,
                "values": flist(el),
                "finite_difference": flist(el_fd),
                "finite_difference_note": "central difference in log gc_train, step 1e-6",
            },
            "at_point": {
                "note": ("fixed parameter vector (rounded conditional logit "
                         "estimates; lambdas set by hand) for checking the "
                         "likelihood independently of the optimiser"),
                "params": flist(tp),
                "llf": fnum(m.loglike(tp)),
                "gradient": flist(m.score(tp)),
                "gradient_check_max_rel_diff": fnum(rel_tp),
                "probabilities_first_3": {
                    "individuals": [int(v) for v in data["ids"][:3]],
                    "alternatives": ALTS,
                    "values": [flist(P_tp[i]) for i in range(3)],
                },
            },
        }
        if sname == "logit_check":
            entry["note"] = ("both nests with lambda fixed at 1: identical to "
                             "the conditional logit (equivalently, no nests)")
            # with every lambda 1 the model is the conditional logit
            m_plain = Nested(data, [])
            assert abs(m_plain.loglike(theta) - llf) < 1e-10
            assert abs(llf - sm_cl["llf"]) < 1e-8, (llf, sm_cl["llf"])
            assert round(llf, 4) == GREENE_LOGIT_LLF, llf
            assert np.allclose(theta, logit_start, rtol=1e-7, atol=1e-9)
            entry["published_greene_llf"] = GREENE_LOGIT_LLF
            entry["published_greene_llf_source"] = (
                "Greene, Econometric Analysis, 7th ed., conditional logit on data table F18-2 "
                "(as recorded in tests/reference/make_reference.py)")
            entry["statsmodels_condlogit_llf"] = fnum(sm_cl["llf"])
            entry["statsmodels_condlogit_llf_source"] = (
                "tests/fixtures/statsmodels_reference.json modechoice_condlogit llf "
                "(statsmodels ConditionalLogit %s)" % smfix["versions"]["statsmodels"])
        out["structures"][sname] = entry

        print(f"{sname}: llf={llf!r} max|g|={np.max(np.abs(grad)):.2e} "
              f"LBFGSB it={res.nit} newton={n_newton}")
        for nm, v, s in zip(m.param_names, theta, bse):
            print(f"   {nm:10s} {v: .10g}  ({s:.6g})")
        print("   shares", np.round(shares / data["n"], 6), "elast gc_train", np.round(el, 6))

    with open(os.path.join(ROOT, FIX_FILE), "w") as f:
        json.dump(out, f, indent=2, allow_nan=False)
        f.write("\n")
    print("wrote", FIX_FILE)


if __name__ == "__main__":
    main()
