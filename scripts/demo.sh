#!/usr/bin/env bash
# The README's first command: on a fresh Debian 12 machine, installs what is missing,
# builds weft, packages the Calc add-in, installs it into a private office profile,
# recalculates a sample workbook headless, writes a PDF of it and prints its table of
# estimates here. Every step prints one progress line; a failure names the step and
# its log file.
#
#   bash scripts/demo.sh                    the first sample workbook and the event study
#   bash scripts/demo.sh sample-sheets/clinic-waiting-times.fods
set -euo pipefail

repo=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
cd "$repo"
build_dir=${WEFT_BUILD_DIR:-build}
[[ "$build_dir" = /* ]] || build_dir="$repo/$build_dir"
out_dir="$repo/out/demo"
log_dir="$out_dir/logs"
profile_dir="$out_dir/profile"
if [[ $# -gt 0 ]]; then
  workbooks=("$1")
else
  workbooks=(sample-sheets/branch-service-costs.fods sample-sheets/library-kiosk-rollout.fods)
fi
for i in "${!workbooks[@]}"; do
  [[ "${workbooks[$i]}" = /* ]] || workbooks[$i]="$repo/${workbooks[$i]}"
done
workbook=${workbooks[0]}
mkdir -p "$log_dir"

step_no=0
step() {
  local name=$1 log=$2; shift 2
  step_no=$((step_no + 1))
  printf '[%d] %-52s ' "$step_no" "$name..."
  local t0=$(date +%s)
  if "$@" >"$log" 2>&1; then
    printf 'ok (%ss)\n' "$(( $(date +%s) - t0 ))"
  else
    local rc=$?
    printf 'FAILED\n'
    echo >&2
    echo "demo: step '$name' failed (exit $rc). Its log: $log" >&2
    echo "----- last lines of $log -----" >&2
    tail -n 25 "$log" >&2
    exit 1
  fi
}

for workbook in "${workbooks[@]}"; do
  if [[ ! -f "$workbook" ]]; then
    echo "demo: workbook '$workbook' not found; the samples are in sample-sheets/*.fods" >&2
    exit 1
  fi
done

step "install missing Debian packages" "$log_dir/deps.log" bash scripts/deps.sh
configure_args=(-S . -B "$build_dir" -DCMAKE_BUILD_TYPE=Release -DWEFT_WERROR=ON)
[[ -f "$build_dir/CMakeCache.txt" ]] || configure_args+=(-G Ninja)
step "configure (Release)" "$log_dir/configure.log" cmake "${configure_args[@]}"
step "build library and add-in (-j2)" "$log_dir/build.log" \
  cmake --build "$build_dir" -j 2 --target weft_oxt

oxt="$build_dir/addin/weft.oxt"
step "check the packaged add-in (weft.oxt)" "$log_dir/package.log" test -s "$oxt"

rm -rf "$profile_dir"
step "install the add-in into a private profile" "$log_dir/install-addin.log" \
  bash scripts/install-addin.sh --oxt "$oxt" --profile "$profile_dir"

for workbook in "${workbooks[@]}"; do
  name=$(basename "$workbook" .fods)
  step "recalculate $name headless, write PDF" "$log_dir/recalc-$name.log" \
    /usr/bin/python3 scripts/demo_sheet.py --oxt "$oxt" --workbook "$workbook" \
    --ods "$out_dir/$name.ods" --pdf "$out_dir/$name.pdf" --table "$out_dir/$name-estimates.txt"
done

for workbook in "${workbooks[@]}"; do
  name=$(basename "$workbook" .fods)
  echo
  if grep -q 'ORG.WEFT.CALCFUNCTIONS.EVENT' "$workbook"; then
    echo "Event study from $(basename "$workbook"): effects by years since adoption under"
    echo "staggered adoption, group-time, imputation and two-way regression side by side"
    echo "(=WEFT.EVENT), with the generator's true effects:"
  else
    echo "Estimates from $(basename "$workbook"): first differences with period effects,"
    echo "standard errors clustered by unit (=WEFT.ESTIMATES(...; \"fd periods cluster\")):"
  fi
  echo
  cat "$out_dir/$name-estimates.txt"
  echo
  echo "Written: $out_dir/$name.pdf (PDF of the recalculated workbook)"
  echo "         $out_dir/$name.ods (the recalculated workbook)"
done
echo
echo "To open it in Calc with weft (needs a desktop session):"
echo "  bash scripts/install-addin.sh --oxt $oxt --profile $profile_dir --open $workbook"
echo "or install the add-in for your own user once (Tools > Extension Manager > Add, or"
echo "  unopkg add $oxt"
echo "as yourself, not root) and open any workbook in sample-sheets/ in Calc."
