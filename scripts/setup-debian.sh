#!/usr/bin/env bash
# Installs every Debian 12 package unfurl needs to build, test and benchmark.
# This list is the only place where dependencies are named.
set -euo pipefail

packages=(
  build-essential cmake ninja-build pkg-config clang-format
  libeigen3-dev libnanoflann-dev libspectra-dev
  libopenblas-dev
  libhdf5-dev hdf5-tools
  libcli11-dev libspdlog-dev libfmt-dev nlohmann-json3-dev
  libcairo2-dev fonts-dejavu-core chromium
  catch2 libbenchmark-dev
  python3 python3-numpy python3-scipy python3-sklearn python3-h5py
  dataset-fashion-mnist
)

if [ "$(id -u)" -ne 0 ]; then
  echo "setup-debian.sh: run as root (it calls apt-get install)" >&2
  exit 77
fi

missing=()
for p in "${packages[@]}"; do
  dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed" || missing+=("$p")
done
if [ ${#missing[@]} -gt 0 ]; then
  export DEBIAN_FRONTEND=noninteractive
  apt-get update -qq
  apt-get install -y -qq --no-install-recommends "${missing[@]}"
fi
