#!/usr/bin/env bash
# Runs the `lookout` binary's design, emit and simulate over every model in a
# directory (e.g. the models the in-process fuzzer dumped with
# LOOKOUT_FUZZ_DUMP=DIR) and reports any run that panicked or aborted (exit
# code other than 0, 1, 2), printed a non-finite number, wrote more than one
# stderr line on a refusal, or left a file other than the one asked for.
#
#   LOOKOUT_FUZZ_DUMP=/tmp/models LOOKOUT_FUZZ_SECONDS=60 \
#       cargo test --release -p lookout-design --test hostile_fuzz -- --nocapture
#   bash tools/fuzz/cli_over_models.sh target/release/lookout /tmp/models
set -uo pipefail
bin=${1:?usage: cli_over_models.sh LOOKOUT_BINARY MODEL_DIR}
dir=${2:?usage: cli_over_models.sh LOOKOUT_BINARY MODEL_DIR}
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
runs=0
bad=0
check() { # model, then the arguments
    local model=$1
    shift
    runs=$((runs + 1))
    "$bin" "$@" >"$work/out" 2>"$work/err"
    local rc=$?
    local why=""
    if [ "$rc" -ne 0 ] && [ "$rc" -ne 1 ] && [ "$rc" -ne 2 ]; then
        why="exit code $rc"
    elif [ "$rc" -ne 0 ] && [ "$(grep -c '^lookout: error: ' "$work/err")" -ne 1 ]; then
        why="refusal without exactly one error line"
    elif [ "$rc" -eq 0 ] && grep -qwE 'inf|NaN|nan' "$work/out"; then
        why="exit 0 with a non-finite number in the output"
    fi
    local extra
    extra=$(find "$work" -mindepth 1 -not -name out -not -name err -not -name tables.rs -not -name run.csv | head -1)
    [ -n "$extra" ] && why="${why:+$why; }left $extra"
    if [ -n "$why" ]; then
        bad=$((bad + 1))
        echo "$model: lookout $*: $why"
        head -3 "$work/err"
    fi
    rm -f "$work/tables.rs" "$work/run.csv"
}
for model in "$dir"/*.toml; do
    check "$model" design --json "$model"
    check "$model" emit --scalar f64 "$model" -o "$work/tables.rs"
    check "$model" emit --scalar f32 "$model"
    check "$model" simulate "$model" --steps 200 --json --csv "$work/run.csv"
    check "$model" simulate "$model" --steps 100 --sweep 5 --json
    check "$model" simulate "$model" --steps 100 --measurement-noise 1e300 --json
done
echo "cli_over_models: $runs runs over $(ls "$dir"/*.toml | wc -l) models, $bad bad"
[ "$bad" -eq 0 ]
