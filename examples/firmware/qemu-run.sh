#!/usr/bin/env bash
# Cargo runner: runs a firmware image under QEMU on the board of its core
# (from the target directory in the image's path) and exits with the
# firmware's exit status.
#
#   thumbv6m-none-eabi          Cortex-M0   microbit     (semihosting)
#   thumbv7m-none-eabi          Cortex-M3   mps2-an385   (semihosting)
#   thumbv7em-none-eabihf       Cortex-M4F  mps2-an386   (semihosting)
#   thumbv8m.main-none-eabihf   Cortex-M33  mps2-an505   (semihosting)
#   riscv32imc-unknown-none-elf RV32IMC     virt         (UART, test device)
#
# -icount shift=0: each guest instruction advances virtual time by exactly
# 1 ns, so timer readings count instructions (not cycles); align=off and
# sleep=off keep virtual time independent of the host. stdin is closed and
# the run is capped: a fault that loops would otherwise never end.
set -euo pipefail
elf="$1"
icount=(-icount shift=0,align=off,sleep=off)
arm=(-semihosting-config enable=on,target=native -nographic -monitor none -serial none)
case "$elf" in
*/thumbv6m-none-eabi/*) cmd=(qemu-system-arm -machine microbit "${arm[@]}") ;;
*/thumbv7m-none-eabi/*) cmd=(qemu-system-arm -machine mps2-an385 -cpu cortex-m3 "${arm[@]}") ;;
*/thumbv8m.main-none-eabihf/*) cmd=(qemu-system-arm -machine mps2-an505 -cpu cortex-m33 "${arm[@]}") ;;
*/riscv32imc-unknown-none-elf/*)
    cmd=(qemu-system-riscv32 -machine virt -bios none -nographic -monitor none -serial stdio) ;;
*) cmd=(qemu-system-arm -machine mps2-an386 -cpu cortex-m4 "${arm[@]}") ;;
esac
exec timeout "${QEMU_TIMEOUT:-120}" "${cmd[@]}" "${icount[@]}" -kernel "$elf" </dev/null
