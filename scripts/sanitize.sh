#!/usr/bin/env bash
# AddressSanitizer + UndefinedBehaviorSanitizer build of the library and every unit,
# spec, C-interface, hostile-input and fuzz-replay test, then runs them. Any sanitizer
# report aborts the test that triggered it (-fno-sanitize-recover=all), so ctest fails.
# The add-in is left out: it runs inside the office process, which is not built with
# the sanitizer runtime.
#
#   bash scripts/sanitize.sh              build dir: build-asan/
#   bash scripts/sanitize.sh build-x      another build dir
set -euo pipefail

repo=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
cd "$repo"
build_dir=${1:-${WEFT_ASAN_BUILD_DIR:-build-asan}}
jobs=${WEFT_JOBS:-2}
labels=${WEFT_ASAN_LABELS:-'^(core|spec|cabi|hostile|fuzz)$'}

# -O2 -g1: the optimiser level of a release build (so numerics match it closely),
# line numbers in every report, and assert()/eigen_assert left on (no NDEBUG).
configure_args=(-S . -B "$build_dir"
  -DCMAKE_BUILD_TYPE=RelWithDebInfo
  "-DCMAKE_CXX_FLAGS_RELWITHDEBINFO=-O2 -g1"
  "-DCMAKE_C_FLAGS_RELWITHDEBINFO=-O2 -g1"
  -DWEFT_SANITIZE=address,undefined
  -DWEFT_BUILD_ADDIN=OFF
  -DWEFT_BUILD_BENCH=OFF
  -DWEFT_BUILD_TESTS=ON)
if [[ ! -f "$build_dir/CMakeCache.txt" ]] && command -v ninja >/dev/null 2>&1; then
  configure_args+=(-G Ninja)
fi

t0=$(date +%s)
cmake "${configure_args[@]}"
cmake --build "$build_dir" -j "$jobs"
t1=$(date +%s)

# detect_leaks is on by default on x86_64 Linux; say so anyway so a changed default
# cannot silently turn leak checking off. halt_on_error makes the first report fatal.
export ASAN_OPTIONS=${ASAN_OPTIONS:-detect_leaks=1:halt_on_error=1:abort_on_error=0:strict_string_checks=1:detect_stack_use_after_return=1:check_initialization_order=1}
export UBSAN_OPTIONS=${UBSAN_OPTIONS:-print_stacktrace=1:halt_on_error=1}

# A label with no test would make this step a silent pass: --no-tests=error.
ctest --test-dir "$build_dir" -L "$labels" --output-on-failure --no-tests=error --timeout 1200
t2=$(date +%s)
echo "sanitize: build $((t1 - t0))s, tests $((t2 - t1))s"
