//! Fuzz target `npz`: see countersteer::fuzzing.
#![no_main]

use countersteer::fuzzing::StepFormat;
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    countersteer::fuzzing::steps(StepFormat::Npz, data);
});
