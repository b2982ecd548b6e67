#!/usr/bin/env python3
"""The garden panel demo (demo-data/garden_panel.csv): an independent check
of its generator and of what a latent class logit finds in it.

Run from the repository root:

    python3 tests/reference/garden_demo_check.py

Needs only numpy and scipy; writes nothing, prints the figures quoted in
demo-data/README.md and asserts the checks below.  Deterministic (fixed
seeds, one BLAS thread).

1. The generator, written again here from its description in
   src/demo/garden.rs: sharecast's random number generator (xoshiro256++
   seeded through splitmix64; uniform from the top 53 bits; polar Box-Muller
   normals with the spare kept for the next call; Gumbel -ln(-ln u)), then
   per shopper a garden size, an age, the class drawn once from the
   membership logit, and per occasion the offer and the largest utility plus
   a Gumbel draw.  Asserted: every row of the shipped CSV equals this port's.
   The port also gives each shopper's true class, which the CSV omits.
2. A plain logit fitted on each true class's rows alone (BFGS on the
   analytic gradient; standard errors from the analytic Hessian): each class's
   coefficients should come back near its own truth.
3. The latent class logit with membership on garden_size, fitted by EM from
   10 random starts then BFGS, with tests/reference/classes_reference.py's
   `Classes` (its term count NT set to this demo's five terms: asc_plugs,
   asc_potted, price, weeks, peat_free); classes numbered by share,
   classical standard errors from its finite-difference Hessian.  Then the
   same with age added to the membership (age plays no part in the data).
"""

import os

for _v in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_v] = "1"

import csv  # noqa: E402
import math  # noqa: E402
import sys  # noqa: E402

import numpy as np  # noqa: E402
from scipy.optimize import minimize  # noqa: E402
from scipy.special import logsumexp  # noqa: E402

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import classes_reference as cr  # noqa: E402

MASK = (1 << 64) - 1
SEED = 20_261_205
ALTS = ["packet", "plugs", "potted"]
TERMS = ["asc_plugs", "asc_potted", "price", "weeks", "peat_free"]
TRUTH = {
    1: dict(asc_plugs=0.5, asc_potted=1.6, price=-0.40, weeks=-0.06, peat_free=0.5),
    2: dict(asc_plugs=0.3, asc_potted=0.6, price=-0.10, weeks=-0.24, peat_free=0.5),
}
MEMBER = (-1.3, 0.09)  # member_class2, member_class2_garden_size


def rotl(x, k):
    return ((x << k) | (x >> (64 - k))) & MASK


class Rng:
    """src/rng.rs, line for line."""

    def __init__(self, seed):
        x, self.s = seed, []
        for _ in range(4):
            x = (x + 0x9E3779B97F4A7C15) & MASK
            z = x
            z = ((z ^ (z >> 30)) * 0xBF58476D1CE4E5B9) & MASK
            z = ((z ^ (z >> 27)) * 0x94D049BB133111EB) & MASK
            self.s.append(z ^ (z >> 31))
        self.spare = None

    def next_u64(self):
        s = self.s
        r = (rotl((s[0] + s[3]) & MASK, 23) + s[0]) & MASK
        t = (s[1] << 17) & MASK
        s[2] ^= s[0]
        s[3] ^= s[1]
        s[1] ^= s[2]
        s[0] ^= s[3]
        s[2] ^= t
        s[3] = rotl(s[3], 45)
        return r

    def uniform(self):
        return (self.next_u64() >> 11) * (1.0 / (1 << 53))

    def below(self, n):
        return min(int(self.uniform() * n), n - 1)

    def normal(self):
        if self.spare is not None:
            z, self.spare = self.spare, None
            return z
        while True:
            u = 2 * self.uniform() - 1
            v = 2 * self.uniform() - 1
            q = u * u + v * v
            if 0 < q < 1:
                m = math.sqrt(-2 * math.log(q) / q)
                self.spare = v * m
                return u * m

    def gumbel(self):
        return -math.log(-math.log(max(self.uniform(), 1e-300)))


def rnd(x, digits):
    """Rust's round half away from zero (x >= 0 here)."""
    m = 10.0 ** digits
    return math.floor(x * m + 0.5) / m


def generate():
    """Rows (shopper, occasion, chosen index, prices, weeks, peat_free,
    garden_size, age) and each shopper's class."""
    rng = Rng(SEED)
    rows, classes = [], []
    for n in range(1, 1001):
        gs = rnd(min(max(math.exp(2.0 + 0.7 * rng.normal()), 1.0), 30.0), 1)
        age = 22 + rng.below(60)
        p2 = 1 / (1 + math.exp(-(MEMBER[0] + MEMBER[1] * gs)))
        k = 2 if rng.uniform() < p2 else 1
        classes.append(k)
        b = TRUTH[k]
        for t in range(1, 9):
            price = [rnd(2 + 3 * rng.uniform(), 2), rnd(5 + 7 * rng.uniform(), 2),
                     rnd(10 + 14 * rng.uniform(), 2)]
            weeks = [8 + rng.below(11), 3 + rng.below(7), rng.below(3)]
            peat = [0, int(rng.uniform() < 0.5), int(rng.uniform() < 0.5)]
            v = [b["price"] * price[j] + b["weeks"] * weeks[j] + b["peat_free"] * peat[j]
                 for j in range(3)]
            v[1] += b["asc_plugs"]
            v[2] += b["asc_potted"]
            best, best_u = 0, -math.inf
            for j in range(3):
                u = v[j] + rng.gumbel()
                if u > best_u:
                    best, best_u = j, u
            rows.append((n, t, best, price, weeks, peat, gs, age))
    return rows, np.array(classes)


def check_csv(rows):
    with open("demo-data/garden_panel.csv") as f:
        shipped = list(csv.DictReader(f))
    assert len(shipped) == len(rows)
    for r, (n, t, c, price, weeks, peat, gs, age) in zip(shipped, rows):
        assert (int(r["shopper"]), int(r["occasion"]), r["choice"]) == (n, t, ALTS[c])
        for j, a in enumerate(ALTS):
            assert abs(float(r[f"{a}_price"]) - price[j]) < 1e-9
            assert int(r[f"{a}_weeks"]) == weeks[j]
        assert (int(r["plugs_peat_free"]), int(r["potted_peat_free"])) == (peat[1], peat[2])
        assert abs(float(r["garden_size"]) - gs) < 1e-9 and int(r["age"]) == age
    print("every row of demo-data/garden_panel.csv equals the port's")


def design(rows):
    S = len(rows)
    X = np.zeros((S, 3, len(TERMS)))
    chosen, dm = np.zeros(S, int), np.zeros(S, int)
    for s, (n, _, c, price, weeks, peat, _, _) in enumerate(rows):
        X[s, :, 2], X[s, :, 3], X[s, :, 4] = price, weeks, peat
        X[s, 1, 0] = X[s, 2, 1] = 1.0
        chosen[s], dm[s] = c, n - 1
    return X, chosen, dm


def logit_fit(X, chosen):
    """Plain logit: estimates, standard errors, log-likelihood."""
    idx = np.arange(len(chosen))

    def f(b):
        V = X @ b
        lse = logsumexp(V, axis=1)
        P = np.exp(V - lse[:, None])
        g = (X[idx, chosen] - np.einsum("sj,sjk->sk", P, X)).sum(0)
        return -float(np.sum(V[idx, chosen] - lse)), -g

    r = minimize(f, np.zeros(X.shape[2]), jac=True, method="BFGS", options={"gtol": 1e-8})
    V = X @ r.x
    P = np.exp(V - logsumexp(V, axis=1)[:, None])
    dx = X - np.einsum("sj,sjk->sk", P, X)[:, None, :]
    H = np.einsum("sj,sjk,sjl->kl", P, dx, dx)
    return r.x, np.sqrt(np.diag(np.linalg.inv(H))), -r.fun


def latent_class(X, chosen, dm, W, start_logit, starts=10, seed=1):
    model = cr.Classes(X, chosen, dm, W, 2)
    rng = np.random.default_rng(seed)
    sd = np.array([2.0, 2.0, 0.5, 0.2, 2.0])
    best = None
    for i in range(starts):
        B = start_logit[None, :] + sd[None, :] * rng.standard_normal((2, len(TERMS)))
        G = np.zeros((2, W.shape[1]))
        G[1, 0] = rng.standard_normal()
        theta, _, _ = model.em(cr.pack(B, G))
        r = minimize(lambda t: -model.ll(t), theta, jac=lambda t: -model.grad(t),
                     method="BFGS", options={"gtol": 1e-6})
        print(f"  start {i + 1:>2}: log-likelihood {-r.fun:.4f}")
        if best is None or -r.fun > best[0]:
            best = (-r.fun, r.x)
    est, _, _ = model.renumber(best[1])
    H = cr.fd_hessian(model.grad, est)
    se = np.sqrt(np.diag(np.linalg.inv(-(H + H.T) / 2)))
    return model, est, se, best[0]


def main():
    cr.NT = len(TERMS)
    rows, classes = generate()
    check_csv(rows)
    print(f"shoppers per class: {np.sum(classes == 1)} and {np.sum(classes == 2)}")
    X, chosen, dm = design(rows)
    for k in (1, 2):
        m = classes[dm] == k
        b, se, _ = logit_fit(X[m], chosen[m])
        print(f"plain logit on class {k}'s {m.sum()} rows (estimate, s.e., truth):")
        for name, e, s in zip(TERMS, b, se):
            t = TRUTH[k][name]
            print(f"  {name:<11} {e:8.4f} {s:7.4f} {t:7.3f}")
            assert abs(e - t) < 3 * s, (k, name)
    b_logit, _, ll_logit = logit_fit(X, chosen)
    print(f"plain logit on all rows: log-likelihood {ll_logit:.4f}")
    gs = np.array([r[6] for r in rows[::8]])
    age = np.array([r[7] for r in rows[::8]], float)
    model, est, se, ll = latent_class(X, chosen, dm, np.column_stack([np.ones(1000), gs]), b_logit)
    truth = [TRUTH[1][t] for t in TERMS] + [TRUTH[2][t] for t in TERMS] + list(MEMBER)
    names = ([f"{t}_class1" for t in TERMS] + [f"{t}_class2" for t in TERMS]
             + ["member_class2", "member_class2_garden_size"])
    print(f"latent class logit, membership on garden_size: log-likelihood {ll:.4f}")
    for name, e, s, t in zip(names, est, se, truth):
        print(f"  {name:<26} {e:8.4f} {s:7.4f} {t:7.3f}")
        assert abs(e - t) < 3 * s, name
    shares = model.shares(est)[0]
    print(f"  class shares {shares[0]:.4f} {shares[1]:.4f}")
    W2 = np.column_stack([np.ones(1000), gs, age])
    _, est2, se2, ll2 = latent_class(X, chosen, dm, W2, b_logit, starts=3, seed=2)
    print(f"with age in the membership: log-likelihood {ll2:.4f}, "
          f"member_class2_age {est2[-1]:.5f} (s.e. {se2[-1]:.5f})")


if __name__ == "__main__":
    main()
