#!/usr/bin/env bash
# Builds the instruction-counting QEMU plugin next to this script (libinsn_count.so).
# Idempotent: rebuilds only when the source is newer than the library.
set -euo pipefail
DIR=$(cd "$(dirname "$0")" && pwd)
SRC=$DIR/insn_count.c
SO=$DIR/libinsn_count.so
CC=${CC:-cc}
if [ "$SO" -nt "$SRC" ]; then
  exit 0
fi
"$CC" -O2 -Wall -Wextra -Werror -shared -fPIC -fvisibility=hidden -o "$SO" "$SRC"
echo "built $SO"
