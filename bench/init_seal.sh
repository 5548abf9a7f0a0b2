#!/usr/bin/env bash
# Benchmark (not a test): init + seal on a generated numeric CSV of about 400 MB,
# against three references on the same file in the same run:
#   sha256sum (coreutils), openssl dgst -sha256 (hardware SHA: the floor for any pass
#   that hashes every byte), and a pandas script that reads, splits and hashes the rows.
# Prints throughput, ratios, peak RSS and the ledger's size relative to the source.
#   REPEATS=5 bash bench/init_seal.sh [ROWS]   (default 4700000 rows, about 400 MB)
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
best() { tr ' ' '\n' | sort -g | head -n 1; }                   # best of a list of seconds
median() { tr ' ' '\n' | sort -g | awk '{ v[NR] = $1 } END { print v[int((NR + 1) / 2)] }'; }

t_pandas=$(seconds /usr/bin/python3 bench/pandas_split_hash.py "$data")
unseen=build/harness/unseen
"$unseen" keygen --out "$work/k" > /dev/null
# The fast contenders run REPEATS times, in turn, so that a noisy machine treats them alike;
# each init writes a new ledger and each seal starts from a copy of the same initialised one.
repeats=${REPEATS:-5}
sha=() ossl=() ti=() ts=() rss_init=0 rss_seal=0
for ((i = 0; i < repeats; ++i)); do
  sha+=("$(seconds sha256sum "$data")")
  ossl+=("$(seconds openssl dgst -sha256 "$data")")
  rm -f "$work/l" "$work/dev.csv"
  /usr/bin/time -f "%e %M" -o "$work/init.time" \
    "$unseen" init --ledger "$work/l" --data "$data" --target y > /dev/null
  sync
  /usr/bin/time -f "%e %M" -o "$work/seal.time" \
    "$unseen" seal --ledger "$work/l" --key-file "$work/k" --fraction 0.2 --seed 1 \
    --dev-out "$work/dev.csv" > /dev/null
  read -r t r < "$work/init.time"; ti+=("$t"); ((r > rss_init)) && rss_init=$r
  read -r t r < "$work/seal.time"; ts+=("$t"); ((r > rss_seal)) && rss_seal=$r
  sync
done
ledger=$(stat -c %s "$work/l")
both=()
for ((i = 0; i < repeats; ++i)); do both+=("$(awk -v a="${ti[i]}" -v b="${ts[i]}" 'BEGIN { print a + b }')"); done
stats() { echo "$(echo "$*" | best) $(echo "$*" | median)"; }
read -r t_sha m_sha <<< "$(stats "${sha[*]}")"
read -r t_ossl m_ossl <<< "$(stats "${ossl[*]}")"
read -r t_init m_init <<< "$(stats "${ti[*]}")"
read -r t_seal m_seal <<< "$(stats "${ts[*]}")"
read -r t_both m_both <<< "$(stats "${both[*]}")"
echo "runs: $repeats of each fast contender, in turn; best and median seconds"

awk -v mb="$mb" -v sha="$t_sha" -v msha="$m_sha" -v ossl="$t_ossl" -v mossl="$m_ossl" \
    -v pd="$t_pandas" -v ti="$t_init" -v mti="$m_init" -v ts="$t_seal" -v mts="$m_seal" \
    -v u="$t_both" -v mu="$m_both" -v ri="$rss_init" -v rs="$rss_seal" -v lb="$ledger" \
    -v b="$bytes" 'BEGIN {
  printf "%-28s %8s %8s %10s\n", "contender", "best s", "median s", "MB/s best"
  printf "%-28s %8.2f %8.2f %10.0f\n", "sha256sum", sha, msha, mb / sha
  printf "%-28s %8.2f %8.2f %10.0f\n", "openssl dgst -sha256", ossl, mossl, mb / ossl
  printf "%-28s %8.2f %8s %10.0f\n", "pandas read+split+hash", pd, "(1 run)", mb / pd
  printf "%-28s %8.2f %8.2f %10.0f\n", "unseen init", ti, mti, mb / ti
  printf "%-28s %8.2f %8.2f %10.0f\n", "unseen seal", ts, mts, mb / ts
  printf "%-28s %8.2f %8.2f %10.0f\n", "unseen init+seal (one run)", u, mu, mb / u
  printf "throughput ratio init+seal / sha256sum: best %.2f, median %.2f (goal >= 0.5)\n", sha / u, msha / mu
  printf "throughput ratio init+seal / openssl:   best %.2f, median %.2f (stretch >= 0.5)\n", ossl / u, mossl / mu
  printf "throughput ratio init+seal / pandas:    %.2f\n", pd / mu
  printf "peak RSS (largest of all runs): init %.0f MiB, seal %.0f MiB (goal <= 256)\n", ri / 1024, rs / 1024
  printf "ledger: %d bytes = %.1f%% of the source (goal <= 30%%, stretch < 15%%)\n", lb, 100 * lb / b
}'
