#!/usr/bin/env bash
# Full benchmark runs (issue 7), separate from the test command: builds the
# benchmark in Release, then runs
#   1. weft_bench: pooled/fd/within x classical/hc1/cluster/dk on seeded panels of
#      100,000 rows (10,000 x 10, K=5) and 1,000,000 rows (50,000 x 20, K=20),
#      balanced and unbalanced with gaps: medians, the floor, ratios, peak memory;
#      and the same with observation weights beside each unweighted case (--weighted);
#   2. tests/bench/compare.py: one 1M-row dataset through weft, R plm, R lm.fit +
#      sandwich and statsmodels, with an agreement check;
#   3. tests/bench/calc_bench.py: WEFT.ESTIMATES in headless Calc, and a second function
#      over the ranges and over a fit cell (WEFT.FIT) (needs the add-in);
#      tests/bench/calc_share_bench.py: the add-in's share of a cold 1,000,000 x 10
#      call against the core fit alone on the same data.
# Results land in $WEFT_BENCH_OUT (default out/bench/). Takes 5-15 minutes on 2 cores.
#
#   bash scripts/bench.sh                 everything
#   bash scripts/bench.sh --quick         100k only, no reference libraries, no Calc
#   bash scripts/bench.sh --no-calc       skip the Calc benchmark
#   WEFT_BUILD_DIR=build-bench bash scripts/bench.sh
set -euo pipefail

repo=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
cd "$repo"
build_dir=${WEFT_BUILD_DIR:-build-bench}
out_dir=${WEFT_BENCH_OUT:-out/bench}
quick=0
calc=1
compare=1
for arg in "$@"; do
  case "$arg" in
    --quick) quick=1; calc=0; compare=0 ;;
    --no-calc) calc=0 ;;
    --no-compare) compare=0 ;;
    *) echo "bench: unknown argument '$arg' (use --quick, --no-calc, --no-compare)" >&2; exit 2 ;;
  esac
done

bash scripts/deps.sh
mkdir -p "$out_dir"

cmake -S . -B "$build_dir" -DCMAKE_BUILD_TYPE=Release -DWEFT_BUILD_BENCH=ON -DWEFT_BUILD_TESTS=ON \
  -DWEFT_BUILD_ADDIN=$([[ $calc -eq 1 ]] && echo ON || echo OFF) > "$out_dir/configure.log"
cmake --build "$build_dir" -j2 --target weft_bench weft_fd_phases
bench="$build_dir/tests/bench/weft_bench"

echo "== smoke check"
"$bench" --smoke

echo "== weft_bench (median of repeated runs; ratios to the floor)"
if [[ $quick -eq 1 ]]; then
  "$bench" --sizes 100k --json "$out_dir/weft_bench.json" | tee "$out_dir/weft_bench.txt"
else
  "$bench" --sizes 100k,1Mk5,1M --json "$out_dir/weft_bench.json" | tee "$out_dir/weft_bench.txt"
fi

echo "== observation weights: each weighted case (se \"<se> w\") below its unweighted twin"
weighted_sizes=$([[ $quick -eq 1 ]] && echo 100k || echo 100k,1Mk5)
"$bench" --sizes "$weighted_sizes" --estimators pooled,fd,within --se classical,hc1,cluster --layouts balanced \
  --weighted --json "$out_dir/weft_bench_weighted.json" | tee "$out_dir/weft_bench_weighted.txt"

if [[ $compare -eq 1 ]]; then
  echo "== reference libraries on one dataset (1M rows)"
  /usr/bin/python3 tests/bench/compare.py --bench "$bench" --size 1M --no-install \
    --json "$out_dir/compare.json" | tee "$out_dir/compare.txt"
fi

if [[ $calc -eq 1 ]]; then
  echo "== headless Calc"
  cmake --build "$build_dir" -j2
  /usr/bin/python3 tests/bench/calc_bench.py --build "$build_dir" \
    --json "$out_dir/calc_bench.json" | tee "$out_dir/calc_bench.txt"
  /usr/bin/python3 tests/bench/calc_share_bench.py --build "$build_dir" \
    --json "$out_dir/calc_share_bench.json" | tee "$out_dir/calc_share_bench.txt"
fi
echo "bench: results in $out_dir/"
