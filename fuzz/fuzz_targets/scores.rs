//! Fuzz target `scores`: see countersteer::fuzzing.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    countersteer::fuzzing::scores(data);
});
