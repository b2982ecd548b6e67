#!/usr/bin/env bash
# Side-by-side timing of `sharecast fit` (the whole process, with and without
# its analysis sections) against statsmodels (MNLogit, ConditionalLogit) and
# scikit-learn (LogisticRegression) fits run in-process on data already
# loaded, on invented data simulated by `sharecast bench`. It prints the peers'
# BLAS and thread settings (threadpoolctl) and the load average beside each figure.
#
#   bench/compare.sh                  # 200,000 situations (MNLogit), 20,000 (ConditionalLogit)
#   bench/compare.sh --condlogit-n 5000  # a smaller ConditionalLogit case (it is slow)
#   bench/compare.sh --mnl-n 100000 --repeats 3 --skip-condlogit
#
# Everything it makes goes under bench/out/ (git-ignored): the data, a copy of
# the binary (so that a rebuild while it runs changes nothing), a throwaway
# virtual environment with statsmodels, pandas, scikit-learn and
# threadpoolctl, and compare.json.
set -euo pipefail

here="$(cd "$(dirname "$0")" && pwd)"
root="$(dirname "$here")"
out="$here/out"
mkdir -p "$out"

# The test build makes the same binary with the same features as `.ci/run`,
# so polars is not compiled a second time for a different feature set.
(cd "$root" && cargo test --release --no-run)
cp "$root/target/release/sharecast" "$out/sharecast"

venv="$out/venv"
if ! "$venv/bin/python" -c "import statsmodels, pandas, sklearn, threadpoolctl" 2>/dev/null; then
    python3 -m venv "$venv"
    "$venv/bin/pip" install --quiet --upgrade pip
    "$venv/bin/pip" install --quiet statsmodels pandas scikit-learn threadpoolctl
fi

echo "machine: $(nproc) cores, $(grep -m1 'model name' /proc/cpuinfo | cut -d: -f2 | xargs), \
$(awk '/MemTotal/ {printf "%.1f GB", $2/1e6}' /proc/meminfo)"
"$venv/bin/python" "$here/compare.py" --sharecast "$out/sharecast" --out "$out" "$@"
