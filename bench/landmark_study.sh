#!/usr/bin/env bash
# The map's quality against the landmark count, in one command: `unfurl embed --landmarks L`
# for L = 32, 64, ..., 2048 (and exact mode, `--landmarks all`, the limit L = N) on three
# data sets: a Swiss roll from `unfurl demo` (DESIGN.md section 6), the first rows of
# Fashion-MNIST (Debian's dataset-fashion-mnist, datasets-scripts/fashion_mnist_to_hdf5.py)
# and the digits bundled with scikit-learn (Debian's python3-sklearn,
# datasets-scripts/digits_to_hdf5.py; 1,797 x 64, so L stops at its node count). Each run is
# a whole process under GNU time with k = 10, 2 dims, maxmin landmarks, exact scores (every
# set is at most 50,000 points): T(12), C(12) and the residual variance at 2 dims (256
# sampled sources, the same for every L, not the landmarks), beside the wall and CPU time.
# Quality does not depend on the machine's load; the times do (load columns).
#
# Outputs in WORK: landmarks.csv (one row per run) and four figures, each PNG and SVG, drawn
# by csv_figure (io/plot), x = L on a log axis, one series per data set:
# landmarks-trust (1 - T(12)), landmarks-continuity (1 - C(12)), landmarks-residual
# (residual variance) and landmarks-time (seconds of the landmark rows and of the spectral
# stage, with fitted exponents; exact mode's cost is of another kind and left out). Also
# landmarks.md: a table per data set for bench/RESULTS.md.
#
# usage: bench/landmark_study.sh BUILD_DIR WORK_DIR [--roll-n N] (10000) [--fashion-rows N]
#          (3000) [--counts "32 64 ..."] [--seeds "1 ..."] (1) [--no-exact]
#          [--sets "swiss-roll fashion-mnist digits"] [--append] (add rows to landmarks.csv)
#          [--report-only] (figures and landmarks.md from an existing landmarks.csv)
set -euo pipefail
build=${1:?build folder}; work=${2:?work folder}; shift 2
roll_n=10000; fashion_rows=3000; counts="32 64 128 256 512 1024 2048"; seeds="1"; exact=1
sets="swiss-roll fashion-mnist digits"; append=0; report_only=0
while [ $# -gt 0 ]; do
  case $1 in
    --roll-n) roll_n=${2:?--roll-n needs a count}; shift ;;
    --fashion-rows) fashion_rows=${2:?--fashion-rows needs a count}; shift ;;
    --counts) counts=${2:?--counts needs a list}; shift ;;
    --seeds) seeds=${2:?--seeds needs a list}; shift ;;
    --no-exact) exact=0 ;;
    --sets) sets=${2:?--sets needs a list}; shift ;;
    --append) append=1 ;;
    --report-only) report_only=1; sets="" ;;
    *) echo "landmark_study.sh: unknown option $1" >&2; exit 64 ;;
  esac
  shift
done
unfurl="$build/apps/unfurl"
figure="$build/bench/figure/csv_figure"
here="$(cd "$(dirname "$0")" && pwd)"
for tool in "$unfurl" "$figure"; do
  [ -x "$tool" ] || { echo "landmark_study.sh: no $tool (build unfurl and csv_figure)" >&2; exit 66; }
done
mkdir -p "$work"
csv="$work/landmarks.csv"
columns="dataset,n,columns,landmarks,mode,seed,wall_s,cpu_s,peak_mib,geodesics_s,spectral_s,total_s,trustworthiness_12,continuity_12,residual_variance,coverage_radius,load_before,load_after"
[ $append = 1 ] || [ $report_only = 1 ] && [ -f "$csv" ] || echo "$columns" > "$csv"
wanted() { [[ " $sets " == *" $1 "* ]]; }
load() { cut -d' ' -f1 /proc/loadavg; }

# run DATASET N COLUMNS INPUT LANDMARKS SEED [EXTRA...]: one embed, one CSV row.
run() {
  local name=$1 n=$2 cols=$3 input=$4 count=$5 seed=$6; shift 6
  local tag="$name-$count-$seed" before mode=landmarks
  [ "$count" = all ] && mode=exact
  before=$(load)
  /usr/bin/time -v "$unfurl" --quiet --seed "$seed" embed "$input" -o "$work/$tag.h5" --k 10 \
    --landmarks "$count" --score-method exact --json "$work/$tag.json" "$@" \
    > "$work/$tag.out" 2> "$work/$tag.time"
  /usr/bin/python3 "$here/run_row.py" --columns "$columns" --time "$work/$tag.time" \
    --embed-json "$work/$tag.json" dataset="$name" n="$n" columns="$cols" mode="$mode" seed="$seed" \
    load_before="$before" load_after="$(load)" >> "$csv"
  tail -1 "$csv"
  rm -f "$work/$tag.h5"
}

# study DATASET N COLUMNS INPUT [EXTRA...]: every count up to N, then exact mode.
study() {
  local name=$1 n=$2 cols=$3 input=$4; shift 4
  for seed in $seeds; do
    for count in $counts; do
      if [ "$count" -lt "$n" ]; then run "$name" "$n" "$cols" "$input" "$count" "$seed" "$@"; fi
    done
  done
  if [ $exact = 1 ]; then run "$name" "$n" "$cols" "$input" all 1 "$@"; fi
}

if wanted swiss-roll; then
  roll="$work/roll$roll_n/swiss-roll.h5"
  [ -f "$roll" ] || "$unfurl" --quiet demo --scenario swiss-roll --point-count "$roll_n" --out-dir "$work/roll$roll_n" --data-only
  study swiss-roll "$roll_n" 3 "$roll"
fi
if wanted fashion-mnist && [ -d /usr/share/datasets/fashion-mnist ]; then
  images="$work/fashion-mnist.h5"
  [ -f "$images" ] || /usr/bin/python3 "$here/../datasets-scripts/fashion_mnist_to_hdf5.py" --out "$images"
  study fashion-mnist "$fashion_rows" 784 "$images" --dataset /images --rows "0:$fashion_rows"
elif wanted fashion-mnist; then
  echo "landmark_study.sh: Debian's dataset-fashion-mnist is not installed; Fashion-MNIST skipped" >&2
fi
if wanted digits; then
  digits="$work/digits.h5"
  [ -f "$digits" ] || /usr/bin/python3 "$here/../datasets-scripts/digits_to_hdf5.py" --out "$digits" > /dev/null
  study digits 1797 64 "$digits" --dataset /images
fi

# Figures of seed 1 (every count has it); the other seeds' spread is in landmarks.md.
common=(--x landmarks --series-by dataset --where seed=1 --log-x --x-label "landmarks L (log scale; the last point of each set: exact mode, L = N)")
"$figure" "$csv" -o "$work/landmarks-trust.png" -o "$work/landmarks-trust.svg" "${common[@]}" \
  --y "1-trustworthiness_12:1 - T(12)" --log-y --y-label "1 - trustworthiness(12) (log scale)" \
  --title "Trustworthiness against the landmark count" \
  --subtitle "unfurl embed, k = 10, 2 dims, maxmin landmarks, exact T(12)"
"$figure" "$csv" -o "$work/landmarks-continuity.png" -o "$work/landmarks-continuity.svg" \
  "${common[@]}" --y "1-continuity_12:1 - C(12)" --log-y \
  --y-label "1 - continuity(12) (log scale)" --title "Continuity against the landmark count" \
  --subtitle "unfurl embed, k = 10, 2 dims, maxmin landmarks, exact C(12)"
"$figure" "$csv" -o "$work/landmarks-residual.png" -o "$work/landmarks-residual.svg" \
  "${common[@]}" --y "residual_variance:residual variance" --log-y \
  --y-label "residual variance at 2 dims (log scale)" \
  --title "Residual variance against the landmark count" \
  --subtitle "1 - R^2 of geodesic and map distances, 256 sampled sources (not the landmarks)"
"$figure" "$csv" -o "$work/landmarks-time.png" -o "$work/landmarks-time.svg" --x landmarks \
  --series-by dataset --where seed=1 --log-x --where mode=landmarks --y "geodesics_s:landmark rows s" \
  --y "spectral_s:spectral s" --log-y --fit-from 256 --x-label "landmarks L (log scale)" \
  --y-label "seconds in the stage (log scale)" --title "Cost against the landmark count" \
  --subtitle "the stages that grow with L (in-process times); exponents fitted from L = 256 up"

# landmarks.md: one table per data set (seeds' median where several), for bench/RESULTS.md.
/usr/bin/python3 - "$csv" > "$work/landmarks.md" <<'PY'
import csv, statistics, sys
rows = list(csv.DictReader(open(sys.argv[1])))
for name in dict.fromkeys(r["dataset"] for r in rows):
    mine = [r for r in rows if r["dataset"] == name]
    print(f"\n{name}, N = {int(mine[0]['n']):,} x {mine[0]['columns']}:\n")
    print("| L | runs (seeds) | T(12) | C(12) | residual variance | CPU s | peak MiB | coverage radius |")
    print("|---|---|---|---|---|---|---|---|")
    for count in sorted({int(r["landmarks"]) for r in mine}):
        at = [r for r in mine if int(r["landmarks"]) == count]
        span = lambda key, f: (f"{f.format(statistics.median(float(r[key]) for r in at))}" +
                               (f" ({f.format(min(float(r[key]) for r in at))} to "
                                f"{f.format(max(float(r[key]) for r in at))})" if len(at) > 1 else ""))
        label = f"{count:,}" + (" (exact)" if at[0]["mode"] == "exact" else "")
        print(f"| {label} | {len(at)} ({' '.join(r['seed'] for r in at)}) | "
              f"{span('trustworthiness_12', '{:.6f}')} | {span('continuity_12', '{:.6f}')} | "
              f"{span('residual_variance', '{:.3g}')} | {span('cpu_s', '{:.2f}')} | "
              f"{span('peak_mib', '{:.0f}')} | {span('coverage_radius', '{:.3g}')} |")
PY
cat "$work/landmarks.md"
