#!/bin/bash
# Times our `linear` and `logistic` learners against scikit-learn on the same data and prints the
# ratios. Not a test: run by hand on an otherwise idle machine.
#
#   bash bench/learners.sh [BUILD_DIR]        # default BUILD_DIR: build
#
# Environment: ROWS_LINEAR (1000000), ROWS_LOGISTIC (200000), FEATURES (50), REPEATS (3, best of),
# L2 (1.0), TOL (1e-8: our relative gradient tolerance), PYTHON (/usr/bin/python3, Debian's, which
# has python3-sklearn), BENCH_DIR (a scratch directory; default: a fresh one under $TMPDIR).
# Needs about 1.5 GB of scratch disk and 3 GB of memory at the default sizes.
#
# Ours takes a gradient tolerance relative to the gradient at zero, of the summed objective.
# scikit-learn 1.2's LogisticRegression averages the loss over the rows (and divides the penalty
# by their number), so its `tol` bounds the gradient of the mean: the script passes our absolute
# tolerance divided by the row count, and both solvers are asked for the same gradient. It times
# lbfgs and newton-cholesky (the other second-order method in 1.2) and reports each solution's
# final gradient of the summed objective and its largest difference from our coefficients. lbfgs
# also stops when the objective changes by less than 64 machine epsilons, a rule its API does not
# expose, so it may stop short of the gradient asked; the line then says so.
set -euo pipefail

BUILD_DIR=${1:-build}
BIN=$BUILD_DIR/bench/learners_bench
ROWS_LINEAR=${ROWS_LINEAR:-1000000}
ROWS_LOGISTIC=${ROWS_LOGISTIC:-200000}
FEATURES=${FEATURES:-50}
REPEATS=${REPEATS:-3}
L2=${L2:-1.0}
TOL=${TOL:-1e-8}
PYTHON=${PYTHON:-/usr/bin/python3}

if [[ ! -x $BIN ]]; then
  echo "learners.sh: $BIN not found; build it: cmake --build $BUILD_DIR --target learners_bench" >&2
  exit 2
fi
if [[ -n ${BENCH_DIR:-} ]]; then
  DIR=$BENCH_DIR
  mkdir -p "$DIR"
else
  DIR=$(mktemp -d "${TMPDIR:-/tmp}/unseen-learners-bench-XXXXXX")
  trap 'rm -rf "$DIR"' EXIT
fi

echo "generating ${ROWS_LINEAR}x${FEATURES} (linear) and ${ROWS_LOGISTIC}x${FEATURES} (logistic) in $DIR" >&2
"$BIN" generate "$DIR" "$ROWS_LINEAR" "$ROWS_LOGISTIC" "$FEATURES"

seconds() { sed -n 's/.*seconds=\([^ ]*\).*/\1/p'; }
OURS_LINEAR=$("$BIN" fit "$DIR" linear "$REPEATS" | seconds)
OURS_LOGISTIC=$("$BIN" fit "$DIR" logistic "$REPEATS" "$L2" "$TOL" | seconds)

DIR=$DIR REPEATS=$REPEATS L2=$L2 TOL=$TOL OURS_LINEAR=$OURS_LINEAR OURS_LOGISTIC=$OURS_LOGISTIC \
  "$PYTHON" - <<'EOF'
import json
import os
import time
import warnings

import numpy as np
import sklearn
from sklearn.linear_model import LinearRegression, LogisticRegression

d = os.environ["DIR"]
repeats = int(os.environ["REPEATS"])
l2 = float(os.environ["L2"])
tol = float(os.environ["TOL"])


def load(kind):
    n, p = (int(v) for v in open(f"{d}/{kind}.shape").read().split())
    X = np.fromfile(f"{d}/{kind}_X.f64", dtype="<f8").reshape(n, p)
    y = np.fromfile(f"{d}/{kind}_y.f64", dtype="<f8")
    return X, y


def best_time(make):
    best, model = float("inf"), None
    for _ in range(repeats):
        start = time.perf_counter()
        model = make()
        best = min(best, time.perf_counter() - start)
    return best, model


def ours(kind, p):
    fitted = json.load(open(f"{d}/ours_{kind}.json"))
    coef = np.array([fitted["coefficients"][f"f{j}"] for j in range(p)])
    return coef, fitted["intercept"], fitted


def gradient_inf(X, y, coef, intercept):
    r = 1.0 / (1.0 + np.exp(-(X @ coef + intercept))) - y
    return float(max(np.abs(X.T @ r + l2 * coef).max(), abs(r.sum())))


print(f"sklearn {sklearn.__version__}, numpy {np.__version__}; best of {repeats}")

X, y = load("linear")
t, m = best_time(lambda: LinearRegression().fit(X, y))
coef, b, _ = ours("linear", X.shape[1])
mine = float(os.environ["OURS_LINEAR"])
diff = max(np.abs(coef - m.coef_).max(), abs(b - m.intercept_))
print(f"linear   {X.shape[0]}x{X.shape[1]}: ours {mine:.3f} s, sklearn LinearRegression {t:.3f} s, "
      f"ratio ours/sklearn {mine / t:.2f}; largest coefficient difference {diff:.1e}")

X, y = load("logistic")
g0 = max(np.abs(X.T @ (0.5 - y)).max(), abs((0.5 - y).sum()))
absolute_tol = tol * max(1.0, g0)
coef, b, fitted = ours("logistic", X.shape[1])
mine = float(os.environ["OURS_LOGISTIC"])
print(f"logistic {X.shape[0]}x{X.shape[1]}, l2={l2}: ours {mine:.3f} s, {fitted['iterations']} "
      f"Newton steps, gradient {gradient_inf(X, y, coef, b):.1e} "
      f"(asked {absolute_tol:.1e} = tol {tol} x gradient at zero {g0:.1e})")
for solver in ("lbfgs", "newton-cholesky"):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        t, m = best_time(lambda: LogisticRegression(C=1.0 / l2, solver=solver,
                                                    tol=absolute_tol / X.shape[0],
                                                    max_iter=100000).fit(X, y))
    diff = max(np.abs(coef - m.coef_[0]).max(), abs(b - m.intercept_[0]))
    g = gradient_inf(X, y, m.coef_[0], m.intercept_[0])
    short = "" if g <= absolute_tol else f" (stopped short of the {absolute_tol:.1e} asked)"
    print(f"  sklearn {solver}: {t:.3f} s, {int(np.max(m.n_iter_))} iterations, gradient "
          f"{g:.1e}{short}; ratio ours/sklearn {mine / t:.2f}; largest coefficient difference "
          f"{diff:.1e}")
EOF
