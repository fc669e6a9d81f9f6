#!/usr/bin/env bash
# Installs what unfurl needs (Debian 12, as root), builds it, and runs the built-in demo.
set -euo pipefail
cd "$(dirname "$0")/.."
bash scripts/setup-debian.sh
cmake -S . -B build -G Ninja -DCMAKE_BUILD_TYPE=Release
cmake --build build --target unfurl
mkdir -p demo-output
./build/apps/unfurl demo --out-dir demo-output "$@"
