#!/usr/bin/env bash
# Sweep figures: `unfurl sweep` of 8 settings of k (5:40:5) on N Swiss roll points against one
# `unfurl embed` at the largest k (40) with the same landmarks and scores, each a whole
# process under GNU time. The two alternate ROUNDS times (the machine is shared), so load
# drifts hit both alike; the ratio is sweep wall over embed wall per round. Target: at most 3.
# Writes a Markdown table to stdout with the load average; paste it into bench/RESULTS.md.
#
# usage: bench/sweep.sh BUILD_DIR WORK_DIR [N] [ROUNDS]   (N default 100000, ROUNDS 2)
set -euo pipefail
build=${1:?build folder}; work=${2:?work folder}; n=${3:-100000}; rounds=${4:-2}
unfurl="$build/apps/unfurl"
mkdir -p "$work"

source "$(cd "$(dirname "$0")" && pwd)/timed_run.sh"

"$unfurl" --quiet --seed 1 demo --scenario swiss-roll --point-count "$n" --out-dir "$work/points" --data-only
points="$work/points/swiss-roll.h5"
echo "load average before: $(cut -d' ' -f1-3 /proc/loadavg)"
echo "| run | wall s | peak MiB |"
echo "|---|---|---|"
for round in $(seq 1 "$rounds"); do
  run "embed-k40-$round" "$unfurl" --quiet embed "$points" -o "$work/map.h5" --k 40 --dims 6
  run "sweep-k5-40-$round" "$unfurl" --quiet sweep "$points" --k 5:40:5 --dims 1:6 --out-dir "$work/sweep"
  echo "load average: $(cut -d' ' -f1-3 /proc/loadavg)"
done
