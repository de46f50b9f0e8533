#!/usr/bin/env bash
# Builds the fuzz targets and runs each for a bounded time from the committed seeds.
# Usage: fuzz/run-all.sh [SECONDS_PER_TARGET (default 15)] [--dev]
# New inputs libFuzzer finds go to fuzz/target/work/<target>/ (not committed); a crash stops
# the run, leaves its input in fuzz/artifacts/<target>/ and makes this script exit non-zero.
set -euo pipefail
cd "$(dirname "$0")"
secs=${1:-15}
profile=()
if [ "${2:-}" = "--dev" ]; then profile=(--dev); fi
version=0.13.2
if ! cargo fuzz --version 2>/dev/null | grep -q "$version"; then
  cargo install --locked "cargo-fuzz@$version"
fi
# Only the stable toolchain is installed; this lets cargo-fuzz pass libFuzzer's flags to it.
export RUSTC_BOOTSTRAP=1
cargo fuzz build "${profile[@]}" -s none
status=0
for t in spec jsonl csv npy npz ledger frame; do
  mkdir -p "target/work/$t"
  log="target/work/$t.log"
  if cargo fuzz run "${profile[@]}" -s none "$t" "target/work/$t" "corpus/$t" -- \
      -max_total_time="$secs" -rss_limit_mb=2048 -timeout=10 >"$log" 2>&1; then
    echo "fuzz $t: $(grep -E '^Done [0-9]+ runs' "$log" || echo 'no summary')"
  else
    echo "fuzz $t: FAILED; the end of its log:"
    tail -30 "$log"
    status=1
  fi
done
exit $status
