//! Fuzz target `jsonl`: see countersteer::fuzzing.
#![no_main]

use countersteer::fuzzing::StepFormat;
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    countersteer::fuzzing::steps(StepFormat::JsonLines, data);
});
