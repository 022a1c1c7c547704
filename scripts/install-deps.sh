#!/usr/bin/env bash
# Installs every system package sorbtrace needs to build, test, fuzz and benchmark.
# Idempotent: safe to re-run; works as root with no prompts (uses sudo when not root).
# Everything comes from Debian's archive; nothing is downloaded or vendored.
set -euo pipefail

PACKAGES=(
  build-essential cmake pkg-config git python3
  clang clang-format clang-tidy libclang-rt-14-dev   # sanitizers, fuzzers, lint
  libceres-dev libeigen3-dev                         # fitting engine
  libhpdf-dev fonts-dejavu-core                      # PDF datasheet + embedded Unicode font
  libfccp-dev                                        # fast-cpp-csv-parser (reference reader in benchmarks)
  libgtest-dev libgmock-dev libbenchmark-dev         # tests and benchmarks
  libcli11-dev libtomlplusplus-dev nlohmann-json3-dev libfmt-dev
  libboost-math-dev libssl-dev                       # Student-t quantiles; SHA-256
  poppler-utils qpdf                                 # pdftotext / pdftoppm / qpdf --check in tests
  icc-profiles-free                                  # sRGB ICC v2 profile: the PDF output intent
  chromium                                           # headless browser: HTML report tests
)

SUDO=""
if [ "$(id -u)" -ne 0 ]; then SUDO="sudo"; fi

missing=()
for p in "${PACKAGES[@]}"; do
  if ! dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed"; then
    missing+=("$p")
  fi
done

if [ "${#missing[@]}" -eq 0 ]; then
  echo "install-deps: all ${#PACKAGES[@]} packages already installed"
  exit 0
fi

echo "install-deps: installing ${missing[*]}"
export DEBIAN_FRONTEND=noninteractive
$SUDO apt-get update -qq
$SUDO apt-get install -y -qq --no-install-recommends "${missing[@]}"
