#!/usr/bin/env bash
# Ingest benchmark: how much slower is `twistlot ingest` than reading the same bytes
# with `cat`? A measurement to run by hand, not a timed test (timings on a shared
# 2-core machine are too noisy to fail a build on).
#
# Usage:  scripts/bench-ingest.sh [REPETITIONS]        (default 5)
# Environment (all optional):
#   BENCH_FILES=2000  BENCH_POINTS=1600  BENCH_SEED=1     the data set (DESIGN.md §8 scale)
#   CARGO_TARGET_DIR=$HOME/.cache/tl-bench                where the release binary is built
#   BENCH_DIR=...      reuse this data folder instead of a fresh temporary one (kept)
#   BENCH_NO_HYPERFINE=1   time with `date +%s%N` even when hyperfine is installed
#   BENCH_PERF=1       after timing, record one ingest run with `perf` and print the top symbols
#
# Steps: build the release binary; generate the exports with `twistlot synth bench`;
# warm the page cache; then, alternating in the same run, time one `cat` over all the
# files against `twistlot ingest DIR --format csv` (which must exit 0), REPETITIONS
# times each; print the medians, the ratio ingest/cat and the data size.
set -euo pipefail

reps="${1:-5}"
files="${BENCH_FILES:-2000}"
points="${BENCH_POINTS:-1600}"
seed="${BENCH_SEED:-1}"
root="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
export CARGO_TARGET_DIR="${CARGO_TARGET_DIR:-$HOME/.cache/tl-bench}"
bin="$CARGO_TARGET_DIR/release/twistlot"

if ! [[ "$reps" =~ ^[1-9][0-9]*$ ]]; then
    echo "usage: $0 [REPETITIONS]  (a positive whole number, got '$reps')" >&2
    exit 2
fi

echo "== building the release binary (CARGO_TARGET_DIR=$CARGO_TARGET_DIR)"
(cd "$root" && cargo build --release -p twistlot-cli)

work="$(mktemp -d "${TMPDIR:-/tmp}/twistlot-bench.XXXXXX")"
cleanup() { rm -rf "$work"; }
trap cleanup EXIT
if [[ -n "${BENCH_DIR:-}" ]]; then
    data="$BENCH_DIR"
else
    data="$work/exports"
fi
if [[ -z "${BENCH_DIR:-}" || ! -d "$data" ]]; then
    echo "== generating $files exports of $points points into $data"
    "$bin" synth bench --files "$files" --points "$points" --seed "$seed" --out "$data"
fi

list="$work/files.list"
find "$data" -type f -print0 | sort -z > "$list"
count="$(tr -cd '\0' < "$list" | wc -c)"
bytes="$(find "$data" -type f -printf '%s\n' | awk '{s += $1} END {print s + 0}')"
if [[ "$count" -eq 0 ]]; then
    echo "no files in $data" >&2
    exit 1
fi
# One `cat` process over every file: -s lifts xargs' 128 KiB default so it does not split.
cat_cmd=(xargs -0 -s 2000000 -a "$list" cat)
ingest_cmd=("$bin" ingest "$data" --format csv)
if [[ "$(xargs -0 -s 2000000 -a "$list" echo | wc -l)" -ne 1 ]]; then
    echo "note: the file list did not fit one cat invocation" >&2
fi

echo "== warming the page cache and checking that ingest accepts every file"
"${cat_cmd[@]}" > /dev/null
ingest_out="$work/ingest.csv"
status=0
"${ingest_cmd[@]}" > "$ingest_out" 2> "$work/ingest.err" || status=$?
if [[ "$status" -ne 0 ]]; then
    echo "twistlot ingest exited with $status (expected 0); rejected files:" >&2
    grep -v ',accepted,' "$ingest_out" | head -20 >&2
    head -20 "$work/ingest.err" >&2
    exit 1
fi
accepted="$(grep -c ',accepted,' "$ingest_out" || true)"
if [[ "$accepted" -ne "$count" ]]; then
    echo "ingest accepted $accepted of $count files" >&2
    exit 1
fi

cat_ns=()
ingest_ns=()
# CPU times are known only with hyperfine.
cat_cpu=()
ingest_cpu=()
# Milliseconds as a decimal, from nanoseconds.
ms() { awk -v ns="$1" 'BEGIN { printf "%.1f", ns / 1e6 }'; }

if [[ -z "${BENCH_NO_HYPERFINE:-}" ]] && command -v hyperfine > /dev/null && command -v python3 > /dev/null; then
    timer="hyperfine $(hyperfine --version | awk '{print $2}') (one run of each per round, no shell)"
    for ((round = 1; round <= reps; round++)); do
        # Alternate which command goes first, so neither always follows the other.
        if ((round % 2)); then order=(cat ingest); else order=(ingest cat); fi
        cmds=()
        for which in "${order[@]}"; do
            if [[ "$which" == cat ]]; then cmds+=("${cat_cmd[*]}"); else cmds+=("${ingest_cmd[*]}"); fi
        done
        hyperfine --shell=none --runs 1 --style none --export-json "$work/round.json" "${cmds[@]}" > /dev/null
        # Wall time and CPU time (user + system) of each, in nanoseconds.
        read -r first first_cpu second second_cpu < <(python3 -c '
import json, sys
results = json.load(open(sys.argv[1]))["results"]
cells = [(r["times"][0], r["user"] + r["system"]) for r in results]
print(" ".join(f"{round(wall * 1e9)} {round(cpu * 1e9)}" for wall, cpu in cells))' \
            "$work/round.json")
        if [[ "${order[0]}" == cat ]]; then
            cat_ns+=("$first"); cat_cpu+=("$first_cpu"); ingest_ns+=("$second"); ingest_cpu+=("$second_cpu")
        else
            ingest_ns+=("$first"); ingest_cpu+=("$first_cpu"); cat_ns+=("$second"); cat_cpu+=("$second_cpu")
        fi
        echo "round $round: cat $(ms "${cat_ns[-1]}") ms (cpu $(ms "${cat_cpu[-1]}") ms)," \
            "ingest $(ms "${ingest_ns[-1]}") ms (cpu $(ms "${ingest_cpu[-1]}") ms)"
    done
else
    timer="bash date +%s%N"
    for ((round = 1; round <= reps; round++)); do
        for which in cat ingest; do
            if ((round % 2 == 0)); then which=$([[ "$which" == cat ]] && echo ingest || echo cat); fi
            start=$(date +%s%N)
            if [[ "$which" == cat ]]; then
                "${cat_cmd[@]}" > /dev/null
            else
                "${ingest_cmd[@]}" > /dev/null 2> "$work/ingest.err" || {
                    echo "twistlot ingest failed in round $round" >&2
                    exit 1
                }
            fi
            end=$(date +%s%N)
            if [[ "$which" == cat ]]; then cat_ns+=($((end - start))); else ingest_ns+=($((end - start))); fi
        done
        echo "round $round: cat $(ms "${cat_ns[-1]}") ms, ingest $(ms "${ingest_ns[-1]}") ms"
    done
fi

median() { printf '%s\n' "$@" | sort -n | awk '{v[NR] = $1} END { if (NR % 2) print v[(NR + 1) / 2]; else print (v[NR / 2] + v[NR / 2 + 1]) / 2 }'; }
cat_median="$(median "${cat_ns[@]}")"
ingest_median="$(median "${ingest_ns[@]}")"

echo
echo "== ingest benchmark ($timer, $reps rounds, $(nproc) cores)"
echo "data:           $count files, $points points each, $bytes bytes ($(awk -v b="$bytes" 'BEGIN { printf "%.1f", b / 1048576 }') MiB)"
echo "cat median:     $(ms "$cat_median") ms"
echo "ingest median:  $(ms "$ingest_median") ms  ($(awk -v b="$bytes" -v ns="$ingest_median" 'BEGIN { printf "%.1f", b / 1048576 / (ns / 1e9) }') MiB/s, $(awk -v n="$count" -v ns="$ingest_median" 'BEGIN { printf "%.0f", n / (ns / 1e9) }') files/s)"
echo "ratio ingest/cat: $(awk -v a="$ingest_median" -v b="$cat_median" 'BEGIN { printf "%.1f", a / b }')"
if ((${#cat_cpu[@]})); then
    cat_cpu_median="$(median "${cat_cpu[@]}")"
    ingest_cpu_median="$(median "${ingest_cpu[@]}")"
    echo "cpu (user+sys) medians: cat $(ms "$cat_cpu_median") ms, ingest $(ms "$ingest_cpu_median") ms," \
        "ratio $(awk -v a="$ingest_cpu_median" -v b="$cat_cpu_median" 'BEGIN { printf "%.1f", a / b }')"
fi

if [[ -n "${BENCH_PERF:-}" ]]; then
    if command -v perf > /dev/null; then
        echo
        echo "== perf: one ingest run, top symbols"
        perf record -F 2000 -o "$work/perf.data" -- "${ingest_cmd[@]}" > /dev/null 2> "$work/perf.err" || true
        perf report -i "$work/perf.data" --no-children --sort dso,symbol --stdio 2> /dev/null |
            grep -v '^#' | grep '%' | head -30 | sed -E 's/[[:space:]]+-[[:space:]]+-[[:space:]]*$//' | cut -c1-140
    else
        echo "perf is not installed; skipping the profile" >&2
    fi
fi
