#!/usr/bin/env bash
# How fast could `glowlog analyze --model lines` be at most, with its
# window fits and its JSON output costing nothing? A measured ceiling for
# the file-to-result ratio of .ci/bench part 2 (README, performance).
#
#   bash testdata/ceiling/ceiling.sh [PASSES]
#
# It builds the committed head twice into a temporary directory: as it is, and
# with ceiling.patch applied to a copy (a throwaway change, never for the
# product: with CEIL_FREEFIT set, linefit answers a window it has fitted
# before from memory — over copies of one file every fit after the first
# costs nothing and the output is byte for byte the same, which the
# script checks; with CEIL_NOJSON also set, analyze writes "{}" instead
# of each result). It then times, on CPU 0, passes over 300 copies of the
# bench spectrum in turn: the build as it is, free fits, free fits and no
# JSON, and the numpy/scipy script of .ci/bench (testdata/scipy/
# file_bench.py), and prints the median CPU ms per file of each and the
# ratios to the script. With valgrind installed it also prints
# instructions per file (cachegrind; (99 files − 9 files)/90), which do
# not depend on the machine's load.
set -euo pipefail
cd "$(dirname "$0")/../.."
export PATH="/usr/local/go/bin:$PATH"
PASSES=${1:-7}
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
mkdir "$tmp/src"
git archive HEAD | tar -x -C "$tmp/src" # the committed head
(cd "$tmp/src" && go build -o "$tmp/now" . && patch -p1 -s <testdata/ceiling/ceiling.patch && go build -o "$tmp/ceil" .)
for i in $(seq -w 1 300); do cp testdata/spectra/scipy_bench_2048.csv "$tmp/s$i.csv"; done
flags=(--instrument-fwhm-nm 0.35 --gas-temperature-K 1000 --max-upper 6 --model lines)
"$tmp/now" analyze "${flags[@]}" "$tmp"/s*.csv >"$tmp/a.jsonl"
CEIL_FREEFIT=1 "$tmp/ceil" analyze "${flags[@]}" "$tmp"/s*.csv >"$tmp/b.jsonl"
cmp -s "$tmp/a.jsonl" "$tmp/b.jsonl" || { echo "free fits changed the output: the patch no longer measures the same job" >&2; exit 1; }
pin() { if command -v taskset >/dev/null; then taskset -c 0 "$@"; else "$@"; fi; }
median() { sort -g | awk '{a[NR]=$1} END {print a[int((NR+1)/2)]}'; }
cpu() { # CPU ms per file of one pass of analyze: env..., binary
  TIMEFORMAT='%3U %3S'
  { time pin env "$@" analyze "${flags[@]}" "$tmp"/s*.csv >/dev/null; } 2>&1 | awk '{printf "%.4f\n", ($1 + $2) / 300 * 1e3}'
}
now=() free=() nojson=() py=()
for _ in $(seq "$PASSES"); do
  now+=("$(cpu "$tmp/now")")
  free+=("$(cpu CEIL_FREEFIT=1 "$tmp/ceil")")
  nojson+=("$(cpu CEIL_FREEFIT=1 CEIL_NOJSON=1 "$tmp/ceil")")
  py+=("$(pin /usr/bin/python3 testdata/scipy/file_bench.py 1 "$tmp"/s*.csv | awk '/python_file_cpu_median_ms/ {print $2}')")
done
m_now=$(printf '%s\n' "${now[@]}" | median)
m_free=$(printf '%s\n' "${free[@]}" | median)
m_nojson=$(printf '%s\n' "${nojson[@]}" | median)
m_py=$(printf '%s\n' "${py[@]}" | median)
r() { awk -v p="$m_py" -v g="$1" 'BEGIN {printf "%.1f", p/g}'; }
echo "CPU ms per file, medians of $PASSES passes (300 files, CPU 0, process start-up included):"
echo "  analyze as built:             $m_now  (scipy / glowlog $(r "$m_now")x)"
echo "  fits free:                    $m_free  ($(r "$m_free")x)"
echo "  fits free, no JSON written:   $m_nojson  ($(r "$m_nojson")x)"
echo "  numpy/scipy script:           $m_py"
if command -v valgrind >/dev/null; then
  ir() { # instructions of one run over the first $1 files: env..., binary
    local n=$1
    shift
    GODEBUG=asyncpreemptoff=1 env "${@:1:$#-1}" valgrind --tool=cachegrind --cache-sim=no --cachegrind-out-file=/dev/null \
      "${@: -1}" analyze "${flags[@]}" $(ls "$tmp"/s*.csv | head -"$n") 2>&1 >/dev/null | awk '/I *refs:/ {gsub(",", "", $NF); print $NF}'
  }
  per() { echo $((($(ir 99 "$@") - $(ir 9 "$@")) / 90)); }
  echo "instructions per file (cachegrind):"
  echo "  analyze as built:             $(per "$tmp/now")"
  echo "  fits free:                    $(per CEIL_FREEFIT=1 "$tmp/ceil")"
  echo "  fits free, no JSON written:   $(per CEIL_FREEFIT=1 CEIL_NOJSON=1 "$tmp/ceil")"
fi
