#!/usr/bin/env bash
# Whole-command timing of two furrow binaries, run alternately so both see
# the same machine load; prints each run's wall time and the medians.
#
#   benches/compare.sh REFERENCE_BINARY NEW_BINARY [RUNS] [-- ARGS...]
#
# ARGS default to `report demo-data/plan.toml --quiet` (with a temporary
# --out folder per binary). Build the reference from an earlier commit in a
# worktree with its own CARGO_TARGET_DIR; see docs/performance.md.
set -euo pipefail
if [ $# -lt 2 ]; then
  sed -n '2,9p' "$0" | sed 's/^# \{0,1\}//'
  exit 2
fi
ref=$1 new=$2 runs=11
shift 2
if [ $# -gt 0 ] && [ "$1" != "--" ]; then
  runs=$1
  shift
fi
if [ "${1:-}" = "--" ]; then
  shift
fi
case $runs in
  '' | *[!0-9]* | 0) echo "RUNS must be a whole number of at least 1, not '$runs'" >&2; exit 2 ;;
esac
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
if [ $# -eq 0 ]; then
  set -- report demo-data/plan.toml --quiet
  report=1
else
  report=0
fi
time_one() { # binary out-folder
  local bin=$1 out=$2 start end
  start=$(date +%s.%N)
  if [ $report = 1 ]; then
    "$bin" "${args[@]}" --out "$out" >/dev/null
  else
    "$bin" "${args[@]}" >/dev/null
  fi
  end=$(date +%s.%N)
  echo "$end - $start" | bc
}
args=("$@")
: >"$tmp/ref" ; : >"$tmp/new"
for i in $(seq "$runs"); do
  time_one "$ref" "$tmp/ref-out" >>"$tmp/ref"
  time_one "$new" "$tmp/new-out" >>"$tmp/new"
done
median() { sort -n "$1" | awk '{v[NR]=$1} END {print (NR%2) ? v[(NR+1)/2] : (v[NR/2]+v[NR/2+1])/2}'; }
mr=$(median "$tmp/ref") mn=$(median "$tmp/new")
printf 'reference runs: %s\n' "$(sort -n "$tmp/ref" | tr '\n' ' ')"
printf 'new runs:       %s\n' "$(sort -n "$tmp/new" | tr '\n' ' ')"
printf 'median: reference %.3f s, new %.3f s, ratio %.2f (%s runs each, load %s)\n' \
  "$mr" "$mn" "$(echo "$mn / $mr" | bc -l)" "$runs" "$(cut -d' ' -f1 /proc/loadavg)"
