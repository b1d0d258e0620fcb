#!/usr/bin/env bash
# Installs what tidemark needs to build and test on Debian 12, skipping what is
# already installed. Idempotent. Usage: scripts/setup.sh [--build-only]
#   --build-only   only the build dependencies (no reference data for tests)
set -euo pipefail

build_pkgs=(
  build-essential cmake ninja-build pkg-config git zstd
  libxxhash-dev libsimdjson-dev libtbb-dev libzstd-dev zlib1g-dev
  libutf8proc-dev libcli11-dev libfmt-dev libtomlplusplus-dev libboost-dev
  catch2
)
# Outside references the tests check against (../shared/REFERENCES.md).
test_pkgs=(
  python3 python3-statsmodels python3-scipy python3-xxhash xxhash unicode-data
  bible-kjv bible-kjv-text dict-gcide dict-devil wordnet-base
  fortunes-min fortunes-de fortunes-zh miscfiles bsdgames bzip2 gzip
  chromium fonts-dejavu-core
)

want=("${build_pkgs[@]}")
if [[ "${1:-}" != "--build-only" ]]; then want+=("${test_pkgs[@]}"); fi

missing=()
for p in "${want[@]}"; do
  if ! dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed"; then
    missing+=("$p")
  fi
done

if ((${#missing[@]} == 0)); then
  echo "setup: all ${#want[@]} packages present"
  exit 0
fi

sudo=""
if [[ $(id -u) -ne 0 ]]; then sudo="sudo"; fi
echo "setup: installing ${missing[*]}"
export DEBIAN_FRONTEND=noninteractive
$sudo apt-get update -qq
$sudo apt-get install -y -qq --no-install-recommends "${missing[@]}"
