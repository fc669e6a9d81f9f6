# Sourced by the end-to-end bench scripts (needs $work): run NAME CMD... runs CMD as a whole
# process under GNU time and prints "| NAME | wall s | peak MiB |" from its report; the
# command's stdout and GNU time's report stay in $work/NAME.out and $work/NAME.time.
run() {
  local name=$1; shift
  /usr/bin/time -v "$@" > "$work/$name.out" 2> "$work/$name.time"
  local wall mem
  wall=$(awk -F': ' '/Elapsed \(wall clock\)/ {n=split($2,p,":"); s=0; for(i=1;i<=n;i++) s=s*60+p[i]; print s}' "$work/$name.time")
  mem=$(awk -F': ' '/Maximum resident set size/ {printf "%.0f", $2/1024}' "$work/$name.time")
  echo "| $name | $wall | $mem |"
}
