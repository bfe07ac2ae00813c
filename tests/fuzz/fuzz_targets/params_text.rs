//! Any text as a ROS 2 parameter file for every node kind: a node or a typed error, never a panic.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    sillage_fuzz::params_text(data);
});
