#!/usr/bin/env bash
# Cost growth of `unfurl embed` in landmark mode: Swiss roll at N = 10k, 100k and 1M points
# (10M with --with-10m) and Fashion-MNIST 70,000 x 784 when Debian's dataset-fashion-mnist is
# installed, each a whole process under GNU time (wall, CPU = user + sys, peak resident
# memory) with the stage times and the map's quality (T(12), residual variance at the map's
# dims) from `embed --json`. Fits the growth exponent of the wall time, log-log least squares
# over the Swiss roll runs from 100k up to the largest N.
#
# Outputs in WORK: growth.csv (one row per run; the columns below are the input of the
# log-log plot) and growth.md (a Markdown section for bench/RESULTS.md, with the command).
# --append FILE adds growth.md to FILE (bench/RESULTS.md).
#
# usage: bench/growth.sh BUILD_DIR WORK_DIR [--with-10m] [--skip-fashion] [--landmarks L]
#                        [--append FILE] [--sizes "N N ..."]  (default "10000 100000 1000000")
set -euo pipefail
command_line="bash bench/growth.sh $*"
build=${1:?build folder}; work=${2:?work folder}; shift 2
with10m=0; fashion=1; landmarks=256; append=""; sizes="10000 100000 1000000"
while [ $# -gt 0 ]; do
  case $1 in
    --with-10m) with10m=1 ;;
    --skip-fashion) fashion=0 ;;
    --landmarks) landmarks=${2:?--landmarks needs a count}; shift ;;
    --append) append=${2:?--append needs a file}; shift ;;
    --sizes) sizes=${2:?--sizes needs a list}; shift ;;
    *) echo "growth.sh: unknown option $1" >&2; exit 64 ;;
  esac
  shift
done
unfurl="$build/apps/unfurl"
here="$(cd "$(dirname "$0")" && pwd)"
[ -x "$unfurl" ] || { echo "growth.sh: no unfurl binary at $unfurl" >&2; exit 66; }
mkdir -p "$work"
csv="$work/growth.csv"
echo "dataset,n,columns,landmarks,wall_s,cpu_s,peak_mib,graph_s,components_s,node_order_s,geodesics_s,spectral_s,quality_s,trustworthiness_12,residual_variance,load_before,load_after" > "$csv"

# run DATASET N COLUMNS INPUT [EXTRA...]: one embed under GNU time, one CSV row.
run() {
  local name=$1 n=$2 cols=$3 input=$4; shift 4
  local tag="$name-$n" before after
  before=$(cut -d' ' -f1 /proc/loadavg)
  /usr/bin/time -v "$unfurl" --quiet embed "$input" -o "$work/$tag.h5" --k 10 \
    --landmarks "$landmarks" --json "$work/$tag.json" "$@" > "$work/$tag.out" 2> "$work/$tag.time"
  after=$(cut -d' ' -f1 /proc/loadavg)
  /usr/bin/python3 - "$work/$tag.time" "$work/$tag.json" "$name" "$n" "$cols" "$landmarks" \
    "$before" "$after" >> "$csv" <<'EOF'
import json, sys
time_file, json_file, name, n, cols, landmarks, before, after = sys.argv[1:]
t = {}
for line in open(time_file):
    key, _, value = line.strip().rpartition(": ")
    t[key] = value
clock = [float(p) for p in t["Elapsed (wall clock) time (h:mm:ss or m:ss)"].split(":")]
wall = sum(v * 60 ** (len(clock) - 1 - i) for i, v in enumerate(clock))
cpu = float(t["User time (seconds)"]) + float(t["System time (seconds)"])
peak = float(t["Maximum resident set size (kbytes)"]) / 1024
doc = json.load(open(json_file))
sec = doc["embedding"]["seconds"]
q = doc.get("quality", {})
trust = next((h["trustworthiness"] for h in q.get("neighbourhoods", []) if h["k"] == 12), "")
dims = doc["parameters"]["dims"]
rv = q.get("residual_variance", {}).get("by_dims", [])
rv = rv[dims - 1] if len(rv) >= dims else ""
print(",".join(str(v) for v in [
    name, n, cols, landmarks, f"{wall:.2f}", f"{cpu:.2f}", f"{peak:.0f}",
    *(f"{sec.get(s, 0.0):.2f}" for s in ["graph", "components", "node_order", "geodesics",
                                         "spectral"]),
    f"{q.get('seconds', 0.0):.2f}", trust, rv, before, after]))
EOF
  tail -1 "$csv"
}

[ $with10m = 1 ] && sizes="$sizes 10000000"
for n in $sizes; do
  roll="$work/roll$n/swiss-roll.h5"
  [ -f "$roll" ] || "$unfurl" --quiet demo --scenario swiss-roll --point-count "$n" --out-dir "$work/roll$n" --data-only
  run swiss-roll "$n" 3 "$roll"
done
if [ $fashion = 1 ] && [ -d /usr/share/datasets/fashion-mnist ]; then
  images="$work/fashion-mnist.h5"
  [ -f "$images" ] || /usr/bin/python3 "$here/../datasets-scripts/fashion_mnist_to_hdf5.py" --out "$images"
  run fashion-mnist 70000 784 "$images" --dataset /images
fi

/usr/bin/python3 - "$csv" "$command_line" > "$work/growth.md" <<'EOF'
import csv, math, sys
import numpy as np
rows = list(csv.DictReader(open(sys.argv[1])))
short = lambda v: f"{float(v):.6f}" if v else "not scored"
print("| data | N | wall s | CPU s | peak MiB | graph | geodesics | spectral | scores | T(12) | residual variance | load before / after |")
print("|---|---|---|---|---|---|---|---|---|---|---|---|")
for r in rows:
    print(f"| {r['dataset']} | {int(r['n']):,} | {r['wall_s']} | {r['cpu_s']} | {r['peak_mib']} | "
          f"{r['graph_s']} | {r['geodesics_s']} | {r['spectral_s']} | {r['quality_s']} | "
          f"{short(r['trustworthiness_12'])} | {float(r['residual_variance']):.3g} | {r['load_before']} / {r['load_after']} |")
roll = [r for r in rows if r["dataset"] == "swiss-roll" and int(r["n"]) >= 100000]
if len(roll) >= 2:
    n = np.log([float(r["n"]) for r in roll])
    for column in ["wall_s", "cpu_s"]:
        slope = np.polyfit(n, np.log([float(r[column]) for r in roll]), 1)[0]
        print(f"\nGrowth exponent of {column[:-2]} time, landmark mode, N = "
              f"{int(roll[0]['n']):,} to {int(roll[-1]['n']):,} (log-log least squares over "
              f"{len(roll)} sizes): **{slope:.2f}**")
print(f"\nCommand: `{sys.argv[2]}` (columns of the CSV: "
      f"{', '.join(rows[0].keys()) if rows else ''})")
EOF
cat "$work/growth.md"
if [ -n "$append" ]; then cat "$work/growth.md" >> "$append"; fi
