#!/usr/bin/env bash
# Builds the firmware for every core and runs each image once under QEMU
# (its exit status is the verdict of the on-target checks, the Q31 checksum
# among them), fails if the instruction count per step of any variant is
# above its budget in budgets.txt, and prints the footprint. Needs the five
# rustup targets below, qemu-system-arm, qemu-system-riscv32 (Debian's
# qemu-system-misc) and either rustup's llvm-tools or Debian's
# binutils-arm-none-eabi (.ci/run installs them).
# Run from anywhere: `bash examples/firmware/ci.sh`; `RUNS="target:profile …"`
# picks a subset.
set -euo pipefail
cd "$(dirname "$0")"

# target:profile pairs. The Cortex-M4F at opt-level 3 and "s"; the other
# cores at opt-level 3 only, which keeps the stage to a few minutes.
RUNS=${RUNS:-"thumbv7em-none-eabihf:release thumbv7em-none-eabihf:release-s \
thumbv6m-none-eabi:release thumbv7m-none-eabi:release \
thumbv8m.main-none-eabihf:release riscv32imc-unknown-none-elf:release"}

llvm="$(rustc --print sysroot)/lib/rustlib/x86_64-unknown-linux-gnu/bin"
if [ -x "$llvm/llvm-size" ]; then
    size_tool="$llvm/llvm-size" nm_tool="$llvm/llvm-nm"
else
    size_tool=arm-none-eabi-size nm_tool=arm-none-eabi-nm
fi
out=target/ci
mkdir -p "$out"

echo "--- format and lints (the firmware is outside the workspace; Arm and RISC-V boards)"
cargo fmt --check
cargo clippy --release -- -D warnings
cargo clippy --release --target riscv32imc-unknown-none-elf -- -D warnings

for run in $RUNS; do
    target=${run%%:*} profile=${run##*:}
    echo "--- $target $profile: build and run under QEMU"
    cargo build --target "$target" --profile "$profile"
    status=0
    ./qemu-run.sh "target/$target/$profile/lookout-firmware" >"$out/run.txt" || status=$?
    core=$(sed -n 's/^core //p' "$out/run.txt")
    mv "$out/run.txt" "$out/${core:-unknown}-$profile.txt"
    cat "$out/${core:-unknown}-$profile.txt"
    if [ "$status" -ne 0 ]; then
        echo "firmware ($target $profile) exited with status $status: an on-target check failed" >&2
        exit 1
    fi
done

echo "--- instruction counts per step against budgets.txt (instruction counts, not cycles)"
# budgets.txt: core variant scalar profile budget; each run prints
# `cost variant=V scalar=S n= m= p= instructions=I macs=K`.
over=0
while read -r core variant scalar profile budget; do
    case "$core" in '' | '#'*) continue ;; esac
    file="$out/$core-$profile.txt"
    line=$(grep -sE "^cost variant=$variant scalar=$scalar " "$file" || true)
    if [ -z "$line" ]; then
        echo "no cost line for $core $variant $scalar in the $profile run" >&2
        over=1
        continue
    fi
    got=$(sed -E 's/.* instructions=([0-9.]+) .*/\1/' <<<"$line")
    macs=$(sed -E 's/.* macs=([0-9]+).*/\1/' <<<"$line")
    verdict=$(awk -v g="$got" -v b="$budget" 'BEGIN { print (g <= b) ? "ok" : "OVER" }')
    per_mac=$(awk -v g="$got" -v m="$macs" 'BEGIN { printf "%.2f", g / m }')
    printf '%-11s %-24s %-4s %-10s %8s instructions (%s per multiply-add), budget %s: %s\n' \
        "$core" "$variant" "$scalar" "$profile" "$got" "$per_mac" "$budget" "$verdict"
    [ "$verdict" = ok ] || over=1
done <budgets.txt
if [ -n "${WRITE_BUDGETS:-}" ]; then
    # Re-measuring after a deliberate change: write each variant's count
    # plus 3 % (rounded up) in budgets.txt's layout, to review and commit.
    {
        sed -n '/^#/p' budgets.txt
        for file in "$out"/*.txt; do
            name=$(basename "$file" .txt)
            core=${name%-release*} profile=release${name##*-release}
            sed -nE 's/^cost variant=([^ ]+) scalar=([^ ]+) .* instructions=([0-9.]+) .*/\1 \2 \3/p' "$file" |
                while read -r variant scalar got; do
                    awk -v c="$core" -v v="$variant" -v s="$scalar" -v p="$profile" -v g="$got" \
                        'BEGIN { b = g * 1.03; if (b > int(b)) b = int(b) + 1; printf "%-11s %-25s %-6s %-10s %d\n", c, v, s, p, b }'
                done
        done
    } >"$WRITE_BUDGETS"
    echo "new budgets written to $WRITE_BUDGETS"
elif [ "$over" -ne 0 ]; then
    echo "an instruction count is above its budget (or missing)" >&2
    echo "(after a deliberate change: WRITE_BUDGETS=budgets.new bash ci.sh, review, rename)" >&2
    exit 1
fi

echo "--- footprint (bytes)"
for run in $RUNS; do
    target=${run%%:*} profile=${run##*:}
    echo "$target $profile:"
    { "$size_tool" -A "target/$target/$profile/lookout-firmware" || echo "(no size tool for this ELF)"; } |
        awk '$1 ~ /^\.(text|rodata|data|bss|vector_table|uninit)$/ { printf "  %-14s %8d\n", $1, $2 } /^\(/'
done

elf=target/thumbv7em-none-eabihf
echo "--- step code of one (4,1,2) observer at opt-level s (target: at most 2048 bytes)"
too_big=0
# Each observer's step and what it reaches out of line: the gate test and
# the runtime's helpers of that size (not the firmware's wrapper).
for pattern in \
    'FusedObserver<f32, 4, 1, 2>>::step|Gate<f32, 2>>::accepts|lookout::[a-z_:]+::<f32, 4, 1, 2>' \
    'FixedFusedObserver<lookout::fixed::format::Q31, 4, 1, 2(, lookout::fixed::arith::Exact)?>>::(step|stand_in)|FixedGate<lookout::fixed::format::Q31, 2>>::accepts|lookout::[a-z_:]+::<lookout::fixed::format::Q31, 4, 1, 2>'; do
    size=0
    while read -r _ hex _ name; do
        size=$((size + 16#$hex))
        echo "    $((16#$hex)) $name"
    done < <("$nm_tool" -C --size-sort -S "$elf/release-s/lookout-firmware" |
        awk '{ $1 = $1 } 1' | grep -E " [tT] <?lookout::.*($pattern)" || true)
    echo "  total $size bytes"
    [ "$size" -gt 0 ] && [ "$size" -le 2048 ] || too_big=1
done
if [ "$too_big" -ne 0 ]; then
    echo "a (4,1,2) step is above 2 KiB at opt-level s (or was not found)" >&2
    exit 1
fi
echo "firmware: all checks passed"
