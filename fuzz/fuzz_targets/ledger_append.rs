//! Fuzz target `ledger_append`: see countersteer::fuzzing::ledger_append.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    countersteer::fuzzing::ledger_append(data);
});
