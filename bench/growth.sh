#!/usr/bin/env bash
# Cost growth of `unfurl embed` in landmark mode, in one command: Swiss roll at N = 10k, 100k
# and 1M points (10M with --with-10m) and Fashion-MNIST 70,000 x 784 when Debian's
# dataset-fashion-mnist is installed, each a whole process under GNU time (wall, CPU = user +
# sys, peak resident memory) with the stage times and the map's quality (T(12), C(12),
# residual variance at the map's dims) from `embed --json`; and the reference, scikit-learn's
# Isomap (Debian python3-sklearn, bench/reference_isomap.py), on the same Swiss roll files up
# to --reference-max points (where its N x N matrices fit), timed the same way, its quality
# from scikit-learn (bench/reference_quality.py) and its own geodesics. Fits the growth
# exponents of wall, CPU and peak memory, log-log least squares over the Swiss roll runs from
# 100k up to the largest N.
#
# Outputs in WORK: growth.csv (one row per run), growth.md (a Markdown section for
# bench/RESULTS.md, with the command) and growth.png / growth.svg (log-log: N against wall,
# CPU and peak memory, the fitted exponents in the legend; drawn by csv_figure, io/plot).
# --append FILE adds growth.md to FILE (bench/RESULTS.md). --report-only redraws growth.md and
# the figures from an existing WORK/growth.csv (an older CSV without the last three columns
# is read as unfurl's rows).
#
# usage: bench/growth.sh BUILD_DIR WORK_DIR [--with-10m] [--skip-fashion] [--landmarks L]
#          [--sizes "N N ..."] (default "10000 100000 1000000") [--reference-max N] (10000;
#          0: no reference) [--append FILE] [--report-only]
set -euo pipefail
command_line="bash bench/growth.sh $*"
build=${1:?build folder}; work=${2:?work folder}; shift 2
with10m=0; fashion=1; landmarks=256; append=""; sizes="10000 100000 1000000"
reference_max=10000; report_only=0
while [ $# -gt 0 ]; do
  case $1 in
    --with-10m) with10m=1 ;;
    --skip-fashion) fashion=0 ;;
    --landmarks) landmarks=${2:?--landmarks needs a count}; shift ;;
    --append) append=${2:?--append needs a file}; shift ;;
    --sizes) sizes=${2:?--sizes needs a list}; shift ;;
    --reference-max) reference_max=${2:?--reference-max needs a count}; shift ;;
    --report-only) report_only=1 ;;
    *) echo "growth.sh: unknown option $1" >&2; exit 64 ;;
  esac
  shift
done
unfurl="$build/apps/unfurl"
figure="$build/bench/figure/csv_figure"
here="$(cd "$(dirname "$0")" && pwd)"
[ -x "$figure" ] || { echo "growth.sh: no csv_figure at $figure (build the csv_figure target)" >&2; exit 66; }
mkdir -p "$work"
csv="$work/growth.csv"
# The first 17 columns are the older harness's, in its order; method, total_s and
# continuity_12 came later (readers go by name).
columns="dataset,n,columns,landmarks,wall_s,cpu_s,peak_mib,graph_s,components_s,node_order_s,geodesics_s,spectral_s,quality_s,trustworthiness_12,residual_variance,load_before,load_after,method,total_s,continuity_12"
load() { cut -d' ' -f1 /proc/loadavg; }
row() { /usr/bin/python3 "$here/run_row.py" --columns "$columns" "$@" >> "$csv"; tail -1 "$csv"; }

# run_unfurl DATASET N COLUMNS INPUT [EXTRA...]: one embed under GNU time, one CSV row.
run_unfurl() {
  local name=$1 n=$2 cols=$3 input=$4; shift 4
  local tag="$name-$n" before
  before=$(load)
  /usr/bin/time -v "$unfurl" --quiet embed "$input" -o "$work/$tag.h5" --k 10 \
    --landmarks "$landmarks" --json "$work/$tag.json" "$@" > "$work/$tag.out" 2> "$work/$tag.time"
  row --time "$work/$tag.time" --embed-json "$work/$tag.json" dataset="$name" n="$n" \
    columns="$cols" landmarks="$landmarks" load_before="$before" load_after="$(load)" method=unfurl
}

# run_reference N INPUT: scikit-learn's Isomap (exact: every point a landmark) on the same file.
run_reference() {
  local n=$1 input=$2 tag="reference-$1" before
  before=$(load)
  /usr/bin/time -v /usr/bin/python3 "$here/reference_isomap.py" "$input" "$work/$tag.h5" --k 10 \
    --dims 2 --figures "$work/$tag.json" > "$work/$tag.out" 2> "$work/$tag.time"
  local after
  after=$(load)
  /usr/bin/python3 "$here/reference_quality.py" "$input" "$work/$tag.h5" --k 12 \
    --out "$work/$tag-quality.json"
  row --time "$work/$tag.time" --flat-json "$work/$tag.json" --flat-json "$work/$tag-quality.json" \
    dataset=swiss-roll n="$n" columns=3 landmarks=all load_before="$before" load_after="$after" \
    method=reference
}

if [ $report_only = 0 ]; then
  [ -x "$unfurl" ] || { echo "growth.sh: no unfurl binary at $unfurl" >&2; exit 66; }
  echo "$columns" > "$csv"
  [ $with10m = 1 ] && sizes="$sizes 10000000"
  for n in $sizes; do
    roll="$work/roll$n/swiss-roll.h5"
    [ -f "$roll" ] || "$unfurl" --quiet demo --scenario swiss-roll --point-count "$n" --out-dir "$work/roll$n" --data-only
    run_unfurl swiss-roll "$n" 3 "$roll"
    if [ "$n" -le "$reference_max" ]; then run_reference "$n" "$roll"; fi
  done
  if [ $fashion = 1 ] && [ -d /usr/share/datasets/fashion-mnist ]; then
    images="$work/fashion-mnist.h5"
    [ -f "$images" ] || /usr/bin/python3 "$here/../datasets-scripts/fashion_mnist_to_hdf5.py" --out "$images"
    run_unfurl fashion-mnist 70000 784 "$images" --dataset /images
  fi
fi
[ -f "$csv" ] || { echo "growth.sh: no $csv to report" >&2; exit 66; }

/usr/bin/python3 - "$csv" "$columns" <<'EOF'
# An older CSV (the first 17 columns only) gets the later ones: every row was unfurl's.
import csv, sys
path, columns = sys.argv[1], sys.argv[2].split(",")
rows = list(csv.DictReader(open(path)))
if rows and "method" not in rows[0]:
    with open(path, "w", newline="") as f:
        w = csv.DictWriter(f, columns, lineterminator="\n")
        w.writeheader()
        for r in rows:
            w.writerow({**{c: "" for c in columns}, **r, "method": "unfurl"})
EOF

"$figure" "$csv" -o "$work/growth.png" -o "$work/growth.svg" --x n --where dataset=swiss-roll \
  --y "wall_s:wall s" --y "cpu_s:CPU s" --y "peak_mib:peak MiB" --series-by method \
  --log-x --log-y --fit-from 100000 \
  --title "Cost growth of unfurl embed: Swiss roll, $landmarks landmarks, k = 10" \
  --subtitle "whole processes (GNU time); exponents: log-log least squares from N = 100,000 up" \
  --x-label "points N (log scale)" --y-label "seconds or MiB (log scale)"

/usr/bin/python3 - "$csv" "$command_line" > "$work/growth.md" <<'EOF'
import csv, sys
import numpy as np
rows = list(csv.DictReader(open(sys.argv[1])))
def short(v, missing):
    return f"{float(v):.6f}" if v else missing
print("| data | method | N | wall s | CPU s | peak MiB | graph | geodesics | spectral | scores | T(12) | C(12) | residual variance | load before / after |")
print("|---|---|---|---|---|---|---|---|---|---|---|---|---|---|")
for r in rows:
    rv = f"{float(r['residual_variance']):.3g}" if r["residual_variance"] else ""
    print(f"| {r['dataset']} | {r['method']} | {int(r['n']):,} | {r['wall_s']} | {r['cpu_s']} | "
          f"{r['peak_mib']} | {r['graph_s']} | {r['geodesics_s']} | {r['spectral_s']} | "
          f"{r['quality_s']} | {short(r['trustworthiness_12'], 'not scored')} | "
          f"{short(r['continuity_12'], 'not recorded')} | "
          f"{rv} | {r['load_before']} / {r['load_after']} |")
roll = [r for r in rows if r["dataset"] == "swiss-roll" and r["method"] == "unfurl"
        and int(r["n"]) >= 100000]
if len(roll) >= 2:
    n = np.log([float(r["n"]) for r in roll])
    for column in ["wall_s", "cpu_s", "peak_mib"]:
        slope = np.polyfit(n, np.log([float(r[column]) for r in roll]), 1)[0]
        print(f"\nGrowth exponent of {column.rsplit('_', 1)[0]}, landmark mode, N = "
              f"{int(roll[0]['n']):,} to {int(roll[-1]['n']):,} (log-log least squares over "
              f"{len(roll)} sizes): **{slope:.2f}**")
for ref in (r for r in rows if r["method"] == "reference"):
    mine = [r for r in rows if r["method"] == "unfurl" and r["n"] == ref["n"]
            and r["dataset"] == ref["dataset"]]
    if mine:
        m = mine[0]
        print(f"\nReference against unfurl at N = {int(ref['n']):,} (same file, same k): wall "
              f"{float(ref['wall_s']) / float(m['wall_s']):.1f}x, CPU "
              f"{float(ref['cpu_s']) / float(m['cpu_s']):.1f}x, peak "
              f"{float(ref['peak_mib']) / float(m['peak_mib']):.1f}x unfurl's")
print(f"\nCommand: `{sys.argv[2]}` (columns of the CSV: "
      f"{', '.join(rows[0].keys()) if rows else ''}); figure: growth.png / growth.svg")
EOF
cat "$work/growth.md"
if [ -n "$append" ]; then cat "$work/growth.md" >> "$append"; fi
