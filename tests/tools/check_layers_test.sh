#!/usr/bin/env bash
# tools/check_layers.sh passes on a copy of the tree and fails, naming the line, once an upward
# include or a CLI11 include outside harness/cli is planted in the copy.
#
# Usage: check_layers_test.sh SOURCE_DIR
set -euo pipefail

src="$(cd "${1:?usage: check_layers_test.sh SOURCE_DIR}" && pwd)"
check="$src/tools/check_layers.sh"
tmp="$(mktemp -d)"
trap 'rm -rf "$tmp"' EXIT

failures=0
fail() {
  echo "FAIL: $1" >&2
  failures=$((failures + 1))
}

# fresh_copy: a pristine copy of storage/ and harness/ in $tmp/tree.
fresh_copy() {
  rm -rf "$tmp/tree"
  mkdir -p "$tmp/tree"
  cp -R "$src/storage" "$src/harness" "$tmp/tree/"
}

# run_check: runs the checker on the copy; sets `rc` and `out` (stdout and stderr).
run_check() {
  rc=0
  out="$(bash "$check" "$tmp/tree" 2>&1)" || rc=$?
}

# plant FILE TEXT: inserts TEXT as line 2 of FILE in the copy.
plant() {
  sed -i "1a $2" "$tmp/tree/$1"
}

# expect_offence WHAT LINE: the checker exits 1 and prints exactly LINE among its output.
expect_offence() {
  run_check
  [[ $rc -eq 1 ]] || fail "$1: exit $rc, expected 1; output: $out"
  grep -qxF "$2" <<<"$out" || fail "$1: no line '$2' in: $out"
}

# The unmodified copy passes.
fresh_copy
run_check
[[ $rc -eq 0 ]] || fail "unmodified copy: exit $rc, expected 0; output: $out"
grep -q '^check_layers: OK' <<<"$out" || fail "unmodified copy: no OK line in: $out"

# data including workflow runs against the order.
fresh_copy
plant harness/data/csv.h '#include "harness/workflow/eval.h"'
expect_offence "upward include" \
  "harness/data/csv.h:2: layer data includes harness/workflow/eval.h (layer workflow, higher)"

# storage including anything in harness/ runs against the order.
fresh_copy
plant storage/ledger.cc '#include "harness/data/csv.h"'
expect_offence "storage includes harness" \
  "storage/ledger.cc:2: layer storage includes harness/data/csv.h (layer data, higher)"

# CLI11 belongs to harness/cli only.
fresh_copy
plant harness/workflow/eval.cc '#include <CLI/CLI.hpp>'
expect_offence "CLI11 outside cli" \
  "harness/workflow/eval.cc:2: layer workflow includes <CLI/CLI.hpp> (CLI11, only layer cli may)"

# A source file outside the layer folders has no place in the order.
fresh_copy
printf '#include "storage/status.h"\n' >"$tmp/tree/harness/stray.cc"
layers="storage data sampling pipeline bounds ledger evaluate workflow cli"
expect_offence "file outside the layers" "harness/stray.cc:1: not in a layer folder ($layers)"

# A same-layer include and a downward include are fine.
fresh_copy
plant harness/bounds/ladder.cc '#include "harness/bounds/bounds.h"'
plant harness/bounds/ladder.cc '#include "harness/data/csv.h"'
run_check
[[ $rc -eq 0 ]] || fail "same-layer and downward includes: exit $rc, expected 0; output: $out"

if ((failures > 0)); then
  echo "check_layers_test: $failures failure(s)" >&2
  exit 1
fi
echo "check_layers_test: OK"
