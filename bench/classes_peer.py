#!/usr/bin/env python3
"""Latent class logit in numpy/scipy: the peer for `sharecast bench --model classes`.

What it is
----------
It runs the independent latent class code of this repository,
tests/reference/classes_reference.py (EM whose M-steps are damped Newton
steps on each class's weighted logit and on the membership logit, then
scipy BFGS on the analytic gradient from the EM result: the same steps the
reference takes per start), on the data the Rust benchmark wrote, with the
benchmark's number of random starts, and times every start.  Importing the
reference pins BLAS to one thread (so its figures are single-threaded).

Steps, all timed:
  1. the pooled logit (the reference's class code with one class, BFGS);
  2. one pass at the true parameters (log-likelihood, scores, posteriors;
     best of 3);
  3. the starts, each from the pooled logit's coefficients plus normal
     noise (sd 0.5 over the term's standard deviation in the data) per
     class, membership constants ~ N(0, 1), other membership terms 0
     (numpy default_rng(seed)).  No new start begins once the starts so far
     took longer than the folder's "budget_seconds" (at least one runs).

Prints ONE JSON line:

    {"starts_asked", "start_seconds": [...], "em_iterations": [...],
     "start_log_likelihoods": [...], "failed": n, "best_log_likelihood",
     "reached_best" (starts within 0.01 + 1e-6 |best| of the best),
     "pooled_seconds", "pass_seconds", "budget_seconds", "numpy", "scipy"}

Input folder (written by the benchmark)
---------------------------------------
    meta.json   {"N", "T", "J", "terms": [names], "classes", "membership":
                 [names], "starts", "seed", "budget_seconds", "truth": [P]}
    x.f64       little-endian float64 (N*T, J, terms): each alternative's
                value of each class's utility term (1 for its constant)
    chosen.u32  little-endian uint32 (N*T), the chosen alternative
    w.f64       little-endian float64 (N, 1 + membership): 1, then the
                decision maker's membership columns

Decision maker n has situations n*T .. n*T + T - 1.  The parameter order
is the reference's: class-major utility terms, then per class 2..K its
membership constant and terms (the order sharecast uses too).

How to run
----------
    python3 bench/classes_peer.py FOLDER
"""

import json
import math
import os
import sys
import time

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, "..", "tests", "reference"))

import classes_reference as ref  # noqa: E402  (sets one BLAS thread first)
import numpy as np  # noqa: E402
import scipy  # noqa: E402


def load(folder):
    with open(os.path.join(folder, "meta.json")) as f:
        meta = json.load(f)
    n, t, j, nt = meta["N"], meta["T"], meta["J"], len(meta["terms"])
    q = 1 + len(meta["membership"])
    x = np.fromfile(os.path.join(folder, "x.f64"), dtype="<f8").reshape(n * t, j, nt)
    chosen = np.fromfile(os.path.join(folder, "chosen.u32"), dtype="<u4").astype(int)
    w = np.fromfile(os.path.join(folder, "w.f64"), dtype="<f8").reshape(n, q)
    dm = np.repeat(np.arange(n), t)
    return meta, x, chosen, w, dm


def start_point(rng, pooled, sd, k, q):
    b = pooled[None, :] + sd[None, :] * rng.standard_normal((k, len(pooled)))
    g = np.zeros((k, q))
    g[1:, 0] = rng.standard_normal(k - 1)
    return ref.pack(b, g)


def best_of(f, repeats=3):
    best = math.inf
    for _ in range(repeats):
        t = time.perf_counter()
        f()
        best = min(best, time.perf_counter() - t)
    return best


def main():
    if len(sys.argv) != 2:
        sys.exit("usage: classes_peer.py FOLDER")
    meta, x, chosen, w, dm = load(sys.argv[1])
    nt, k = len(meta["terms"]), meta["classes"]
    ref.NT = nt  # the reference's class code reads its term count from here
    t = time.perf_counter()
    one = ref.Classes(x, chosen, dm, w[:, :1], 1)
    pooled, _ = ref.bfgs(one.ll, one.grad, np.zeros(nt), gtol=1e-7)
    pooled_s = time.perf_counter() - t
    model = ref.Classes(x, chosen, dm, w, k)
    truth = np.asarray(meta["truth"], float)
    pass_s = best_of(lambda: model.person(truth))
    spread = x.reshape(-1, nt).std(axis=0)
    sd = 0.5 / np.where(spread > 0, spread, 1.0)
    rng = np.random.default_rng(meta["seed"])
    budget = float(meta["budget_seconds"])
    secs, iters, lls, failed = [], [], [], 0
    for _ in range(meta["starts"]):
        if secs and sum(secs) > budget:
            break
        theta0 = start_point(rng, pooled, sd, k, w.shape[1])
        t = time.perf_counter()
        try:
            t_em, ll_em, it = model.em(theta0)
            t_d, _ = ref.bfgs(model.ll, model.grad, t_em, gtol=1e-7, maxiter=3000)
            ll = model.ll(t_d)
            if not math.isfinite(ll) or ll < ll_em:
                ll = ll_em
        except (AssertionError, FloatingPointError, np.linalg.LinAlgError):
            failed += 1
            ll, it = -math.inf, 0
        secs.append(time.perf_counter() - t)
        iters.append(it)
        lls.append(ll)
    best = max(lls)
    tol = 0.01 + 1e-6 * abs(best) if math.isfinite(best) else 0.0
    out = {
        "starts_asked": meta["starts"],
        "start_seconds": secs,
        "em_iterations": iters,
        "start_log_likelihoods": [v if math.isfinite(v) else None for v in lls],
        "failed": failed,
        "best_log_likelihood": best if math.isfinite(best) else None,
        "reached_best": sum(1 for v in lls if math.isfinite(v) and v >= best - tol),
        "pooled_seconds": pooled_s,
        "pass_seconds": pass_s,
        "budget_seconds": budget,
        "numpy": np.__version__,
        "scipy": scipy.__version__,
    }
    print(json.dumps(out))


if __name__ == "__main__":
    main()
