#!/usr/bin/env python3
"""Destination choice over a large choice set, with all alternatives and with
sampled choice sets: an invented data set and reference numbers for the Rust
tests.

Run from the repository root:

    python3 tests/reference/destinations_reference.py

Needs only numpy and scipy.  Writes the data under
tests/fixtures/destinations/ (zones.csv, pairs.csv, trips.csv,
sets_uniform.csv, sets_weighted.csv) and the reference numbers to
tests/fixtures/destinations_reference.json, and prints a short summary.  The
output is deterministic: every random number comes from numpy's
default_rng with a fixed seed (one stream per step), BLAS is pinned to one
thread before numpy is imported, and the estimation reads the CSV files
back, so it sees exactly the values a reader of those files sees.  Running
the script again writes the same bytes.

What it is
----------
An independent numpy/scipy implementation, written for this repository, of
the multinomial logit of destination choice, estimated (a) over every
available destination and (b) over sampled choice sets, with and without
the correction for the sampling protocol.  The data are invented: 40 zones
of a made-up town (ids a01..a40, three invented districts), a table of
travel times between them, and 600 trips from an origin zone to a chosen
destination zone, each a shopping trip or not.

Data
----
zones.csv   zone, district, jobs (integer >= 1), log_jobs = ln(1 + jobs)
            rounded to 6 decimals, available (1; two zones 0).
pairs.csv   origin, zone, time (minutes, 1 decimal), intrazonal (1 when
            origin = zone).  80 of the 1600 ordered pairs (5 %) are left
            out at random, never the diagonal: a missing pair means that
            destination cannot be reached from that origin.
trips.csv   trip_id (1..600), origin, shop (0/1), dest (the chosen zone).
The available destinations of trip n, C_n, are the zones with available = 1
whose pair (origin_n, zone) is present.  Zone coordinates (kilometres on a
30 x 30 square) and the time formula are only how the times were invented;
they are not in the files.

Model
-----
    V_nj = b_time * time_oj + b_time_shop * time_oj * shop_n
         + b_jobs * log_jobs_j + b_intra * intrazonal_oj      (o = origin_n)

no constants; parameter order [time, time_shop, jobs, intrazonal];
truth [-0.08, -0.04, 0.9, 0.5].  The attributes as a spec names them:
time = pairs column time, time_shop = pairs column time times trips column
shop, jobs = zones column log_jobs, intrazonal = pairs column intrazonal.
The chosen destinations are simulated with Gumbel errors over C_n
(argmax of V_nj + e_nj), not through the likelihood code below.

On a choice set D_n (C_n itself, or a sample of it) with offsets a_nj:

    P_n(j) = exp(V_nj + a_nj) / sum_{l in D_n} exp(V_nl + a_nl)
    LL     = sum_n [V_ni + a_ni - logsumexp_{l in D_n}(V_nl + a_nl)],  i chosen
    dLL/db = sum_n (x_ni - sum_l P_n(l) x_nl)
    H      = -sum_n X_n' (diag p_n - p_n p_n') X_n

(X_n the rows of D_n, p_n their probabilities).  Classical standard errors
sqrt(diag((-H)^-1)) at the estimates.

Choice sets (sets_*.csv: trip_id, zone, count; one row per distinct member,
the chosen zone included; rows of a trip in zone order)
--------------------------------------------------------------------------
"full": D_n = C_n, a_nj = 0.

"uniform" (sets_uniform.csv): the chosen zone plus M = 8 zones drawn
uniformly without replacement from C_n minus the chosen one; count 1.
The probability of drawing the set D given that i in D was chosen is
1 / binom(|C_n| - 1, M) whichever member i is, so by McFadden's result
(below) the logit on D_n needs no correction: a_nj = 0.

"weighted" (sets_weighted.csv): R = 8 draws with replacement from C_n
(the chosen zone among the candidates) with probabilities
q_nj = jobs_j / S_n, S_n = sum_{l in C_n} jobs_l.  With m_j the number of
times j was drawn, the count is k_j = m_j + 1[j = i] (i the chosen zone) and
the set is D_n = {j : k_j >= 1}; count = k_j.

Derivation of the correction.  Given the chosen i, the draws m are
multinomial(R, q), so the probability of the counts k is

    pi(k | i) = R! / prod_j m_j!  prod_j q_j^m_j,   m_j = k_j - 1[j = i]
              = [R! / prod_j k_j!  prod_j q_j^k_j] * k_i / q_i

since k_i! = k_i (k_i - 1)! and q_i^(k_i - 1) = q_i^k_i / q_i.  The bracket
depends on the counts only, not on which member was chosen, so for every
i in D_n, pi(k | i) = K(k) * k_i / q_i (and 0 for i outside D_n).  The
probability that i was chosen given the drawn counts is then

    P(i | k) = P(i) pi(k | i) / sum_{j in D_n} P(j) pi(k | j)
             = exp(V_ni + ln(k_i / q_i)) / sum_{j in D_n} exp(V_nj + ln(k_j / q_j))

a logit on D_n with offsets a_nj = ln(k_j / q_nj) = ln k_j - ln jobs_j +
ln S_n.  S_n is the same for every member of D_n, so a_nj = ln k_j -
ln jobs_j gives the same probabilities, log-likelihood, gradient and
estimates (the fixture uses a_nj = ln(k_j / q_nj) as written; the script
asserts that the other form gives the same log-likelihood and gradient
within 1e-9 at beta0 and at the estimates).  The script
checks the factorisation numerically: for every trip and every member i of
D_n, ln pi(k | i) - ln(k_i / q_i), with ln pi computed directly from the
multinomial formula above, is the same number (|spread| < 1e-9 asserted).
The uniform case is the special case where pi(D | i) is constant.

Sources (recalled from memory, not checked against the texts):
McFadden, D. (1978), "Modelling the choice of residential location", in
Karlqvist et al. (eds.), Spatial Interaction Theory and Planning Models,
North-Holland (estimation on a sample of alternatives; the positive
conditioning property; uniform sampling needs no correction).  Ben-Akiva,
M. and Lerman, S. R. (1985), Discrete Choice Analysis, MIT Press, ch. 9
(large choice sets; importance sampling of alternatives, with replacement,
and the ln(k_j / q_j) correction).

Reference results ("cases": full, uniform, weighted)
-----------------------------------------------------
* "estimates": maximum likelihood (scipy trust-exact with the analytic
  gradient and Hessian, then Newton steps), Euclidean norm of the gradient
  below 1e-9 (asserted); "std_errors" classical from the analytic Hessian;
  "log_likelihood" at the estimates; "gradient_norm" there.
* "at_beta0": log-likelihood and gradient at beta0 = [-0.05, -0.02, 0.5, 0.2].
* full only: "predicted_shares" (mean over the 600 trips of P_n(zone) at the
  estimates, zone order a01..a40, 0 for zones never available),
  "observed_shares" (share of trips choosing each zone) and
  "log_likelihood_at_zero" = -sum_n ln |C_n|.
Checks (asserted): the analytic gradient against five-point central
differences of the log-likelihood at beta0 and at the estimates (step
1e-5 * max(1, |b|), max |diff| / max(|g|, 1) < 1e-6); the analytic Hessian
against five-point central differences of the analytic gradient (same
measure); the vectorised log-likelihood against
a plain per-trip loop over the CSV rows (|diff| < 1e-9); the Hessian
negative definite; the multinomial factorisation above.

Floats are written with Python's repr (shortest string that reads back to
the same double).
"""

import os

# one BLAS thread: identical bytes on every run
for _v in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_v] = "1"

import csv  # noqa: E402
import json  # noqa: E402
import math  # noqa: E402
import sys  # noqa: E402

import numpy as np  # noqa: E402
import scipy  # noqa: E402
from scipy.optimize import minimize  # noqa: E402

DATA_DIR = os.path.join("tests", "fixtures", "destinations")
FIX_FILE = os.path.join("tests", "fixtures", "destinations_reference.json")

PARAMS = ["time", "time_shop", "jobs", "intrazonal"]
TRUTH = np.array([-0.08, -0.04, 0.9, 0.5])
BETA0 = np.array([-0.05, -0.02, 0.5, 0.2])
SEED = 20261205
N_ZONES = 40
N_TRIPS = 600
N_MISSING = 80          # 5 % of the 40 x 40 ordered pairs
UNAVAILABLE = 2
DISTRICTS = ["Larkfield", "Quayside", "Brackenmoor"]
M_UNIFORM = 8
R_WEIGHTED = 8
FD_STEP_REL = 1e-5
GRAD_NORM_TOL = 1e-9


def rng_for(step):
    """One independent stream per step of the data generation."""
    return np.random.default_rng([SEED, step])


def fnum(x):
    x = float(x)
    assert math.isfinite(x)
    return x


def flist(a):
    return [fnum(v) for v in np.asarray(a, float)]


# --------------------------------------------------------------------------
# the invented data
# --------------------------------------------------------------------------

def write_csv(name, header, rows):
    path = os.path.join(DATA_DIR, name)
    with open(path, "w", newline="") as f:
        w = csv.writer(f, lineterminator="\n")
        w.writerow(header)
        w.writerows(rows)
    return path


def make_zones():
    rng = rng_for(1)
    ids = [f"a{k:02d}" for k in range(1, N_ZONES + 1)]
    xy = rng.uniform(0.0, 30.0, size=(N_ZONES, 2))
    # districts by position: west, centre-east south, centre-east north
    district = [DISTRICTS[0] if x < 11 else (DISTRICTS[1] if y < 15 else DISTRICTS[2])
                for x, y in xy]
    jobs = np.maximum(1, np.rint(np.exp(rng.normal(math.log(600.0), 1.3, N_ZONES)))).astype(int)
    avail = np.ones(N_ZONES, dtype=int)
    avail[rng.choice(N_ZONES, size=UNAVAILABLE, replace=False)] = 0
    rows = [[z, d, int(j), f"{math.log1p(j):.6f}", int(a)]
            for z, d, j, a in zip(ids, district, jobs, avail)]
    write_csv("zones.csv", ["zone", "district", "jobs", "log_jobs", "available"], rows)
    return ids, xy


def make_pairs(ids, xy):
    rng = rng_for(2)
    n = len(ids)
    dist = np.sqrt(((xy[:, None, :] - xy[None, :, :]) ** 2).sum(axis=2))
    # 4 minutes to get going, about 1.8 minutes a km, with +-25 % congestion noise
    time = 4.0 + 1.8 * dist * rng.uniform(0.75, 1.25, size=(n, n))
    time[np.diag_indices(n)] = rng.uniform(2.0, 6.0, size=n)
    off = [(o, d) for o in range(n) for d in range(n) if o != d]
    missing = {off[k] for k in rng.choice(len(off), size=N_MISSING, replace=False)}
    rows = [[ids[o], ids[d], f"{time[o, d]:.1f}", int(o == d)]
            for o in range(n) for d in range(n) if (o, d) not in missing]
    write_csv("pairs.csv", ["origin", "zone", "time", "intrazonal"], rows)


def read_csv(name):
    with open(os.path.join(DATA_DIR, name), newline="") as f:
        return list(csv.DictReader(f))


class Land:
    """zones.csv and pairs.csv as read back: attribute arrays by zone index."""

    def __init__(self):
        zones = read_csv("zones.csv")
        self.ids = [r["zone"] for r in zones]
        self.index = {z: k for k, z in enumerate(self.ids)}
        self.jobs = np.array([float(r["jobs"]) for r in zones])
        self.log_jobs = np.array([float(r["log_jobs"]) for r in zones])
        self.available = np.array([int(r["available"]) == 1 for r in zones])
        n = len(self.ids)
        self.present = np.zeros((n, n), dtype=bool)
        self.time = np.zeros((n, n))
        self.intra = np.zeros((n, n))
        for r in read_csv("pairs.csv"):
            o, d = self.index[r["origin"]], self.index[r["zone"]]
            self.present[o, d] = True
            self.time[o, d] = float(r["time"])
            self.intra[o, d] = float(r["intrazonal"])

    def choice_set(self, origin):
        """C_n: zone indices, in zone order."""
        return np.flatnonzero(self.available & self.present[origin])

    def rows(self, origin, shop, zones):
        """Attribute rows [time, time_shop, jobs, intrazonal] of zones."""
        t = self.time[origin, zones]
        return np.column_stack([t, t * shop, self.log_jobs[zones], self.intra[origin, zones]])


def make_trips(land):
    rng = rng_for(3)
    origins = rng.integers(0, N_ZONES, size=N_TRIPS)
    shop = (rng.uniform(size=N_TRIPS) < 0.4).astype(int)
    rows = []
    for n in range(N_TRIPS):
        c = land.choice_set(origins[n])
        v = land.rows(origins[n], shop[n], c) @ TRUTH
        dest = c[int(np.argmax(v + rng.gumbel(size=len(c))))]
        rows.append([n + 1, land.ids[origins[n]], int(shop[n]), land.ids[dest]])
    write_csv("trips.csv", ["trip_id", "origin", "shop", "dest"], rows)


def read_trips(land):
    t = read_csv("trips.csv")
    assert [int(r["trip_id"]) for r in t] == list(range(1, N_TRIPS + 1))
    return (np.array([land.index[r["origin"]] for r in t]),
            np.array([int(r["shop"]) for r in t]),
            np.array([land.index[r["dest"]] for r in t]))


def make_sets(land, trips):
    origin, _, dest = trips
    rng_u = rng_for(4)
    rng_w = rng_for(5)
    uni, wei = [], []
    for n in range(N_TRIPS):
        c = land.choice_set(origin[n])
        others = c[c != dest[n]]
        drawn = rng_u.choice(others, size=M_UNIFORM, replace=False)
        for j in sorted([dest[n], *drawn.tolist()]):
            uni.append([n + 1, land.ids[j], 1])
        q = land.jobs[c] / land.jobs[c].sum()
        k = np.bincount(rng_w.choice(len(c), size=R_WEIGHTED, replace=True, p=q),
                        minlength=len(c))
        k[np.flatnonzero(c == dest[n])[0]] += 1
        for pos in np.flatnonzero(k):
            wei.append([n + 1, land.ids[c[pos]], int(k[pos])])
    write_csv("sets_uniform.csv", ["trip_id", "zone", "count"], uni)
    write_csv("sets_weighted.csv", ["trip_id", "zone", "count"], wei)


def read_sets(land, name):
    sets = [[] for _ in range(N_TRIPS)]
    for r in read_csv(name):
        sets[int(r["trip_id"]) - 1].append((land.index[r["zone"]], int(r["count"])))
    return sets


# --------------------------------------------------------------------------
# the logit on choice sets (vectorised over all rows of all trips)
# --------------------------------------------------------------------------

class SetLogit:
    """Rows of every trip's choice set stacked; starts[n] the first row of
    trip n; chosen[n] the row of its chosen zone; offset a_nj per row."""

    def __init__(self, X, offset, starts, chosen):
        self.X = X
        self.a = offset
        self.starts = starts
        self.chosen = chosen
        self.sizes = np.diff(np.append(starts, len(X)))
        self.trip = np.repeat(np.arange(len(starts)), self.sizes)

    def probs(self, b):
        u = self.X @ b + self.a
        m = np.maximum.reduceat(u, self.starts)
        e = np.exp(u - m[self.trip])
        s = np.add.reduceat(e, self.starts)
        return u, m + np.log(s), e / s[self.trip]

    def ll(self, b):
        u, lse, _ = self.probs(b)
        return float(np.sum(u[self.chosen] - lse))

    def grad(self, b):
        _, _, p = self.probs(b)
        return self.X[self.chosen].sum(axis=0) - p @ self.X

    def hess(self, b):
        _, _, p = self.probs(b)
        xbar = np.add.reduceat(p[:, None] * self.X, self.starts)
        d = self.X - xbar[self.trip]
        return -(d * p[:, None]).T @ d


def build(land, trips, sets, weighted, per_jobs=False):
    """A SetLogit from per-trip member lists [(zone, count)] (None: the full C_n);
    weighted: offsets ln(k_j / q_nj), or ln k_j - ln jobs_j when per_jobs."""
    origin, shop, dest = trips
    Xs, offs, starts, chosen = [], [], [], []
    row = 0
    for n in range(N_TRIPS):
        c = land.choice_set(origin[n])
        if sets is None:
            zones, counts = c, np.ones(len(c))
        else:
            zones = np.array([z for z, _ in sets[n]])
            counts = np.array([k for _, k in sets[n]], dtype=float)
            assert np.all(np.isin(zones, c)) and len(set(zones.tolist())) == len(zones)
        pos = np.flatnonzero(zones == dest[n])
        assert len(pos) == 1, n
        if weighted:
            if per_jobs:
                offs.append(np.log(counts) - np.log(land.jobs[zones]))
            else:
                offs.append(np.log(counts / (land.jobs[zones] / land.jobs[c].sum())))
        else:
            assert np.all(counts == 1)
            offs.append(np.zeros(len(zones)))
        Xs.append(land.rows(origin[n], shop[n], zones))
        starts.append(row)
        chosen.append(row + pos[0])
        row += len(zones)
    return SetLogit(np.vstack(Xs), np.concatenate(offs), np.array(starts), np.array(chosen))


def loop_ll(land, trips, sets, weighted, b):
    """The same log-likelihood, one trip at a time in plain Python."""
    origin, shop, dest = trips
    total = 0.0
    for n in range(N_TRIPS):
        o = origin[n]
        c = [j for j in range(N_ZONES) if land.available[j] and land.present[o, j]]
        members = [(j, 1) for j in c] if sets is None else sets[n]
        s_jobs = sum(land.jobs[j] for j in c)
        util = {}
        for j, k in members:
            v = (b[0] * land.time[o, j] + b[1] * land.time[o, j] * shop[n]
                 + b[2] * land.log_jobs[j] + b[3] * land.intra[o, j])
            if weighted:
                v += math.log(k / (land.jobs[j] / s_jobs))
            util[j] = v
        top = max(util.values())
        total += util[dest[n]] - top - math.log(sum(math.exp(v - top) for v in util.values()))
    return total


def check_factorisation(land, trips, sets):
    """ln pi(k | i) - ln(k_i / q_i) is the same for every member i of D_n."""
    origin, _, _ = trips
    worst = 0.0
    for n in range(N_TRIPS):
        c = land.choice_set(origin[n])
        q = dict(zip(c.tolist(), land.jobs[c] / land.jobs[c].sum()))
        vals = []
        for i, ki in sets[n]:
            m = {j: k - (j == i) for j, k in sets[n]}
            assert sum(m.values()) == R_WEIGHTED
            lp = math.lgamma(R_WEIGHTED + 1) + sum(
                mj * math.log(q[j]) - math.lgamma(mj + 1) for j, mj in m.items())
            vals.append(lp - math.log(ki / q[i]))
        worst = max(worst, max(vals) - min(vals))
    assert worst < 1e-9, worst
    return worst


# --------------------------------------------------------------------------
# estimation and checks
# --------------------------------------------------------------------------

def fd_check(model, b):
    g = model.grad(b)
    H = model.hess(b)
    g_fd = np.zeros(4)
    H_fd = np.zeros((4, 4))
    for i in range(4):
        h = FD_STEP_REL * max(1.0, abs(b[i]))
        pts = []
        for m in (-2, -1, 1, 2):
            t = b.copy()
            t[i] += m * h
            pts.append(t)
        f = [model.ll(t) for t in pts]
        d = [model.grad(t) for t in pts]
        g_fd[i] = (f[0] - 8 * f[1] + 8 * f[2] - f[3]) / (12 * h)
        H_fd[:, i] = (d[0] - 8 * d[1] + 8 * d[2] - d[3]) / (12 * h)
    rg = float(np.max(np.abs(g - g_fd) / np.maximum(np.abs(g), 1.0)))
    rh = float(np.max(np.abs(H - H_fd) / np.maximum(np.abs(H), 1.0)))
    assert rg < 1e-6 and rh < 1e-6, (rg, rh)
    return rg, rh


def estimate(model):
    res = minimize(lambda b: -model.ll(b), np.zeros(4), jac=lambda b: -model.grad(b),
                   hess=lambda b: -model.hess(b), method="trust-exact",
                   options={"gtol": 1e-11, "maxiter": 500})
    b = res.x
    for _ in range(20):     # Newton steps to finish
        g = model.grad(b)
        if np.linalg.norm(g) < 1e-11:
            break
        b = b - np.linalg.solve(model.hess(b), g)
    gnorm = float(np.linalg.norm(model.grad(b)))
    assert gnorm < GRAD_NORM_TOL, gnorm
    return b, gnorm


def run_case(name, description, land, trips, sets, weighted):
    model = build(land, trips, sets, weighted)
    ll0 = model.ll(BETA0)
    assert abs(ll0 - loop_ll(land, trips, sets, weighted, BETA0)) < 1e-9
    fd0 = fd_check(model, BETA0)
    est, gnorm = estimate(model)
    fd1 = fd_check(model, est)
    H = model.hess(est)
    assert np.linalg.eigvalsh(H).max() < 0
    cov = np.linalg.inv(-H)
    cov = 0.5 * (cov + cov.T)
    se = np.sqrt(np.diag(cov))
    ll = model.ll(est)
    assert abs(ll - loop_ll(land, trips, sets, weighted, est)) < 1e-9
    if weighted:
        # offsets ln k_j - ln jobs_j (ln S_n left out): the same likelihood
        alt = build(land, trips, sets, weighted, per_jobs=True)
        for b in (BETA0, est):
            assert abs(alt.ll(b) - model.ll(b)) < 1e-9
            assert np.max(np.abs(alt.grad(b) - model.grad(b))) < 1e-9
    case = {
        "name": name,
        "description": description,
        "rows": int(len(model.X)),
        "mean_set_size": fnum(len(model.X) / N_TRIPS),
        "estimates": flist(est),
        "std_errors": flist(se),
        "log_likelihood": fnum(ll),
        "gradient_norm": gnorm,
        "covariance": [flist(r) for r in cov],
        "at_beta0": {"log_likelihood": fnum(ll0), "gradient": flist(model.grad(BETA0))},
        "gradient_fd_max_rel_diff": {"at_beta0": fd0[0], "at_estimates": fd1[0]},
        "hessian_fd_max_rel_diff": {"at_beta0": fd0[1], "at_estimates": fd1[1]},
    }
    if sets is None:
        _, _, p = model.probs(est)
        zone = np.concatenate([land.choice_set(o) for o in trips[0]])
        pred = np.bincount(zone, weights=p, minlength=N_ZONES) / N_TRIPS
        obs = np.bincount(trips[2], minlength=N_ZONES) / N_TRIPS
        ll_zero = -float(np.sum(np.log(model.sizes)))
        assert abs(model.ll(np.zeros(4)) - ll_zero) < 1e-9
        assert abs(pred.sum() - 1.0) < 1e-12
        case.update({"zones": land.ids, "predicted_shares": flist(pred),
                     "observed_shares": flist(obs), "log_likelihood_at_zero": ll_zero})
    return case


def to_json(obj, indent=0):
    """One key per line; lists of numbers on one line."""
    pad = " " * indent
    inner = " " * (indent + 1)
    if isinstance(obj, dict):
        items = [f"{inner}{json.dumps(k)}: {to_json(v, indent + 1)}" for k, v in obj.items()]
        return "{\n" + ",\n".join(items) + "\n" + pad + "}"
    if isinstance(obj, list) and obj and isinstance(obj[0], (list, dict)):
        rows = [inner + to_json(v, indent + 1) for v in obj]
        return "[\n" + ",\n".join(rows) + "\n" + pad + "]"
    return json.dumps(obj, separators=(",", ":"), allow_nan=False)


def main():
    os.makedirs(DATA_DIR, exist_ok=True)
    ids, xy = make_zones()
    make_pairs(ids, xy)
    land = Land()
    make_trips(land)
    trips = read_trips(land)
    make_sets(land, trips)
    uniform = read_sets(land, "sets_uniform.csv")
    weighted = read_sets(land, "sets_weighted.csv")
    spread = check_factorisation(land, trips, weighted)
    sizes = [len(land.choice_set(o)) for o in trips[0]]
    cases = [
        run_case("full", "every available destination (zone available and pair present)",
                 land, trips, None, False),
        run_case("uniform", "sets_uniform.csv: the chosen zone plus 8 drawn uniformly without "
                 "replacement; no correction", land, trips, uniform, False),
        run_case("weighted", "sets_weighted.csv: 8 draws with replacement, probability "
                 "proportional to jobs, plus the chosen zone; offset ln(count / q)",
                 land, trips, weighted, True),
    ]
    out = {
        "source": "tests/reference/destinations_reference.py: independent numpy/scipy code "
                  "on invented data (tests/fixtures/destinations/)",
        "numpy": np.__version__,
        "scipy": scipy.__version__,
        "parameters": PARAMS,
        "attributes": {"time": "pairs.time", "time_shop": "pairs.time * trips.shop",
                       "jobs": "zones.log_jobs", "intrazonal": "pairs.intrazonal"},
        "truth": flist(TRUTH),
        "beta0": flist(BETA0),
        "trips": N_TRIPS,
        "available_per_trip": {"min": min(sizes), "max": max(sizes),
                               "mean": fnum(np.mean(sizes))},
        "weighted_draws": R_WEIGHTED,
        "uniform_draws": M_UNIFORM,
        "factorisation_max_spread": spread,
        "cases": cases,
    }
    text = to_json(out) + "\n"
    with open(FIX_FILE, "w") as f:
        f.write(text)
    print(f"{N_TRIPS} trips, {min(sizes)}..{max(sizes)} available destinations per trip; "
          f"shop trips {int(trips[1].sum())}; intrazonal choices "
          f"{int(np.sum(trips[0] == trips[2]))}")
    print(f"weighted sets: counts factorisation spread {spread:.2e}")
    print(f"{'case':<10}{'rows':>7}{'LL':>14}  " + "".join(f"{p:>22}" for p in PARAMS))
    for c in cases:
        cells = "".join(f"{e:>12.5f} ({s:.5f})" for e, s in zip(c["estimates"], c["std_errors"]))
        print(f"{c['name']:<10}{c['rows']:>7}{c['log_likelihood']:>14.4f}  {cells}")
    print(f"{'truth':<10}{'':>21}  " + "".join(f"{t:>12.5f}{'':>10}" for t in TRUTH))
    print(f"full: LL at zero {cases[0]['log_likelihood_at_zero']:.4f}; gradient norms "
          + ", ".join(f"{c['name']} {c['gradient_norm']:.1e}" for c in cases))
    print(f"wrote {FIX_FILE} ({len(text)} bytes) and {DATA_DIR}/")


if __name__ == "__main__":
    if not os.path.isdir(os.path.join("tests", "fixtures")):
        sys.exit("run from the repository root")
    main()
