#!/usr/bin/env python3
"""Latent class logit: reference numbers (EM from many random starts, then
direct maximisation) for the Rust tests.

Run from the repository root:

    python3 tests/reference/classes_reference.py

Needs only numpy and scipy.  Writes tests/fixtures/classes_reference.json and
prints every check figure.  The output is deterministic: the data, the starts
and every number come from fixed seeds, and BLAS is pinned to one thread
before numpy is imported, so running the script again writes the same bytes.

What it is
----------
An independent numpy/scipy implementation, written for this repository, of
the latent class (finite mixture) logit with a logit model of class
membership, following Greene and Hensher (2003), "A latent class model for
discrete choice analysis: contrasts with mixed logit", Transportation
Research B 37(8), and, for the EM algorithm, Train, Discrete Choice Methods
with Simulation, 2nd ed., ch. 14.  It computes the log-likelihood, its
analytic gradient and per-decision-maker scores, EM estimation from many
random starts, direct maximisation of the best EM result, classical and
robust (clustered by decision maker) standard errors, class shares with
delta-method standard errors and posterior class probabilities.  The data
are invented: shoppers at a made-up garden centre choosing among three
compost formats, alternatives ["loose", "bagged", "boxed"], loose the base
(no constant).  Each shopper belongs to one class, drawn from the true
membership probabilities, and choices are simulated with Gumbel errors
directly (numpy's generator), not through the likelihood code below.

Model
-----
K classes.  Utility of class k (k = 1..K), one copy of every utility
parameter per class:

    V_loose  =                    price_k*loose_price  + peat_free_k*loose_peat_free
    V_bagged = asc_bagged_k     + price_k*bagged_price + peat_free_k*bagged_peat_free
    V_boxed  = asc_boxed_k      + price_k*boxed_price  + peat_free_k*boxed_peat_free

(prices in currency units per 50 litres, peat_free 0/1).  Logit within a
class: P_ntk(j) = exp(V_j) / sum_l exp(V_l) (log-sum-exp).

Class membership: with membership columns z_n1..z_nC (constant within a
decision maker),

    pi_nk = exp(a_k + sum_c g_kc z_nc) / sum_l exp(a_l + sum_c g_lc z_nc),
    a_1 = g_1c = 0 (class 1 the reference).

Without membership columns the shares are constants (a_k only).

Parameter order: class-major utility parameters `<term>_class<k>`, term
order asc_bagged, asc_boxed, price, peat_free, k = 1..K; then for k = 2..K
`member_class<k>` (a_k) followed by `member_class<k>_<column>` (g_kc) in the
order of the membership list.

Likelihood: with a decision-maker column ("person"), L_n = sum_k pi_nk
prod_t P_ntk(chosen_nt); without one each situation is its own decision
maker.  log L_n = logsumexp_k(log pi_nk + l_nk), l_nk = sum_t log
P_ntk(chosen_nt), log pi_nk = u_nk - logsumexp_l u_nl, u_nk = a_k + g_k'z_n;
LL = sum_n log L_n (all weights 1).

Gradient (score of decision maker n), with the posterior
h_nk = exp(log pi_nk + l_nk - log L_n):
  d log L_n / d beta_k = h_nk sum_t (x_ntk,chosen - sum_j P_ntk(j) x_ntj)
  (x the term's column: 1 for its constant's alternative, the price, the
  peat-free flag); d log L_n / d a_k = h_nk - pi_nk;
  d log L_n / d g_kc = (h_nk - pi_nk) z_nc   (k >= 2).

Class numbering: the classes are numbered by their share in the sample,
s_k = (1/N) sum_n pi_nk at the estimates (prior membership probabilities,
not posteriors), largest first; the utility blocks are permuted accordingly
and the membership parameters re-expressed against the new class 1:
a'_k = a_o(k) - a_o(1), g'_kc = g_o(k)c - g_o(1)c, o(k) the class that becomes
k (a_o = 0 for the old class 1).  This is a linear map T of the parameter
vector; covariances (classical and robust) are carried through it,
T V T'.  Checked: the standard errors from the map equal those from the
Hessian and scores recomputed at the renumbered point (max rel diff
< 1e-4 asserted), and renumbering the same optimum written in reverse class
order ("estimates_reversed_numbering") gives the estimates back (< 1e-12).

Estimation
----------
* Plain logit (BFGS) on the case's data; then STARTS random starts: the
  plain logit's utility parameters plus normal noise (sd 2 for the
  constants and peat_free, 0.5 for price) for every class, a_k ~ N(0, 1),
  g = 0 (numpy default_rng(case seed + 1000)).
* EM from each start (Train ch. 14): E-step h_nk at the current
  parameters; M-step = for every class a logit weighted by h_nk (the weight
  of each of n's situations), and a membership logit over the classes with
  fractional outcomes h_nk; each M-step problem takes up to 5 damped Newton
  steps with its analytic Hessian (a generalised EM step; the LL never
  decreases, asserted); EM stops when the LL rises by less than 1e-7 or
  after 300 iterations.  Then scipy BFGS on the analytic gradient from the
  EM result (gtol 1e-7).
* "starts_at_best": how many starts ended within 1e-6 of the best LL
  ("start_optima" lists every start's final LL, sorted).
* The best result: BFGS (gtol 1e-10), then Newton steps with the
  finite-difference Hessian of the analytic gradient until
  max |gradient| < 1e-8 (asserted); the Hessian negative definite (asserted).
* Classical standard errors sqrt(diag(inv(-H))), H the central-difference
  Hessian of the analytic gradient, step h_i = 1e-5 * max(1, |theta_i|),
  symmetrised (H + H') / 2; robust ones sqrt(diag(H^-1 B H^-1)), B the sum
  over decision makers of the outer product of their score (no small-sample
  factor); without a person column the decision makers are the situations.
* Class shares s_k = mean_n pi_nk at the estimates, standard errors
  sqrt(J V J') with J = d s / d theta (analytic: d pi_nk / d u_nm =
  pi_nk (1[k = m] - pi_nm), checked against central differences with step
  1e-6 * max(1, |theta_i|), max abs difference < 1e-7 asserted; the
  membership columns treated as fixed) and V the robust covariance when
  there is a person column, else the classical one.
* "posterior": h_nk at the estimates for the first 20 decision makers.

Cases in the fixture ("cases", in this order)
----------------------------------------------
1. "panel_two": 400 shoppers x 5 choice tasks (2000 situations), K = 2,
   membership on `garden_size` (hundreds of square metres, 0.2..8.0);
   truth: class 1 price-driven (asc 0.5, 0.3, price -0.6, peat_free 0.3),
   class 2 peat-free-driven (0.8, 1.0, -0.1, 2.0), a_2 = -1.2,
   g_2 = 0.2 (true shares about 0.58 / 0.42).  10 parameters.
2. "cross_section_two": 1500 situations, no person column ("person": null),
   K = 2, no membership columns (constant shares, truth 0.65 / 0.35);
   truth class 1 (0.4, 0.2, -0.7, 0.2), class 2 (1.0, 1.2, -0.05, 2.5).
   9 parameters.
3. "panel_three": 600 shoppers x 6 choice tasks (3600 situations), K = 3,
   membership on `garden_size` and `age` (years, 18..85); truth class 1
   (0.5, 0.3, -0.7, 0.3), class 2 (0.8, 1.0, -0.1, 2.0), class 3
   (-0.5, 1.5, -0.3, 0.8); membership class 2 (-1.0, 0.25, -0.01), class 3
   (-2.0, -0.1, 0.03).  18 parameters.
Starts: 50 per case.  Starts reaching the best LL (within 1e-6): 50 of 50
in panel_two (best -1595.2399276337992), 50 of 50 in cross_section_two
(-1309.525251596392), 45 of 50 in panel_three (-3016.225430491654; the
other five ended at local maxima, three at -3052.6906415 and two at
-3059.8936658).  With narrower starts (sd 1 / 0.3 / 1, a_k ~ N(0, 0.5))
all 150 starts reached the same three optima.

Checks (printed, and asserted)
------------------------------
* analytic gradient vs five-point central differences of the LL at the
  stored point (step 1e-4 * max(1, |theta_i|)); max relative difference
  |analytic - numeric| / max(|analytic|, 1) below 1e-6;
* "fact_checks", against a separate plain logit coded loop by loop from the
  term names:
  - "one_class_is_logit": K = 1 on case 1's data (parameters
    asc_bagged_class1 .. peat_free_class1, no membership parameters) has the
    plain logit's LL at a point and the same maximum and estimates
    (|LL difference| < 1e-9, estimates within 1e-6);
  - "equal_tastes_is_logit": case 1 with both classes' utility parameters
    equal has the plain logit's LL at those parameters for three different
    membership points (|difference| < 1e-9).

Fixture layout (P parameters, K classes, S situations, N decision makers;
decision maker i is the i-th distinct value of "person", ids 1..N in order;
without a person column decision maker i is situation i)
---------------------------------------------------------------------------
top level: "description", "numpy", "scipy", "cases": [3 case objects],
  "fact_checks": {"one_class_is_logit": {"case", "parameters": [4], "point":
     [4], "ll", "logit_ll", "difference", "estimates": [4], "ll_at_estimates",
     "logit_estimates": [4], "logit_ll_at_estimates",
     "ll_difference_at_estimates", "estimates_max_abs_difference"},
   "equal_tastes_is_logit": {"case", "utility": [4], "logit_ll",
     "points": [3 x {"point": [10], "ll", "difference"}]}}
every case: "name", "description", "alternatives": ["loose","bagged","boxed"],
  "base": "loose", "classes": K, "parameters": [P names],
  "constants": {"asc_bagged": "bagged", "asc_boxed": "boxed"},
  "terms": {"price": {alternative: column}, "peat_free": {alternative: column}},
  "membership": [membership column names, in parameter order] (may be empty),
  "decision_makers": N, "tasks_per_decision_maker", "situations": S,
  "truth": [P] (values used to simulate the data; not an estimate),
  "truth_class_shares": [K] (sample average of the true prior),
  "columns": {column: [S]} (the six attribute columns and the membership
     columns, the latter repeated on every situation of a decision maker),
  "person": [S] ints or null, "chosen": [S] alternative names,
  "point": [P], "ll_at_point", "grad_at_point": [P], "grad_fd_max_rel_diff",
  "plain_logit_ll" (the plain logit's maximum on the case's data),
  "starts", "starts_at_best", "start_optima": [starts],
  "estimates": [P] (classes numbered by share),
  "estimates_reversed_numbering": [P] (the same optimum, classes in reverse
     order, membership against the new class 1), "ll_at_estimates",
  "grad_max_norm_at_estimates", "std_errors": [P], "robust_std_errors": [P],
  "class_shares": [K], "class_share_std_errors": [K],
  "class_share_covariance": "robust" | "classical",
  "posterior": [min(N, 20)][K]
Floats are written with Python's repr (shortest string that reads back to
the same double).
"""

import os

# one BLAS thread: identical bytes on every run
for _v in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_v] = "1"

import json  # noqa: E402
import math  # noqa: E402
import sys  # noqa: E402
import time as _time  # noqa: E402

import numpy as np  # noqa: E402
import scipy  # noqa: E402
from scipy.optimize import minimize  # noqa: E402
from scipy.special import logsumexp  # noqa: E402

FIX_FILE = os.path.join("tests", "fixtures", "classes_reference.json")

ALTS = ["loose", "bagged", "boxed"]
TERMS = ["asc_bagged", "asc_boxed", "price", "peat_free"]
NT = len(TERMS)

HESS_STEP_REL = 1e-5
FD_STEP_REL = 1e-4
GRAD_TOL = 1e-8
BEST_TOL = 1e-6
EM_MAX_ITER = 300
EM_TOL = 1e-7
POSTERIOR_ROWS = 20


# --------------------------------------------------------------------------
# small helpers
# --------------------------------------------------------------------------

def fnum(x):
    x = float(x)
    assert math.isfinite(x)
    return x


def flist(a):
    a = np.asarray(a, dtype=float)
    if a.ndim == 0:
        return fnum(a)
    return [flist(v) for v in a] if a.ndim > 1 else [fnum(v) for v in a]


def maxrel(a, b):
    a = np.asarray(a, float)
    b = np.asarray(b, float)
    return float(np.max(np.abs(a - b) / np.maximum(np.abs(a), 1.0)))


def fd_gradient(f, theta):
    """Five-point central differences of a scalar function."""
    theta = np.asarray(theta, float)
    g = np.zeros_like(theta)
    for i in range(len(theta)):
        h = FD_STEP_REL * max(1.0, abs(theta[i]))
        vals = []
        for m in (-2, -1, 1, 2):
            t = theta.copy()
            t[i] += m * h
            vals.append(f(t))
        g[i] = (vals[0] - 8 * vals[1] + 8 * vals[2] - vals[3]) / (12 * h)
    return g


def fd_hessian(grad, theta, rel=HESS_STEP_REL):
    """Central differences of an analytic gradient, symmetrised."""
    theta = np.asarray(theta, float)
    p = len(theta)
    H = np.zeros((p, p))
    for i in range(p):
        h = rel * max(1.0, abs(theta[i]))
        tp = theta.copy()
        tm = theta.copy()
        tp[i] += h
        tm[i] -= h
        H[:, i] = (grad(tp) - grad(tm)) / (2 * h)
    return 0.5 * (H + H.T)


def bfgs(f, grad, theta0, gtol=1e-9, maxiter=5000):
    res = minimize(lambda t: -f(t), np.asarray(theta0, float), jac=lambda t: -grad(t),
                   method="BFGS", options={"gtol": gtol, "maxiter": maxiter})
    return res.x, res


def newton_polish(f, grad, theta, label):
    """Newton steps with the finite-difference Hessian of the analytic
    gradient until max |gradient| < GRAD_TOL (asserted)."""
    for _ in range(50):
        g = grad(theta)
        gmax = float(np.max(np.abs(g)))
        if gmax < 1e-10:
            break
        H = fd_hessian(grad, theta)
        step = -np.linalg.solve(H, g)
        f0 = f(theta)
        lam = 1.0
        while lam > 1e-6:
            if f(theta + lam * step) >= f0 - 1e-12 * abs(f0):
                break
            lam /= 2
        new = theta + lam * step
        if np.max(np.abs(grad(new))) >= gmax and gmax < GRAD_TOL:
            break
        theta = new
    gmax = float(np.max(np.abs(grad(theta))))
    print(f"  [{label}] after Newton polish: max|g| {gmax:.3e}")
    assert gmax < GRAD_TOL, (label, gmax)
    return theta, gmax


def concave_newton(fgh, x, iters):
    """A few damped Newton steps on a concave function fgh(x) -> (f, g, H)."""
    f0, g, H = fgh(x)
    for _ in range(iters):
        if np.max(np.abs(g)) < 1e-10:
            break
        try:
            step = -np.linalg.solve(H - 1e-10 * np.eye(len(x)), g)
        except np.linalg.LinAlgError:
            step = -np.linalg.lstsq(H, g, rcond=None)[0]
        lam = 1.0
        while lam > 1e-8:
            f1, g1, H1 = fgh(x + lam * step)
            if f1 >= f0:
                break
            lam /= 2
        else:
            break
        x = x + lam * step
        f0, g, H = f1, g1, H1
    return x


# --------------------------------------------------------------------------
# plain logit, loop by loop, read from the term names (separate code for the
# fact checks: it shares nothing with the class below)
# --------------------------------------------------------------------------

def plain_logit_ll(cols, chosen, coef):
    """sum_s log P_s(chosen) with V_loose = price*loose_price +
    peat_free*loose_peat_free, V_bagged = asc_bagged + ..., V_boxed =
    asc_boxed + ...; coef a dict by term name."""
    total = 0.0
    for s in range(len(chosen)):
        v = []
        for a in ALTS:
            u = (coef["price"] * cols[f"{a}_price"][s]
                 + coef["peat_free"] * cols[f"{a}_peat_free"][s])
            if a != "loose":
                u += coef[f"asc_{a}"]
            v.append(u)
        m = max(v)
        lse = m + math.log(sum(math.exp(x - m) for x in v))
        total += v[ALTS.index(chosen[s])] - lse
    return float(total)


def plain_logit_fit(cols, chosen):
    """The plain logit's maximum (vectorised, own code: X (S, J, 4))."""
    S = len(chosen)
    X = design(cols, S)
    ch = np.array([ALTS.index(c) for c in chosen])
    idx = np.arange(S)

    def fg(b):
        V = X @ b
        lse = logsumexp(V, axis=1)
        P = np.exp(V - lse[:, None])
        return float(np.sum(V[idx, ch] - lse)), (X[idx, ch] - np.einsum("sj,sjk->sk", P, X)).sum(0)

    b, _ = bfgs(lambda b: fg(b)[0], lambda b: fg(b)[1], np.zeros(NT), gtol=1e-11)
    return b, fg(b)[0], float(np.max(np.abs(fg(b)[1])))


# --------------------------------------------------------------------------
# latent class logit
# --------------------------------------------------------------------------

class Classes:
    """X (S, J, 4) in term order, chosen (S,), dm (S,) decision maker index
    0..N-1 (nondecreasing), W (N, 1 + C): a leading 1 and the membership
    columns of each decision maker; K classes.

    Parameter vector: K blocks of 4 utility parameters (class-major), then
    for k = 2..K the block (a_k, g_k1, ..., g_kC)."""

    def __init__(self, X, chosen, dm, W, K):
        self.X = np.asarray(X, float)
        self.chosen = np.asarray(chosen, int)
        self.dm = np.asarray(dm, int)
        self.W = np.asarray(W, float)
        self.S, self.J, _ = self.X.shape
        self.N, self.Q = self.W.shape
        self.K = K
        self.P = NT * K + self.Q * (K - 1)
        idx = np.arange(self.S)
        self.xc = self.X[idx, self.chosen]                         # (S, 4)
        assert self.dm.min() == 0 and self.dm.max() == self.N - 1
        assert np.all(np.diff(self.dm) >= 0)

    def split(self, theta):
        theta = np.asarray(theta, float)
        assert len(theta) == self.P
        B = theta[: NT * self.K].reshape(self.K, NT)
        G = np.zeros((self.K, self.Q))
        G[1:] = theta[NT * self.K:].reshape(self.K - 1, self.Q)
        return B, G

    def per_class(self, B):
        """l (N, K) sum over a decision maker's situations of log P(chosen)
        per class; d (S, K, 4) x_chosen - sum_j P_j x_j."""
        V = np.einsum("sjt,kt->skj", self.X, B)
        lse = logsumexp(V, axis=2, keepdims=True)
        P = np.exp(V - lse)
        lc = np.take_along_axis(V - lse, self.chosen[:, None, None].repeat(self.K, 1), 2)[..., 0]
        l = np.zeros((self.N, self.K))
        np.add.at(l, self.dm, lc)
        d = self.xc[:, None, :] - np.einsum("skj,sjt->skt", P, self.X)
        return l, d

    def prior(self, G):
        u = self.W @ G.T                                            # (N, K)
        return u - logsumexp(u, axis=1, keepdims=True)

    def person(self, theta):
        """log L_n (N,), scores (N, P), posterior h (N, K), prior pi (N, K)."""
        B, G = self.split(theta)
        l, d = self.per_class(B)
        lpi = self.prior(G)
        joint = lpi + l
        logL = logsumexp(joint, axis=1)
        h = np.exp(joint - logL[:, None])
        pi = np.exp(lpi)
        sb = np.zeros((self.N, self.K, NT))
        np.add.at(sb, self.dm, d)
        sb *= h[:, :, None]
        sg = (h - pi)[:, 1:, None] * self.W[:, None, :]             # (N, K-1, Q)
        scores = np.concatenate([sb.reshape(self.N, -1), sg.reshape(self.N, -1)], axis=1)
        return logL, scores, h, pi

    def ll(self, theta):
        return float(np.sum(self.person(theta)[0]))

    def grad(self, theta):
        return self.person(theta)[1].sum(axis=0)

    def shares(self, theta):
        """Class shares mean_n pi_nk (K,) and their Jacobian (K, P)."""
        _, G = self.split(theta)
        pi = np.exp(self.prior(G))
        s = pi.mean(axis=0)
        Jm = np.zeros((self.K, self.K - 1, self.Q))
        for k in range(self.K):
            for m in range(1, self.K):
                dpi = pi[:, k] * ((k == m) - pi[:, m])               # d pi_nk / d u_nm
                Jm[k, m - 1] = (dpi[:, None] * self.W).mean(axis=0)
        Jac = np.concatenate([np.zeros((self.K, NT * self.K)), Jm.reshape(self.K, -1)], axis=1)
        return s, Jac

    # ---- EM -------------------------------------------------------------

    def m_step_class(self, w, b0):
        """Maximise sum_s w_s log P_s(chosen) over one class's 4 parameters."""
        def fgh(b):
            V = self.X @ b
            lse = logsumexp(V, axis=1)
            P = np.exp(V - lse[:, None])
            f = float(np.sum(w * (V[np.arange(self.S), self.chosen] - lse)))
            xbar = np.einsum("sj,sjt->st", P, self.X)
            g = (w[:, None] * (self.xc - xbar)).sum(0)
            dx = self.X - xbar[:, None, :]
            H = -np.einsum("s,sj,sjt,sju->tu", w, P, dx, dx)
            return f, g, H
        return concave_newton(fgh, b0, 5)

    def m_step_membership(self, h, G0):
        """Maximise sum_n sum_k h_nk log pi_nk over the membership parameters."""
        K, Q = self.K, self.Q

        def fgh(x):
            G = np.zeros((K, Q))
            G[1:] = x.reshape(K - 1, Q)
            lpi = self.prior(G)
            pi = np.exp(lpi)
            f = float(np.sum(h * lpi))
            g = ((h - pi)[:, 1:, None] * self.W[:, None, :]).sum(0).reshape(-1)
            H = np.zeros((K - 1, Q, K - 1, Q))
            for k in range(1, K):
                for m in range(1, K):
                    c = pi[:, k] * ((k == m) - pi[:, m])
                    H[k - 1, :, m - 1, :] = -np.einsum("n,nq,nr->qr", c, self.W, self.W)
            return f, g, H.reshape((K - 1) * Q, (K - 1) * Q)
        return concave_newton(fgh, G0[1:].reshape(-1), 5)

    def em(self, theta):
        """EM iterations from theta; returns theta and the log-likelihood."""
        prev = -np.inf
        for it in range(EM_MAX_ITER):
            logL, _, h, _ = self.person(theta)
            ll = float(np.sum(logL))
            assert ll >= prev - 1e-8 * abs(ll), (ll, prev)        # EM never goes down
            if ll - prev < EM_TOL:
                break
            prev = ll
            B, G = self.split(theta)
            hs = h[self.dm]                                         # (S, K)
            Bn = np.array([self.m_step_class(hs[:, k], B[k]) for k in range(self.K)])
            gm = self.m_step_membership(h, G) if self.K > 1 else np.zeros(0)
            theta = np.concatenate([Bn.reshape(-1), gm])
        return theta, ll, it

    def renumber(self, theta):
        """Theta with the classes numbered by share (largest first) and the
        membership re-expressed against the new class 1; the linear map T
        (theta_new = T theta_old) and the order (new k -> old class)."""
        s, _ = self.shares(theta)
        order = np.argsort(-s, kind="stable")
        T = np.zeros((self.P, self.P))
        for new, old in enumerate(order):
            for t in range(NT):
                T[new * NT + t, old * NT + t] = 1.0
        base = NT * self.K

        def mcol(k, q):                       # column of g_kq in theta (k >= 1, 0-based)
            return base + (k - 1) * self.Q + q
        for new in range(1, self.K):
            old = order[new]
            ref = order[0]
            for q in range(self.Q):
                row = mcol(new, q)
                if old > 0:
                    T[row, mcol(old, q)] += 1.0
                if ref > 0:
                    T[row, mcol(ref, q)] -= 1.0
        return T @ np.asarray(theta, float), T, order


# --------------------------------------------------------------------------
# invented data
# --------------------------------------------------------------------------

def make_attributes(rng, S):
    """Prices in currency units per 50 litres (steps of 0.1); peat-free 0/1."""
    return {
        "loose_price": rng.integers(30, 91, S) / 10.0,
        "bagged_price": rng.integers(50, 121, S) / 10.0,
        "boxed_price": rng.integers(70, 151, S) / 10.0,
        "loose_peat_free": rng.integers(0, 2, S).astype(float),
        "bagged_peat_free": rng.integers(0, 2, S).astype(float),
        "boxed_peat_free": rng.integers(0, 2, S).astype(float),
    }


def design(cols, S):
    """X (S, J, 4) in term order asc_bagged, asc_boxed, price, peat_free."""
    X = np.zeros((S, 3, NT))
    X[:, 1, 0] = 1.0
    X[:, 2, 1] = 1.0
    for j, a in enumerate(ALTS):
        X[:, j, 2] = np.asarray(cols[f"{a}_price"])
        X[:, j, 3] = np.asarray(cols[f"{a}_peat_free"])
    return X


def make_membership(rng, n, names):
    out = {}
    for c in names:
        if c == "garden_size":        # hundreds of square metres, steps of 0.1
            out[c] = rng.integers(2, 81, n) / 10.0
        elif c == "age":              # years
            out[c] = rng.integers(18, 86, n).astype(float)
        else:
            raise ValueError(c)
    return out


def simulate(rng, n_dm, T, K, membership, B_true, G_true):
    """Attributes, membership columns per decision maker, a class per
    decision maker drawn from its prior, choices by utility maximisation
    with Gumbel errors (not through the likelihood code)."""
    S = n_dm * T
    cols = make_attributes(rng, S)
    X = design(cols, S)
    mem = make_membership(rng, n_dm, membership)
    W = np.column_stack([np.ones(n_dm)] + [mem[c] for c in membership])
    u = W @ G_true.T
    pi = np.exp(u - logsumexp(u, axis=1, keepdims=True))
    cls = np.array([rng.choice(K, p=p) for p in pi])
    B = np.repeat(B_true[cls], T, axis=0)
    U = np.einsum("sjt,st->sj", X, B) + rng.gumbel(size=(S, 3))
    chosen = U.argmax(axis=1)
    dm = np.repeat(np.arange(n_dm), T)
    for c in membership:
        cols[c] = np.repeat(mem[c], T)
    return cols, X, chosen, dm, W, cls


def parameter_names(K, membership):
    names = [f"{t}_class{k}" for k in range(1, K + 1) for t in TERMS]
    for k in range(2, K + 1):
        names.append(f"member_class{k}")
        names += [f"member_class{k}_{c}" for c in membership]
    return names


def pack(B, G):
    return np.concatenate([np.asarray(B, float).reshape(-1), np.asarray(G, float)[1:].reshape(-1)])


# --------------------------------------------------------------------------
# estimation
# --------------------------------------------------------------------------

def random_start(rng, blogit, K, Q):
    """Utility parameters: the plain logit's plus normal noise (sd 2 for the
    constants and peat_free, 0.5 for price); membership: a_k ~ N(0, 1),
    g = 0."""
    sd = np.array([2.0, 2.0, 0.5, 2.0])
    B = blogit[None, :] + sd[None, :] * rng.standard_normal((K, NT))
    G = np.zeros((K, Q))
    G[1:, 0] = rng.standard_normal(K - 1)
    return pack(B, G)


def multistart(model, blogit, n_starts, seed, label):
    rng = np.random.default_rng(seed)
    runs = []
    for i in range(n_starts):
        t0 = random_start(rng, blogit, model.K, model.Q)
        t_em, ll_em, iters = model.em(t0)
        t_d, _ = bfgs(model.ll, model.grad, t_em, gtol=1e-7, maxiter=3000)
        ll_d = model.ll(t_d)
        if not math.isfinite(ll_d) or ll_d < ll_em:
            t_d, ll_d = t_em, ll_em
        runs.append((ll_d, ll_em, iters, t_d))
        print(f"  [{label}] start {i + 1:>3}: EM {iters:>3} iterations LL {ll_em:.6f}, "
              f"then direct {ll_d:.8f}")
    best = max(r[0] for r in runs)
    at_best = sum(1 for r in runs if r[0] >= best - BEST_TOL)
    ibest = max(range(n_starts), key=lambda i: runs[i][0])
    return runs, ibest, at_best


def reverse_numbering(model, theta):
    """The same model with the classes in reverse order: utility blocks
    reversed, membership u'_k = u_(K+1-k) - u_K (so the new class 1 is the
    old class K)."""
    B, G = model.split(theta)
    Br = B[::-1]
    Gr = G[::-1] - G[-1][None, :]
    return pack(Br, Gr)


def estimate(case, model, names, blogit, n_starts, seed, has_person):
    label = case["name"]
    runs, ibest, at_best = multistart(model, blogit, n_starts, seed, label)
    print(f"  [{label}] {at_best} of {n_starts} starts reached the best LL "
          f"{runs[ibest][0]:.8f} (within {BEST_TOL})")
    theta, _ = bfgs(model.ll, model.grad, runs[ibest][3], gtol=1e-10)
    theta, _ = newton_polish(model.ll, model.grad, theta, label + " raw numbering")
    # number the classes by share and carry the covariance through the linear map
    est, T, order = model.renumber(theta)
    s_est, _ = model.shares(est)
    assert np.all(np.diff(s_est) < -1e-3), s_est
    # the same optimum with the classes in reverse share order (membership
    # against the new class 1): renumbering it must give the estimates back
    other = reverse_numbering(model, est)
    back, _, back_order = model.renumber(other)
    assert np.max(np.abs(back - est)) < 1e-12 and list(back_order) == list(range(model.K))[::-1]
    assert abs(model.ll(other) - model.ll(est)) < 1e-9 * abs(model.ll(est))
    ll_raw = model.ll(theta)
    ll_est = model.ll(est)
    assert abs(ll_est - ll_raw) < 1e-9 * abs(ll_raw), (ll_est, ll_raw)
    gmax = float(np.max(np.abs(model.grad(est))))
    assert gmax < GRAD_TOL, gmax
    H_raw = fd_hessian(model.grad, theta)
    eig = np.linalg.eigvalsh(H_raw)
    assert eig.max() < 0, eig
    Hinv_raw = np.linalg.inv(H_raw)
    sc_raw = model.person(theta)[1]
    cov_raw = -Hinv_raw
    rcov_raw = Hinv_raw @ (sc_raw.T @ sc_raw) @ Hinv_raw
    cov = T @ cov_raw @ T.T
    rcov = T @ rcov_raw @ T.T
    se = np.sqrt(np.diag(cov))
    rse = np.sqrt(np.diag(rcov))
    # the same from the Hessian and scores at the renumbered estimates
    H_new = fd_hessian(model.grad, est)
    se_direct = np.sqrt(np.diag(np.linalg.inv(-H_new)))
    se_map_rel = float(np.max(np.abs(se_direct / se - 1)))
    sc_new = model.person(est)[1]
    Hi = np.linalg.inv(H_new)
    rse_direct = np.sqrt(np.diag(Hi @ (sc_new.T @ sc_new) @ Hi))
    rse_map_rel = float(np.max(np.abs(rse_direct / rse - 1)))
    assert se_map_rel < 1e-4 and rse_map_rel < 1e-4, (se_map_rel, rse_map_rel)
    H2 = fd_hessian(model.grad, est, rel=1e-6)
    se_step_rel = float(np.max(np.abs(np.sqrt(np.diag(np.linalg.inv(-H2))) / se - 1)))
    # class shares and their delta-method standard errors
    s, Js = model.shares(est)
    Js_fd = np.zeros_like(Js)
    for p in range(model.P):
        h = 1e-6 * max(1.0, abs(est[p]))
        tp, tm = est.copy(), est.copy()
        tp[p] += h
        tm[p] -= h
        Js_fd[:, p] = (model.shares(tp)[0] - model.shares(tm)[0]) / (2 * h)
    js_diff = float(np.max(np.abs(Js - Js_fd)))
    assert js_diff < 1e-7, js_diff
    share_cov = rcov if has_person else cov
    s_se = np.sqrt(np.diag(Js @ share_cov @ Js.T))
    _, _, h, _ = model.person(est)
    print(f"  [{label}] classes by share: raw class order {[int(o) + 1 for o in order]}")
    print(f"  LL at estimates {ll_est!r}, max|g| {gmax:.3e}, Hessian eigenvalues "
          f"[{eig.min():.4f}, {eig.max():.4f}]")
    print(f"  standard errors: mapped vs direct at the renumbered point max rel diff "
          f"{se_map_rel:.2e} (robust {rse_map_rel:.2e}); step 1e-6 vs 1e-5 {se_step_rel:.2e}; "
          f"share Jacobian vs differences {js_diff:.2e}")
    print(f"  {'parameter':<30}{'truth':>10}{'estimate':>14}{'std err':>12}{'robust se':>12}")
    for p, tv, e, a, b in zip(names, case["truth"], est, se, rse):
        print(f"  {p:<30}{tv:>10.4f}{e:>14.6f}{a:>12.6f}{b:>12.6f}")
    print("  class shares " + ", ".join(f"{v:.6f} ({e:.6f})" for v, e in zip(s, s_se))
          + "; truth (sample average of the true prior) "
          + f"{np.round(case['truth_class_shares'], 4).tolist()}")
    case.update({
        "starts": n_starts,
        "starts_at_best": at_best,
        "start_optima": sorted((fnum(r[0]) for r in runs), reverse=True),
        "estimates": flist(est),
        "estimates_reversed_numbering": flist(other),
        "ll_at_estimates": fnum(ll_est),
        "grad_max_norm_at_estimates": gmax,
        "std_errors": flist(se),
        "robust_std_errors": flist(rse),
        "class_shares": flist(s),
        "class_share_std_errors": flist(s_se),
        "class_share_covariance": "robust" if has_person else "classical",
        "posterior": flist(h[:POSTERIOR_ROWS]),
    })
    return est


# --------------------------------------------------------------------------
# one case
# --------------------------------------------------------------------------

def make_case(name, description, seed, n_dm, T, K, membership, B_true, G_true, point,
              has_person, n_starts):
    print(f"\n== case {name}: {n_dm} decision makers x {T} tasks, {K} classes ==")
    rng = np.random.default_rng(seed)
    B_true = np.asarray(B_true, float)
    G_true = np.asarray(G_true, float)
    cols, X, chosen, dm, W, cls = simulate(rng, n_dm, T, K, membership, B_true, G_true)
    names = parameter_names(K, membership)
    model = Classes(X, chosen, dm, W, K)
    assert model.P == len(names)
    truth = pack(B_true, G_true)
    true_shares = model.shares(truth)[0]
    shares = np.bincount(chosen, minlength=3) / len(chosen)
    print("  parameters " + ", ".join(names))
    print("  choice shares " + ", ".join(f"{a} {s:.3f}" for a, s in zip(ALTS, shares)))
    print("  drawn classes " + ", ".join(f"{k + 1}: {c}" for k, c in
                                         enumerate(np.bincount(cls, minlength=K))))
    point = np.asarray(point, float)
    ll = model.ll(point)
    g = model.grad(point)
    rel = maxrel(g, fd_gradient(model.ll, point))
    print(f"  LL at point {ll!r}")
    print(f"  gradient at point vs 5-point central differences: max rel diff {rel:.3e}")
    assert rel < 1e-6, rel
    blogit, ll_logit, _ = plain_logit_fit(cols, [ALTS[c] for c in chosen])
    print(f"  plain logit: LL {ll_logit:.6f}, coefficients {np.round(blogit, 5).tolist()}")
    case = {
        "name": name,
        "description": description,
        "alternatives": ALTS,
        "base": "loose",
        "classes": K,
        "parameters": names,
        "constants": {"asc_bagged": "bagged", "asc_boxed": "boxed"},
        "terms": {
            "price": {a: f"{a}_price" for a in ALTS},
            "peat_free": {a: f"{a}_peat_free" for a in ALTS},
        },
        "membership": list(membership),
        "decision_makers": n_dm,
        "tasks_per_decision_maker": T,
        "situations": n_dm * T,
        "truth": flist(truth),
        "truth_class_shares": flist(true_shares),
        "columns": {k: flist(v) for k, v in cols.items()},
        "person": [int(p) + 1 for p in dm] if has_person else None,
        "chosen": [ALTS[c] for c in chosen],
        "point": flist(point),
        "ll_at_point": fnum(ll),
        "grad_at_point": flist(g),
        "grad_fd_max_rel_diff": rel,
        "plain_logit_ll": fnum(ll_logit),
    }
    estimate(case, model, names, blogit, n_starts, seed + 1000, has_person)
    return case, model, cols


# --------------------------------------------------------------------------
# JSON: one key per line, one row of a nested list per line
# --------------------------------------------------------------------------

def to_json(obj, indent=0):
    pad = " " * indent
    inner = " " * (indent + 1)
    if isinstance(obj, dict):
        if not obj:
            return "{}"
        items = [f"{inner}{json.dumps(k)}: {to_json(v, indent + 1)}" for k, v in obj.items()]
        return "{\n" + ",\n".join(items) + "\n" + pad + "}"
    if isinstance(obj, list) and obj and isinstance(obj[0], (list, dict)):
        if isinstance(obj[0], list) and not isinstance(obj[0][0], list):
            rows = [inner + json.dumps(v, separators=(",", ":"), allow_nan=False) for v in obj]
        else:
            rows = [inner + to_json(v, indent + 1) for v in obj]
        return "[\n" + ",\n".join(rows) + "\n" + pad + "]"
    return json.dumps(obj, separators=(",", ":"), allow_nan=False)


# --------------------------------------------------------------------------
# fact checks
# --------------------------------------------------------------------------

def fact_one_class(case, model, cols):
    """K = 1 on case 1's data against the plain logit (the loop): at a point
    and at the maximum."""
    one = Classes(model.X, model.chosen, model.dm, model.W[:, :1], 1)
    point = np.array([0.4, 0.5, -0.35, 0.9])
    ll1 = one.ll(point)
    loop = plain_logit_ll(cols, case["chosen"], dict(zip(TERMS, point)))
    diff = ll1 - loop
    est, _ = bfgs(one.ll, one.grad, np.zeros(NT), gtol=1e-11)
    est, _ = newton_polish(one.ll, one.grad, est, "one class")
    blogit, ll_logit, _ = plain_logit_fit(cols, case["chosen"])
    est_diff = float(np.max(np.abs(est - blogit)))
    ll_est = one.ll(est)
    max_diff = ll_est - ll_logit
    print("\n== fact check: one class on case 1's data is the plain logit ==")
    print(f"  at {point.tolist()}: one-class LL {ll1!r}, loop logit LL {loop!r}, "
          f"difference {diff:.3e}")
    print(f"  maxima: one-class LL {ll_est!r}, plain logit {ll_logit!r}, difference "
          f"{max_diff:.3e}; estimates max abs difference {est_diff:.3e}")
    assert abs(diff) < 1e-9 and abs(max_diff) < 1e-9 and est_diff < 1e-6
    return {"case": case["name"], "parameters": parameter_names(1, []),
            "point": flist(point), "ll": fnum(ll1), "logit_ll": fnum(loop),
            "difference": fnum(diff), "estimates": flist(est), "ll_at_estimates": fnum(ll_est),
            "logit_estimates": flist(blogit), "logit_ll_at_estimates": fnum(ll_logit),
            "ll_difference_at_estimates": fnum(max_diff),
            "estimates_max_abs_difference": est_diff}


def fact_same_tastes(case, model, cols):
    """Case 1 with both classes' utility parameters equal: the plain logit's
    LL whatever the membership parameters."""
    b = np.array([0.6, 0.45, -0.3, 0.8])
    logit = plain_logit_ll(cols, case["chosen"], dict(zip(TERMS, b)))
    out = []
    print("\n== fact check: equal tastes in every class give the plain logit's LL ==")
    for mem in ([0.0, 0.0], [-1.3, 0.25], [2.0, -0.7]):
        point = np.concatenate([b, b, mem])
        ll = model.ll(point)
        diff = ll - logit
        print(f"  membership {mem}: LL {ll!r}, logit {logit!r}, difference {diff:.3e}")
        assert abs(diff) < 1e-9, diff
        out.append({"point": flist(point), "ll": fnum(ll), "difference": fnum(diff)})
    return {"case": case["name"], "utility": flist(b), "logit_ll": fnum(logit), "points": out}


def main():
    t0 = _time.perf_counter()
    cases = []
    # case 1: class 1 price-driven (share about 0.6), class 2 peat-free-driven
    B1 = [[0.5, 0.3, -0.6, 0.3], [0.8, 1.0, -0.1, 2.0]]
    G1 = [[0.0, 0.0], [-1.2, 0.2]]
    c1, m1, cols1 = make_case(
        "panel_two",
        "400 shoppers x 5 choice tasks; 2 classes; membership on garden_size "
        "(constant within a shopper)",
        11, 400, 5, 2, ["garden_size"], B1, G1,
        [0.45, 0.35, -0.55, 0.25, 0.7, 0.9, -0.15, 1.8, -1.0, 0.15], True, 50)
    cases.append(c1)
    # case 2: cross-section, constant shares about 0.65 / 0.35
    B2 = [[0.4, 0.2, -0.7, 0.2], [1.0, 1.2, -0.05, 2.5]]
    G2 = [[0.0], [math.log(0.35 / 0.65)]]
    c2, m2, _ = make_case(
        "cross_section_two",
        "1500 situations, no decision-maker column (each situation its own decision "
        "maker); 2 classes; no membership columns (constant shares)",
        12, 1500, 1, 2, [], B2, G2,
        [0.35, 0.25, -0.6, 0.3, 0.9, 1.0, -0.1, 2.2, -0.5], False, 50)
    cases.append(c2)
    # case 3: three classes, membership on garden_size and age
    B3 = [[0.5, 0.3, -0.7, 0.3], [0.8, 1.0, -0.1, 2.0], [-0.5, 1.5, -0.3, 0.8]]
    G3 = [[0.0, 0.0, 0.0], [-1.0, 0.25, -0.01], [-2.0, -0.1, 0.03]]
    c3, m3, _ = make_case(
        "panel_three",
        "600 shoppers x 6 choice tasks; 3 classes; membership on garden_size and age "
        "(constant within a shopper)",
        13, 600, 6, 3, ["garden_size", "age"], B3, G3,
        [0.45, 0.35, -0.6, 0.25, 0.7, 0.9, -0.15, 1.8, -0.4, 1.3, -0.25, 0.7,
         -0.8, 0.2, -0.005, -1.8, -0.05, 0.02], True, 50)
    cases.append(c3)

    facts = {
        "one_class_is_logit": fact_one_class(c1, m1, cols1),
        "equal_tastes_is_logit": fact_same_tastes(c1, m1, cols1),
    }
    out = {
        "description": "Latent class logit reference numbers (EM from many starts, then "
                       "direct maximisation) on invented garden-centre compost data; written "
                       "by tests/reference/classes_reference.py (independent numpy/scipy code)",
        "numpy": np.__version__,
        "scipy": scipy.__version__,
        "cases": cases,
        "fact_checks": facts,
    }
    text = to_json(out) + "\n"
    os.makedirs(os.path.dirname(FIX_FILE), exist_ok=True)
    with open(FIX_FILE, "w") as f:
        f.write(text)
    print(f"\nwrote {FIX_FILE} ({len(text)} bytes) in {_time.perf_counter() - t0:.1f} s")


if __name__ == "__main__":
    if not os.path.isdir(os.path.join("tests", "fixtures")):
        sys.exit("run from the repository root")
    main()
