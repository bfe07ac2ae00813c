//! Any value for any one parameter of a node: refused with a typed error, or accepted and run
//! through the whole stack on a short scripted input without a panic or a hang.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    sillage_fuzz::params_values(data);
});
