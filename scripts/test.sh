#!/usr/bin/env bash
# Sets up, builds and runs the whole tidemark test suite with CTest; then does the
# same under AddressSanitizer + UndefinedBehaviorSanitizer in a second build dir.
# Non-zero exit on any failure.
#   TIDEMARK_NO_SANITIZE=1 scripts/test.sh   skip the sanitizer pass
#   TIDEMARK_JOBS=N                          parallel build/test jobs (default: nproc)
set -euo pipefail
cd "$(dirname "$0")/.."

scripts/setup.sh
jobs="${TIDEMARK_JOBS:-$(nproc)}"

run_suite() {
  local dir="$1"; shift
  cmake -S . -B "$dir" -G Ninja "$@" >/dev/null
  cmake --build "$dir" -j "$jobs"
  (cd "$dir" && ctest --output-on-failure -j "$jobs")
}

echo "== release build + tests (build/)"
run_suite build -DCMAKE_BUILD_TYPE=RelWithDebInfo

if [[ "${TIDEMARK_NO_SANITIZE:-0}" != "1" ]]; then
  echo "== ASan+UBSan build + tests (build-asan/)"
  ASAN_OPTIONS=detect_leaks=1:abort_on_error=1 UBSAN_OPTIONS=print_stacktrace=1 \
    run_suite build-asan -DCMAKE_BUILD_TYPE=Debug -DTIDEMARK_SANITIZE=ON
fi
echo "== all tests passed"
