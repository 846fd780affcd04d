#!/usr/bin/env bash
# SPDX-License-Identifier: Apache-2.0
# Runs every libFuzzer target of a fuzz build (make fuzz) for FUZZ_SECONDS
# each, FUZZ_JOBS targets at a time (default 2), starting from its seed
# corpus tests/fuzz/corpus/<name>/ and the crash regressions
# tests/fuzz/regressions/<name>/. New interesting inputs go to a scratch
# corpus in the build folder (the seed corpus is not modified). A crash,
# sanitizer finding, leak, time-out or out-of-memory leaves its input in
# <build>/fuzz-artifacts/ and fails the run; copy that input to
# tests/fuzz/regressions/<name>/ once fixed, so every test build replays it.
# Prints one line per target with libFuzzer's final executions count.
# Usage: scripts/run-fuzz.sh BUILD_DIR [SECONDS] [JOBS]
set -euo pipefail
src=$(cd "$(dirname "$0")/.." && pwd)
build=$(cd "$1" && pwd)
seconds=${2:-60}
jobs=${3:-2}
artifacts="$build/fuzz-artifacts"
work="$build/fuzz-work"
rm -rf "$artifacts"
mkdir -p "$artifacts" "$work"
# Reader size limits well below libFuzzer's memory limits (core/checks.h).
export RECOFOLD_MEMORY_LIMIT_MB=256
export ASAN_OPTIONS="detect_leaks=1"
export UBSAN_OPTIONS="print_stacktrace=1:halt_on_error=1"
# The proven third-party leaks of scripts/check-sanitize.sh, same file.
export LSAN_OPTIONS="suppressions=$src/scripts/sanitizer/lsan.supp:print_suppressions=0"
export TMPDIR="$work"
# One reader call per input: no OpenMP thread pools beside libFuzzer's.
export OMP_NUM_THREADS=1

# fuzz_one NAME: runs one target, writes its summary line to $work/NAME.line.
fuzz_one() {
  local name=$1 exe="$build/fuzz/$1_fuzz" corpus="$work/corpus-$1" log="$work/$1.log"
  mkdir -p "$corpus"
  local seeds=("$src/tests/fuzz/corpus/$name")
  [ -d "$src/tests/fuzz/regressions/$name" ] && seeds+=("$src/tests/fuzz/regressions/$name")
  local status=0
  # HDF5 has no frame pointers: its leak reports need full stacks to be
  # matched to scripts/sanitizer/lsan.supp (slower, so for those targets only).
  local asan="$ASAN_OPTIONS"
  case "$name" in h5_*) asan="$asan:fast_unwind_on_malloc=0:malloc_context_size=30" ;; esac
  ASAN_OPTIONS="$asan" "$exe" -max_total_time="$seconds" -timeout=20 -rss_limit_mb=2048 -malloc_limit_mb=1024 \
    -max_len=65536 -print_final_stats=1 -artifact_prefix="$artifacts/$name-" \
    "$corpus" "${seeds[@]}" >"$log" 2>&1 || status=$?
  local runs cov line
  runs=$(grep -o 'stat::number_of_executed_units: *[0-9]*' "$log" | grep -o '[0-9]*$' | tail -1 || true)
  cov=$(grep -o 'cov: [0-9]*' "$log" | tail -1 | grep -o '[0-9]*' || true)
  line="$name: ${runs:-?} executions, coverage ${cov:-?} edges, corpus $(ls "$corpus" | wc -l) inputs"
  if [ "$status" -ne 0 ] || [ -z "$runs" ]; then
    line="$line: FAILED (exit $status)"
  fi
  echo "$line" >"$work/$name.line"
  echo "fuzz: $line"
}

names=()
for exe in "$build"/fuzz/*_fuzz; do
  [ -x "$exe" ] && names+=("$(basename "$exe" _fuzz)")
done
if [ ${#names[@]} -eq 0 ]; then
  echo "fuzz: no targets in $build/fuzz" >&2
  exit 1
fi
echo "fuzz: ${#names[@]} targets, ${seconds}s each, $jobs at a time"
rm -f "$work"/*.line
running=0
for name in "${names[@]}"; do
  if [ "$running" -ge "$jobs" ]; then
    wait -n || true
    running=$((running - 1))
  fi
  fuzz_one "$name" &
  running=$((running + 1))
done
wait || true

failed=0
total=0
echo "fuzz summary (${seconds}s per target):"
for name in "${names[@]}"; do
  line=$(cat "$work/$name.line" 2>/dev/null || echo "$name: no result: FAILED")
  echo "  $line"
  case "$line" in
    *FAILED*)
      failed=$((failed + 1))
      echo "---- $name (last lines of $work/$name.log)"
      tail -n 40 "$work/$name.log" 2>/dev/null || true ;;
    *) total=$((total + $(echo "$line" | grep -o '^[^:]*: [0-9]*' | grep -o '[0-9]*$'))) ;;
  esac
done
echo "fuzz: ${#names[@]} targets, $total executions in all, $failed failed"
if [ "$failed" -ne 0 ]; then
  echo "fuzz: inputs that failed are in $artifacts"
  exit 1
fi
