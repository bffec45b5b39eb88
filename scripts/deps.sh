#!/usr/bin/env bash
# Installs every Debian 12 package that weft's build, tests, demo and benchmarks need.
# Idempotent: when everything is already installed it only asks dpkg and returns in
# well under a second. Needs root (or passwordless sudo) only when something is missing.
#
# Add a package to the list it belongs to, one name per line, with a word on why.
set -euo pipefail

# --- build: compiler, CMake, the libraries core/ and the tests compile against
build_packages=(
  build-essential
  cmake
  ninja-build
  pkg-config
  libeigen3-dev        # core: matrices and QR
  libboost-math-dev    # core: t, F, chi-square distributions
  catch2               # tests: Catch2 v3
  nlohmann-json3-dev   # tests: reading the reference JSON files
)

# --- office: building the add-in and running it headless (calc, sample, demo)
office_packages=(
  libreoffice-calc
  libreoffice-dev      # SDK: unoidl-write, cppumaker, UNO headers and libraries
  python3-uno          # the calc/sample tests and the demo drive the office from Python
  python3-numpy        # sample tests: an independent least-squares fit of the sample data
)

# --- oracle: live reference runs in R and Python (label oracle)
oracle_packages=(
  r-base-core
  r-cran-plm
  r-cran-sandwich
  r-cran-lmtest
  python3-statsmodels
  r-cran-data.table    # bench: compare.py reads the 1M-row CSV quickly in R
  r-cran-jsonlite      # bench and tests/event: compare_reference.R and event_reference.R write JSON
  r-cran-clubsandwich  # oracle: cr2 SEs, Satterthwaite df and HTZ tests (cr2_reference.R)
  r-cran-estimatr      # oracle: lm_robust CR2 as a second cr2 reference
)

# --- python: the weft Python package (cabi/python) and its tests (label python)
python_packages=(
  python3-pandas       # the package's frames and results
  python3-pip          # python.install: pip install of cabi/python from the source tree
  python3-setuptools   # its build backend, used offline (--no-build-isolation)
  python3-dask         # weft.dask.fit: the fit of a dask dataframe (label dask)
  python3-distributed  # the local Dask cluster the dask tests and benchmark start
)

# --- tools: sanitizers, fuzzing, memory checks, benchmarks, the demo's PDF text dump
tool_packages=(
  valgrind
  clang
  libclang-rt-14-dev   # sanitizer and libFuzzer runtimes for clang
  poppler-utils        # pdftotext/pdftoppm: the demo and tests read the exported PDF
  hyperfine            # benchmarks time whole commands
  time                 # bench: /usr/bin/time -f %M for the reference libraries' peak memory
)

all_packages=("${build_packages[@]}" "${office_packages[@]}" "${oracle_packages[@]}" "${python_packages[@]}" "${tool_packages[@]}")

missing=()
for pkg in "${all_packages[@]}"; do
  status=$(dpkg-query -W -f='${Status}' "$pkg" 2>/dev/null || true)
  if [[ "$status" != "install ok installed" ]]; then
    missing+=("$pkg")
  fi
done

if [[ ${#missing[@]} -eq 0 ]]; then
  echo "deps: all ${#all_packages[@]} Debian packages are installed"
  exit 0
fi

echo "deps: missing ${#missing[@]} package(s): ${missing[*]}"

if [[ $(id -u) -eq 0 ]]; then
  as_root=()
elif command -v sudo >/dev/null 2>&1 && sudo -n true 2>/dev/null; then
  as_root=(sudo -n)
else
  echo "deps: error: installing packages needs root. Run as root, or install them yourself:" >&2
  echo "  sudo apt-get update && sudo apt-get install -y ${missing[*]}" >&2
  exit 1
fi

export DEBIAN_FRONTEND=noninteractive
# Another install may hold the dpkg lock; wait for it instead of failing.
apt_opts=(-o DPkg::Lock::Timeout=600 -o Dpkg::Options::=--force-confdef -o Dpkg::Options::=--force-confold)
"${as_root[@]}" apt-get "${apt_opts[@]}" update -qq
"${as_root[@]}" apt-get "${apt_opts[@]}" install -y -qq "${missing[@]}"
echo "deps: installed ${missing[*]}"
