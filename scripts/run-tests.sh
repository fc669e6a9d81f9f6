#!/usr/bin/env bash
# Installs what unfurl needs (Debian 12, as root), builds everything, runs every test.
# UNFURL_BUILD_DIR and UNFURL_CMAKE_ARGS let CI reuse this for the sanitizer build.
set -euo pipefail
cd "$(dirname "$0")/.."
bash scripts/setup-debian.sh
build="${UNFURL_BUILD_DIR:-build}"
# shellcheck disable=SC2086
cmake -S . -B "$build" -G Ninja -DCMAKE_BUILD_TYPE=Release ${UNFURL_CMAKE_ARGS:-}
cmake --build "$build"
ctest --test-dir "$build" --output-on-failure -j "$(nproc)"
