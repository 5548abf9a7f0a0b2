#!/usr/bin/env bash
# Checks the layer order on every #include in storage/ and harness/.
#
#   storage < data < sampling < pipeline < bounds < ledger < evaluate < workflow < cli
#
# A file may include its own layer and the layers below it, by a repo-rooted path
# ("storage/ledger.h", "harness/data/csv.h"); only harness/cli may include CLI11 (<CLI/...>).
# Prints one line per offence, `FILE:LINE: what`, and exits 1; else prints one OK line and
# exits 0. Exits 2 if ROOT has no storage/ and harness/.
#
# Usage: tools/check_layers.sh [ROOT]   (ROOT defaults to this repository; the tests point it
#                                        at a copy with a planted include)
set -euo pipefail

root="${1:-$(dirname "$0")/..}"
cd "$root"
if [[ ! -d storage || ! -d harness ]]; then
  echo "check_layers: $PWD has no storage/ and harness/ to check" >&2
  exit 2
fi

layers=(storage data sampling pipeline bounds ledger evaluate workflow cli)
declare -A rank
for i in "${!layers[@]}"; do rank[${layers[$i]}]=$i; done

# Sets `layer` to the layer a repo-rooted path belongs to, or to "" if it is in none.
layer_of() {
  layer=""
  case "$1" in
    storage/*) layer=storage ;;
    harness/*/*)
      local rest="${1#harness/}"
      [[ -n "${rank[${rest%%/*}]+set}" ]] && layer="${rest%%/*}"
      ;;
  esac
  return 0
}

offences=0
includes=0
offend() {
  echo "$1"
  offences=$((offences + 1))
}

mapfile -t files < <(find storage harness -type f \( -name '*.h' -o -name '*.cc' \) | sort)
for file in "${files[@]}"; do
  layer_of "$file"
  [[ -n "$layer" ]] || offend "$file:1: not in a layer folder (${layers[*]})"
done

# One grep for the whole tree: FILE:LINE:TEXT for each #include.
include_re='^([^:]+):([0-9]+):[[:space:]]*#[[:space:]]*include[[:space:]]*([<"])([^>"]*)'
while IFS= read -r hit; do
  [[ "$hit" =~ $include_re ]] || continue
  file="${BASH_REMATCH[1]}" line="${BASH_REMATCH[2]}" quote="${BASH_REMATCH[3]}"
  target="${BASH_REMATCH[4]}"
  layer_of "$file"
  from="$layer"
  [[ -n "$from" ]] || continue  # reported above
  includes=$((includes + 1))
  if [[ "$quote" == "<" ]]; then
    if [[ "$target" == CLI/* && "$from" != cli ]]; then
      offend "$file:$line: layer $from includes <$target> (CLI11, only layer cli may)"
    fi
    continue
  fi
  layer_of "$target"
  if [[ -z "$layer" ]]; then
    offend "$file:$line: layer $from includes $target (not a repo-rooted path in a layer)"
  elif ((rank[$layer] > rank[$from])); then
    offend "$file:$line: layer $from includes $target (layer $layer, higher)"
  fi
done < <(grep -rnE --include='*.h' --include='*.cc' '^[[:space:]]*#[[:space:]]*include' \
           storage harness | sort -t: -k1,1 -k2,2n)

order="${layers[*]}"
if ((offences > 0)); then
  echo "check_layers: $offences offence(s); the order is ${order// / < }" >&2
  exit 1
fi
echo "check_layers: OK, ${#files[@]} files, $includes includes keep ${order// / < }"
