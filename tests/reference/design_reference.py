#!/usr/bin/env python3
"""Survey-design efficiency: reference numbers for the Rust tests of the
experiment room (`sharecast design`).

Run from the repository root:

    pip install numpy scipy && python3 tests/reference/design_reference.py

Writes tests/fixtures/design/design_reference.json and prints every check
figure.  Deterministic: the tasks and the prior draws come from fixed seeds
and BLAS is pinned to one thread before numpy is imported.

What it is
----------
An independent numpy/scipy computation, written for this repository from the
published formulas, of the efficiency of stated-choice designs under the
multinomial logit:

* Huber, J. and Zwerina, K. (1996), "The importance of utility balance in
  efficient choice designs", Journal of Marketing Research 33(3): the
  information matrix of one respondent and the D-error.
* Rose, J. M. and Bliemer, M. C. J. (2009), "Constructing efficient stated
  choice experimental designs", Transport Reviews 29(5): D- and A-error, the
  Bayesian forms (means over prior draws), the expected standard errors.
* Rose, J. M. and Bliemer, M. C. J. (2013), "Sample size requirements for
  stated choice experiments", Transportation 40(5): the sample size for a
  t-ratio of 1.96.
* Kessels, R., Goos, P. and Vandebroek, M. (2006), "A comparison of criteria
  to design efficient choice experiments", Journal of Marketing Research
  43(3): the criteria and their Bayesian forms.
* Street, D. J. and Burgess, L. (2007), "The Construction of Optimal Stated
  Choice Experiments", Wiley: the optimal paired design with binary
  attributes at zero priors (foldover pairs from a Hadamard matrix).

Formulas
--------
Parameters: one generic coefficient per attribute, in the file's order, then
one constant `asc_<alternative>` per alternative listed in
`[design.constants]`, in the order of `[design].alternatives`.  Task t's coded
matrix X_t (J x K): attribute k's level in alternative j if the attribute
enters j, else 0; a constant's column is 1 in its alternative, else 0.

    P_t   = softmax(X_t beta)                       (log-sum-exp)
    I(b)  = sum_t X_t' (diag(P_t) - P_t P_t') X_t   (one respondent)
    D     = det(I^-1)^(1/K),  A = trace(I^-1) / K
    Bayesian: the mean of D and of A over draws beta_r
    se_k  = sqrt((I^-1)_kk) at the prior means
    n_k   = (1.96 se_k / |beta_k|)^2  (none when the prior mean is 0)

The design's columns are `<attribute>_<alternative>`, attribute-major, the
alternatives in the order of `[design].alternatives` (only those the
attribute enters, whatever order the attribute's own list has).

Checks asserted here
--------------------
* every information matrix (at the means and at every draw) is symmetric and
  positive definite (Cholesky succeeds, smallest eigenvalue > 0);
* the D-error from det(inv(I)) agrees with the one from the Cholesky factor
  (scipy.linalg.cholesky) and from the eigenvalues to 1e-10 (relative), and
  the A-error from trace(inv(I)) with sum(1/eigenvalues) to 1e-10;
* the information equals the probability-weighted sum of outer products of
  the scores s_tj = X_t'(e_j - P_t) (common practice: the information is the
  expected outer product of the score), to 1e-12 relative, in every case;
* the information equals minus the Hessian of the expected log-likelihood
  E_beta[log L(b)] = sum_t sum_j P_tj(beta) log P_tj(b) at b = beta (common
  practice), the Hessian by central second differences of that function in
  utility-scaled coordinates, to 1e-5 relative (Frobenius), in every case;
* hadamard_foldover: D-error = A-error = 4 / (N (l1 - l0)^2) = 0.5 for N = 8
  tasks and levels 0, 1 (Street and Burgess 2007, ch. 4; the bound follows
  from Hadamard's determinant inequality), to 1e-12;
* every task value is one of its attribute's levels; no task has an
  alternative at least as good as every other on every attribute under the
  priors' signs (zero prior: only equal levels count; an attribute entering
  only one of two alternatives makes them incomparable), and no task repeats
  another (unlabelled designs: the same profiles in any order).

Prior draws (Bayesian cases): numpy default_rng(seed of the design file)
.standard_normal((200, K)), row r giving beta_r = means + sds * z_r (fixed
priors have sd 0 and stay at their means).  These are NOT the draws
sharecast makes from the same file (it uses its own sequence); a test
compares the criteria at the `betas` given here.

Tasks of unlabelled_fixed, labelled_bayesian and three_alternatives_fixed:
level-balanced random designs (numpy default_rng), repaired by swapping a
column's levels between tasks until no task is dominated or repeated, the
best D-error (at the prior means) of 40 such designs kept.  Any valid design
would do; the numbers refer to the tasks stored in the fixture.
"""

import os

for _v in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_v] = "1"

import json  # noqa: E402
import sys  # noqa: E402
import tomllib  # noqa: E402

import numpy as np  # noqa: E402
import scipy  # noqa: E402
import scipy.linalg  # noqa: E402

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
OUT = os.path.join(ROOT, "tests", "fixtures", "design", "design_reference.json")

R_DRAWS = 200
T_RATIO = 1.96
SEARCH_DESIGNS = 40

SOURCE = (
    "The logit's Fisher information of one respondent, "
    "sum_t X_t'(diag(P_t) - P_t P_t')X_t, and D-error det(I^-1)^(1/K), "
    "A-error trace(I^-1)/K, their means over prior draws, standard errors "
    "sqrt(diag(I^-1)) and sample sizes (1.96 se/|beta|)^2 (Huber and Zwerina "
    "1996; Rose and Bliemer 2009, 2013; Kessels et al. 2006), computed by "
    "numpy in tests/reference/design_reference.py."
)
SOURCE_HADAMARD = (
    "The optimal paired design for binary attributes at zero priors: foldover "
    "pairs whose differences are columns of a Hadamard matrix reach the bound "
    "D-error = 4/(N (l1-l0)^2) (Street and Burgess 2007; Hadamard's "
    "determinant inequality), with the logit's information, D- and A-errors, "
    "standard errors as in Huber and Zwerina 1996 and Rose and Bliemer 2009, "
    "computed by numpy in tests/reference/design_reference.py."
)


# --------------------------------------------------------------------------
# The design file, read independently (tomllib) into what the formulas need.
# --------------------------------------------------------------------------


def prior_of(value):
    """A fixed prior is a number; a normal one a table with mean and sd."""
    if value is None:
        return 0.0, 0.0
    if isinstance(value, dict):
        return float(value["mean"]), float(value["sd"])
    return float(value), 0.0


def plan_of(text):
    doc = tomllib.loads(text)
    design = doc["design"]
    alts = list(design["alternatives"])
    attributes = []
    for a in doc["attribute"]:
        enters = sorted(alts.index(n) for n in a.get("alternatives", alts))
        mean, sd = prior_of(a.get("prior"))
        attributes.append(
            {
                "name": a["name"],
                "levels": [float(x) for x in a["levels"]],
                "enters": enters,
                "mean": mean,
                "sd": sd,
            }
        )
    raw_constants = design.get("constants", {})
    constants = []
    for j, alt in enumerate(alts):
        if alt in raw_constants:
            mean, sd = prior_of(raw_constants[alt])
            constants.append({"alternative": j, "mean": mean, "sd": sd})
    columns = []  # (name, attribute index, alternative index)
    for k, a in enumerate(attributes):
        for j in a["enters"]:
            columns.append((f"{a['name']}_{alts[j]}", k, j))
    parameters = [a["name"] for a in attributes] + [
        f"asc_{alts[c['alternative']]}" for c in constants
    ]
    means = np.array([a["mean"] for a in attributes] + [c["mean"] for c in constants])
    sds = np.array([a["sd"] for a in attributes] + [c["sd"] for c in constants])
    return {
        "doc": doc,
        "alternatives": alts,
        "attributes": attributes,
        "constants": constants,
        "columns": columns,
        "parameters": parameters,
        "means": means,
        "sds": sds,
        "tasks": int(design["tasks"]),
        "blocks": int(design.get("blocks", 1)),
        "seed": int(design.get("seed", 1)),
        "labelled": bool(constants)
        or any(len(a["enters"]) != len(alts) for a in attributes),
    }


def coded(plan, tasks):
    """The coded matrices X (T x J x K) of the tasks (T x columns of level values)."""
    tasks = np.asarray(tasks, dtype=float)
    n_attr = len(plan["attributes"])
    k = len(plan["parameters"])
    x = np.zeros((tasks.shape[0], len(plan["alternatives"]), k))
    for c, (_, a, j) in enumerate(plan["columns"]):
        x[:, j, a] = tasks[:, c]
    for i, con in enumerate(plan["constants"]):
        x[:, con["alternative"], n_attr + i] = 1.0
    return x


# --------------------------------------------------------------------------
# The logit's information and the criteria.
# --------------------------------------------------------------------------


def log_probabilities(x, beta):
    v = x @ beta  # T x J
    top = v.max(axis=1, keepdims=True)
    return v - (top + np.log(np.exp(v - top).sum(axis=1, keepdims=True)))


def information(x, beta):
    """sum_t X_t' (diag(P_t) - P_t P_t') X_t."""
    p = np.exp(log_probabilities(x, beta))
    info = np.zeros((x.shape[2], x.shape[2]))
    for xt, pt in zip(x, p):
        info += xt.T @ (np.diag(pt) - np.outer(pt, pt)) @ xt
    return info


def information_by_scores(x, beta):
    """sum_t sum_j P_tj s_tj s_tj', s_tj = X_t'(e_j - P_t): common practice."""
    p = np.exp(log_probabilities(x, beta))
    info = np.zeros((x.shape[2], x.shape[2]))
    for xt, pt in zip(x, p):
        for j in range(xt.shape[0]):
            e = np.zeros(xt.shape[0])
            e[j] = 1.0
            s = xt.T @ (e - pt)
            info += pt[j] * np.outer(s, s)
    return info


def information_by_hessian(x, beta):
    """Minus the central-difference Hessian of sum_t sum_j P_tj(beta) log P_tj(b)
    at b = beta (common practice: information = -expected Hessian).  The steps
    are taken in coordinates u with b = beta + S u, S = diag(1/max|X_k|), so
    each step moves utilities by about h; the result is mapped back."""
    k = x.shape[2]
    p0 = np.exp(log_probabilities(x, beta))
    scale = 1.0 / np.abs(x).reshape(-1, k).max(axis=0)
    h = 2e-4

    def f(u):
        return float((p0 * log_probabilities(x, beta + scale * u)).sum())

    hess = np.zeros((k, k))
    for a in range(k):
        for b in range(a, k):
            ea = np.zeros(k)
            eb = np.zeros(k)
            ea[a] = h
            eb[b] = h
            d = f(ea + eb) - f(ea - eb) - f(-ea + eb) + f(-ea - eb)
            hess[a, b] = hess[b, a] = d / (4.0 * h * h)
    return -hess / np.outer(scale, scale)


def criteria(info):
    k = info.shape[0]
    inv = np.linalg.inv(info)
    d = np.linalg.det(inv) ** (1.0 / k)
    a = np.trace(inv) / k
    return d, a, inv


def check_information(info, label):
    k = info.shape[0]
    asym = np.abs(info - info.T).max()
    assert asym <= 1e-12 * np.abs(info).max(), f"{label}: asymmetric by {asym}"
    sym = 0.5 * (info + info.T)
    chol = scipy.linalg.cholesky(sym, lower=True)  # raises unless positive definite
    eig = np.linalg.eigvalsh(sym)
    assert eig.min() > 0.0, f"{label}: smallest eigenvalue {eig.min()}"
    d, a, _ = criteria(info)
    d_chol = np.exp(-2.0 * np.log(np.diag(chol)).sum() / k)
    d_eig = np.exp(-np.log(eig).mean())
    a_eig = (1.0 / eig).sum() / k
    for name, got, want in (("D chol", d_chol, d), ("D eig", d_eig, d), ("A eig", a_eig, a)):
        assert abs(got - want) <= 1e-10 * abs(want), f"{label}: {name} {got} vs {want}"
    return max(abs(d_chol - d) / d, abs(d_eig - d) / d, abs(a_eig - a) / a)


# --------------------------------------------------------------------------
# Tasks: validity and a small random search for the cases that need one.
# --------------------------------------------------------------------------


def at_least_as_good(plan, row, a, b):
    for k, attr in enumerate(plan["attributes"]):
        ca = [c for c, col in enumerate(plan["columns"]) if col[1] == k and col[2] == a]
        cb = [c for c, col in enumerate(plan["columns"]) if col[1] == k and col[2] == b]
        if not ca and not cb:
            continue
        if not ca or not cb:
            return False
        sign = np.sign(attr["mean"])
        xa, xb = row[ca[0]], row[cb[0]]
        if sign * (xa - xb) < 0 or (sign == 0 and xa != xb):
            return False
    return True


def dominated(plan, row):
    j = len(plan["alternatives"])
    return any(
        all(a == b or at_least_as_good(plan, row, a, b) for b in range(j)) for a in range(j)
    )


def profiles_key(plan, row):
    if plan["labelled"]:
        return tuple(row)
    profiles = []
    for j in range(len(plan["alternatives"])):
        profiles.append(tuple(row[c] for c, col in enumerate(plan["columns"]) if col[2] == j))
    return tuple(sorted(profiles))


def bad_tasks(plan, tasks):
    keys = [profiles_key(plan, list(r)) for r in tasks]
    bad = set()
    for t, row in enumerate(tasks):
        if dominated(plan, list(row)) or keys.count(keys[t]) > 1:
            bad.add(t)
    return bad


def check_tasks(plan, tasks, label):
    assert len(tasks) == plan["tasks"], f"{label}: {len(tasks)} tasks"
    for row in tasks:
        assert len(row) == len(plan["columns"])
        for value, (name, k, _) in zip(row, plan["columns"]):
            assert value in plan["attributes"][k]["levels"], f"{label}: {name} = {value}"
    bad = bad_tasks(plan, tasks)
    assert not bad, f"{label}: dominated or repeated tasks {sorted(bad)}"


def balanced_design(plan, rng):
    t = plan["tasks"]
    cols = []
    for _, k, _ in plan["columns"]:
        levels = plan["attributes"][k]["levels"]
        assert t % len(levels) == 0, "level balance needs the levels to divide the tasks"
        cols.append(rng.permutation(np.repeat(levels, t // len(levels))))
    tasks = np.array(cols).T
    bad = bad_tasks(plan, tasks)
    for _ in range(20000):
        if not bad:
            return tasks
        t0 = rng.choice(sorted(bad))
        c = rng.integers(len(plan["columns"]))
        t1 = rng.integers(t)
        trial = tasks.copy()
        trial[t0, c], trial[t1, c] = tasks[t1, c], tasks[t0, c]
        trial_bad = bad_tasks(plan, trial)
        if len(trial_bad) <= len(bad):
            tasks, bad = trial, trial_bad
    return None


def searched_tasks(plan):
    rng = np.random.default_rng(plan["seed"] + 7)
    best, best_d = None, np.inf
    for _ in range(SEARCH_DESIGNS):
        tasks = balanced_design(plan, rng)
        if tasks is None:
            continue
        info = information(coded(plan, tasks), plan["means"])
        if np.linalg.eigvalsh(info).min() <= 1e-9:
            continue
        d = criteria(info)[0]
        if d < best_d:
            best, best_d = tasks, d
    assert best is not None
    for c, (_, k, _) in enumerate(plan["columns"]):
        counts = np.unique(best[:, c], return_counts=True)[1]
        assert len(counts) == len(plan["attributes"][k]["levels"]) and counts.min() == counts.max()
    return [[float(v) for v in row] for row in best]


def hadamard_tasks():
    """Sylvester H8; alternative A = (h + 1)/2 on columns 2..7, B = 1 - A."""
    h2 = np.array([[1, 1], [1, -1]])
    h8 = np.kron(np.kron(h2, h2), h2)
    diffs = h8[:, 1:7]
    a = (diffs + 1) // 2
    b = 1 - a
    # Columns attribute-major: x1_a, x1_b, x2_a, x2_b, ...
    rows = np.stack([a, b], axis=2).reshape(8, 12)
    assert np.array_equal(a - b, diffs)
    assert np.array_equal(diffs.T @ diffs, 8 * np.eye(6, dtype=int))
    return [[float(v) for v in row] for row in rows]


# --------------------------------------------------------------------------
# The cases.
# --------------------------------------------------------------------------

UNLABELLED_FIXED = """\
title = "Two plain options"

[design]
alternatives = ["left", "right"]
tasks = 12
blocks = 1
seed = 11
draws = 200

[[attribute]]
name = "price"
levels = [2, 4, 6, 8]
prior = -0.35

[[attribute]]
name = "wait"
levels = [5, 10, 15]
prior = -0.08

[[attribute]]
name = "guarantee"
levels = [0, 1]
prior = 0.6
"""

LABELLED_BAYESIAN = """\
title = "Getting to the fair: car, coach or rail"

[design]
alternatives = ["car", "coach", "rail"]
tasks = 18
blocks = 3
seed = 23
draws = 200

[design.constants]
coach = -0.4
rail = { mean = 0.25, sd = 0.3 }

[[attribute]]
name = "fare"
levels = [2, 4, 6]
prior = { mean = -0.3, sd = 0.1 }

[[attribute]]
name = "travel_time"
levels = [30, 45, 60]
prior = { mean = -0.04, sd = 0.015 }

[[attribute]]
name = "wifi"
levels = [0, 1]
prior = 0.5
alternatives = ["rail", "coach"]

[[attribute]]
name = "parking"
levels = [0, 3, 6]
prior = -0.2
alternatives = ["car"]
"""

HADAMARD_FOLDOVER = """\
title = "Six switches, foldover pairs"

[design]
alternatives = ["a", "b"]
tasks = 8
blocks = 1
seed = 5
draws = 200

[[attribute]]
name = "x1"
levels = [0, 1]
prior = 0.0

[[attribute]]
name = "x2"
levels = [0, 1]
prior = 0.0

[[attribute]]
name = "x3"
levels = [0, 1]
prior = 0.0

[[attribute]]
name = "x4"
levels = [0, 1]
prior = 0.0

[[attribute]]
name = "x5"
levels = [0, 1]
prior = 0.0

[[attribute]]
name = "x6"
levels = [0, 1]
prior = 0.0
"""

THREE_ALTERNATIVES_FIXED = """\
title = "Three plans for a delivery"

[design]
alternatives = ["first", "second", "third"]
tasks = 24
blocks = 3
seed = 31
draws = 200

[[attribute]]
name = "cost"
levels = [10, 15, 20, 25]
prior = -0.12

[[attribute]]
name = "comfort"
levels = [1, 2, 3]
prior = 0.4

[[attribute]]
name = "distance"
levels = [0.5, 1.25, 3.0]
prior = -0.3

[[attribute]]
name = "green_label"
levels = [0, 1]
prior = 0.0

[[attribute]]
name = "delay"
levels = [0, 5, 10, 20]
prior = -0.05
"""


def draws_of(plan):
    if not (plan["sds"] > 0).any():
        return plan["means"][None, :].copy()
    rng = np.random.default_rng(plan["seed"])
    z = rng.standard_normal((R_DRAWS, len(plan["parameters"])))
    return plan["means"][None, :] + plan["sds"][None, :] * z


def rel(a, b):
    return float(np.linalg.norm(a - b) / np.linalg.norm(b))


def run_case(name, text, tasks, source):
    plan = plan_of(text)
    if tasks is None:
        tasks = searched_tasks(plan)
    check_tasks(plan, tasks, name)
    x = coded(plan, tasks)
    means = plan["means"]
    betas = draws_of(plan)

    info = information(x, means)
    worst = check_information(info, f"{name} at the means")
    d_means, a_means, inv = criteria(info)
    by_scores = rel(information_by_scores(x, means), info)
    by_hessian = rel(information_by_hessian(x, means), info)
    assert by_scores <= 1e-12, f"{name}: scores {by_scores}"
    assert by_hessian <= 1e-5, f"{name}: Hessian {by_hessian}"

    ds, as_ = [], []
    for r, beta in enumerate(betas):
        info_r = information(x, beta)
        worst = max(worst, check_information(info_r, f"{name} draw {r}"))
        d, a, _ = criteria(info_r)
        ds.append(d)
        as_.append(a)
    d_error = float(np.mean(ds))
    a_error = float(np.mean(as_))

    se = np.sqrt(np.diag(inv))
    sizes = [
        None if m == 0.0 else float((T_RATIO * s / abs(m)) ** 2) for s, m in zip(se, means)
    ]

    print(f"\n{name}: K = {len(means)}, T = {len(tasks)}, draws = {len(betas)}")
    print(f"  parameters        {plan['parameters']}")
    print(f"  D-error           {d_error:.12g}   (at the means {d_means:.12g})")
    print(f"  A-error           {a_error:.12g}   (at the means {a_means:.12g})")
    print(f"  standard errors   {np.array2string(se, precision=6)}")
    print(f"  sample sizes      {sizes}")
    print(f"  second-way D/A max rel diff {worst:.2e}; scores {by_scores:.2e}; "
          f"Hessian {by_hessian:.2e}")

    return {
        "name": name,
        "source": source,
        "design_toml": text,
        "alternatives": plan["alternatives"],
        "columns": [c[0] for c in plan["columns"]],
        "tasks": tasks,
        "parameters": plan["parameters"],
        "means": means.tolist(),
        "sds": plan["sds"].tolist(),
        "betas": betas.tolist(),
        "d_error": d_error,
        "a_error": a_error,
        "d_error_at_means": float(d_means),
        "a_error_at_means": float(a_means),
        "information_at_means": info.tolist(),
        "standard_errors": se.tolist(),
        "sample_sizes": sizes,
    }


def to_json(obj, indent=0):
    """Indented JSON with each innermost list of numbers on one line."""
    pad = " " * indent
    inner = " " * (indent + 1)
    if isinstance(obj, dict):
        items = [f"{inner}{json.dumps(k)}: {to_json(v, indent + 1)}" for k, v in obj.items()]
        return "{\n" + ",\n".join(items) + "\n" + pad + "}"
    if isinstance(obj, list) and obj and all(isinstance(v, list) for v in obj):
        rows = [inner + to_json(v, indent + 1) for v in obj]
        return "[\n" + ",\n".join(rows) + "\n" + pad + "]"
    if isinstance(obj, list) and any(isinstance(v, dict) for v in obj):
        rows = [inner + to_json(v, indent + 1) for v in obj]
        return "[\n" + ",\n".join(rows) + "\n" + pad + "]"
    return json.dumps(obj, separators=(", ", ": "), allow_nan=False)


def main():
    cases = [
        run_case("unlabelled_fixed", UNLABELLED_FIXED, None, SOURCE),
        run_case("labelled_bayesian", LABELLED_BAYESIAN, None, SOURCE),
        run_case("hadamard_foldover", HADAMARD_FOLDOVER, hadamard_tasks(), SOURCE_HADAMARD),
        run_case("three_alternatives_fixed", THREE_ALTERNATIVES_FIXED, None, SOURCE),
    ]
    had = cases[2]
    bound = 4.0 / (8 * (1.0 - 0.0) ** 2)
    # Street and Burgess 2007: the foldover Hadamard pairs reach the bound.
    assert abs(had["d_error"] - bound) <= 1e-12, had["d_error"]
    assert abs(had["a_error"] - bound) <= 1e-12, had["a_error"]
    print(f"\nhadamard_foldover: D-error {had['d_error']!r} = bound {bound}")

    out = {
        "description": (
            "Expected efficiency of stated-choice designs under the logit "
            "(one respondent's information, D- and A-error, fixed and Bayesian, "
            "standard errors and sample sizes), written by "
            "tests/reference/design_reference.py."
        ),
        "numpy": np.__version__,
        "scipy": scipy.__version__,
        "cases": cases,
    }
    os.makedirs(os.path.dirname(OUT), exist_ok=True)
    with open(OUT, "w") as f:
        f.write(to_json(out) + "\n")
    print(f"\nwrote {os.path.relpath(OUT, ROOT)}")


if __name__ == "__main__":
    sys.exit(main())
