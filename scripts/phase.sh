# Sourced by scripts/run-tests.sh and .ci/run: `phase NAME COMMAND...` runs COMMAND and prints
# its wall time and CPU time (user + system of every process it waited for), so a CI log shows
# where the time goes. UNFURL_PHASE_LOG, when set, collects the lines for a closing summary.
# CPU time comes from this shell's children counters in /proc (no subshell, which would not
# see them); wall time from EPOCHREALTIME.
_phase_cpu() {
  local -a f
  read -ra f </proc/$$/stat
  # Fields 16 and 17 (cutime, cstime) in clock ticks; the command name is "bash", no spaces.
  _phase_ticks=$((f[15] + f[16]))
}

phase() {
  local name=$1
  shift
  local start=$EPOCHREALTIME ticks0
  _phase_cpu
  ticks0=$_phase_ticks
  "$@"
  _phase_cpu
  local line
  line=$(awk -v name="$name" -v a="$start" -v b="$EPOCHREALTIME" \
    -v cpu=$((_phase_ticks - ticks0)) -v tck="$(getconf CLK_TCK)" \
    'BEGIN { printf "phase %-18s %7.1f s wall %8.1f CPU-s", name, b - a, cpu / tck }')
  echo "$line"
  if [ -n "${UNFURL_PHASE_LOG:-}" ]; then echo "$line" >>"$UNFURL_PHASE_LOG"; fi
}
