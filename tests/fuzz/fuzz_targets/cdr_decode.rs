//! Any bytes decoded as any vocabulary type give a message or a typed error; a decoded
//! message re-encodes to bytes that decode to the same encoding again.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    sillage_bag::fuzzing::decode_any(data);
});
