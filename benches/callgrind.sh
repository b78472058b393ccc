#!/usr/bin/env bash
# Instructions per step of every variant under callgrind: x86-64 instruction
# counts on the default target (no -C target-cpu), immune to machine noise.
# Each variant runs K steps and 0 steps (same binary, same set-up); the
# difference of the total instruction counts divided by K is printed.
#
#   bash benches/callgrind.sh                 # (4,1,2), every scalar and form
#   SIZE=12,3,4 SCALARS="f32 q31" bash benches/callgrind.sh
set -euo pipefail
cd "$(dirname "$0")/.."
K=${K:-10000}
SIZE=${SIZE:-4,1,2}
SCALARS=${SCALARS:-f32 f64 q31 q15}
FORMS=${FORMS:-predictor current fused}
CODES=${CODES:-lookout loop smatrix_ref smatrix_gemv dmatrix}
cargo build --quiet --release --example step_rate
BIN="${CARGO_TARGET_DIR:-target}/release/examples/step_rate"

total() {
    valgrind --tool=callgrind --callgrind-out-file=/dev/null "$BIN" --count "$1" "$2" "$SIZE" "$3" 2>&1 |
        sed -n 's/.*Collected : \([0-9]*\).*/\1/p'
}

printf '%-6s %-10s' scalar form
for code in $CODES; do printf ' %12s' "$code"; done
printf '   (instructions per step at (%s), K = %s)\n' "$SIZE" "$K"
for scalar in $SCALARS; do
    for form in $FORMS; do
        printf '%-6s %-10s' "$scalar" "$form"
        for code in $CODES; do
            zero=$(total "$code/$form" "$scalar" 0)
            many=$(total "$code/$form" "$scalar" "$K")
            awk -v a="$many" -v b="$zero" -v k="$K" 'BEGIN { printf " %12.1f", (a - b) / k }'
        done
        printf '\n'
    done
done
