//! Entry points shared by the fuzz targets (tests/fuzz) and the property tests: feed
//! arbitrary bytes to the MCAP reader and to the CDR decoder. Both must end in messages or a
//! typed error, never a panic.

use crate::mcap_read::McapSource;
use crate::source::Source;
use sillage_core::{any::DEFINITIONS, Msg};
use std::path::Path;

/// What one run of the MCAP reader over arbitrary bytes did.
#[derive(Debug, Default, Clone, PartialEq, Eq)]
pub struct Drained {
    /// Messages the reader yielded.
    pub messages: usize,
    /// Of those, messages of a vocabulary type that decoded.
    pub decoded: usize,
    /// The error that ended the read, if any (its text).
    pub error: Option<String>,
}

/// Reads `data` as an MCAP file to the end (at most `limit` messages), decoding every message
/// whose channel declares a vocabulary type.
pub fn drain_mcap(data: &[u8], limit: usize) -> Drained {
    let mut out = Drained::default();
    // A 16 MiB record limit keeps runs fast; the reader's default is 1 GiB.
    let mut src = match McapSource::with_limit(Path::new("fuzz.mcap"), std::io::Cursor::new(data), 0, i64::MAX, 16 << 20) {
        Ok(s) => s,
        Err(e) => {
            out.error = Some(e.to_string());
            return out;
        }
    };
    while out.messages < limit {
        match src.advance() {
            Ok(true) => {}
            Ok(false) => break,
            Err(e) => {
                out.error = Some(e.to_string());
                break;
            }
        }
        let Some(h) = src.head() else { break };
        out.messages += 1;
        let type_name = src.topic(h.topic).map(|t| t.type_name).unwrap_or_default();
        if Msg::is_known_type(&type_name) && Msg::decode(&type_name, h.data).is_ok() {
            out.decoded += 1;
        }
    }
    out
}

/// Decodes `data[1..]` as the vocabulary type chosen by `data[0]`; a decoded message must
/// re-encode, and the re-encoding must decode to the same encoding (a round trip of the
/// codec). Returns whether the bytes decoded.
pub fn decode_any(data: &[u8]) -> bool {
    let Some((&pick, body)) = data.split_first() else { return false };
    let (name, _) = DEFINITIONS[pick as usize % DEFINITIONS.len()];
    let Ok(m) = Msg::decode(name, body) else { return false };
    let Ok(once) = m.encode() else { return true }; // e.g. a length that does not fit
    match Msg::decode(name, &once).map(|again| again.encode()) {
        Ok(Ok(twice)) => assert_eq!(once, twice, "{name}: encode(decode(encode(m))) differs"),
        other => panic!("{name}: sillage's own encoding does not decode again: {other:?}"),
    }
    true
}
