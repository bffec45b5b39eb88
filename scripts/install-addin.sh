#!/usr/bin/env bash
# Install the weft Calc add-in (weft.oxt) into a private LibreOffice profile, and
# optionally open Calc on a workbook with it.
#
#   scripts/install-addin.sh [--oxt build/addin/weft.oxt] [--profile DIR] [--open FILE]
#
# --oxt      the package (default: build/addin/weft.oxt under the repository)
# --profile  the private profile folder (default: ~/.cache/weft/office-profile);
#            it is initialised first when new (an extension added to a profile that
#            was never started is wiped at its first start). An installed weft is
#            replaced.
# --open     open Calc on FILE with that profile (needs a display); without it the
#            script only installs and prints the command that opens Calc.
# --print-csv  recalculate FILE headless with that profile and print its first
#            sheet as CSV (a check that the installed functions compute, no display
#            needed).
#
# The profile is also set to recalculate ODF and OOXML workbooks on load, so a
# workbook with WEFT.* formulas always shows results computed by the installed
# add-in, never values cached in the file.
#
# As root, unopkg refuses a user profile, so the profile is owned by, and unopkg
# and Calc run as, the unprivileged user "nobody"; a normal user runs them as
# themself. Your own LibreOffice profile is never touched.
set -euo pipefail

here="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
oxt="$here/build/addin/weft.oxt"
profile="${XDG_CACHE_HOME:-$HOME/.cache}/weft/office-profile"
open_file=""
csv_file=""
program="${WEFT_OFFICE_PROGRAM:-/usr/lib/libreoffice/program}"

while [[ $# -gt 0 ]]; do
  case "$1" in
    --oxt) oxt="$2"; shift 2 ;;
    --profile) profile="$2"; shift 2 ;;
    --open) open_file="$2"; shift 2 ;;
    --print-csv) csv_file="$2"; shift 2 ;;
    -h|--help) sed -n '2,26p' "$0"; exit 0 ;;
    *) echo "install-addin.sh: unknown option $1 (see --help)" >&2; exit 2 ;;
  esac
done

if [[ ! -f "$oxt" ]]; then
  echo "install-addin.sh: $oxt not found; build it first: cmake --build build --target weft_oxt" >&2
  exit 1
fi
if [[ ! -x "$program/soffice.bin" || ! -x "$program/unopkg" ]]; then
  echo "install-addin.sh: LibreOffice not found in $program; install libreoffice-calc (scripts/deps.sh)" >&2
  exit 1
fi

mkdir -p "$profile"
profile="$(cd "$profile" && pwd)"
oxt="$(cd "$(dirname "$oxt")" && pwd)/$(basename "$oxt")"
url="file://$profile"

# Who runs the office: nobody when we are root.
run=()
if [[ $(id -u) -eq 0 ]]; then
  run=(setpriv --reuid=65534 --regid=65534 --clear-groups --)
  chown -R 65534:65534 "$profile"
  # The package must be readable by that user: copy it into the profile folder.
  cp "$oxt" "$profile/weft.oxt"
  chown 65534:65534 "$profile/weft.oxt"
  oxt="$profile/weft.oxt"
fi
export HOME="$profile/home"
mkdir -p "$HOME"
[[ $(id -u) -eq 0 ]] && chown 65534:65534 "$HOME"

if [[ ! -d "$profile/user" ]]; then
  echo "Initialising the profile $profile"
  for attempt in 1 2 3; do
    rc=0
    "${run[@]}" "$program/soffice.bin" --headless --terminate_after_init --norestore \
      --nolockcheck "-env:UserInstallation=$url" </dev/null >/dev/null 2>&1 || rc=$?
    [[ $rc -eq 81 ]] && continue  # "restart me" after a first start
    break
  done
  if [[ ! -d "$profile/user" ]]; then
    echo "install-addin.sh: could not initialise the profile (soffice.bin exit code $rc)" >&2
    exit 1
  fi
  # The initialising run has exited; a lock it left behind would make unopkg refuse.
  rm -f "$profile/.lock"
fi

# unopkg sometimes leaves its lock file behind after it has exited, which makes
# the next unopkg or office start refuse the profile: remove a lock that this call
# created (never one that was there before, e.g. of a Calc using the profile).
unopkg() {
  local had_lock=0 rc=0
  [[ -e "$profile/.lock" ]] && had_lock=1
  "${run[@]}" "$program/unopkg" "$@" "-env:UserInstallation=$url" </dev/null || rc=$?
  [[ $had_lock -eq 0 ]] && rm -f "$profile/.lock"
  return $rc
}

echo "Installing $(basename "$oxt") into $profile"
unopkg add --force --suppress-license "$oxt"
# Recalculate on load (org.openoffice.Office.Calc/Formula/Load: 0 = always).
xcu="$profile/user/registrymodifications.xcu"
if [[ -f "$xcu" ]]; then
  sed -i -e '/oor:path="\/org.openoffice.Office.Calc\/Formula\/Load"><prop oor:name="\(ODF\|OOXML\)RecalcMode"/d' "$xcu"
  for mode in ODFRecalcMode OOXMLRecalcMode; do
    sed -i -e "s|</oor:items>|<item oor:path=\"/org.openoffice.Office.Calc/Formula/Load\"><prop oor:name=\"$mode\" oor:op=\"fuse\"><value>0</value></prop></item>\n</oor:items>|" "$xcu"
  done
fi

listing="$(unopkg list)"
grep -q "org.weft.calc" <<<"$listing" || {
  echo "install-addin.sh: unopkg did not list org.weft.calc after installing" >&2
  exit 1
}
echo "Installed. Open Calc with it:"
echo "  ${run[*]} $program/soffice --calc -env:UserInstallation=$url [workbook.ods]"

if [[ -n "$csv_file" ]]; then
  [[ -f "$csv_file" ]] || { echo "install-addin.sh: $csv_file not found" >&2; exit 1; }
  work="$profile/csv-check"
  rm -rf "$work"
  mkdir -p "$work/out"
  cp "$csv_file" "$work/"
  [[ $(id -u) -eq 0 ]] && chown -R 65534:65534 "$work"
  had_lock=0
  [[ -e "$profile/.lock" ]] && had_lock=1
  "${run[@]}" "$program/soffice.bin" --headless --norestore --nolockcheck \
    "-env:UserInstallation=$url" --convert-to csv --outdir "$work/out" \
    "$work/$(basename "$csv_file")" </dev/null >/dev/null 2>&1 || true
  [[ $had_lock -eq 0 ]] && rm -f "$profile/.lock"
  out="$work/out/$(basename "${csv_file%.*}").csv"
  [[ -f "$out" ]] || { echo "install-addin.sh: the office did not convert $csv_file" >&2; exit 1; }
  cat "$out"
fi

if [[ -n "$open_file" ]]; then
  open_file="$(cd "$(dirname "$open_file")" && pwd)/$(basename "$open_file")"
  exec "${run[@]}" "$program/soffice" --calc --norestore "-env:UserInstallation=$url" "$open_file"
fi
