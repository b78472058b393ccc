#!/usr/bin/env bash
# Cargo runner: runs the firmware image under QEMU's mps2-an386 (Cortex-M4F)
# with semihosting, and exits with the firmware's exit status.
#
# -icount shift=0: each guest instruction advances virtual time by exactly
# 1 ns, so timer readings count instructions (not cycles); align=off and
# sleep=off keep virtual time independent of the host. stdin is closed and
# the run is capped: a HardFault that loops would otherwise never end.
set -euo pipefail
elf="$1"
exec timeout "${QEMU_TIMEOUT:-60}" qemu-system-arm \
    -machine mps2-an386 -cpu cortex-m4 \
    -semihosting-config enable=on,target=native \
    -nographic -monitor none -serial none \
    -icount shift=0,align=off,sleep=off \
    -kernel "$elf" </dev/null
