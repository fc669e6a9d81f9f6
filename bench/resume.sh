#!/usr/bin/env bash
# Resume figures (issue 12): what the work folder's writes cost, and how long a run resumed
# late in its landmark rows takes. Swiss roll of N points (default 1,000,000), 256 landmarks,
# each command a whole process under GNU time; runs alternate so that a changing load on the
# shared machine falls on both sides alike, and the load average is printed beside each.
#   overhead: `embed --no-work-dir` against `embed` (saving every piece, folder removed at
#             the end), ROUNDS pairs; ratio = with / without per pair.
#   resumed:  a straight run with a work folder killed (SIGKILL) as soon as its 15th of 16
#             landmark row batches is saved (93.75% of the rows; the issue asks about 90%):
#             the folder holds exactly what a real kill at that moment leaves, every piece
#             made before it (the graph, the residual variance's source rows, the landmark
#             choice, 15 batches). Copied fresh before each run (the copy is not timed);
#             ratio = resumed / the straight run with the work folder of the same round. With
#             scores and with --no-score. The resumed map's datasets are compared with the
#             straight run's once per mode (they must be equal byte for byte). The steps of
#             every run (seconds each, from `embed --json`) follow the tables: what a resumed
#             run spends its time on.
# Writes Markdown tables to stdout; paste them into bench/RESULTS.md with the date.
#
# usage: bench/resume.sh BUILD_DIR WORK_DIR [N] [ROUNDS] [SCORES: both|on|off]
set -euo pipefail
build=${1:?build folder}; work=${2:?work folder}; n=${3:-1000000}; rounds=${4:-3}; scores=${5:-both}
unfurl="$build/apps/unfurl"
mkdir -p "$work"
source "$(cd "$(dirname "$0")" && pwd)/timed_run.sh"

"$unfurl" --quiet --seed 1 demo --scenario swiss-roll --point-count "$n" --out-dir "$work/points" --data-only
points="$work/points/swiss-roll.h5"
load() { cut -d' ' -f1-3 /proc/loadavg; }
secs() { awk -F': ' '/Elapsed \(wall clock\)/ {n=split($2,p,":"); s=0; for(i=1;i<=n;i++) s=s*60+p[i]; print s}' "$work/$1.time"; }

# The steps of a run from its --json report (the run record's steps, seconds each).
steps() { /usr/bin/python3 -c 'import json, sys
print(", ".join("%s %.2f" % (s["step"], s["seconds"]) for s in json.load(open(sys.argv[1]))["run"]["steps"]))' "$work/$1.json"; }

case $scores in both) modes=(on off) ;; on | off) modes=("$scores") ;; *) echo "SCORES: both, on or off" >&2; exit 64 ;; esac
for mode in "${modes[@]}"; do
  score=; [ "$mode" = off ] && score=--no-score
  tag=${score:+-noscore}
  base=(--quiet embed "$points" --k 10 --landmarks 256 $score)
  # The ~90% folder: killed as the 15th of its 16 row batches appears (pieces appear whole, by
  # rename). Batches finish in any order (the rows run as tasks beside the landmark choice),
  # so it is the count of saved batches that says how far the rows are, not a batch's number.
  rm -rf "$work/template$tag.work"
  "$unfurl" "${base[@]}" -o "$work/template$tag.h5" --work-dir "$work/template$tag.work" > /dev/null &
  pid=$!
  batches() { compgen -G "$work/template$tag.work/rows-*.h5" | wc -l; }
  until [ "$(batches)" -ge 15 ]; do
    kill -0 "$pid" 2> /dev/null || { echo "the run ended before its 15th row batch" >&2; exit 1; }
    sleep 0.02
  done
  kill -9 "$pid"
  wait "$pid" 2> /dev/null || true
  echo
  echo "scores: ${score:-on}"
  echo "| round | without folder s | with folder s | ratio | resumed (15/16) s | ratio to straight | load before |"
  echo "|---|---|---|---|---|---|---|"
  for r in $(seq 1 "$rounds"); do
    l=$(load)
    run "plain$tag-$r" "$unfurl" "${base[@]}" -o "$work/plain.h5" --no-work-dir --json "$work/plain$tag-$r.json" > /dev/null
    run "saved$tag-$r" "$unfurl" "${base[@]}" -o "$work/saved.h5" --work-dir "$work/saved.work" --json "$work/saved$tag-$r.json" > /dev/null
    rm -rf "$work/resumed.work"; cp -r "$work/template$tag.work" "$work/resumed.work"
    run "resumed$tag-$r" "$unfurl" "${base[@]}" -o "$work/resumed.h5" --work-dir "$work/resumed.work" --json "$work/resumed$tag-$r.json" > /dev/null
    a=$(secs "plain$tag-$r"); b=$(secs "saved$tag-$r"); c=$(secs "resumed$tag-$r")
    echo "| $r | $a | $b | $(awk -v a="$a" -v b="$b" 'BEGIN{printf "%.3f", b/a}') | $c | $(awk -v b="$b" -v c="$c" 'BEGIN{printf "%.3f", c/b}') | $l |"
  done
  /usr/bin/python3 -c 'import sys, h5py, numpy as np
def data(name):
    out = {}
    with h5py.File(name, "r") as f:
        f.visititems(lambda k, o: out.update({k: o[()]}) if isinstance(o, h5py.Dataset) else None)
    return out
a, b = data(sys.argv[1]), data(sys.argv[2])
same = a.keys() == b.keys() and all(np.array_equal(a[k], b[k]) for k in a)
print("- the resumed map'"'"'s datasets equal the straight run'"'"'s byte for byte:", "yes" if same else "NO")' \
    "$work/saved.h5" "$work/resumed.h5"
  for r in $(seq 1 "$rounds"); do
    for kind in plain saved resumed; do echo "- $kind$tag-$r: $(steps "$kind$tag-$r")"; done
  done
done
