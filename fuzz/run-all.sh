#!/usr/bin/env bash
# Builds the fuzz targets and runs each for a bounded time from the committed seeds
# (fuzz/corpus/<target>/) and past crashes (fuzz/regressions/<target>/). CI runs it (.ci/run).
# Usage: fuzz/run-all.sh [SECONDS_PER_TARGET (default 15)]
#
# Needs only cargo, not cargo-fuzz: the targets are built in the dev profile into the main
# target directory ($COUNTERSTEER_FUZZ_TARGET_DIR to change it), with instrument.sh adding
# libFuzzer's instrumentation to countersteer and the targets only, so every dependency is
# the artifact `cargo test` already built. New inputs libFuzzer finds go to a temporary
# folder that is deleted afterwards; a crash leaves its input in fuzz/artifacts/<target>/,
# names it, and makes this script exit non-zero.
set -euo pipefail
cd "$(dirname "$0")"
secs=${1:-15}
targets=(spec jsonl csv npy npz ledger ledger_append frame scores)
target_dir=${COUNTERSTEER_FUZZ_TARGET_DIR:-$(cd .. && pwd)/target}

export RUSTC_WRAPPER="$PWD/instrument.sh"
export COUNTERSTEER_FUZZ_INSTRUMENT="countersteer countersteer_fuzz"
cargo build --locked --bins --target-dir "$target_dir"

work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
status=0
for t in "${targets[@]}"; do
  mkdir -p "$work/$t" "artifacts/$t"
  seeds=("corpus/$t")
  if [ -d "regressions/$t" ]; then seeds+=("regressions/$t"); fi
  log="$work/$t.log"
  # The first folder receives new inputs; the committed ones are only read.
  if "$target_dir/debug/$t" -max_total_time="$secs" -rss_limit_mb=2048 -timeout=10 \
      -artifact_prefix="artifacts/$t/" "$work/$t" "${seeds[@]}" >"$log" 2>&1; then
    done_line=$(grep -E '^Done [0-9]+ runs' "$log" || echo 'no summary')
    echo "fuzz $t: $done_line; $(find "$work/$t" -type f | wc -l) new inputs (discarded)"
  else
    echo "fuzz $t: FAILED; the end of its log:"
    tail -40 "$log"
    input=$(sed -n 's/.*Test unit written to \(.*\)$/\1/p' "$log" | tail -1)
    if [ -n "$input" ]; then
      echo "fuzz $t: the failing input is saved in fuzz/$input; replay it with"
      echo "  $target_dir/debug/$t fuzz/$input"
      echo "then fix the cause and copy the input to fuzz/regressions/$t/ (DEVELOPERS.md, Fuzzing)"
    fi
    status=1
  fi
done
exit $status
