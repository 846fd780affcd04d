#!/usr/bin/env bash
# SPDX-License-Identifier: Apache-2.0
# Runs the test suite of a sanitizer build (make check-sanitize) and fails on
# any finding. AddressSanitizer (with its leak checker) and
# UndefinedBehaviorSanitizer write their reports to files under
# <build>/sanitizer-logs instead of standard error, so the CLI tests (which
# compare messages and exit codes) see the program as it is, and every report
# of every process a test starts is counted here afterwards.
# Usage: scripts/check-sanitize.sh BUILD_DIR [JOBS]
set -euo pipefail
src=$(cd "$(dirname "$0")/.." && pwd)
build=$(cd "$1" && pwd)
jobs=${2:-2}
logs="$build/sanitizer-logs"
rm -rf "$logs"
# A build without the sanitizer runtimes would pass with "zero findings".
for lib in libasan libubsan; do
  if ! ldd "$build/recofold" | grep -q "$lib"; then
    echo "check-sanitize: $build/recofold is not linked with $lib (configure with -DRECOFOLD_SANITIZE=address,undefined)"
    exit 1
  fi
done
mkdir -p "$logs"
export ASAN_OPTIONS="log_path=$logs/asan:detect_leaks=1:check_initialization_order=1:strict_init_order=1:detect_stack_use_after_return=1"
export UBSAN_OPTIONS="log_path=$logs/ubsan:print_stacktrace=1:halt_on_error=1"
# Proven third-party leaks only, each with its reason (scripts/sanitizer/lsan.supp);
# print_suppressions=0 so a suppressed leak leaves no report file behind.
export LSAN_OPTIONS="suppressions=$src/scripts/sanitizer/lsan.supp:print_suppressions=0"
status=0
t0=$SECONDS
# The MPI tests (mpirun ranks) run apart with full stack unwinding: Open MPI's
# libraries have no frame pointers, so ASan's fast unwinder stops inside them
# and its leak reports could not be matched to the library suppressions.
# Slow unwinding costs too much time for the other tests.
mpi_tests='_mpi($|_)'
(cd "$build" && ctest --output-on-failure -j"$jobs" -E "$mpi_tests") || status=$?
(cd "$build" && ASAN_OPTIONS="$ASAN_OPTIONS:fast_unwind_on_malloc=0:malloc_context_size=30" \
  ctest --output-on-failure --no-tests=ignore -R "$mpi_tests") || status=$?
echo "check-sanitize: tests ran in $((SECONDS - t0)) s"
reports=$(find "$logs" -type f | sort)
if [ -n "$reports" ]; then
  echo "check-sanitize: $(echo "$reports" | wc -l) sanitizer report(s):"
  for f in $reports; do
    echo "---- $f"
    head -n 60 "$f"
  done
  exit 1
fi
if [ "$status" -ne 0 ]; then
  echo "check-sanitize: tests failed (no sanitizer report)"
  exit "$status"
fi
echo "check-sanitize: all tests passed, zero sanitizer findings"
