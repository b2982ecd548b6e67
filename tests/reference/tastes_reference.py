#!/usr/bin/env python3
"""Mixed logit with correlated tastes and in willingness-to-pay space: reference
numbers (simulated maximum likelihood) for the Rust tests.

Run from the repository root:

    python3 tests/reference/tastes_reference.py

Needs only numpy and scipy.  Writes tests/fixtures/tastes_reference.json and
prints every check figure.  The output is deterministic: the data, the draws
and every number come from fixed seeds, and BLAS is pinned to one thread
before numpy is imported, so running the script again writes the same bytes.

What it is
----------
An independent numpy/scipy implementation, written for this repository, of
the panel mixed logit whose random coefficients may be correlated (a
Cholesky factor over a listed subset of them) and whose utility may be
written in willingness-to-pay space (a price scale times the money value of
every attribute); the method follows Train, Discrete Choice Methods with
Simulation, 2nd ed., ch. 6, and Train and Weeks (2005) for willingness-to-pay
space.  It computes the simulated log-likelihood (SLL), its analytic
gradient, individual-level conditional means of the coefficients,
estimates, classical standard errors, the implied correlations of the
tastes and their delta-method standard errors.  The data are invented: a
regional express coach competing with rail and the private car for a trip
between two made-up towns, alternatives ["car", "coach", "rail"], car the
base (no constant).  Tastes vary from traveller to traveller, correlated,
and choices are simulated with Gumbel errors directly (numpy's generator),
not through the likelihood code below.

Model
-----
Coefficients (in parameter order) asc_coach, asc_rail, cost, time, comfort;
then one `<name>_spread` per random coefficient in parameter order; then the
Cholesky off-diagonals `chol_<list_i>_<list_j>` for i = 1..M-1, j = 0..i-1
(row by row) of the `correlated` list (list order, which need not be the
parameter order).

Draws: uniforms u[n][r][d] of decision maker n, draw r, random coefficient d
(d-th random one in parameter order); z = Phi^{-1}(u) (scipy.stats.norm.ppf).

Underlying normal of a random coefficient with location m:
  * listed (list = [c_0, ..., c_{M-1}]): eta_i = sum_{j<=i} L[i][j] z[c_j],
    L lower-triangular in LIST order, L[i][i] = <c_i>_spread,
    L[i][j] = chol_<c_i>_<c_j> (i > j); x_i = m_i + eta_i;
  * not listed (independent): x = m + s*z, s its spread.
The coefficient is x (normal), exp(x) (lognormal) or -exp(x)
(negative-lognormal).  The covariance of the listed eta is Sigma = L L';
its correlations Sigma_ij / sqrt(Sigma_ii Sigma_jj) are reported (list order).

Preference space (the coefficients b enter the utility directly):

    V_car   =                       cost*car_cost   + time*car_time
    V_coach = asc_coach           + cost*coach_cost + time*coach_time + comfort*coach_comfort
    V_rail  = asc_rail            + cost*rail_cost  + time*rail_time  + comfort*rail_comfort

Willingness-to-pay space (space = "willingness", price = "cost"; the cost
columns hold positive fares): the coefficient of `cost` is the price scale
alpha and every other coefficient w_k is a willingness to pay,

    V_j = alpha * (-cost_j + asc_j + w_time*time_j + w_comfort*comfort_j),

(asc_car = 0, comfort_car = 0), i.e. preference-space coefficients
b_cost = -alpha, b_k = alpha*w_k.  A random alpha is lognormal,
alpha = exp(m_cost + eta_cost); a fixed alpha is the parameter `cost` itself.

Logit kernel P[n,t,j,r] = exp(V_j) / sum_l exp(V_l) (log-sum-exp), panel
simulated likelihood L_n = (1/R) sum_r prod_t P[n,t,chosen,r], computed as
log L_n = a + log(mean_r exp(l_nr - a)) with l_nr = sum_t log P_chosen and
a = max_r l_nr; SLL = sum_n log L_n (all weights 1).

Gradient: d log L_n / d theta = sum_r omega_nr sum_k g_nrk d b_k[n,r] / d theta,
g_nrk = sum_t (x[n,t,chosen,k] - sum_j P[n,t,j,r] x[n,t,j,k]),
omega_nr = exp(l_nr - a) / sum_r' exp(l_nr' - a).  With c the coefficients
(alpha and w in willingness space, c = b in preference space):
d c / d x is 1 (normal) or c (lognormal, negative-lognormal); d x / d m = 1,
d x_i / d L[i][j] = z[c_j], d x / d s = z; in willingness space
d b_cost = -d alpha and d b_k = w_k d alpha + alpha d w_k.
Conditional mean of random coefficient d for n: sum_r omega_nr c_d[n,r]
(of the coefficient itself: alpha for the price in willingness space, w for
the others).

Cases in the fixture ("cases", in this order)
----------------------------------------------
1. "correlated": preference space, 200 travellers x 4 choice tasks, 50
   draws; asc_rail normal, cost negative-lognormal (the parameter `cost` is
   the mean of log(-beta_cost)), time normal, all three correlated with the
   list ["asc_rail", "time", "cost"] (deliberately not parameter order);
   asc_coach and comfort fixed.  Parameters (11): asc_coach, asc_rail, cost,
   time, comfort, asc_rail_spread, cost_spread, time_spread,
   chol_time_asc_rail, chol_cost_asc_rail, chol_cost_time.
2. "willingness": willingness-to-pay space, price "cost", 200 x 4, 50
   draws; asc_rail normal and independent (not listed), cost lognormal
   (alpha), time normal (w_time), correlated ["cost", "time"].  Parameters
   (9): asc_coach, asc_rail, cost, time, comfort, asc_rail_spread,
   cost_spread, time_spread, chol_time_cost.
3. "willingness_fixed_scale": willingness-to-pay space, price "cost", alpha
   fixed (the parameter `cost` is alpha), time normal, no correlation; 60 x 3,
   20 draws.  Parameters (6): asc_coach, asc_rail, cost, time, comfort,
   time_spread.  Log-likelihood, gradient and conditional means at one fixed
   point only, no estimation.

Checks (printed, and asserted)
------------------------------
* analytic gradient vs five-point central differences of the SLL at the
  stored point (step 1e-4 * max(1, |theta_i|)); max relative difference
  |analytic - numeric| / max(|analytic|, 1) must be below 1e-6;
* estimation (cases 1 and 2): start locations from a fixed-coefficient logit
  fitted here (preference space: cost start = log(-b_cost); willingness
  space: alpha = -b_cost, cost start = log(alpha), w_k = b_k / alpha), spreads
  started at 0.5 (0.3 for the cost), Cholesky off-diagonals at 0.01; scipy
  BFGS, then Newton steps with the finite-difference Hessian until
  max |gradient| < 1e-8 (asserted); the Cholesky diagonal (the spreads of
  listed coefficients) and the other spreads positive and the Hessian
  negative definite (asserted).  With 50 draws the SLL is not symmetric in
  the sign of a spread or of a column of the Cholesky factor, and the search
  from the start may end at a negative spread: the seeds of cases 1 and 2
  (6 and 16) were picked by trying small seeds in turn (1 to 6 and 1 to 16)
  until the search ended with every spread positive;
* classical standard errors sqrt(diag(inv(-H))), H the central-difference
  Hessian of the analytic gradient, step h_i = 1e-5 * max(1, |theta_i|),
  symmetrised (H + H') / 2; correlation standard errors by the delta method
  with that covariance and the analytic Jacobian of the correlations (checked
  against central differences, max abs difference < 1e-8 asserted);
* "fact_checks", against separate loop-by-loop code (`named_sll`: one
  decision maker and draw at a time, the model read from the parameter
  names, sharing no indexing with the vectorised class):
  - "loop_by_name": every case at its point; |difference| < 1e-10 asserted
    (it checks the naming and ordering conventions above);
  - "zero_correlation": case 1 with every chol_* at 0 has the SLL of the
    independent mixed logit (the loop with no correlated list, spreads as
    given); |difference| < 1e-12 asserted;
  - "fixed_scale_is_preference_space": case 3 at its point has the SLL of the
    independent preference-space mixed logit with b_cost = -alpha,
    b_k = alpha*w_k and time normal with location alpha*m_time and spread
    alpha*s_time (the loop in preference space); |difference| < 1e-12
    asserted.

Fixture layout (P parameters, D random coefficients in parameter order,
M listed ones, S situations, N decision makers, R draws; decision maker i is
the i-th distinct value of "person", ids 1..N in order)
---------------------------------------------------------------------------
top level: "description", "numpy", "scipy", "cases": [3 case objects],
  "fact_checks": {"zero_correlation": {"case", "point": [P], "independent_point":
     [P - chol count], "sll", "independent_sll", "difference"},
     "fixed_scale_is_preference_space": {"case", "point": [P],
     "preference_point": [6], "sll", "preference_sll", "difference"},
     "loop_by_name": [3 x {"case", "sll", "loop_sll", "difference"}]}
every case: "name", "description", "model_keys": {[model] keys: "correlated":
  [names], "space": "willingness", "price": "cost", as used},
  "alternatives": ["car","coach","rail"], "base": "car",
  "parameters": [P names], "random": {coefficient: distribution},
  "correlated": [M names] (empty when none), "space": "preference" |
  "willingness", "price": "cost" | null,
  "constants": {"asc_coach": "coach", "asc_rail": "rail"},
  "terms": {"cost": {alternative: column}, "time": {...}, "comfort": {"coach":
     "coach_comfort", "rail": "rail_comfort"}}  (car has no comfort term),
  "decision_makers": N, "tasks_per_decision_maker", "draws": R, "situations": S,
  "truth": [P] (values used to simulate the data; not an estimate),
  "columns": {column: [S]}, "person": [S] ints, "chosen": [S] alternative names,
  "uniforms": [N][R][D], "point": [P], "ll_at_point", "grad_at_point": [P],
  "grad_fd_max_rel_diff", "conditional_means_at_point": [N][D]
cases 1 and 2 also: "logit_start_coefficients": [5], "start": [P],
  "estimates": [P], "ll_at_estimates", "grad_max_norm_at_estimates",
  "std_errors": [P], "correlations_at_estimates": [M][M],
  "correlation_std_errors": [M][M] (0 on the diagonal),
  "truth_correlations": [M][M]
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
from scipy.stats import norm  # noqa: E402

FIX_FILE = os.path.join("tests", "fixtures", "tastes_reference.json")

ALTS = ["car", "coach", "rail"]
COEFS = ["asc_coach", "asc_rail", "cost", "time", "comfort"]
DISTS = ("normal", "lognormal", "negative-lognormal")
PRICE = 2  # index of `cost` in COEFS

HESS_STEP_REL = 1e-5
FD_STEP_REL = 1e-4
GRAD_TOL = 1e-8


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


def maximise(f, grad, theta0, label):
    """BFGS on -f, then Newton steps with the finite-difference Hessian."""
    res = minimize(lambda t: -f(t), np.asarray(theta0, float), jac=lambda t: -grad(t),
                   method="BFGS", options={"gtol": 1e-9, "maxiter": 5000})
    theta = res.x
    print(f"  [{label}] BFGS: {res.message} iterations {res.nit}, "
          f"max|g| {np.max(np.abs(grad(theta))):.3e}")
    for it in range(50):
        g = grad(theta)
        gmax = float(np.max(np.abs(g)))
        if gmax < 1e-10:
            break
        H = fd_hessian(grad, theta)
        step = -np.linalg.solve(H, g)
        f0 = f(theta)
        lam = 1.0
        while lam > 1e-6:
            cand = theta + lam * step
            if f(cand) >= f0 - 1e-12 * abs(f0):
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


# --------------------------------------------------------------------------
# fixed-coefficient logit (separate code; starting values)
# --------------------------------------------------------------------------

def logit_ll_grad(X, chosen, beta):
    V = X @ beta
    lse = logsumexp(V, axis=1)
    P = np.exp(V - lse[:, None])
    idx = np.arange(X.shape[0])
    ll = float(np.sum(V[idx, chosen] - lse))
    g = (X[idx, chosen, :] - np.einsum("sj,sjk->sk", P, X)).sum(axis=0)
    return ll, g


# --------------------------------------------------------------------------
# the same model loop by loop, read from the parameter NAMES (separate code
# for the fact checks: it shares no indexing with the class below)
# --------------------------------------------------------------------------

def named_sll(case, X, chosen, z, theta):
    """SLL of the model a case describes ("parameters", "random" in parameter
    order, "correlated", "space"), one decision maker and draw at a time.
    X (N, T, J, K), chosen (N, T), z (N, R, D) standard normal draws."""
    val = dict(zip(case["parameters"], (float(t) for t in theta)))
    assert len(val) == len(theta)
    dim = {name: d for d, name in enumerate(case["random"])}
    lst = case["correlated"]
    willingness = case["space"] == "willingness"
    N, T, J, K = X.shape
    R = z.shape[1]
    total = 0.0
    for n in range(N):
        lr = np.zeros(R)
        for r in range(R):
            c = {}
            for name in COEFS:
                dist = case["random"].get(name)
                if dist is None:
                    c[name] = val[name]
                    continue
                x = val[name] + val[f"{name}_spread"] * z[n, r, dim[name]]
                for other in lst[: lst.index(name)] if name in lst else []:
                    x += val[f"chol_{name}_{other}"] * z[n, r, dim[other]]
                c[name] = {"normal": x, "lognormal": math.exp(x),
                           "negative-lognormal": -math.exp(x)}[dist]
            if willingness:
                beta = np.array([-c[k] if k == "cost" else c["cost"] * c[k] for k in COEFS])
            else:
                beta = np.array([c[k] for k in COEFS])
            for t in range(T):
                v = X[n, t] @ beta
                lr[r] += v[chosen[n, t]] - logsumexp(v)
        total += logsumexp(lr) - math.log(R)
    return total


# --------------------------------------------------------------------------
# panel mixed logit with correlated tastes, preference or willingness space
# --------------------------------------------------------------------------

class Tastes:
    """X (N, T, J, K) preference-space layout (in willingness space the cost
    columns hold positive fares), chosen (N, T), uniforms (N, R, D).

    random: [(coefficient index k, distribution)] in parameter order;
    correlated: coefficient indices in LIST order (each random);
    willingness: utility in willingness-to-pay space with price `cost`.
    Parameter vector: K locations/fixed values, D spreads, then the
    Cholesky off-diagonals row by row of the list.
    """

    def __init__(self, X, chosen, uniforms, random, correlated=(), willingness=False):
        self.X = np.asarray(X, float)
        self.chosen = np.asarray(chosen, int)
        self.u = np.asarray(uniforms, float)
        self.N, self.T, self.J, self.K = self.X.shape
        self.R = self.u.shape[1]
        self.rk = [k for k, _ in random]
        self.dist = dict(random)
        self.D = len(random)
        self.dim = {k: d for d, k in enumerate(self.rk)}      # coefficient -> draw dimension
        self.list = list(correlated)
        self.M = len(self.list)
        assert all(k in self.dim for k in self.list)
        assert all(d in DISTS for d in self.dist.values())
        self.willingness = willingness
        if willingness and PRICE in self.dist:
            assert self.dist[PRICE] == "lognormal"
        # off-diagonal (i, j) of the list -> parameter index
        self.chol = {}
        p = self.K + self.D
        for i in range(1, self.M):
            for j in range(i):
                self.chol[(i, j)] = p
                p += 1
        self.P = p
        assert self.u.shape == (self.N, self.R, self.D)
        assert np.all(self.u > 0) and np.all(self.u < 1)
        self.z = norm.ppf(self.u)
        n_idx = np.arange(self.N)[:, None]
        t_idx = np.arange(self.T)[None, :]
        self.xc_sum = self.X[n_idx, t_idx, self.chosen, :].sum(axis=1)   # (N, K)

    def lower(self, theta):
        """The Cholesky factor L (M, M) of the listed tastes."""
        L = np.zeros((self.M, self.M))
        for i, k in enumerate(self.list):
            L[i, i] = theta[self.K + self.dim[k]]
            for j in range(i):
                L[i, j] = theta[self.chol[(i, j)]]
        return L

    def coefficients(self, theta):
        """c (N, R, K): the coefficients (alpha and w in willingness space) and
        d c / d theta (N, R, K, P)."""
        theta = np.asarray(theta, float)
        assert len(theta) == self.P
        c = np.broadcast_to(theta[: self.K], (self.N, self.R, self.K)).copy()
        J = np.zeros((self.N, self.R, self.K, self.P))
        for k in range(self.K):
            J[:, :, k, k] = 1.0
        pos = {k: i for i, k in enumerate(self.list)}
        for d, k in enumerate(self.rk):
            x = np.full((self.N, self.R), theta[k])
            dx = {k: np.ones((self.N, self.R))}                   # parameter -> d x / d it
            if k in pos:
                i = pos[k]
                for j in range(i + 1):
                    zj = self.z[:, :, self.dim[self.list[j]]]
                    p = self.K + d if j == i else self.chol[(i, j)]
                    x = x + theta[p] * zj
                    dx[p] = zj
            else:
                x = x + theta[self.K + d] * self.z[:, :, d]
                dx[self.K + d] = self.z[:, :, d]
            dist = self.dist[k]
            if dist == "normal":
                b, db = x, np.ones_like(x)
            elif dist == "lognormal":
                b = np.exp(x)
                db = b
            else:
                b = -np.exp(x)
                db = b
            c[:, :, k] = b
            J[:, :, k, k] = 0.0
            for p, v in dx.items():
                J[:, :, k, p] = db * v
        return c, J

    def preference(self, theta):
        """Preference-space coefficients b (N, R, K), d b / d theta, and c."""
        c, Jc = self.coefficients(theta)
        if not self.willingness:
            return c, Jc, c
        alpha = c[:, :, PRICE]
        dalpha = Jc[:, :, PRICE, :]
        b = alpha[:, :, None] * c
        Jb = c[:, :, :, None] * dalpha[:, :, None, :] + alpha[:, :, None, None] * Jc
        b[:, :, PRICE] = -alpha
        Jb[:, :, PRICE, :] = -dalpha
        return b, Jb, c

    def person(self, theta):
        """log L_n (N,), score d log L_n / d theta (N, P), omega (N, R), c (N, R, K)."""
        b, Jb, c = self.preference(theta)
        V = np.einsum("ntjk,nrk->nrtj", self.X, b)              # (N, R, T, J)
        logP = V - logsumexp(V, axis=3, keepdims=True)
        P = np.exp(logP)
        ch = np.broadcast_to(self.chosen[:, None, :, None], (self.N, self.R, self.T, 1))
        lnr = np.take_along_axis(logP, ch, axis=3)[..., 0].sum(axis=2)   # (N, R)
        a = lnr.max(axis=1, keepdims=True)
        e = np.exp(lnr - a)
        logL = a[:, 0] + np.log(e.mean(axis=1))
        omega = e / e.sum(axis=1, keepdims=True)
        g = self.xc_sum[:, None, :] - np.einsum("nrtj,ntjk->nrk", P, self.X)  # (N, R, K)
        score = np.einsum("nr,nrk,nrkp->np", omega, g, Jb)
        return logL, score, omega, c

    def sll(self, theta):
        return float(np.sum(self.person(theta)[0]))

    def grad(self, theta):
        return self.person(theta)[1].sum(axis=0)

    def conditional_means(self, theta):
        _, _, omega, c = self.person(theta)
        return np.einsum("nr,nrd->nd", omega, c[:, :, self.rk])

    def correlations(self, theta):
        """Correlation matrix of the listed tastes (M, M) and its Jacobian (M, M, P)."""
        L = self.lower(theta)
        S = L @ L.T
        sd = np.sqrt(np.diag(S))
        C = S / np.outer(sd, sd)
        dC = np.zeros((self.M, self.M, self.P))
        for i in range(self.M):
            for j in range(i + 1):
                p = self.K + self.dim[self.list[i]] if i == j else self.chol[(i, j)]
                E = np.zeros((self.M, self.M))
                E[i, j] = 1.0
                dS = E @ L.T + L @ E.T
                ds = np.diag(dS)
                dC[:, :, p] = (dS / np.outer(sd, sd)
                               - 0.5 * C * (ds[:, None] / sd[:, None] ** 2
                                            + ds[None, :] / sd[None, :] ** 2))
        return C, dC


# --------------------------------------------------------------------------
# invented data
# --------------------------------------------------------------------------

def make_attributes(rng, S):
    """Fares in currency units (steps of 0.1), door-to-door times in hours
    (steps of 0.05), comfort scores 1..5 for the coach and rail."""
    return {
        "car_cost": rng.integers(60, 321, S) / 10.0,
        "coach_cost": rng.integers(35, 201, S) / 10.0,
        "rail_cost": rng.integers(80, 381, S) / 10.0,
        "car_time": rng.integers(20, 61, S) / 20.0,
        "coach_time": rng.integers(30, 86, S) / 20.0,
        "rail_time": rng.integers(16, 51, S) / 20.0,
        "coach_comfort": rng.integers(1, 6, S).astype(float),
        "rail_comfort": rng.integers(2, 6, S).astype(float),
    }


def design(cols, S):
    """X (S, J, K) in coefficient order asc_coach, asc_rail, cost, time, comfort."""
    X = np.zeros((S, 3, 5))
    X[:, 1, 0] = 1.0
    X[:, 2, 1] = 1.0
    for j, a in enumerate(ALTS):
        X[:, j, 2] = cols[f"{a}_cost"]
        X[:, j, 3] = cols[f"{a}_time"]
    X[:, 1, 4] = cols["coach_comfort"]
    X[:, 2, 4] = cols["rail_comfort"]
    return X


def simulate(rng, n_dm, T, tastes):
    """Attributes, one preference-space coefficient vector per decision maker
    (tastes(rng, n) -> (n, 5)), choices by utility maximisation with Gumbel
    errors."""
    S = n_dm * T
    cols = make_attributes(rng, S)
    X = design(cols, S)
    B = np.repeat(tastes(rng, n_dm), T, axis=0)                   # (S, 5)
    U = np.einsum("sjk,sk->sj", X, B) + rng.gumbel(size=(S, 3))
    chosen = U.argmax(axis=1)
    person = np.repeat(np.arange(1, n_dm + 1), T)
    return cols, X, chosen, person


def covariance(sds, corr):
    sds = np.asarray(sds, float)
    return np.asarray(corr, float) * np.outer(sds, sds)


# case 1: list order asc_rail, time, log(-cost); spreads 1.0, 0.7, 0.5
CORR_1 = [[1.0, -0.3, 0.2], [-0.3, 1.0, 0.5], [0.2, 0.5, 1.0]]
CHOL_1 = np.linalg.cholesky(covariance([1.0, 0.7, 0.5], CORR_1))
# case 2: list order log(alpha), w_time; spreads 0.5, 4.0 (money per hour)
CORR_2 = [[1.0, 0.4], [0.4, 1.0]]
CHOL_2 = np.linalg.cholesky(covariance([0.5, 4.0], CORR_2))


def tastes_correlated(rng, n):
    # asc_coach fixed -0.5, comfort fixed 0.3 per point; (asc_rail, time,
    # log(-cost)) jointly normal with means (0.4, -0.8, log 0.12)
    eta = rng.standard_normal((n, 3)) @ CHOL_1.T
    return np.column_stack([
        np.full(n, -0.5),
        0.4 + eta[:, 0],
        -np.exp(math.log(0.12) + eta[:, 2]),
        -0.8 + eta[:, 1],
        np.full(n, 0.3),
    ])


def tastes_willingness(rng, n):
    # willingness to pay: asc_coach -4.0, asc_rail ~ N(3.0, 2.5) independent,
    # comfort 2.5 per point, (log alpha, w_time) jointly normal with means
    # (log 0.12, -7.0 per hour); preference-space b = (alpha*w, -alpha)
    eta = rng.standard_normal((n, 2)) @ CHOL_2.T
    alpha = np.exp(math.log(0.12) + eta[:, 0])
    w_rail = rng.normal(3.0, 2.5, n)
    w_time = -7.0 + eta[:, 1]
    return np.column_stack([alpha * -4.0, alpha * w_rail, -alpha, alpha * w_time, alpha * 2.5])


def tastes_fixed_scale(rng, n):
    # alpha fixed 0.12; w: asc_coach -4.0, asc_rail 3.0, time ~ N(-7.0, 4.0), comfort 2.5
    alpha = 0.12
    w_time = rng.normal(-7.0, 4.0, n)
    return np.column_stack([np.full(n, alpha * -4.0), np.full(n, alpha * 3.0),
                            np.full(n, -alpha), alpha * w_time, np.full(n, alpha * 2.5)])


TRUTH_1 = {"asc_coach": -0.5, "asc_rail": 0.4, "cost": math.log(0.12), "time": -0.8,
           "comfort": 0.3, "asc_rail_spread": CHOL_1[0, 0], "cost_spread": CHOL_1[2, 2],
           "time_spread": CHOL_1[1, 1], "chol_time_asc_rail": CHOL_1[1, 0],
           "chol_cost_asc_rail": CHOL_1[2, 0], "chol_cost_time": CHOL_1[2, 1]}
TRUTH_2 = {"asc_coach": -4.0, "asc_rail": 3.0, "cost": math.log(0.12), "time": -7.0,
           "comfort": 2.5, "asc_rail_spread": 2.5, "cost_spread": CHOL_2[0, 0],
           "time_spread": CHOL_2[1, 1], "chol_time_cost": CHOL_2[1, 0]}
TRUTH_3 = {"asc_coach": -4.0, "asc_rail": 3.0, "cost": 0.12, "time": -7.0,
           "comfort": 2.5, "time_spread": 4.0}


# --------------------------------------------------------------------------
# one case
# --------------------------------------------------------------------------

def parameter_names(random, correlated):
    names = COEFS + [f"{COEFS[k]}_spread" for k, _ in random]
    for i in range(1, len(correlated)):
        for j in range(i):
            names.append(f"chol_{COEFS[correlated[i]]}_{COEFS[correlated[j]]}")
    return names


def start_values(model, X, chosen, label):
    """Locations from a fixed-coefficient logit; spreads 0.5 (0.3 for the
    cost); off-diagonals 0.01."""
    lres = minimize(lambda b: -logit_ll_grad(X, chosen, b)[0], np.zeros(5),
                    jac=lambda b: -logit_ll_grad(X, chosen, b)[1], method="BFGS",
                    options={"gtol": 1e-10})
    blogit = lres.x
    print(f"  [{label}] fixed-coefficient logit: LL {-lres.fun:.6f}, coefficients "
          f"{np.round(blogit, 5).tolist()}, "
          f"max|g| {np.max(np.abs(logit_ll_grad(X, chosen, blogit)[1])):.2e}")
    assert blogit[PRICE] < 0, "logit cost coefficient must be negative"
    loc = blogit.copy()
    if model.willingness:
        alpha = -blogit[PRICE]
        loc = blogit / alpha
        loc[PRICE] = math.log(alpha) if PRICE in model.dist else alpha
    elif PRICE in model.dist:
        loc[PRICE] = math.log(-blogit[PRICE])
    spreads = [0.3 if k == PRICE else 0.5 for k in model.rk]
    start = np.concatenate([loc, spreads, np.full(model.P - model.K - model.D, 0.01)])
    return blogit, start


def estimate(case, model, X, chosen, names):
    label = case["name"]
    blogit, start = start_values(model, X, chosen, label)
    print(f"  start {np.round(start, 6).tolist()}  SLL {model.sll(start):.6f}")
    est, gmax = maximise(model.sll, model.grad, start, label)
    spreads = est[model.K: model.K + model.D]
    assert np.all(spreads > 0), f"non-positive spread at the optimum: {spreads}"
    ll_est = model.sll(est)
    H = fd_hessian(model.grad, est)
    eig = np.linalg.eigvalsh(H)
    assert eig.max() < 0, eig
    cov = np.linalg.inv(-H)
    se = np.sqrt(np.diag(cov))
    H2 = fd_hessian(model.grad, est, rel=1e-6)
    se2 = np.sqrt(np.diag(np.linalg.inv(-H2)))
    se_step_rel = float(np.max(np.abs(se2 / se - 1)))
    C, dC = model.correlations(est)
    # the Jacobian of the correlations against central differences
    dC_fd = np.zeros_like(dC)
    for p in range(model.P):
        h = 1e-6 * max(1.0, abs(est[p]))
        tp, tm = est.copy(), est.copy()
        tp[p] += h
        tm[p] -= h
        dC_fd[:, :, p] = (model.correlations(tp)[0] - model.correlations(tm)[0]) / (2 * h)
    jac_diff = float(np.max(np.abs(dC - dC_fd)))
    assert jac_diff < 1e-8, jac_diff
    cse = np.zeros((model.M, model.M))
    for i in range(model.M):
        for j in range(model.M):
            if i != j:
                cse[i, j] = math.sqrt(dC[i, j] @ cov @ dC[i, j])
    Ct, _ = model.correlations(np.array(case["truth"]))
    print(f"  SLL at estimates {ll_est!r}, max|g| {gmax:.3e}, Hessian eigenvalues "
          f"[{eig.min():.4f}, {eig.max():.4f}]")
    print(f"  standard errors: step 1e-6 vs 1e-5 max rel change {se_step_rel:.2e}; "
          f"correlation Jacobian vs differences {jac_diff:.2e}")
    print(f"  {'parameter':<22}{'truth':>10}{'start':>11}{'estimate':>14}{'std err':>12}")
    for p, tv, s0, e, s in zip(names, case["truth"], start, est, se):
        print(f"  {p:<22}{tv:>10.4f}{s0:>11.4f}{e:>14.6f}{s:>12.6f}")
    lst = case["correlated"]
    for i in range(model.M):
        for j in range(i):
            print(f"  corr({lst[i]}, {lst[j]}): truth {Ct[i, j]:.3f}, estimate "
                  f"{C[i, j]:.6f} (s.e. {cse[i, j]:.6f})")
    case.update({
        "logit_start_coefficients": flist(blogit),
        "start": flist(start),
        "estimates": flist(est),
        "ll_at_estimates": fnum(ll_est),
        "grad_max_norm_at_estimates": gmax,
        "std_errors": flist(se),
        "correlations_at_estimates": flist(C),
        "correlation_std_errors": flist(cse),
        "truth_correlations": flist(Ct),
    })


def make_case(name, description, seed, n_dm, T, R, random, correlated, willingness,
              tastes, truth, point, do_estimate=True):
    print(f"\n== case {name}: {n_dm} decision makers x {T} tasks, {R} draws ==")
    rng = np.random.default_rng(seed)
    cols, X, chosen, person = simulate(rng, n_dm, T, tastes)
    rand = [(COEFS.index(c), d) for c, d in random.items()]
    rand.sort()
    uniforms = rng.random((n_dm, R, len(rand)))
    assert np.all(uniforms > 0)
    lst = [COEFS.index(c) for c in correlated]
    names = parameter_names(rand, lst)
    model = Tastes(X.reshape(n_dm, T, 3, 5), chosen.reshape(n_dm, T), uniforms, rand,
                   lst, willingness)
    assert model.P == len(names)
    shares = np.bincount(chosen, minlength=3) / len(chosen)
    print("  parameters " + ", ".join(names))
    print("  choice shares " + ", ".join(f"{a} {s:.3f}" for a, s in zip(ALTS, shares)))

    point = np.asarray(point, float)
    ll = model.sll(point)
    g = model.grad(point)
    g_fd = fd_gradient(model.sll, point)
    rel = maxrel(g, g_fd)
    print(f"  SLL at point {ll!r}")
    print(f"  gradient at point vs 5-point central differences: max rel diff {rel:.3e}")
    assert rel < 1e-6, rel
    cm = model.conditional_means(point)

    keys = {}
    if correlated:
        keys["correlated"] = list(correlated)
    if willingness:
        keys["space"] = "willingness"
        keys["price"] = "cost"
    case = {
        "name": name,
        "description": description,
        "model_keys": keys,
        "alternatives": ALTS,
        "base": "car",
        "parameters": names,
        "random": {COEFS[k]: d for k, d in rand},
        "correlated": list(correlated),
        "space": "willingness" if willingness else "preference",
        "price": "cost" if willingness else None,
        "constants": {"asc_coach": "coach", "asc_rail": "rail"},
        "terms": {
            "cost": {a: f"{a}_cost" for a in ALTS},
            "time": {a: f"{a}_time" for a in ALTS},
            "comfort": {"coach": "coach_comfort", "rail": "rail_comfort"},
        },
        "decision_makers": n_dm,
        "tasks_per_decision_maker": T,
        "draws": R,
        "situations": n_dm * T,
        "truth": [fnum(truth[p]) for p in names],
        "columns": {k: flist(v) for k, v in cols.items()},
        "person": [int(p) for p in person],
        "chosen": [ALTS[c] for c in chosen],
        "uniforms": flist(uniforms),
        "point": flist(point),
        "ll_at_point": fnum(ll),
        "grad_at_point": flist(g),
        "grad_fd_max_rel_diff": rel,
        "conditional_means_at_point": flist(cm),
    }
    if do_estimate:
        estimate(case, model, X, chosen, names)
    return case, model


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


def fact_by_name(case, model):
    """The vectorised SLL at a case's point against the loop read from the names."""
    sll = model.sll(case["point"])
    loop = float(named_sll(case, model.X, model.chosen, model.z, case["point"]))
    diff = sll - loop
    print(f"\n== fact check: case {case['name']} at its point, loop read from the names ==")
    print(f"  vectorised SLL {sll!r}\n  loop SLL       {loop!r}\n  difference {diff:.3e}")
    assert abs(diff) < 1e-10, diff
    return {"case": case["name"], "sll": fnum(sll), "loop_sll": fnum(loop),
            "difference": fnum(diff)}


def fact_zero_correlation(case, model):
    """Case 1 with every chol_* at 0 against the independent model (the loop,
    with no correlated list)."""
    zp = np.asarray(case["point"], float).copy()
    zp[model.K + model.D:] = 0.0
    sll = model.sll(zp)
    ind_point = zp[: model.K + model.D]
    independent = dict(case, correlated=[], parameters=case["parameters"][: len(ind_point)])
    ind = float(named_sll(independent, model.X, model.chosen, model.z, ind_point))
    diff = sll - ind
    print("\n== fact check: case 1 with the Cholesky off-diagonals at 0 ==")
    print(f"  correlated-model SLL {sll!r}\n  independent SLL      {ind!r}\n"
          f"  difference {diff:.3e}")
    assert abs(diff) < 1e-12, diff
    return {"case": "correlated", "point": flist(zp), "independent_point": flist(ind_point),
            "sll": fnum(sll), "independent_sll": fnum(ind), "difference": fnum(diff)}


def fact_fixed_scale(case, model):
    """Case 3 against the preference-space model b = alpha * w (the loop, in
    preference space)."""
    point = np.asarray(case["point"], float)
    assert model.rk == [3] and case["parameters"][-1] == "time_spread"
    alpha = point[PRICE]
    pref = alpha * point
    pref[PRICE] = -alpha
    sll = model.sll(point)
    preference = dict(case, space="preference")
    other = float(named_sll(preference, model.X, model.chosen, model.z, pref))
    diff = sll - other
    print("\n== fact check: fixed price scale equals a preference-space model ==")
    print(f"  willingness-space SLL {sll!r}\n  preference-space SLL  {other!r}\n"
          f"  difference {diff:.3e}")
    assert abs(diff) < 1e-12, diff
    return {"case": "willingness_fixed_scale", "point": flist(point),
            "preference_point": flist(pref), "sll": fnum(sll),
            "preference_sll": fnum(other), "difference": fnum(diff)}


def main():
    t0 = _time.perf_counter()
    cases = []
    p1 = [-0.45, 0.35, -2.1, -0.75, 0.28, 0.9, 0.45, 0.6, -0.25, 0.1, 0.3]
    corr, corr_model = make_case(
        "correlated",
        "200 travellers x 4 choice tasks; preference space; asc_rail normal, cost "
        "negative-lognormal, time normal, correlated in the list order asc_rail, time, cost",
        6, 200, 4, 50,
        {"asc_rail": "normal", "cost": "negative-lognormal", "time": "normal"},
        ["asc_rail", "time", "cost"], False, tastes_correlated, TRUTH_1, p1)
    cases.append(corr)
    wtp, wtp_model = make_case(
        "willingness",
        "200 travellers x 4 choice tasks; willingness-to-pay space with price cost; "
        "cost (the price scale) lognormal, time normal, correlated in the list order cost, "
        "time; asc_rail normal and independent",
        16, 200, 4, 50,
        {"asc_rail": "normal", "cost": "lognormal", "time": "normal"},
        ["cost", "time"], True, tastes_willingness, TRUTH_2,
        [-3.8, 2.7, -2.0, -6.5, 2.3, 2.2, 0.45, 3.5, 1.4])
    cases.append(wtp)
    fixed, fixed_model = make_case(
        "willingness_fixed_scale",
        "60 travellers x 3 choice tasks; willingness-to-pay space with price cost; the "
        "price scale fixed (the parameter cost is alpha itself), time normal, no correlation; "
        "value and gradient at one point only",
        7, 60, 3, 20, {"time": "normal"}, [], True, tastes_fixed_scale, TRUTH_3,
        [-4.2, 2.8, 0.11, -6.5, 2.3, 3.5], do_estimate=False)
    cases.append(fixed)

    facts = {
        "zero_correlation": fact_zero_correlation(corr, corr_model),
        "fixed_scale_is_preference_space": fact_fixed_scale(fixed, fixed_model),
        "loop_by_name": [fact_by_name(c, m) for c, m in
                         ((corr, corr_model), (wtp, wtp_model), (fixed, fixed_model))],
    }
    out = {
        "description": "Mixed logit with correlated tastes and in willingness-to-pay space "
                       "(simulated maximum likelihood) reference numbers on invented "
                       "coach/rail/car data; written by tests/reference/tastes_reference.py "
                       "(independent numpy/scipy code)",
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
