#!/usr/bin/env bash
# Benchmark (not a test): init + seal on a generated numeric CSV of about 400 MB,
# against three references on the same file in the same run:
#   sha256sum (coreutils), openssl dgst -sha256 (hardware SHA: the floor for any pass
#   that hashes every byte), and a pandas script that reads, splits and hashes the rows.
# Prints throughput, ratios, peak RSS and the ledger's size relative to the source.
#   bash bench/init_seal.sh [ROWS]      (default 4700000 rows, about 400 MB)
set -euo pipefail
cd "$(dirname "$0")/.."
rows=${1:-4700000}
bash tools/build.sh >/dev/null
work=${BENCH_DIR:-out/bench}
rm -rf "$work" && mkdir -p "$work"
data="$work/numeric.csv"
build/examples/make_demo_data --numeric --rows "$rows" --seed 1 --out "$data"
bytes=$(stat -c %s "$data")
mb=$(awk -v b="$bytes" 'BEGIN { printf "%.1f", b / 1e6 }')
echo "data: $data, $rows rows, $mb MB"
cat "$data" > /dev/null  # warm the page cache so every contender reads from memory

seconds() {  # seconds COMMAND...: wall time of one run
  local t0 t1
  t0=$(date +%s.%N); "$@" > /dev/null; t1=$(date +%s.%N)
  awk -v a="$t0" -v b="$t1" 'BEGIN { printf "%.3f", b - a }'
}

t_sha=$(seconds sha256sum "$data")
t_ossl=$(seconds openssl dgst -sha256 "$data")
t_pandas=$(seconds /usr/bin/python3 bench/pandas_split_hash.py "$data")

unseen=build/harness/unseen
build/harness/unseen keygen --out "$work/k" > /dev/null
/usr/bin/time -f "%e %M" -o "$work/init.time" \
  "$unseen" init --ledger "$work/l" --data "$data" --target y > /dev/null
/usr/bin/time -f "%e %M" -o "$work/seal.time" \
  "$unseen" seal --ledger "$work/l" --key-file "$work/k" --fraction 0.2 --seed 1 \
  --dev-out "$work/dev.csv" > /dev/null
read -r t_init rss_init < "$work/init.time"
read -r t_seal rss_seal < "$work/seal.time"
ledger=$(stat -c %s "$work/l")

awk -v mb="$mb" -v sha="$t_sha" -v ossl="$t_ossl" -v pd="$t_pandas" -v ti="$t_init" \
    -v ts="$t_seal" -v ri="$rss_init" -v rs="$rss_seal" -v lb="$ledger" -v b="$bytes" 'BEGIN {
  u = ti + ts
  printf "%-28s %8s %10s\n", "contender", "seconds", "MB/s"
  printf "%-28s %8.2f %10.0f\n", "sha256sum", sha, mb / sha
  printf "%-28s %8.2f %10.0f\n", "openssl dgst -sha256", ossl, mb / ossl
  printf "%-28s %8.2f %10.0f\n", "pandas read+split+hash", pd, mb / pd
  printf "%-28s %8.2f %10.0f\n", "unseen init", ti, mb / ti
  printf "%-28s %8.2f %10.0f\n", "unseen seal", ts, mb / ts
  printf "%-28s %8.2f %10.0f\n", "unseen init+seal", u, mb / u
  printf "throughput ratio init+seal / sha256sum: %.2f (goal >= 0.5)\n", sha / u
  printf "throughput ratio init+seal / openssl:   %.2f (stretch >= 0.5)\n", ossl / u
  printf "throughput ratio init+seal / pandas:    %.2f\n", pd / u
  printf "peak RSS: init %.0f MiB, seal %.0f MiB (goal <= 256)\n", ri / 1024, rs / 1024
  printf "ledger: %d bytes = %.1f%% of the source (goal <= 30%%, stretch < 15%%)\n", lb, 100 * lb / b
}'
