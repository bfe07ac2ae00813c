//! Any bytes as a sqlite3 bag file: messages or a typed error, never a panic.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    sillage_fuzz::sqlite_reader(data);
});
