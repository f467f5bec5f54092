#!/usr/bin/env bash
# Firmware boards: tools, builds, QEMU runs, exact instruction counts, sizes.
#
# Called by .ci/run; also fine by hand from anywhere in the repo. Idempotent: installs only
# what is missing (qemu-system-arm via apt, defmt-print via cargo, the thumb targets,
# llvm-tools if /usr/bin/llvm-size is absent), rebuilds the QEMU plugin only when stale.
# Fails on: a board that does not build with --locked, fmt or clippy findings, a QEMU board
# whose firmware exits non-zero (failed self-check 1, panic 101, HardFault 102, timeout 124),
# SysTick counts that disagree with the plugin's exact counts, a Q15 raw average that differs
# between the Cortex-M0 and the Cortex-M4F (integer arithmetic on the same input must agree
# bit for bit), or an exit code that does not reach the host (the force-fail build must exit 1).
set -euo pipefail
ROOT=$(cd "$(dirname "$0")/.." && pwd)
# Each board has its own .cargo/config.toml, target/ and Cargo.lock. A RUSTFLAGS from the
# caller would replace (not extend) the boards' link flags (-Tlink.x), and a shared target
# dir would move the ELFs, so neither may leak in from the main CI.
unset RUSTFLAGS CARGO_ENCODED_RUSTFLAGS CARGO_TARGET_DIR CARGO_BUILD_TARGET
BOARDS=(qemu-m4 qemu-m0 nrf52840-node)
step() { printf '\n== %s  [%ds]\n' "$*" "$SECONDS"; }

step "tools"
if ! command -v qemu-system-arm >/dev/null; then
  echo "installing qemu-system-arm"
  apt-get update -qq
  DEBIAN_FRONTEND=noninteractive apt-get install -y -qq --no-install-recommends qemu-system-arm >/dev/null
fi
if ! command -v cc >/dev/null; then
  # The boards' build scripts and the plugin need a host C toolchain (and nm, from binutils).
  DEBIAN_FRONTEND=noninteractive apt-get install -y -qq --no-install-recommends gcc libc6-dev >/dev/null
fi
rustup target add thumbv6m-none-eabi thumbv7em-none-eabihf >/dev/null 2>&1
command -v defmt-print >/dev/null || cargo install defmt-print@1.2.0 --locked --quiet
if [ -x /usr/bin/llvm-size ]; then
  SIZE=/usr/bin/llvm-size
else
  rustup component add llvm-tools >/dev/null 2>&1
  SIZE="$(rustc --print sysroot)/lib/rustlib/$(rustc -vV | sed -n 's/^host: //p')/bin/llvm-size"
fi
echo "$(qemu-system-arm --version | head -1); $(defmt-print --version); $(rustc --version)"
"$ROOT/boards/tools/insn-count/build.sh"

step "fmt, clippy, build (--release --locked)"
(cd "$ROOT/boards/common" && cargo fmt --check &&
  cargo clippy --release --locked -q -- -D warnings &&
  cargo clippy --release --locked -q --target thumbv6m-none-eabi -- -D warnings)
for b in "${BOARDS[@]}"; do
  (cd "$ROOT/boards/$b" && cargo fmt --check &&
    cargo clippy --release --locked -q -- -D warnings &&
    cargo build --release --locked -q)
  echo "built $b"
done

step "run the QEMU boards"
LOGS=$(mktemp -d)
trap 'rm -rf "$LOGS"' EXIT
for b in qemu-m4 qemu-m0; do
  echo "-- $b"
  set +e
  (cd "$ROOT/boards/$b" && cargo run --release --locked -q) 2>&1 | tee "$LOGS/$b.log"
  rc=${PIPESTATUS[0]}
  set -e
  if [ "$rc" -ne 0 ]; then
    echo "boards.sh: $b firmware exited with $rc" >&2
    exit 1
  fi
done
# The Q15 analyzer is integer-only per block and the scenario generator uses IEEE add and
# multiply only (plus libm), so both cores must produce the same raw average.
sum() { sed -n 's/.*Q15 N=1024 raw average checksum \(0x[0-9a-f]*\).*/\1/p' "$LOGS/$1.log"; }
m4=$(sum qemu-m4)
m0=$(sum qemu-m0)
if [ -z "$m4" ] || [ "$m4" != "$m0" ]; then
  echo "boards.sh: Q15 raw average differs between M4 ($m4) and M0 ($m0)" >&2
  exit 1
fi
echo "Q15 raw average identical on M4 and M0: $m4"

step "exact instruction counts (QEMU TCG plugin)"
COUNT=$ROOT/boards/tools/insn-count/count.sh
"$COUNT" "$ROOT/boards/qemu-m4/target/thumbv7em-none-eabihf/release/qemu-m4" mps2-an386 -cpu cortex-m4
"$COUNT" "$ROOT/boards/qemu-m0/target/thumbv6m-none-eabi/release/qemu-m0" microbit

step "sizes"
printf '%-15s %10s %12s   %s\n' board "flash B" "static RAM B" "(flash = vector_table+text+rodata+data; RAM = data+bss+uninit, stack not included)"
for b in "${BOARDS[@]}"; do
  elf=$(ls "$ROOT"/boards/"$b"/target/thumbv*/release/"$b")
  "$SIZE" -A "$elf" | awk -v b="$b" '
    $1 == ".vector_table" || $1 == ".text" || $1 == ".rodata" { flash += $2 }
    $1 == ".data" { flash += $2; ram += $2 }
    $1 == ".bss" || $1 == ".uninit" { ram += $2 }
    END { printf "%-15s %10d %12d\n", b, flash, ram }'
done

step "exit codes reach the host (qemu-m4 built with force-fail must exit 1)"
set +e
(cd "$ROOT/boards/qemu-m4" && cargo run --release --locked -q --features force-fail >/dev/null 2>&1)
rc=$?
set -e
# Relink the normal firmware so the tree is left as it was built above.
(cd "$ROOT/boards/qemu-m4" && cargo build --release --locked -q)
if [ $rc -ne 1 ]; then
  echo "boards.sh: force-fail run exited with $rc, expected 1" >&2
  exit 1
fi
echo "force-fail exited 1 as expected"
echo
echo "boards: all passed in ${SECONDS}s"
