#!/usr/bin/env bash
# Placement figures: `unfurl place` of N new Swiss roll points (another seed) into a map of N
# Swiss roll points made with 256 landmarks and --keep-geodesics, each command a whole process
# under GNU time (wall seconds, peak resident memory). Writes a Markdown table to stdout; paste
# it into bench/RESULTS.md with the date and the machine's load.
#
# usage: bench/place.sh BUILD_DIR WORK_DIR [N]   (N default 1000000)
set -euo pipefail
build=${1:?build folder}; work=${2:?work folder}; n=${3:-1000000}
unfurl="$build/apps/unfurl"
mkdir -p "$work"

source "$(cd "$(dirname "$0")" && pwd)/timed_run.sh"

"$unfurl" --quiet --seed 1 demo --scenario swiss-roll --point-count "$n" --out-dir "$work/map-points" --data-only
"$unfurl" --quiet --seed 2 demo --scenario swiss-roll --point-count "$n" --out-dir "$work/new-points" --data-only
echo "| run | wall s | peak MiB |"
echo "|---|---|---|"
run embed-keep-geodesics "$unfurl" --quiet embed "$work/map-points/swiss-roll.h5" -o "$work/map.h5" \
  --k 10 --landmarks 256 --keep-geodesics --no-score
run place "$unfurl" place --map "$work/map.h5" "$work/new-points/swiss-roll.h5" -o "$work/placed.h5"
ls -l "$work/map.h5" "$work/placed.h5" >&2
