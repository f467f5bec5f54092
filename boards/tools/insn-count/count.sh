#!/usr/bin/env bash
# Exact instruction counts for every region a board firmware measures.
#
# usage: count.sh ELF MACHINE [extra qemu-system-arm args...]
#   e.g. count.sh boards/qemu-m4/target/thumbv7em-none-eabihf/release/qemu-m4 mps2-an386 -cpu cortex-m4
#
# Runs the firmware once under QEMU with the insn_count plugin, pairs each region the plugin
# counted with the `insns[i] name: n` line the firmware logged for it (by index i), and prints
# exact count, the firmware's own SysTick count, and the count net of the empty region.
# Fails (exit 1) if the firmware's exit code is not 0, if the firmware logged a region the plugin
# did not see, or if a SysTick count is further than 2 ticks from the exact count. Regions
# measured without logging (count::measure) are listed unnamed.
# VERBOSE=1 also prints the decoded firmware log.
set -euo pipefail
if [ $# -lt 2 ]; then
  awk 'NR > 1 && /^#/ { print; next } NR > 1 { exit }' "$0" >&2
  exit 2
fi
ELF=$1
MACHINE=$2
shift 2
DIR=$(cd "$(dirname "$0")" && pwd)
"$DIR/build.sh" >/dev/null
SO=$DIR/libinsn_count.so

NM=$(command -v nm || command -v llvm-nm || true)
[ -n "$NM" ] || { echo "count.sh: need nm (binutils) or llvm-nm" >&2; exit 2; }
sym() { "$NM" "$ELF" | awk -v s="$1" '$3 == s { print "0x" $1 }'; }
START=$(sym bench_start)
STOP=$(sym bench_stop)
if [ -z "$START" ] || [ -z "$STOP" ]; then
  echo "count.sh: $ELF has no bench_start/bench_stop markers" >&2
  exit 2
fi

TMP=$(mktemp -d)
trap 'rm -rf "$TMP"' EXIT
set +e
timeout 300 qemu-system-arm -machine "$MACHINE" "$@" -nographic -monitor none -serial null \
  -semihosting-config enable=on,target=native -icount shift=0 \
  -plugin "$SO,start=$START,stop=$STOP" -d plugin -D "$TMP/plugin.log" \
  -kernel "$ELF" </dev/null | defmt-print -e "$ELF" >"$TMP/firmware.log"
rc=$?
set -e
if [ "${VERBOSE:-0}" = 1 ] || [ $rc -ne 0 ]; then
  cat "$TMP/firmware.log"
fi
if [ $rc -ne 0 ]; then
  echo "count.sh: firmware run failed with exit code $rc" >&2
  exit 1
fi

awk -v machine="$MACHINE" '
  FNR == 1 { file++ }
  file == 1 && /^insn_region [0-9]+: [0-9]+$/ {
    i = $2; sub(":", "", i); exact[i] = $3; if (i + 1 > n) n = i + 1
  }
  file == 2 && /counter resolution [0-9]+ instructions/ {
    for (f = 1; f <= NF; f++) if ($f == "resolution") res = $(f + 1)
  }
  file == 2 && match($0, /insns\[[0-9]+\] .*: [0-9]+$/) {
    line = substr($0, RSTART, RLENGTH)
    i = line; sub(/^insns\[/, "", i); sub(/\].*/, "", i)
    name = line; sub(/^insns\[[0-9]+\] /, "", name); sub(/: [0-9]+$/, "", name)
    count = line; sub(/.*: /, "", count)
    stage[i] = name; systick[i] = count; if (i + 1 > n) n = i + 1
  }
  END {
    if (res == "") { print "count.sh: firmware did not log its counter resolution"; exit 1 }
    bad = 0
    printf "%-3s %12s %12s %12s  %s\n", "#", "exact", "net", "SysTick", "stage (" machine ")"
    for (i = 0; i < n; i++) {
      if (!(i in exact)) {
        printf "%-3d %12s %12s %12d  %s   <-- the plugin saw no such region\n", i, "-", "-", systick[i], stage[i]
        bad = 1; continue
      }
      if (!(i in stage)) {
        # measured with count::measure, which does not log: fine, show it unnamed
        printf "%-3d %12d %12d %12s  %s\n", i, exact[i], exact[i] - exact[0], "-", "(not logged by the firmware)"
        continue
      }
      net = exact[i] - exact[0]
      d = systick[i] - exact[i]; if (d < 0) d = -d
      flag = ""
      if (d > 2 * res) { flag = "   <-- SysTick off by " d; bad = 1 }
      printf "%-3d %12d %12d %12d  %s%s\n", i, exact[i], net, systick[i], stage[i], flag
    }
    if (n == 0) { print "count.sh: no regions"; bad = 1 }
    print "exact = plugin count from bench_start to bench_stop; net = exact minus region 0 (empty);"
    print "SysTick = what the firmware measured itself, resolution " res " instructions."
    exit bad
  }
' "$TMP/plugin.log" "$TMP/firmware.log"
