#!/usr/bin/env python3
"""The Velmora destination-choice demo (demo-data/velmora_zones.csv,
velmora_skims.parquet, velmora_trips.csv): an independent check that the
written files hold the destination choice they are said to hold and that a
multinomial logit over the full choice set recovers the true parameters.

Run from the repository root:

    pip install numpy pyarrow
    python3 tests/reference/velmora_demo_check.py

Needs numpy and pyarrow (to read the Parquet skims; the project's tests do
not use this script).  Writes nothing; prints the fit and exits non-zero if
a check fails.

1. The files' layout: 320 zones z001..z320 in six districts (one `east`),
   every count at least 1 and each log column ln(1 + count) to 6 decimals,
   exactly three zones closed; the skims one row per reachable pair, none
   slower than 75 minutes, every diagonal pair present, some pairs missing;
   4,000 trips whose purpose dummies match the purpose, never from a closed
   zone, never to a closed zone or an unreachable one.
2. The full-set logit: every trip's alternatives are all zones with
   `available` = 1 whose pair from the trip's origin is in the skims;
   utility time * time_min + time_shop * time_min * shop + jobs_work *
   log_jobs * work + shops_shop * log_shops * shop + homes_other *
   log_homes * other + mix * mix + intrazonal * intrazonal, no constants.
   Fitted by Newton's method on the analytic gradient and Hessian (standard
   errors from the inverse Hessian); every estimate must lie within 3
   standard errors of the true value, read from DESTINATIONS_TRUTH in
   src/demo/destinations.rs.
"""

import csv
import re
import sys

import numpy as np
import pyarrow.parquet as pq

DIR = "demo-data"
TERMS = ["time", "time_shop", "jobs_work", "shops_shop", "homes_other", "mix", "intrazonal"]
PURPOSES = ["work", "shop", "other"]


def truth():
    """The true values as the generator's source states them."""
    src = open("src/demo/destinations.rs").read()
    block = src[src.index("DESTINATIONS_TRUTH"):]
    block = block[: block.index("];")]
    pairs = dict((k, float(v)) for k, v in re.findall(r'\("(\w+)",\s*(-?[0-9.]+)\)', block))
    assert list(pairs) == TERMS, pairs
    return np.array([pairs[t] for t in TERMS])


def read():
    with open(f"{DIR}/velmora_zones.csv") as f:
        zones = list(csv.DictReader(f))
    with open(f"{DIR}/velmora_trips.csv") as f:
        trips = list(csv.DictReader(f))
    skims = pq.read_table(f"{DIR}/velmora_skims.parquet").to_pydict()
    return zones, skims, trips


def check_zones(zones):
    assert [z["zone"] for z in zones] == [f"z{i:03d}" for i in range(1, 321)]
    districts = sorted({z["district"] for z in zones})
    assert len(districts) == 6 and "east" in districts, districts
    for z in zones:
        for c in ("jobs", "shops", "homes"):
            n = int(z[c])
            assert n >= 1, (z["zone"], c)
            assert abs(float(z["log_" + c]) - round(np.log1p(n), 6)) < 1e-9, (z["zone"], c)
        assert 0.0 <= float(z["mix"]) <= 1.0
    closed = [z["zone"] for z in zones if z["available"] == "0"]
    assert len(closed) == 3 and all(z["available"] in "01" for z in zones)
    print(f"zones: 320 in districts {', '.join(districts)}; closed {', '.join(closed)}")


def skim_arrays(zones, skims):
    """Time and intrazonal flag per (origin, zone) and which pairs exist."""
    index = {z["zone"]: i for i, z in enumerate(zones)}
    n = len(zones)
    o = np.array([index[x] for x in skims["origin"]])
    d = np.array([index[x] for x in skims["zone"]])
    time = np.zeros((n, n))
    present = np.zeros((n, n), bool)
    assert len(set(zip(o.tolist(), d.tolist()))) == len(o), "a pair twice"
    time[o, d] = skims["time_min"]
    present[o, d] = True
    intra = np.zeros((n, n))
    intra[o, d] = skims["intrazonal"]
    assert np.array_equal(intra, np.eye(n)), "intrazonal is not the diagonal"
    assert present.diagonal().all() and max(skims["time_min"]) <= 75.0
    missing = n * n - len(o)
    assert missing > 0
    print(f"skims: {len(o)} pairs of {n * n} ({missing} slower than 75 minutes left out)")
    return time, present, index


def check_trips(trips, zones, present, index):
    assert len(trips) == 4000
    assert [int(t["trip_id"]) for t in trips] == list(range(1, 4001))
    open_zone = np.array([z["available"] == "1" for z in zones])
    for t in trips:
        o, d = index[t["origin"]], index[t["dest"]]
        assert [int(t[p]) for p in PURPOSES] == [int(t["purpose"] == p) for p in PURPOSES]
        assert open_zone[o] and open_zone[d] and present[o, d], t["trip_id"]
    print("trips: 4,000, none from or to a closed zone, none to an unreachable one")
    return open_zone


def design(zones, trips, time, present, index, open_zone):
    """Per trip x zone x term the utility's variables, the availability
    mask and the chosen zone."""
    col = lambda c: np.array([float(z[c]) for z in zones])  # noqa: E731
    log_jobs, log_shops, log_homes, mix = col("log_jobs"), col("log_shops"), col("log_homes"), col("mix")
    n = len(zones)
    origin = np.array([index[t["origin"]] for t in trips])
    chosen = np.array([index[t["dest"]] for t in trips])
    dummy = {p: np.array([float(t[p]) for t in trips])[:, None] for p in PURPOSES}
    T = time[origin]
    X = np.stack(
        [
            T,
            T * dummy["shop"],
            log_jobs[None, :] * dummy["work"],
            log_shops[None, :] * dummy["shop"],
            log_homes[None, :] * dummy["other"],
            np.broadcast_to(mix, (len(trips), n)),
            (origin[:, None] == np.arange(n)[None, :]).astype(float),
        ],
        axis=2,
    )
    avail = present[origin] & open_zone[None, :]
    return X, avail, chosen


def loglik(b, X, avail, chosen, derivatives=False):
    V = np.where(avail, X @ b, -np.inf)
    m = V.max(axis=1, keepdims=True)
    E = np.exp(V - m)
    lse = m[:, 0] + np.log(E.sum(axis=1))
    rows = np.arange(len(chosen))
    ll = float(np.sum(V[rows, chosen] - lse))
    if not derivatives:
        return ll
    P = E / E.sum(axis=1, keepdims=True)
    mean = np.einsum("sj,sjk->sk", P, X)
    g = (X[rows, chosen] - mean).sum(axis=0)
    H = np.einsum("sj,sjk,sjl->kl", P, X, X) - mean.T @ mean
    return ll, g, H


def fit(X, avail, chosen):
    b = np.zeros(X.shape[2])
    for _ in range(50):
        ll, g, H = loglik(b, X, avail, chosen, True)
        step = np.linalg.solve(H, g)
        while loglik(b + step, X, avail, chosen) < ll - 1e-9:
            step /= 2
        b = b + step
        if np.max(np.abs(g)) < 1e-7:
            break
    ll, g, H = loglik(b, X, avail, chosen, True)
    assert np.max(np.abs(g)) < 1e-5, g
    return b, np.sqrt(np.diag(np.linalg.inv(H))), ll


def main():
    zones, skims, trips = read()
    check_zones(zones)
    time, present, index = skim_arrays(zones, skims)
    open_zone = check_trips(trips, zones, present, index)
    X, avail, chosen = design(zones, trips, time, present, index, open_zone)
    per_trip = avail.sum(axis=1)
    print(f"alternatives per trip: {per_trip.min()} to {per_trip.max()} (mean {per_trip.mean():.1f})")
    b, se, ll = fit(X, avail, chosen)
    true = truth()
    ll0 = -float(np.log(per_trip).sum())
    print(f"log-likelihood {ll:.2f} (at the true values {loglik(true, X, avail, chosen):.2f}, "
          f"equal shares {ll0:.2f}); rho-squared {1 - ll / ll0:.4f}")
    print(f"{'parameter':<12} {'true':>8} {'estimate':>10} {'s.e.':>8} {'(est-true)/se':>14}")
    worst = 0.0
    for name, t, e, s in zip(TERMS, true, b, se):
        z = (e - t) / s
        worst = max(worst, abs(z))
        print(f"{name:<12} {t:>8.3f} {e:>10.4f} {s:>8.4f} {z:>14.2f}")
    ok = worst < 3.0
    print(f"largest |estimate - truth| / s.e.: {worst:.2f} -> {'within' if ok else 'NOT within'} 3")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
