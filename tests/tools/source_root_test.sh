#!/bin/bash
# tools/source_root.py, written from docs/row-digests.md alone, gives the Merkle root that
# `unseen init` records, for a source of awkward cells and for one of many rows (more than one
# scan batch, a row count that is no power of two).
# Usage: source_root_test.sh UNSEEN_BINARY PROJECT_DIR
set -euo pipefail
unseen=$1
project=$2
dir=$(mktemp -d)
trap 'rm -rf "$dir"' EXIT

check() {  # check NAME: the two roots of $dir/NAME.csv agree
  local name=$1
  "$unseen" init --json --ledger "$dir/$name.ledger" --data "$dir/$name.csv" --target label \
    > "$dir/$name.json"
  local recorded computed
  recorded=$(/usr/bin/python3 -c 'import json,sys; print(json.load(open(sys.argv[1]))["merkle_root"])' \
    "$dir/$name.json")
  computed=$(/usr/bin/python3 "$project/tools/source_root.py" "$dir/$name.csv")
  if [[ "$recorded" != "$computed" ]]; then
    echo "FAIL $name: init recorded $recorded, tools/source_root.py computed $computed" >&2
    exit 1
  fi
  echo "ok $name $computed"
}

# Numbers by value (1, 1.0, +1, 1e0 agree; -0 is +0), the three missing spellings, text that
# looks almost like a number, quoting, an embedded comma and quote, UTF-8, CRLF line ends.
printf '%s\r\n' \
  'x,y,note,label' \
  '1,1.0,plain,0' \
  '+1,1e0,"with, comma",1' \
  '-0,0,"say ""hi""",0' \
  'NA,,NaN,1' \
  ' 1,0x10,inf,0' \
  '02134,2134,1e400,1' \
  '.5,5.,Ünïcødé,0' > "$dir/awkward.csv"
check awkward

/usr/bin/python3 - "$dir/many.csv" <<'PY'
import random, sys
rng = random.Random(7)
with open(sys.argv[1], "w") as f:
    f.write("a,b,c,label\n")
    for i in range(9001):
        f.write(f"{rng.randint(0, 1)},{rng.random():.6f},t{rng.randint(0, 99)},{rng.randint(0, 1)}\n")
PY
check many
