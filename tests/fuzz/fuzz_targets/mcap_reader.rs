//! Any bytes given to the MCAP reader give messages or a typed error, never a panic, a hang
//! or an allocation beyond the reader's limits.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let _ = sillage_bag::fuzzing::drain_mcap(data, 100_000);
});
