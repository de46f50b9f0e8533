#!/usr/bin/env bash
# RUSTC_WRAPPER for the fuzz build (run-all.sh): compiles the crates named in
# $COUNTERSTEER_FUZZ_INSTRUMENT with libFuzzer's coverage instrumentation and `--cfg fuzzing`
# (the flags cargo-fuzz 0.13 passes with `-s none`), every other crate exactly as a normal
# build would. Every other crate is then the very artifact the test build made, so the fuzz
# build reuses the main target directory. Only crates whose build is unique to the fuzz
# workspace may be listed (fuzz/Cargo.toml gives each a profile override for that), or an
# instrumented artifact could stand in for a normal one.
rustc=$1
shift
crate=
prev=
for arg in "$@"; do
  if [ "$prev" = --crate-name ]; then crate=$arg; fi
  prev=$arg
done
case " ${COUNTERSTEER_FUZZ_INSTRUMENT:-} " in
  *" $crate "*)
    if [ -n "$crate" ]; then
      flags=(
        -Cpasses=sancov-module
        -Cllvm-args=-sanitizer-coverage-level=4
        -Cllvm-args=-sanitizer-coverage-inline-8bit-counters
        -Cllvm-args=-sanitizer-coverage-pc-table
        -Cllvm-args=-sanitizer-coverage-trace-compares
        -Cllvm-args=-simplifycfg-branch-fold-threshold=0
        --cfg fuzzing
      )
      if [ "$(uname -s)" = Linux ]; then
        flags+=(-Cllvm-args=-sanitizer-coverage-stack-depth)
      fi
      exec "$rustc" "$@" "${flags[@]}"
    fi
    ;;
esac
exec "$rustc" "$@"
