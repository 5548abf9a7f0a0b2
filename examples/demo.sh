#!/usr/bin/env bash
# The demo workflow on a fresh machine: install, build, then keygen, init,
# seal, verify, fit, models, predict, export, carve and a blend, eval (a
# batch, a repeat, an external predictor), bound, history and status on the
# invented Fernbrook crate data.
# Everything it writes goes to out/demo/ (recreated on each run).
set -euo pipefail
cd "$(dirname "$0")/.."
bash tools/install-deps.sh
bash tools/build.sh
unseen=build/harness/unseen
demo=out/demo
rm -rf "$demo" && mkdir -p "$demo"
set -x
build/examples/make_demo_data --out "$demo/crates.csv" --rows 2000 --seed 7
"$unseen" keygen --out "$demo/holdout.key"
"$unseen" init --ledger "$demo/crates.ledger" --data "$demo/crates.csv" --target passed \
  --id crate_id --group orchard --time picked_on
"$unseen" seal --ledger "$demo/crates.ledger" --key-file "$demo/holdout.key" --fraction 0.2 \
  --strategy group --seed 11 --dev-out "$demo/crates.dev.csv"
head=$("$unseen" head --ledger "$demo/crates.ledger")
"$unseen" verify --ledger "$demo/crates.ledger" --key-file "$demo/holdout.key" --expect-head "$head"
"$unseen" fit --ledger "$demo/crates.ledger" --spec examples/crates.spec.toml --name crates-logistic
"$unseen" models --ledger "$demo/crates.ledger"
"$unseen" predict --ledger "$demo/crates.ledger" --model crates-logistic --data "$demo/crates.dev.csv" \
  --out "$demo/crates.dev.predictions.csv"
"$unseen" export --ledger "$demo/crates.ledger" --out "$demo/export.csv" --folds 3 --out-dir "$demo"
# A blend: carve whole orchards aside, fit two members without them, weigh the members on them.
"$unseen" carve --ledger "$demo/crates.ledger" --name blendset --fraction 0.3 --seed 5
"$unseen" fit --ledger "$demo/crates.ledger" --spec examples/crates.spec.toml --name crates-logistic-b \
  --exclude blendset
"$unseen" fit --ledger "$demo/crates.ledger" --spec examples/crates.knn.spec.toml --name crates-knn-b \
  --exclude blendset
"$unseen" fit --ledger "$demo/crates.ledger" --spec examples/crates.blend.spec.toml --name crates-blend
"$unseen" models --ledger "$demo/crates.ledger" --show crates-blend
"$unseen" predict --ledger "$demo/crates.ledger" --model crates-blend --data "$demo/crates.dev.csv" \
  --out "$demo/crates.dev.blend.csv"
"$unseen" fit --ledger "$demo/crates.ledger" --spec examples/crates-boosted.spec.toml --name crates-boosted
# The key holder scores both frozen models as one batch, then asks again (answered from the ledger).
"$unseen" eval --ledger "$demo/crates.ledger" --key-file "$demo/holdout.key" crates-logistic crates-boosted crates-blend
"$unseen" eval --ledger "$demo/crates.ledger" --key-file "$demo/holdout.key" crates-logistic
"$unseen" eval --ledger "$demo/crates.ledger" --key-file "$demo/holdout.key" --metric auc crates-logistic
# A predictor outside the tool, asked after four answers: its interval pays for them.
"$unseen" eval --ledger "$demo/crates.ledger" --key-file "$demo/holdout.key" --name always-pass \
  --command "sh examples/always_pass.sh"
# The calculator: answer 4 of a ledger, after 3 answers, its question one of 52 fixed in advance.
"$unseen" bound --n 400 --errors 37 --reveals 3 --advance 52
"$unseen" models --ledger "$demo/crates.ledger"
"$unseen" verify --ledger "$demo/crates.ledger" --key-file "$demo/holdout.key"
"$unseen" history --ledger "$demo/crates.ledger"
"$unseen" status --ledger "$demo/crates.ledger"
