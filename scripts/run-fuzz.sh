#!/usr/bin/env bash
# SPDX-License-Identifier: Apache-2.0
# Runs every libFuzzer target of a fuzz build (make fuzz) for FUZZ_SECONDS
# each, starting from its seed corpus tests/fuzz/corpus/<name>/ and the crash
# regressions tests/fuzz/regressions/<name>/. New interesting inputs go to a
# scratch corpus in the build folder (the seed corpus is not modified). A
# crash, sanitizer finding, leak, time-out or out-of-memory leaves its input
# in <build>/fuzz-artifacts/ and fails the run; copy that input to
# tests/fuzz/regressions/<name>/ once fixed, so `make check` replays it.
# Usage: scripts/run-fuzz.sh BUILD_DIR [SECONDS]
set -euo pipefail
src=$(cd "$(dirname "$0")/.." && pwd)
build=$(cd "$1" && pwd)
seconds=${2:-60}
artifacts="$build/fuzz-artifacts"
work="$build/fuzz-work"
mkdir -p "$artifacts" "$work"
# Reader size limits well below libFuzzer's memory limits (core/checks.h).
export RECOFOLD_MEMORY_LIMIT_MB=256
export ASAN_OPTIONS="detect_leaks=1"
export UBSAN_OPTIONS="print_stacktrace=1:halt_on_error=1"
export TMPDIR="$work"
failed=0
summary=""
for exe in "$build"/fuzz/*_fuzz; do
  name=$(basename "$exe" _fuzz)
  corpus="$work/corpus-$name"
  mkdir -p "$corpus"
  seeds=("$src/tests/fuzz/corpus/$name")
  [ -d "$src/tests/fuzz/regressions/$name" ] && seeds+=("$src/tests/fuzz/regressions/$name")
  log="$work/$name.log"
  echo "fuzz: $name for ${seconds}s"
  status=0
  "$exe" -max_total_time="$seconds" -timeout=20 -rss_limit_mb=2048 -malloc_limit_mb=1024 \
    -max_len=65536 -print_final_stats=1 -artifact_prefix="$artifacts/$name-" \
    "$corpus" "${seeds[@]}" >"$log" 2>&1 || status=$?
  runs=$(grep -o 'stat::number_of_executed_units: *[0-9]*' "$log" | grep -o '[0-9]*$' | tail -1)
  cov=$(grep -o 'cov: [0-9]*' "$log" | tail -1 | grep -o '[0-9]*')
  line="$name: ${runs:-?} executions, coverage ${cov:-?} edges, corpus $(ls "$corpus" | wc -l) inputs"
  if [ "$status" -ne 0 ]; then
    failed=$((failed + 1))
    line="$line: FAILED (exit $status)"
    echo "---- $name (last lines of $log)"
    tail -n 40 "$log"
  fi
  echo "fuzz: $line"
  summary="$summary$line"$'\n'
done
echo "fuzz summary (${seconds}s per target):"
printf '%s' "$summary"
if [ "$failed" -ne 0 ]; then
  echo "fuzz: $failed target(s) failed; inputs in $artifacts"
  exit 1
fi
