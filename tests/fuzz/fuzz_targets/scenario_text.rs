//! Any text as a simulation scenario: a world that steps, or a typed error, never a panic.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    sillage_fuzz::scenario_text(data);
});
