#!/usr/bin/env python3
"""Panel mixed logit reference numbers (simulated maximum likelihood) for the Rust tests.

Run from the repository root (/work/main):

    python3 tests/reference/mixed_reference.py

Needs only numpy and scipy.  Writes tests/fixtures/mixed_reference.json and
prints every check figure.  The output is deterministic: the data, the draws
and every number come from fixed seeds, and BLAS is pinned to one thread
before numpy is imported, so running the script again writes the same bytes.

What it is
----------
An independent numpy/scipy implementation, written for this repository, of
the panel mixed logit: simulated log-likelihood (SLL), its analytic
gradient, individual-level conditional means of the random coefficients,
estimation, classical and robust (sandwich) standard errors.  The data are
invented: a regional express coach competing with rail and the private car
for a trip between two made-up towns, alternatives ["car", "coach", "rail"],
car the base (no constant).  Tastes vary from traveller to traveller and
choices are simulated with Gumbel errors directly (numpy's generator), not
through the likelihood code below.

Model
-----
Coefficients (in parameter order) asc_coach, asc_rail, cost, time, comfort;
then one spread per random coefficient, in the same order:
asc_rail_spread, cost_spread, time_spread.

    V_car   =                       cost*car_cost   + time*car_time
    V_coach = asc_coach           + cost*coach_cost + time*coach_time + comfort*coach_comfort
    V_rail  = asc_rail            + cost*rail_cost  + time*rail_time  + comfort*rail_comfort

Random coefficient d (d-th random one in parameter order) of decision maker
n at draw r uses the stored uniform u = u[n][r][d] and z = Phi^{-1}(u)
(scipy.stats.norm.ppf), with location m and spread s:

    normal              beta = m + s*z
    lognormal           beta = exp(m + s*z)
    negative-lognormal  beta = -exp(m + s*z)
    uniform             beta = m + s*(2u - 1)
    triangular          beta = m + s*tri(u),
                        tri(u) = sqrt(2u) - 1 if u < 0.5 else 1 - sqrt(2(1-u))

Logit kernel P[n,t,j,r] = exp(V_j) / sum_l exp(V_l) (log-sum-exp), panel
simulated likelihood L_n = (1/R) sum_r prod_t P[n,t,chosen,r], computed as
log L_n = a + log(mean_r exp(l_nr - a)) with l_nr = sum_t log P_chosen and
a = max_r l_nr; SLL = sum_n log L_n (all weights 1).

Gradient: d log L_n / d theta = sum_r omega_nr sum_t sum_k
(x[n,t,chosen,k] - sum_j P[n,t,j,r] x[n,t,j,k]) d beta_k[n,r] / d theta,
omega_nr = exp(l_nr - a) / sum_r' exp(l_nr' - a).  d beta / d m is 1
(normal, uniform, triangular) or beta (lognormal, negative-lognormal);
d beta / d s is z, beta*z, beta*z, 2u - 1, tri(u) respectively.
Conditional mean of random coefficient d for n: sum_r omega_nr beta[n,r].

Cases in the fixture ("cases", in this order)
----------------------------------------------
1. "panel": 150 travellers x 4 choice tasks, 60 draws per traveller;
   asc_rail normal, cost negative-lognormal (so the parameter `cost` is the
   mean of log(-beta_cost)), time normal; asc_coach, comfort fixed.
2. "cross_section": 300 situations, each its own decision maker with its
   own 60 draws, same specification.
3. "transforms": 40 travellers x 3 tasks, 20 draws; asc_rail triangular,
   cost lognormal, time uniform.  The cost columns of this case hold MINUS
   the fare (a negative number), so the lognormal (positive) cost
   coefficient gives a disutility of paying.  Log-likelihood, gradient and
   conditional means at one fixed point only, no estimation.

Checks (printed, and asserted)
------------------------------
* analytic gradient vs five-point central differences of the SLL at the
  stored point (step 1e-4 * max(1, |theta_i|)); max relative difference
  |analytic - numeric| / max(|analytic|, 1) must be below 1e-6;
* estimation (cases 1 and 2): start locations from a fixed-coefficient
  logit fitted here (cost start = log(-logit cost coefficient)), spreads
  started at 0.5 / 0.3 / 0.5; scipy BFGS, then Newton steps with the
  finite-difference Hessian until max |gradient| < 1e-8 (asserted); the
  final spreads must be positive and the Hessian negative definite;
* classical standard errors sqrt(diag(inv(-H))), H the central-difference
  Hessian of the analytic gradient, step h_i = 1e-5 * max(1, |theta_i|),
  symmetrised (H + H') / 2; robust ones sqrt(diag(H^-1 B H^-1)), B the sum
  over decision makers of the outer product of their score;
* "zero_spread_check": the panel case with all spreads fixed at 0 has an
  SLL equal to the fixed-coefficient logit log-likelihood with coefficients
  (asc_coach, asc_rail, -exp(cost), time, comfort) at the same locations
  (the logit is computed by separate code); |difference| < 1e-12 asserted.

Fixture layout (P = 8 parameters, D = 3 random coefficients, S situations,
N decision makers, R draws; decision maker i is the i-th distinct value of
"person", ids 1..N in order; d indexes asc_rail, cost, time)
---------------------------------------------------------------------------
top level: "description", "numpy", "scipy", "cases": [3 case objects],
  "zero_spread_check": {"case": "panel", "point": [P] (spreads 0),
     "logit_coefficients": [5] (asc_coach, asc_rail, -exp(cost), time, comfort),
     "sll", "logit_ll", "difference"}
every case: "name", "description", "alternatives": ["car","coach","rail"],
  "base": "car", "parameters": [P names], "random": {coefficient: distribution},
  "constants": {"asc_coach": "coach", "asc_rail": "rail"},
  "terms": {"cost": {alternative: column}, "time": {...}, "comfort": {"coach":
     "coach_comfort", "rail": "rail_comfort"}}  (car has no comfort term),
  "decision_makers": N, "tasks_per_decision_maker", "draws": R, "situations": S,
  "truth": [P] (values used to simulate the data; not an estimate),
  "columns": {column: [S]}, "person": [S] ints, "chosen": [S] alternative names,
  "uniforms": [N][R][D], "point": [P], "ll_at_point", "grad_at_point": [P],
  "grad_fd_max_rel_diff", "conditional_means_at_point": [N][D]
panel and cross_section also: "logit_start_coefficients": [5], "start": [P],
  "estimates": [P], "ll_at_estimates", "grad_max_norm_at_estimates",
  "std_errors": [P], "robust_std_errors": [P],
  "conditional_means_at_estimates": [N][D],
  "multistart_optima_approx": [8 x {"start_spreads": [3], "spreads": [3], "ll"}]
Floats are written with Python's repr (shortest string that reads back to
the same double).
"""

import os

# one BLAS thread: identical bytes on every run
for _v in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_v] = "1"

import itertools  # noqa: E402
import json  # noqa: E402
import math  # noqa: E402
import sys  # noqa: E402
import time as _time  # noqa: E402

import numpy as np  # noqa: E402
import scipy  # noqa: E402
from scipy.optimize import minimize  # noqa: E402
from scipy.special import logsumexp  # noqa: E402
from scipy.stats import norm  # noqa: E402

FIX_FILE = os.path.join("tests", "fixtures", "mixed_reference.json")

ALTS = ["car", "coach", "rail"]
COEFS = ["asc_coach", "asc_rail", "cost", "time", "comfort"]
DISTS = ("normal", "lognormal", "negative-lognormal", "uniform", "triangular")

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


def tri(u):
    return np.where(u < 0.5, np.sqrt(2.0 * u) - 1.0, 1.0 - np.sqrt(2.0 * (1.0 - u)))


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
# fixed-coefficient logit (separate code; starting values and the spread-0 check)
# --------------------------------------------------------------------------

def logit_ll(X, chosen, beta):
    """X (S, J, K), chosen (S,), beta (K,)."""
    total = 0.0
    for s in range(X.shape[0]):
        v = X[s] @ beta
        total += v[chosen[s]] - logsumexp(v)
    return total


def logit_ll_grad(X, chosen, beta):
    V = X @ beta
    lse = logsumexp(V, axis=1)
    P = np.exp(V - lse[:, None])
    idx = np.arange(X.shape[0])
    ll = float(np.sum(V[idx, chosen] - lse))
    g = (X[idx, chosen, :] - np.einsum("sj,sjk->sk", P, X)).sum(axis=0)
    return ll, g


# --------------------------------------------------------------------------
# panel mixed logit
# --------------------------------------------------------------------------

class Mixed:
    """X (N, T, J, K), chosen (N, T), uniforms (N, R, D).

    random: list of (coefficient index k, distribution) in parameter order.
    Parameter vector: K locations/fixed values, then D spreads.
    """

    def __init__(self, X, chosen, uniforms, random):
        self.X = np.asarray(X, float)
        self.chosen = np.asarray(chosen, int)
        self.u = np.asarray(uniforms, float)
        self.N, self.T, self.J, self.K = self.X.shape
        self.R = self.u.shape[1]
        self.rk = [k for k, _ in random]
        self.dist = [d for _, d in random]
        self.D = len(random)
        assert self.u.shape == (self.N, self.R, self.D)
        assert np.all(self.u > 0) and np.all(self.u < 1)
        assert all(d in DISTS for d in self.dist)
        self.z = norm.ppf(self.u)
        self.tri = tri(self.u)
        n_idx = np.arange(self.N)[:, None]
        t_idx = np.arange(self.T)[None, :]
        self.xc = self.X[n_idx, t_idx, self.chosen, :]          # (N, T, K)
        self.xc_sum = self.xc.sum(axis=1)                       # (N, K)

    def coefficients(self, theta):
        """beta (N, R, K), d beta / d location (N, R, K), d beta_rk / d spread (N, R, D)."""
        theta = np.asarray(theta, float)
        loc = theta[: self.K]
        spread = theta[self.K:]
        beta = np.broadcast_to(loc, (self.N, self.R, self.K)).copy()
        dloc = np.ones((self.N, self.R, self.K))
        dspr = np.zeros((self.N, self.R, self.D))
        for d, (k, dist) in enumerate(zip(self.rk, self.dist)):
            m, s = loc[k], spread[d]
            u, z, tr = self.u[:, :, d], self.z[:, :, d], self.tri[:, :, d]
            if dist == "normal":
                b, dm, ds = m + s * z, 1.0, z
            elif dist == "lognormal":
                b = np.exp(m + s * z)
                dm, ds = b, b * z
            elif dist == "negative-lognormal":
                b = -np.exp(m + s * z)
                dm, ds = b, b * z
            elif dist == "uniform":
                b, dm, ds = m + s * (2 * u - 1), 1.0, 2 * u - 1
            else:  # triangular
                b, dm, ds = m + s * tr, 1.0, tr
            beta[:, :, k] = b
            dloc[:, :, k] = dm
            dspr[:, :, d] = ds
        return beta, dloc, dspr

    def person(self, theta):
        """log L_n (N,), score d log L_n / d theta (N, P), omega (N, R), beta (N, R, K)."""
        beta, dloc, dspr = self.coefficients(theta)
        V = np.einsum("ntjk,nrk->nrtj", self.X, beta)              # (N, R, T, J)
        logP = V - logsumexp(V, axis=3, keepdims=True)
        P = np.exp(logP)
        ch = np.broadcast_to(self.chosen[:, None, :, None], (self.N, self.R, self.T, 1))
        lnr = np.take_along_axis(logP, ch, axis=3)[..., 0].sum(axis=2)   # (N, R)
        a = lnr.max(axis=1, keepdims=True)
        e = np.exp(lnr - a)
        logL = a[:, 0] + np.log(e.mean(axis=1))
        omega = e / e.sum(axis=1, keepdims=True)
        g = self.xc_sum[:, None, :] - np.einsum("nrtj,ntjk->nrk", P, self.X)  # (N, R, K)
        s_loc = np.einsum("nr,nrk->nk", omega, g * dloc)
        s_spr = np.einsum("nr,nrd->nd", omega, g[:, :, self.rk] * dspr)
        return logL, np.hstack([s_loc, s_spr]), omega, beta

    def sll(self, theta):
        return float(np.sum(self.person(theta)[0]))

    def grad(self, theta):
        return self.person(theta)[1].sum(axis=0)

    def conditional_means(self, theta):
        _, _, omega, beta = self.person(theta)
        return np.einsum("nr,nrd->nd", omega, beta[:, :, self.rk])


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


def simulate(rng, n_dm, T, tastes, negate_cost=False):
    """Attributes, one taste vector per decision maker (tastes(rng, n) -> (n, 5)),
    choices by utility maximisation with Gumbel errors.  negate_cost: the cost
    columns hold minus the fare."""
    S = n_dm * T
    cols = make_attributes(rng, S)
    if negate_cost:
        for a in ALTS:
            cols[f"{a}_cost"] = -cols[f"{a}_cost"]
    X = design(cols, S)
    B = np.repeat(tastes(rng, n_dm), T, axis=0)                   # (S, 5)
    U = np.einsum("sjk,sk->sj", X, B) + rng.gumbel(size=(S, 3))
    chosen = U.argmax(axis=1)
    person = np.repeat(np.arange(1, n_dm + 1), T)
    return cols, X, chosen, person


def tastes_main(rng, n):
    # asc_coach fixed -0.5, asc_rail ~ N(0.4, 1.0), cost = -exp(N(log 0.12, 0.5)),
    # time ~ N(-0.8, 0.7) per hour, comfort fixed 0.3 per point
    return np.column_stack([
        np.full(n, -0.5),
        rng.normal(0.4, 1.0, n),
        -rng.lognormal(math.log(0.12), 0.5, n),
        rng.normal(-0.8, 0.7, n),
        np.full(n, 0.3),
    ])


def tastes_transforms(rng, n):
    # asc_rail = 0.3 + 1.2 * triangular(-1, 0, 1), cost = exp(N(log 0.12, 0.4)) > 0
    # (applied to minus the fare), time = -0.8 + 0.6 * uniform(-1, 1)
    return np.column_stack([
        np.full(n, -0.5),
        0.3 + 1.2 * rng.triangular(-1.0, 0.0, 1.0, n),
        rng.lognormal(math.log(0.12), 0.4, n),
        -0.8 + 0.6 * rng.uniform(-1.0, 1.0, n),
        np.full(n, 0.3),
    ])


TRUTH_MAIN = {"asc_coach": -0.5, "asc_rail": 0.4, "cost": math.log(0.12), "time": -0.8,
              "comfort": 0.3, "asc_rail_spread": 1.0, "cost_spread": 0.5, "time_spread": 0.7}
TRUTH_TRANSFORMS = {"asc_coach": -0.5, "asc_rail": 0.3, "cost": math.log(0.12), "time": -0.8,
                    "comfort": 0.3, "asc_rail_spread": 1.2, "cost_spread": 0.4, "time_spread": 0.6}


# --------------------------------------------------------------------------
# one case
# --------------------------------------------------------------------------

def make_case(name, description, seed, n_dm, T, R, dists, tastes, truth, point,
              negate_cost=False, estimate=True):
    print(f"\n== case {name}: {n_dm} decision makers x {T} tasks, {R} draws ==")
    rng = np.random.default_rng(seed)
    cols, X, chosen, person = simulate(rng, n_dm, T, tastes, negate_cost)
    uniforms = rng.random((n_dm, R, 3))
    assert np.all(uniforms > 0)
    params = COEFS + ["asc_rail_spread", "cost_spread", "time_spread"]
    random = [(1, dists["asc_rail"]), (2, dists["cost"]), (3, dists["time"])]
    model = Mixed(X.reshape(n_dm, T, 3, 5), chosen.reshape(n_dm, T), uniforms, random)
    shares = np.bincount(chosen, minlength=3) / len(chosen)
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

    case = {
        "name": name,
        "description": description,
        "alternatives": ALTS,
        "base": "car",
        "parameters": params,
        "random": {"asc_rail": dists["asc_rail"], "cost": dists["cost"], "time": dists["time"]},
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
        "truth": [truth[p] for p in params],
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
    if not estimate:
        return case, model

    # starting values from a fixed-coefficient logit
    Xs = X
    lres = minimize(lambda b: -logit_ll_grad(Xs, chosen, b)[0], np.zeros(5),
                    jac=lambda b: -logit_ll_grad(Xs, chosen, b)[1], method="BFGS",
                    options={"gtol": 1e-10})
    blogit = lres.x
    print(f"  fixed-coefficient logit: LL {-lres.fun:.6f}, coefficients {np.round(blogit, 5).tolist()}, "
          f"max|g| {np.max(np.abs(logit_ll_grad(Xs, chosen, blogit)[1])):.2e}")
    assert blogit[2] < 0, "logit cost coefficient must be negative"
    start = np.concatenate([blogit, [0.5, 0.3, 0.5]])
    start[2] = math.log(-blogit[2])
    print(f"  start {np.round(start, 6).tolist()}  SLL {model.sll(start):.6f}")

    est, gmax = maximise(model.sll, model.grad, start, name)
    assert np.all(est[5:] > 0), f"non-positive spread at the optimum: {est[5:]}"
    ll_est = model.sll(est)

    # the SLL is not symmetric in the sign of a spread (finite draws), so there
    # are other local optima: restart from every sign pattern of the start spreads
    others = []
    for signs in itertools.product([1.0, -1.0], repeat=3):
        st = start.copy()
        st[5:] *= signs
        r = minimize(lambda t: -model.sll(t), st, jac=lambda t: -model.grad(t),
                     method="BFGS", options={"gtol": 1e-6, "maxiter": 5000})
        others.append({"start_spreads": flist(st[5:]), "spreads": flist(r.x[5:]),
                       "ll": fnum(-r.fun)})
        print(f"  multistart spreads from {st[5:].tolist()}: -> "
              f"{np.round(r.x[5:], 4).tolist()} SLL {-r.fun:.6f}")
    best_other = max(o["ll"] for o in others)
    print(f"  best multistart SLL {best_other:.6f} vs estimates {ll_est:.6f}")
    assert ll_est >= best_other - 1e-6, "the positive-spread optimum is not the highest one found"
    H = fd_hessian(model.grad, est)
    eig = np.linalg.eigvalsh(H)
    assert eig.max() < 0, eig
    Hinv = np.linalg.inv(H)
    se = np.sqrt(np.diag(-Hinv))
    H2 = fd_hessian(model.grad, est, rel=1e-6)
    se2 = np.sqrt(np.diag(np.linalg.inv(-H2)))
    se_step_rel = float(np.max(np.abs(se2 / se - 1)))
    scores = model.person(est)[1]
    Bmat = scores.T @ scores
    V_rob = Hinv @ Bmat @ Hinv
    rse = np.sqrt(np.diag(V_rob))
    print(f"  SLL at estimates {ll_est!r}, max|g| {gmax:.3e}, Hessian eigenvalues "
          f"[{eig.min():.3f}, {eig.max():.3f}]")
    print(f"  standard errors: step 1e-6 vs 1e-5 max rel change {se_step_rel:.2e}")
    print(f"  {'parameter':<18}{'truth':>10}{'estimate':>14}{'std err':>12}{'robust se':>12}")
    for p, tv, e, s, r in zip(params, case["truth"], est, se, rse):
        print(f"  {p:<18}{tv:>10.4f}{e:>14.6f}{s:>12.6f}{r:>12.6f}")
    case.update({
        "logit_start_coefficients": flist(blogit),
        "start": flist(start),
        "estimates": flist(est),
        "ll_at_estimates": fnum(ll_est),
        "grad_max_norm_at_estimates": gmax,
        "std_errors": flist(se),
        "robust_std_errors": flist(rse),
        "conditional_means_at_estimates": flist(model.conditional_means(est)),
        "multistart_optima_approx": others,
    })
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


def main():
    t0 = _time.perf_counter()
    main_dists = {"asc_rail": "normal", "cost": "negative-lognormal", "time": "normal"}
    cases = []
    panel, panel_model = make_case(
        "panel",
        "150 travellers x 4 choice tasks; asc_rail normal, cost negative-lognormal, time normal",
        20240611, 150, 4, 60, main_dists, tastes_main, TRUTH_MAIN,
        point=[-0.4, 0.3, -2.2, -0.7, 0.25, 0.8, 0.4, 0.5])
    cases.append(panel)
    cross, _ = make_case(
        "cross_section",
        "300 situations, each its own decision maker with its own draws; same specification",
        20240631, 300, 1, 60, main_dists, tastes_main, TRUTH_MAIN,
        point=[-0.4, 0.3, -2.2, -0.7, 0.25, 0.8, 0.4, 0.5])
    cases.append(cross)
    trans, _ = make_case(
        "transforms",
        "40 travellers x 3 tasks; asc_rail triangular, cost lognormal, time uniform; "
        "the cost columns hold minus the fare (negative values), so the positive lognormal "
        "cost coefficient gives a disutility; value and gradient at one point only",
        20240613, 40, 3, 20,
        {"asc_rail": "triangular", "cost": "lognormal", "time": "uniform"},
        tastes_transforms, TRUTH_TRANSFORMS,
        point=[-0.45, 0.35, -2.0, -0.75, 0.28, 0.9, 0.35, 0.5],
        negate_cost=True, estimate=False)
    cases.append(trans)

    # zero spreads: SLL of the panel case equals the fixed-coefficient logit
    zp = np.array([-0.4, 0.3, -2.2, -0.7, 0.25, 0.0, 0.0, 0.0])
    sll0 = panel_model.sll(zp)
    beta0 = np.array([zp[0], zp[1], -math.exp(zp[2]), zp[3], zp[4]])
    Xflat = panel_model.X.reshape(-1, 3, 5)
    ll0 = float(logit_ll(Xflat, panel_model.chosen.reshape(-1), beta0))
    diff = sll0 - ll0
    print("\n== zero-spread check (panel case, spreads 0) ==")
    print(f"  mixed SLL {sll0!r}\n  logit LL  {float(ll0)!r}\n  difference {diff:.3e}")
    assert abs(diff) < 1e-12, diff

    out = {
        "description": "Panel mixed logit (simulated maximum likelihood) reference numbers "
                       "on invented coach/rail/car data; written by "
                       "tests/reference/mixed_reference.py (independent numpy/scipy code)",
        "numpy": np.__version__,
        "scipy": scipy.__version__,
        "cases": cases,
        "zero_spread_check": {
            "case": "panel",
            "point": flist(zp),
            "logit_coefficients": flist(beta0),
            "sll": fnum(sll0),
            "logit_ll": fnum(ll0),
            "difference": fnum(diff),
        },
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
