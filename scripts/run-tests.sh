#!/usr/bin/env bash
# Installs what unfurl needs (Debian 12, as root), builds everything, runs every test, and
# prints the wall and CPU time of each phase (scripts/phase.sh).
# UNFURL_BUILD_DIR and UNFURL_CMAKE_ARGS let CI reuse this for the sanitizer build;
# UNFURL_PHASE_NAME prefixes that run's phase names.
set -euo pipefail
cd "$(dirname "$0")/.."
source scripts/phase.sh
build="${UNFURL_BUILD_DIR:-build}"
name="${UNFURL_PHASE_NAME:-}"
phase "${name}setup" bash scripts/setup-debian.sh
# shellcheck disable=SC2086
phase "${name}configure" cmake -S . -B "$build" -G Ninja -DCMAKE_BUILD_TYPE=Release \
  ${UNFURL_CMAKE_ARGS:-}
phase "${name}build" cmake --build "$build"
phase "${name}tests" ctest --test-dir "$build" --output-on-failure -j "$(nproc)"
