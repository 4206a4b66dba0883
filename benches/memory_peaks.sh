#!/usr/bin/env bash
# Peak resident memory of `furrow report` against the memory guard's
# estimate (src/simulate/budget.rs), one run at a time.
#
#   benches/memory_peaks.sh [BINARY] [CASE...]
#
# BINARY defaults to target/release/furrow. A CASE is NAME:SCENARIOS, where
# NAME is `demo` (the demo plan: 10 clusters x 60 keywords, 12 months) or
# `wide` (a generated plan: 200 clusters, 2,000 keywords, 60 months) or
# `keywords` (a generated list of 300,000 keywords in 10 clusters, 12 months).
# Without cases it runs the table of docs/reliability.md: demo at 20k, 100k,
# 300k and 600k futures, wide at 2k and 10k futures, keywords at 200 futures.
# The estimate is read from the guard's refusal under --max-memory 1; the
# peak from /usr/bin/time (maximum resident set size). Needs about 6 GB
# free for the largest cases.
set -euo pipefail
bin=${1:-target/release/furrow}
shift || true
cases=("$@")
if [ ${#cases[@]} -eq 0 ]; then
  cases=(demo:20000 demo:100000 demo:300000 demo:600000 wide:2000 wide:10000 keywords:200)
fi
bin=$(realpath "$bin")
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
"$bin" demo-data "$work/demo" >/dev/null
"$bin" demo-data "$work/wide" --clusters 200 --keywords 2000 >/dev/null
sed -i 's/^horizon = .*/horizon = 60/' "$work/wide/plan.toml"
"$bin" demo-data "$work/keywords" --keywords 300000 >/dev/null
printf '| plan | futures | estimate (MiB) | measured peak (MiB) | measured / estimate |\n'
printf '| --- | ---: | ---: | ---: | ---: |\n'
for c in "${cases[@]}"; do
  name=${c%%:*}
  n=${c##*:}
  plan="$work/$name/plan.toml"
  est=$("$bin" report "$plan" --scenarios "$n" --quiet --out "$work/out" --max-memory 1 2>&1 |
    sed -n 's/.*would need about \([0-9]*\) MiB.*/\1/p' | head -1 || true)
  /usr/bin/time -o "$work/peak" -f '%M' "$bin" report "$plan" --scenarios "$n" --quiet \
    --allow-long-run --max-memory 1000000 --out "$work/out" >/dev/null
  kib=$(tail -1 "$work/peak")
  mib=$(( kib / 1024 ))
  ratio=$(awk -v m="$mib" -v e="$est" 'BEGIN { printf "%.2f", m / e }')
  printf '| %s | %s | %s | %s | %s |\n' "$name" "$n" "$est" "$mib" "$ratio"
  rm -rf "$work/out"
done
