#!/usr/bin/env bash
# The test command (README): installs what is missing, configures a Release build with
# warnings as errors, builds with two jobs and runs every CTest group (core, spec, cabi,
# oracle, calc, sample, fuzz, python, dask). Exits non-zero on any failure and ends with a summary.
#
#   bash scripts/test.sh            build dir: build/
#   WEFT_BUILD_DIR=build-me bash scripts/test.sh
set -euo pipefail

repo=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
cd "$repo"
build_dir=${WEFT_BUILD_DIR:-build}
jobs=${WEFT_JOBS:-2}
log_dir="$build_dir/logs"
# Test groups every run must contain; a group with no registered test fails the run,
# because a silently missing group would look like a pass.
required_labels=(core spec event cabi hostile oracle calc sample fuzz python dask)
all_labels=(core spec event cabi hostile oracle calc sample fuzz python dask bench)

start_all=$(date +%s)
declare -a step_names=() step_results=() step_secs=()
record() { step_names+=("$1"); step_results+=("$2"); step_secs+=("$3"); }

summary() {
  echo
  echo "==================== weft test summary ===================="
  local i
  for i in "${!step_names[@]}"; do
    printf '  %-28s %-8s %5ss\n' "${step_names[$i]}" "${step_results[$i]}" "${step_secs[$i]}"
  done
  echo "  total time: $(( $(date +%s) - start_all ))s   logs: $log_dir/"
  echo "==========================================================="
}

# run_step NAME LOGFILE COMMAND...: runs a step, shows its output, keeps a log.
run_step() {
  local name=$1 log=$2; shift 2
  local t0=$(date +%s) rc=0
  echo
  echo "---- $name ----"
  "$@" 2>&1 | tee "$log" || rc=${PIPESTATUS[0]}
  # With pipefail the status above is the first failing command's; take the command's own.
  local secs=$(( $(date +%s) - t0 ))
  if [[ $rc -ne 0 ]]; then
    record "$name" FAILED "$secs"
    summary
    echo "test: step '$name' failed (exit $rc); its log: $log" >&2
    exit "$rc"
  fi
  record "$name" ok "$secs"
}

mkdir -p "$log_dir"

run_step "install dependencies" "$log_dir/deps.log" bash scripts/deps.sh

configure_args=(-S . -B "$build_dir" -DCMAKE_BUILD_TYPE=Release -DWEFT_WERROR=ON -DWEFT_BUILD_TESTS=ON)
if [[ ! -f "$build_dir/CMakeCache.txt" ]]; then
  configure_args+=(-G Ninja)
fi
run_step "configure (Release, Werror)" "$log_dir/configure.log" cmake "${configure_args[@]}"
run_step "build (-j$jobs)" "$log_dir/build.log" cmake --build "$build_dir" -j "$jobs"

# Which groups have tests registered: a missing required group is a failure.
echo
echo "---- test groups ----"
missing_labels=()
for label in "${all_labels[@]}"; do
  count=$(ctest --test-dir "$build_dir" -N -L "^${label}\$" 2>/dev/null | sed -n 's/^Total Tests: *//p')
  count=${count:-0}
  printf '  %-8s %s test(s)\n' "$label" "$count"
  if [[ "$count" -eq 0 ]]; then
    for req in "${required_labels[@]}"; do
      [[ "$req" == "$label" ]] && missing_labels+=("$label")
    done
  fi
done

# Every group in one ctest run. The calc and sample tests start their own headless
# office; tests share no state except through RESOURCE_LOCK, so they run one at a time
# here to stay inside the two cores the machine has.
t0=$(date +%s); rc=0
echo
echo "---- ctest (all groups) ----"
ctest --test-dir "$build_dir" --output-on-failure --no-tests=error --timeout 1200 2>&1 \
  | tee "$log_dir/ctest.log" || rc=${PIPESTATUS[0]}
secs=$(( $(date +%s) - t0 ))
# ctest's own closing line: "NN% tests passed, F tests failed out of T".
total=$(sed -n 's/.*tests passed, [0-9]* tests\? failed out of \([0-9]*\).*/\1/p' "$log_dir/ctest.log" | tail -1)
failed=$(sed -n 's/.*tests passed, \([0-9]*\) tests\? failed out of.*/\1/p' "$log_dir/ctest.log" | tail -1)
total=${total:-0}; failed=${failed:-0}
passed=$(( total - failed ))
if [[ $rc -ne 0 ]]; then record "ctest" FAILED "$secs"; else record "ctest" ok "$secs"; fi

# ---- sanitizer build and fuzz run -------------------------------------------------
# A second build with AddressSanitizer + UndefinedBehaviorSanitizer (gcc) into
# "$build_dir-asan" running the core, spec, cabi, hostile and fuzz-replay tests, then a
# time-boxed libFuzzer run over the C interface (clang) in "$build_dir-fuzz". Either
# fails the run on any sanitizer report, leak, crash or hang. WEFT_FUZZ_SECONDS sets
# the fuzzing time (default 180); WEFT_SKIP_SANITIZERS=1 skips both (local runs only).
if [[ "${WEFT_SKIP_SANITIZERS:-0}" != 1 ]]; then
  run_step "sanitizers (ASan+UBSan)" "$log_dir/sanitize.log" bash scripts/sanitize.sh "$build_dir-asan"
  run_step "fuzz (${WEFT_FUZZ_SECONDS:-180}s)" "$log_dir/fuzz.log" bash scripts/fuzz.sh "$build_dir-fuzz"
else
  record "sanitizers and fuzz" SKIPPED 0
fi
# ------------------------------------------------------------------------------------

summary
if [[ ${#missing_labels[@]} -gt 0 ]]; then
  echo "test: no tests registered for group(s): ${missing_labels[*]}" >&2
  rc=1
fi
echo "test: $passed passed, $failed failed"
if [[ $rc -ne 0 ]]; then
  echo "test: FAILED (see $log_dir/ctest.log)" >&2
  exit 1
fi
echo "test: all groups passed"
