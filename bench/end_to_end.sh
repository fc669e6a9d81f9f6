#!/usr/bin/env bash
# End-to-end figures of `unfurl embed` against scikit-learn's Isomap (Debian python3-sklearn)
# on the same Swiss roll files, each as a whole process under GNU time (wall seconds, peak
# resident memory). Writes a Markdown table to stdout; paste it into bench/RESULTS.md with
# the date and the machine's load.
#
# usage: bench/end_to_end.sh BUILD_DIR WORK_DIR [--skip-reference-20k] [--skip-1m]
set -euo pipefail
build=${1:?build folder}; work=${2:?work folder}; shift 2
skip20=0; skip1m=0
for a in "$@"; do
  case $a in --skip-reference-20k) skip20=1 ;; --skip-1m) skip1m=1 ;; esac
done
unfurl="$build/apps/unfurl"
here="$(cd "$(dirname "$0")" && pwd)"
mkdir -p "$work"

source "$(cd "$(dirname "$0")" && pwd)/timed_run.sh"

for n in 10000 20000; do
  "$unfurl" --quiet demo --scenario swiss-roll --point-count $n --out-dir "$work/roll$n" --data-only
done
echo "| run | wall s | peak MiB |"
echo "|---|---|---|"
# The peer computes no scores, so the compared runs skip them; one scored run shows their cost.
run unfurl-exact-10k "$unfurl" --quiet embed "$work/roll10000/swiss-roll.h5" -o "$work/exact10k.h5" --k 10 --landmarks all --no-score
run unfurl-exact-10k-scored "$unfurl" --quiet embed "$work/roll10000/swiss-roll.h5" -o "$work/exact10k-s.h5" --k 10 --landmarks all
run reference-isomap-10k /usr/bin/python3 "$here/reference_isomap.py" "$work/roll10000/swiss-roll.h5" "$work/ref10k.h5" --k 10
run unfurl-landmarks500-20k "$unfurl" --quiet embed "$work/roll20000/swiss-roll.h5" -o "$work/lm20k.h5" --k 10 --landmarks 500 --no-score
if [ $skip20 = 0 ]; then
  run reference-isomap-20k /usr/bin/python3 "$here/reference_isomap.py" "$work/roll20000/swiss-roll.h5" "$work/ref20k.h5" --k 10
fi
if [ $skip1m = 0 ]; then
  "$unfurl" --quiet demo --scenario swiss-roll --point-count 1000000 --out-dir "$work/roll1m" --data-only
  run unfurl-landmarks256-1m "$unfurl" --quiet embed "$work/roll1m/swiss-roll.h5" -o "$work/lm1m.h5" --k 10 --landmarks 256
  run unfurl-landmarks256-1m-noscore "$unfurl" --quiet embed "$work/roll1m/swiss-roll.h5" -o "$work/lm1m-ns.h5" --k 10 --landmarks 256 --no-score
fi
