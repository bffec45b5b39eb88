#!/usr/bin/env bash
# Bounded libFuzzer run over the C interface (tests/fuzz/fuzz_cabi.cpp) with
# AddressSanitizer and UndefinedBehaviorSanitizer. Fails on any crash, leak, hang
# (an input slower than 10 s), out-of-memory or sanitizer report; the input that did
# it is left in <build>/artifacts/ and named in the output. To keep it as a
# regression test: copy it to tests/fuzz/regressions/<what-it-does> (the fuzz.replay
# CTest replays that folder in every build).
#
#   bash scripts/fuzz.sh                 180 s in build-fuzz/
#   WEFT_FUZZ_SECONDS=600 bash scripts/fuzz.sh
#   WEFT_FUZZ_SEED=1234 bash scripts/fuzz.sh   replay a run's seed (every run prints its seed)
set -euo pipefail

repo=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
cd "$repo"
build_dir=${1:-${WEFT_FUZZ_BUILD_DIR:-build-fuzz}}
seconds=${WEFT_FUZZ_SECONDS:-180}
# A new seed each run (so that CI keeps exploring), printed so that a failing run can be replayed.
seed=${WEFT_FUZZ_SEED:-$(( $(od -An -N4 -tu4 /dev/urandom) % 2147483647 + 1 ))}
jobs=${WEFT_JOBS:-2}

if ! command -v clang++ >/dev/null 2>&1; then
  echo "fuzz: clang++ not found (Debian packages clang and libclang-rt-14-dev; scripts/deps.sh installs them)" >&2
  exit 1
fi

if [[ ! -f "$build_dir/CMakeCache.txt" ]]; then
  generator=()
  command -v ninja >/dev/null 2>&1 && generator=(-G Ninja)
  CC=clang CXX=clang++ cmake -S . -B "$build_dir" "${generator[@]}" \
    -DCMAKE_BUILD_TYPE=RelWithDebInfo \
    -DWEFT_SANITIZE=fuzzer-no-link,address,undefined \
    -DWEFT_FUZZ=ON -DWEFT_BUILD_ADDIN=OFF -DWEFT_BUILD_BENCH=OFF -DWEFT_BUILD_TESTS=ON
fi
t0=$(date +%s)
cmake --build "$build_dir" -j "$jobs" --target weft_fuzz_cabi
t1=$(date +%s)

# The working corpus grows in the build dir; the seeds and every past finding start it.
mkdir -p "$build_dir/corpus" "$build_dir/artifacts"
cp -n tests/fuzz/corpus/* tests/fuzz/regressions/* "$build_dir/corpus/" 2>/dev/null || true
rm -f "$build_dir"/artifacts/*

# Stack traces in UBSan reports (ASan prints them anyway); leaks are checked by libFuzzer.
export UBSAN_OPTIONS=${UBSAN_OPTIONS:-print_stacktrace=1:halt_on_error=1}
log="$build_dir/fuzz.log"
rc=0
"$build_dir/tests/fuzz/weft_fuzz_cabi" \
  -max_total_time="$seconds" -timeout=10 -rss_limit_mb=2048 -max_len=4096 \
  -print_final_stats=1 -seed="$seed" -artifact_prefix="$build_dir/artifacts/" \
  "$build_dir/corpus" >"$log" 2>&1 || rc=$?
t2=$(date +%s)

grep -E '^stat::(number_of_executed_units|average_exec_per_sec|new_units_added|peak_rss_mb)' "$log" || true
echo "fuzz: build $((t1 - t0))s, fuzzing $((t2 - t1))s, corpus $(ls "$build_dir/corpus" | wc -l) inputs, seed $seed"
if [[ $rc -ne 0 ]] || compgen -G "$build_dir/artifacts/*" >/dev/null; then
  echo "fuzz: FAILED (libFuzzer exit $rc, seed $seed; replay with WEFT_FUZZ_SEED=$seed). Report:" >&2
  grep -E -A 30 'ERROR: |runtime error|==ERROR|deadly signal|Test unit written|SUMMARY' "$log" | head -80 >&2 || tail -50 "$log" >&2
  echo "fuzz: failing inputs:" >&2
  ls -l "$build_dir"/artifacts/ >&2 || true
  echo "fuzz: keep each as tests/fuzz/regressions/<name> once understood; full log: $log" >&2
  exit 1
fi
echo "fuzz: no crash, leak, hang or sanitizer report in ${seconds}s"
