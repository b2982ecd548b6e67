#!/usr/bin/env python3
"""Side-by-side timing of `sharecast fit` against statsmodels on the same
simulated (invented) data, written by `sharecast bench --write-only`.

Run it through bench/compare.sh, which builds sharecast and makes the
throwaway virtual environment this script needs (statsmodels, pandas).

Two cases:
  1. characteristics only (4 constants + 2 characteristics on the 4 non-base
     alternatives = 12 parameters), wide layout: statsmodels MNLogit;
  2. the full model (4 constants, 3 shared attributes, 2 characteristics = 15
     parameters): statsmodels ConditionalLogit on the long layout, with the
     constants and characteristic-by-alternative terms as columns.

sharecast is timed as a whole process (`sharecast fit SPEC --json
--no-analysis`: start, spec, CSV load, fit, standard errors, JSON), best of
`--repeats`; statsmodels is timed on `.fit()` alone, after the data are in
memory. Both log-likelihoods are printed and must agree.
"""

import argparse
import json
import os
import subprocess
import sys
import time

import numpy as np
import pandas as pd
import statsmodels
from statsmodels.discrete.conditional_models import ConditionalLogit
from statsmodels.discrete.discrete_model import MNLogit

ALTS = ["a1", "a2", "a3", "a4", "a5"]
ATTRS = ["cost", "time", "rating"]
CHARS = ["income", "age"]


def converged(res):
    r = getattr(res, "mle_retvals", None)
    if isinstance(r, dict) and "converged" in r:
        return bool(r["converged"])
    return getattr(res, "converged", "unknown")


def run(cmd):
    return subprocess.run(cmd, check=True, capture_output=True, text=True).stdout


def write_set(exe, model, n, folder):
    os.makedirs(folder, exist_ok=True)
    run([exe, "bench", "--model", model, "--situations", str(n),
         "--keep", folder, "--write-only"])
    return os.path.join(folder, "bench.toml"), os.path.join(folder, "bench.csv")


def time_sharecast(exe, spec, repeats):
    best = None
    doc = None
    for _ in range(repeats):
        t = time.perf_counter()
        out = run([exe, "fit", spec, "--json", "--no-analysis"])
        s = time.perf_counter() - t
        best = s if best is None else min(best, s)
        doc = json.loads(out)
    est = {p["name"]: p["estimate"] for p in doc["parameters"]}
    return best, doc["fit"]["log_likelihood"], est


def mnlogit(csv):
    df = pd.read_csv(csv)
    y = df["choice"].to_numpy() - 1
    x = np.column_stack([np.ones(len(df)), df["income"], df["age"]])
    model = MNLogit(y, x)
    t = time.perf_counter()
    res = model.fit(method="newton", disp=False, maxiter=100)
    s = time.perf_counter() - t
    # Columns are the non-base alternatives a2..a5; rows const, income, age.
    p = np.asarray(res.params)
    est = {}
    for j, alt in enumerate(ALTS[1:]):
        est[f"asc_{alt}"] = p[0, j]
        est[f"income_{alt}"] = p[1, j]
        est[f"age_{alt}"] = p[2, j]
    return s, float(res.llf), est, converged(res)


def long_layout(csv):
    df = pd.read_csv(csv)
    n, jn = len(df), len(ALTS)
    alt = np.tile(np.arange(jn), n)
    group = np.repeat(np.arange(n), jn)
    y = (alt == np.repeat(df["choice"].to_numpy() - 1, jn)).astype(float)
    cols, names = [], []
    for j, a in enumerate(ALTS[1:], start=1):
        cols.append((alt == j).astype(float))
        names.append(f"asc_{a}")
    for at in ATTRS:
        cols.append(df[[f"{at}_{a}" for a in ALTS]].to_numpy().reshape(-1))
        names.append(at)
    for c in CHARS:
        z = np.repeat(df[c].to_numpy(), jn)
        for j, a in enumerate(ALTS[1:], start=1):
            cols.append(z * (alt == j))
            names.append(f"{c}_{a}")
    return y, np.column_stack(cols), group, names


def conditional_logit(csv):
    y, x, g, names = long_layout(csv)
    model = ConditionalLogit(y, x, groups=g)
    t = time.perf_counter()
    # Newton with a tight tolerance reaches the same maximum as sharecast; the
    # default BFGS stops about 5e-6 short in log-likelihood, in about the same time.
    res = model.fit(method="newton", disp=False, maxiter=100, tol=1e-10)
    s = time.perf_counter() - t
    est = dict(zip(names, np.asarray(res.params)))
    return s, float(res.llf), est, converged(res)


def report(title, n, sc, sm, name):
    sc_s, sc_ll, sc_est = sc
    sm_s, sm_ll, sm_est, sm_ok = sm
    worst = max(abs(sc_est[k] - v) for k, v in sm_est.items())
    print(f"\n{title}: {n:,} situations x 5 alternatives, {len(sm_est)} parameters")
    print(f"  sharecast fit (whole process)   {sc_s:9.3f} s   log-likelihood {sc_ll:.6f}")
    print(f"  statsmodels {name:<19} {sm_s:9.3f} s   log-likelihood {sm_ll:.6f}"
          f"   (converged: {sm_ok})")
    print(f"  log-likelihood difference       {abs(sc_ll - sm_ll):.3e}"
          f"   largest estimate difference {worst:.2e}")
    print(f"  speed ratio (statsmodels / sharecast)  {sm_s / sc_s:.1f}x")
    return {"case": title, "situations": n, "sharecast_seconds": sc_s,
            "statsmodels_seconds": sm_s, "sharecast_ll": sc_ll, "statsmodels_ll": sm_ll,
            "ratio": sm_s / sc_s, "max_abs_estimate_diff": worst}


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--sharecast", required=True, help="the sharecast binary")
    ap.add_argument("--out", required=True, help="folder for the data (bench/out)")
    ap.add_argument("--mnl-n", type=int, default=200_000)
    ap.add_argument("--condlogit-n", type=int, default=20_000,
                    help="situations for the ConditionalLogit case (it is slow)")
    ap.add_argument("--repeats", type=int, default=3)
    args = ap.parse_args()

    print(f"statsmodels {statsmodels.__version__}, pandas {pd.__version__}, "
          f"numpy {np.__version__}, python {sys.version.split()[0]}")
    print(run([args.sharecast, "--version"]).strip())
    rows = []

    spec, csv = write_set(args.sharecast, "characteristics", args.mnl_n,
                          os.path.join(args.out, f"characteristics-{args.mnl_n}"))
    rows.append(report("characteristics only (wide)", args.mnl_n,
                       time_sharecast(args.sharecast, spec, args.repeats),
                       mnlogit(csv), "MNLogit.fit"))

    spec, csv = write_set(args.sharecast, "full", args.condlogit_n,
                          os.path.join(args.out, f"full-{args.condlogit_n}"))
    rows.append(report("full model (long for statsmodels)", args.condlogit_n,
                       time_sharecast(args.sharecast, spec, args.repeats),
                       conditional_logit(csv), "ConditionalLogit"))

    with open(os.path.join(args.out, "compare.json"), "w") as f:
        json.dump(rows, f, indent=2)
    bad = [r for r in rows if abs(r["sharecast_ll"] - r["statsmodels_ll"])
           > 1e-6 * abs(r["statsmodels_ll"])]
    if bad:
        print("\nthe log-likelihoods DIFFER for: " + ", ".join(r["case"] for r in bad))
        sys.exit(1)
    print("\nboth programs reach the same log-likelihood in every case")


if __name__ == "__main__":
    main()
