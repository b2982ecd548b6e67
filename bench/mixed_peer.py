#!/usr/bin/env python3
"""Panel mixed logit in plain numpy: the peer for sharecast's mixed-logit benchmark.

What it is
----------
The straightforward vectorised numpy implementation a user would otherwise
write: panel simulated log-likelihood (SLL) and its analytic gradient at a
given parameter vector.  It reads a folder written by the Rust benchmark,
evaluates SLL and gradient (vectorised over decision makers, draws, tasks
and alternatives; decision makers processed in chunks of about 32 MB of
work arrays, so memory is the input arrays plus ~100 MB), times the evaluation and prints ONE JSON line:

    {"ll": float, "grad": [floats], "seconds": best seconds per pass,
     "repeats": n, "numpy": version, "blas": "...",
     "prepare_seconds": one-off seconds, "chunk": decision makers per chunk}

"seconds" is the best wall-clock time over --repeats passes of SLL +
gradient, after loading.  The theta-independent preparation (z = Phi^-1(u)
and the other draw transforms, the chosen alternatives' design rows) is done
once before timing, as it would be once per estimation, and is reported
separately as "prepare_seconds".

Input folder
------------
    meta.json   {"N", "T", "J", "K", "R", "random": [k of each random coefficient],
                 "dist": [distribution of each], "theta": [K locations/fixed values,
                 then one spread per random coefficient]}
    x.f64       little-endian float64, shape (N, T, J, K), all J alternatives available
    chosen.u32  little-endian uint32, shape (N, T)
    u.f64       little-endian float64 uniforms, shape (N, R, D), D = len(random)

Model: z = Phi^-1(u); beta = m + s*z (normal), exp(m + s*z) (lognormal),
-exp(m + s*z) (negative-lognormal), m + s*(2u - 1) (uniform),
m + s*tri(u) (triangular, tri(u) = sqrt(2u) - 1 if u < 0.5 else
1 - sqrt(2(1 - u))).  V = x . beta, logit kernel, panel simulated likelihood
L_n = mean_r prod_t P_chosen, SLL = sum_n log L_n; gradient
sum_n sum_r omega_nr sum_t (x_chosen - sum_j P_j x_j) d beta / d theta.

How to run
----------
    python3 bench/mixed_peer.py FOLDER [--repeats 3] [--chunk C]
    python3 bench/mixed_peer.py --selftest

--chunk forces the number of decision makers per chunk (default: chosen from
T*J*R*K so one chunk's work arrays take about 32 MB).  --selftest writes a small random
folder to a temporary directory, evaluates it, and checks the analytic
gradient against central finite differences and a chunked evaluation
against an unchunked one (max relative differences printed; exit status 1
if a check fails).  Needs only numpy and scipy.
"""

import argparse
import json
import os
import sys
import tempfile
import time

import numpy as np
from scipy.special import ndtri  # = scipy.stats.norm.ppf, fewer temporaries

DISTS = ("normal", "lognormal", "negative-lognormal", "uniform", "triangular")
# Work arrays of one chunk of decision makers: about 32 MB.  Large enough to
# amortise the per-chunk Python overhead, small enough to stay cache-friendly
# (measured: much larger chunks are slower, not faster) and far below the
# 1.5 GB memory cap whatever N is.
WORK_BYTES = 32e6


def load(folder):
    with open(os.path.join(folder, "meta.json")) as f:
        meta = json.load(f)
    N, T, J, K, R = (int(meta[k]) for k in ("N", "T", "J", "K", "R"))
    random = [int(k) for k in meta["random"]]
    dist = list(meta["dist"])
    D = len(random)
    assert len(dist) == D and all(d in DISTS for d in dist), dist
    theta = np.asarray(meta["theta"], dtype=np.float64)
    assert theta.shape == (K + D,), (theta.shape, K + D)
    x = np.fromfile(os.path.join(folder, "x.f64"), dtype="<f8").reshape(N, T, J, K)
    chosen = np.fromfile(os.path.join(folder, "chosen.u32"), dtype="<u4").reshape(N, T)
    u = np.fromfile(os.path.join(folder, "u.f64"), dtype="<f8").reshape(N, R, D)
    return meta, x, chosen, u, random, dist, theta


class PanelMixedLogit:
    def __init__(self, x, chosen, u, random, dist, chunk=None, overwrite_u=False):
        self.N, self.T, self.J, self.K = x.shape
        self.R = u.shape[1]
        self.random = random
        self.dist = dist
        self.x = np.ascontiguousarray(x, dtype=np.float64)
        # theta-independent parts, computed once
        # z, 2u-1 or tri(u), so that beta = m + s*draw or +-exp(m + s*draw);
        # overwrite_u: transform u in place (no second copy of the draws)
        self.draw = u if overwrite_u else u.copy()
        for d, kind in enumerate(dist):
            ud = self.draw[:, :, d]
            if kind in ("normal", "lognormal", "negative-lognormal"):
                self.draw[:, :, d] = ndtri(ud)
            elif kind == "uniform":
                self.draw[:, :, d] = 2.0 * ud - 1.0
            else:
                self.draw[:, :, d] = np.where(ud < 0.5, np.sqrt(2.0 * ud) - 1.0,
                                              1.0 - np.sqrt(2.0 * (1.0 - ud)))
        self.chosen = chosen.astype(np.intp)
        xc = np.take_along_axis(self.x, self.chosen[:, :, None, None], axis=2)[:, :, 0, :]
        self.xc_sum = xc.sum(axis=1)  # (N, K): sum over tasks of the chosen rows
        if chunk is None:
            T, J, K, R = self.T, self.J, self.K, self.R
            per_dm = 8 * (2 * T * J * R + T * J * K + 6 * K * R + 4 * T * R)
            chunk = int(WORK_BYTES // per_dm)
        self.chunk = max(1, min(self.N, int(chunk)))

    def evaluate(self, theta):
        """Panel SLL and its analytic gradient."""
        K, T, J, R = self.K, self.T, self.J, self.R
        loc, spread = theta[:K], theta[K:]
        ll = 0.0
        g_loc = np.zeros(K)
        g_spr = np.zeros(len(self.random))
        for a in range(0, self.N, self.chunk):
            b = min(self.N, a + self.chunk)
            c = b - a
            x = self.x[a:b].reshape(c, T * J, K)
            draw = self.draw[a:b]
            # coefficients per decision maker and draw, with derivatives
            beta = np.broadcast_to(loc, (c, R, K)).copy()
            dloc = np.ones((c, R, K))
            dspr = np.empty((c, R, len(self.random)))
            for d, (k, kind) in enumerate(zip(self.random, self.dist)):
                e = draw[:, :, d]
                if kind == "lognormal":
                    beta[:, :, k] = np.exp(loc[k] + spread[d] * e)
                elif kind == "negative-lognormal":
                    beta[:, :, k] = -np.exp(loc[k] + spread[d] * e)
                else:
                    beta[:, :, k] = loc[k] + spread[d] * e
                if kind in ("lognormal", "negative-lognormal"):
                    dloc[:, :, k] = beta[:, :, k]
                    dspr[:, :, d] = beta[:, :, k] * e
                else:
                    dspr[:, :, d] = e
            # utilities (c, T, J, R) and logit probabilities
            V = np.matmul(x, beta.transpose(0, 2, 1)).reshape(c, T, J, R)
            V -= V.max(axis=2, keepdims=True)
            v_ch = np.take_along_axis(V, self.chosen[a:b, :, None, None], axis=2)[:, :, 0, :]
            np.exp(V, out=V)
            S = V.sum(axis=2)                               # (c, T, R)
            V /= S[:, :, None, :]                           # V now holds P
            lnr = (v_ch - np.log(S)).sum(axis=1)            # (c, R): log prod_t P_chosen
            top = lnr.max(axis=1, keepdims=True)
            w = np.exp(lnr - top)
            ll += float(np.sum(top[:, 0] + np.log(w.mean(axis=1))))
            omega = w / w.sum(axis=1, keepdims=True)        # (c, R)
            # score of beta per draw: sum_t (x_chosen - sum_j P_j x_j)
            xbar = np.matmul(x.transpose(0, 2, 1), V.reshape(c, T * J, R))   # (c, K, R)
            g = self.xc_sum[a:b, :, None] - xbar            # (c, K, R)
            g_loc += np.einsum("cr,ckr,crk->k", omega, g, dloc)
            g_spr += np.einsum("cr,cdr,crd->d", omega, g[:, self.random, :], dspr)
        return ll, np.concatenate([g_loc, g_spr])


def blas_info():
    try:
        deps = np.show_config(mode="dicts")["Build Dependencies"]["blas"]
        desc = deps.get("openblas configuration") or f"{deps.get('name')} {deps.get('version')}"
    except Exception as exc:  # pragma: no cover
        desc = f"unknown ({exc})"
    env = ", ".join(f"{v}={os.environ[v]}" for v in
                    ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS")
                    if v in os.environ) or "no thread variables set"
    try:
        from threadpoolctl import threadpool_info  # only if already installed
        pools = "; ".join(f"{p.get('internal_api')} {p.get('num_threads')} threads"
                          for p in threadpool_info())
    except ImportError:
        pools = "threadpoolctl not installed"
    return f"{' '.join(desc.split())}; {env}; {pools}; {os.cpu_count()} CPUs"


def run(folder, repeats, chunk=None):
    meta, x, chosen, u, random, dist, theta = load(folder)
    t0 = time.perf_counter()
    model = PanelMixedLogit(x, chosen, u, random, dist, chunk, overwrite_u=True)
    del u
    prepare = time.perf_counter() - t0
    best = float("inf")
    for _ in range(repeats):
        t0 = time.perf_counter()
        ll, grad = model.evaluate(theta)
        best = min(best, time.perf_counter() - t0)
    return {
        "ll": ll,
        "grad": [float(v) for v in grad],
        "seconds": best,
        "repeats": repeats,
        "numpy": np.__version__,
        "blas": blas_info(),
        "prepare_seconds": prepare,
        "chunk": model.chunk,
    }


def write_folder(folder, rng, N=30, T=3, J=4, K=7, R=40):
    """A small random benchmark folder with one coefficient of every distribution."""
    random = [1, 2, 3, 5, 6]
    dist = ["normal", "lognormal", "negative-lognormal", "uniform", "triangular"]
    x = rng.normal(size=(N, T, J, K))
    x[:, :, :, 0] = 0.0
    x[:, :, 1, 0] = 1.0                                     # a constant for alternative 1
    chosen = rng.integers(0, J, size=(N, T)).astype("<u4")
    u = rng.random((N, R, len(random)))
    theta = np.concatenate([rng.normal(0, 0.5, K), rng.uniform(0.2, 0.8, len(random))])
    theta[2] = -0.7
    theta[3] = -0.4
    meta = {"N": N, "T": T, "J": J, "K": K, "R": R, "random": random, "dist": dist,
            "theta": [float(v) for v in theta]}
    with open(os.path.join(folder, "meta.json"), "w") as f:
        json.dump(meta, f)
    x.astype("<f8").tofile(os.path.join(folder, "x.f64"))
    chosen.tofile(os.path.join(folder, "chosen.u32"))
    u.astype("<f8").tofile(os.path.join(folder, "u.f64"))


def selftest():
    rng = np.random.default_rng(7)
    ok = True
    with tempfile.TemporaryDirectory() as folder:
        write_folder(folder, rng)
        out = run(folder, repeats=2)
        print("one line:", json.dumps(out))
        _, x, chosen, u, random, dist, theta = load(folder)
        model = PanelMixedLogit(x, chosen, u, random, dist)
        ll, grad = model.evaluate(theta)
        # five-point central differences of the SLL
        fd = np.zeros_like(theta)
        for i in range(len(theta)):
            h = 1e-4 * max(1.0, abs(theta[i]))
            f = []
            for m in (-2, -1, 1, 2):
                t = theta.copy()
                t[i] += m * h
                f.append(model.evaluate(t)[0])
            fd[i] = (f[0] - 8 * f[1] + 8 * f[2] - f[3]) / (12 * h)
        rel = float(np.max(np.abs(grad - fd) / np.maximum(np.abs(grad), 1.0)))
        print(f"SLL {ll!r}")
        print(f"analytic gradient vs central finite differences: max rel diff {rel:.3e}")
        ok &= rel < 1e-6
        # chunked vs unchunked
        ll3, g3 = PanelMixedLogit(x, chosen, u, random, dist, chunk=7).evaluate(theta)
        crel = max(abs(ll3 - ll) / abs(ll), float(np.max(np.abs(g3 - grad) / np.maximum(np.abs(grad), 1.0))))
        print(f"chunk 7 vs chunk {model.chunk}: max rel diff {crel:.3e}")
        ok &= crel < 1e-12
        # zero spreads: the SLL is the fixed-coefficient logit log-likelihood
        t0 = theta.copy()
        t0[len(theta) - len(random):] = 0.0
        b = t0[: x.shape[3]].copy()
        for k, kind in zip(random, dist):
            if kind == "lognormal":
                b[k] = np.exp(b[k])
            elif kind == "negative-lognormal":
                b[k] = -np.exp(b[k])
        v = x @ b
        ll_logit = float(np.sum(np.take_along_axis(v, chosen[:, :, None].astype(np.intp), axis=2)[:, :, 0]
                                - np.log(np.exp(v).sum(axis=2))))
        zdiff = abs(model.evaluate(t0)[0] - ll_logit)
        print(f"spreads 0: SLL vs logit LL abs diff {zdiff:.3e}")
        ok &= zdiff < 1e-10
    print("selftest", "passed" if ok else "FAILED")
    return 0 if ok else 1


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("folder", nargs="?")
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--chunk", type=int, default=None)
    ap.add_argument("--selftest", action="store_true")
    args = ap.parse_args()
    if args.selftest:
        sys.exit(selftest())
    if not args.folder:
        ap.error("FOLDER is required (or --selftest)")
    if args.repeats < 1:
        ap.error("--repeats must be at least 1")
    print(json.dumps(run(args.folder, args.repeats, args.chunk)))


if __name__ == "__main__":
    main()
