//! Length checks of MCAP records before the mcap crate parses them.
//!
//! The mcap crate (0.26) reserves a string's or byte field's declared length before reading
//! it, so one corrupt length prefix (0xffffffff) in a 13 KiB file asks for 4 GiB. Here every
//! length-prefixed field of a record is walked first and must fit inside the record's body;
//! a record that fails is reported with the file offset of the bad field and never reaches the
//! crate. Layouts are those of the MCAP specification (mcap.dev/spec, "Records").

use mcap::records::op;

/// One field of a record layout.
#[derive(Clone, Copy)]
enum Field {
    /// Fixed size [bytes].
    Fixed(usize),
    /// `uint32` length, then that many bytes (strings, schema data).
    Bytes32,
    /// `uint64` length, then that many bytes (chunk records, attachment data).
    Bytes64,
    /// `uint32` byte length, then `string` key / `string` value pairs.
    StringMap,
    /// `uint32` byte length, then entries of a fixed size.
    FixedMap(usize),
    /// The rest of the record.
    Rest,
}

use Field::*;

/// The layout of a record whose fields the mcap crate reads with a length prefix; `None` for
/// the others (fixed-size records, unknown opcodes), whose body length alone is checked.
fn layout(opcode: u8) -> Option<&'static [Field]> {
    Some(match opcode {
        op::HEADER => &[Bytes32, Bytes32],
        op::SCHEMA => &[Fixed(2), Bytes32, Bytes32, Bytes32],
        op::CHANNEL => &[Fixed(4), Bytes32, Bytes32, StringMap],
        op::MESSAGE => &[Fixed(22), Rest],
        op::CHUNK => &[Fixed(28), Bytes32, Bytes64],
        op::MESSAGE_INDEX => &[Fixed(2), FixedMap(16)],
        op::CHUNK_INDEX => &[Fixed(32), FixedMap(10), Fixed(8), Bytes32, Fixed(16)],
        op::ATTACHMENT => &[Fixed(16), Bytes32, Bytes32, Bytes64, Fixed(4)],
        op::ATTACHMENT_INDEX => &[Fixed(40), Bytes32, Bytes32],
        op::STATISTICS => &[Fixed(42), FixedMap(10)],
        op::METADATA => &[Bytes32, StringMap],
        op::METADATA_INDEX => &[Fixed(16), Bytes32],
        _ => return None,
    })
}

/// Checks that every field of the record `opcode` with body `body` (found at file offset
/// `body_at`) fits in the body. The error names the bad field's file offset.
pub fn check_record(opcode: u8, body: &[u8], body_at: u64) -> Result<(), String> {
    let Some(fields) = layout(opcode) else { return Ok(()) };
    let mut pos = 0usize;
    let at = |pos: usize| body_at + pos as u64;
    let short = |pos: usize, what: &str| {
        format!("record of opcode {opcode:#04x} ({} bytes) is cut off in its {what} at byte {}", body.len(), at(pos))
    };
    let length = |pos: usize, wide: bool| -> Result<(u64, usize), String> {
        let n = if wide { 8 } else { 4 };
        let b = body.get(pos..pos + n).ok_or_else(|| short(pos, "length field"))?;
        let v = b.iter().rev().fold(0u64, |acc, &x| (acc << 8) | u64::from(x));
        Ok((v, pos + n))
    };
    let fits = |pos: usize, len: u64, field_at: usize| -> Result<usize, String> {
        let left = (body.len() - pos) as u64;
        if len > left {
            return Err(format!(
                "record of opcode {opcode:#04x} at byte {}: length {len} at byte {} runs past the record's end ({left} bytes left)",
                body_at.saturating_sub(9),
                at(field_at)
            ));
        }
        Ok(pos + len as usize)
    };
    for field in fields {
        pos = match *field {
            Fixed(n) => {
                if body.len() - pos < n {
                    return Err(short(pos, "fixed fields"));
                }
                pos + n
            }
            Bytes32 | Bytes64 => {
                let (len, next) = length(pos, matches!(field, Bytes64))?;
                fits(next, len, pos)?
            }
            FixedMap(entry) => {
                let (len, next) = length(pos, false)?;
                let end = fits(next, len, pos)?;
                if len % entry as u64 != 0 {
                    return Err(format!("record of opcode {opcode:#04x}: map of {len} bytes at byte {} is not a whole number of {entry}-byte entries", at(pos)));
                }
                end
            }
            StringMap => {
                let (len, next) = length(pos, false)?;
                let end = fits(next, len, pos)?;
                let mut p = next;
                while p < end {
                    for _ in 0..2 {
                        let (l, n) = length(p, false)?;
                        if n > end || l > (end - n) as u64 {
                            return Err(format!(
                                "record of opcode {opcode:#04x}: string length {l} at byte {} runs past its map's end",
                                at(p)
                            ));
                        }
                        p = n + l as usize;
                    }
                }
                end
            }
            Rest => body.len(),
        };
    }
    Ok(())
}

/// Checks every record of a run of records (a summary section, or a decompressed chunk) that
/// starts at file offset `at`: each must fit in `bytes`, and its fields in it.
pub fn check_records(bytes: &[u8], at: u64) -> Result<(), String> {
    let mut pos = 0usize;
    while pos < bytes.len() {
        let here = at + pos as u64;
        let head = bytes.get(pos..pos + 9).ok_or_else(|| format!("record header at byte {here} is cut off"))?;
        let mut len8 = [0u8; 8];
        len8.copy_from_slice(&head[1..]);
        let len = u64::from_le_bytes(len8);
        let left = (bytes.len() - pos - 9) as u64;
        if len > left {
            return Err(format!("record of opcode {:#04x} at byte {here}: length {len} runs past the section's end ({left} bytes left)", head[0]));
        }
        let body = &bytes[pos + 9..pos + 9 + len as usize];
        check_record(head[0], body, here + 9)?;
        pos += 9 + len as usize;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn string(s: &str) -> Vec<u8> {
        let mut v = (s.len() as u32).to_le_bytes().to_vec();
        v.extend_from_slice(s.as_bytes());
        v
    }

    fn channel(topic: &str, meta: &[(&str, &str)]) -> Vec<u8> {
        let mut b = vec![1, 0, 2, 0];
        b.extend(string(topic));
        b.extend(string("cdr"));
        let map: Vec<u8> = meta.iter().flat_map(|(k, v)| [string(k), string(v)].concat()).collect();
        b.extend((map.len() as u32).to_le_bytes());
        b.extend(map);
        b
    }

    #[test]
    fn well_formed_records_pass() {
        assert_eq!(check_record(op::CHANNEL, &channel("/chem", &[("offered_qos_profiles", "- depth: 5")]), 100), Ok(()));
        let mut schema = vec![1, 0];
        for s in ["sillage_msgs/msg/ChemSample", "ros2msg", "float64 x"] {
            schema.extend(string(s));
        }
        assert_eq!(check_record(op::SCHEMA, &schema, 0), Ok(()));
        // Unknown opcodes and fixed-size records are only length-checked by the caller.
        assert_eq!(check_record(0x80, &[1, 2, 3], 0), Ok(()));
    }

    #[test]
    fn a_length_past_the_end_names_its_offset() {
        let mut b = channel("/chem", &[]);
        b[4..8].copy_from_slice(&u32::MAX.to_le_bytes());
        let e = check_record(op::CHANNEL, &b, 1000).expect_err("bad length");
        assert!(e.contains("length 4294967295 at byte 1004"), "{e}");
        // A bad string inside the metadata map.
        let mut b = channel("/chem", &[("k", "v")]);
        let n = b.len();
        b[n - 5..n - 1].copy_from_slice(&1000u32.to_le_bytes());
        let e = check_record(op::CHANNEL, &b, 0).expect_err("bad map string");
        assert!(e.contains("string length 1000"), "{e}");
        // Records running past their section.
        let mut sec = vec![op::CHANNEL];
        sec.extend(50u64.to_le_bytes());
        sec.extend([0; 10]);
        let e = check_records(&sec, 4069).expect_err("cut off");
        assert!(e.contains("at byte 4069: length 50"), "{e}");
    }
}
