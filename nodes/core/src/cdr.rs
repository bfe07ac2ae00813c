//! The one ROS 2 CDR codec (XCDR1 as ROS 2 uses it), shared by bag I/O and the transports.
//!
//! A buffer is the 4-byte encapsulation header (`00 01 00 00` little-endian CDR, `00 00`
//! big-endian; the two option bytes are ignored when reading) followed by the serde-encoded
//! payload, whose alignment counts from the first byte after the header. The payload codec is
//! the `cdr-encoding` crate.

use crate::ros_type::RosMessage;
use byteorder::{BigEndian, LittleEndian};
use thiserror::Error;

/// Encapsulation header for little-endian plain CDR, which sillage always writes.
pub const HEADER_LE: [u8; 4] = [0x00, 0x01, 0x00, 0x00];

/// Errors of the CDR codec; offsets count from the start of the buffer (header included).
#[derive(Debug, Error, Clone, PartialEq)]
pub enum CdrError {
    /// The buffer is shorter than the 4-byte encapsulation header.
    #[error("{type_name}: buffer of {len} bytes is too short for the CDR encapsulation header")]
    NoHeader { type_name: &'static str, len: usize },
    /// The representation identifier is not plain CDR.
    #[error("{type_name}: unsupported encapsulation {id:02x?} at byte 0 (expected 00 00 or 00 01: plain CDR)")]
    BadHeader { type_name: &'static str, id: [u8; 2] },
    /// The payload could not be decoded (truncated, misaligned, bad length or UTF-8).
    #[error("{type_name}: malformed CDR payload ({len} bytes after the header): {reason}")]
    Malformed { type_name: &'static str, len: usize, reason: String },
    /// Bytes were left over after the message (more than the up-to-3 padding bytes allowed).
    #[error("{type_name}: {extra} unexpected trailing bytes at byte {offset}")]
    Trailing { type_name: &'static str, offset: usize, extra: usize },
    /// The value cannot be encoded (serde error).
    #[error("{type_name}: cannot encode: {reason}")]
    Encode { type_name: &'static str, reason: String },
    /// The type name is not part of the vocabulary.
    #[error("unknown message type '{0}'")]
    UnknownType(String),
}

/// Encodes a message as a little-endian CDR buffer with its encapsulation header.
pub fn encode<T: RosMessage>(msg: &T) -> Result<Vec<u8>, CdrError> {
    let mut out = Vec::with_capacity(64);
    encode_into(msg, &mut out)?;
    Ok(out)
}

/// Encodes into `out` (cleared first), reusing its allocation.
pub fn encode_into<T: RosMessage>(msg: &T, out: &mut Vec<u8>) -> Result<(), CdrError> {
    out.clear();
    append_to(msg, out)
}

/// Appends the message's CDR buffer (header included) to `out`, whatever `out` already holds:
/// the bytes appended are those [`encode`] returns.
pub fn append_to<T: RosMessage>(msg: &T, out: &mut Vec<u8>) -> Result<(), CdrError> {
    out.extend_from_slice(&HEADER_LE);
    // The serializer counts alignment from its own first byte, i.e. after the header, so
    // writing straight into `out` gives the same bytes as encoding apart and appending.
    cdr_encoding::to_writer::<T, LittleEndian, _>(&mut *out, msg)
        .map_err(|e| CdrError::Encode { type_name: T::TYPE_NAME, reason: e.to_string() })
}

/// Decodes a CDR buffer (header included) of either byte order.
pub fn decode<T: RosMessage>(buf: &[u8]) -> Result<T, CdrError> {
    let type_name = T::TYPE_NAME;
    if buf.len() < 4 {
        return Err(CdrError::NoHeader { type_name, len: buf.len() });
    }
    let body = &buf[4..];
    let malformed = |e: cdr_encoding::Error| CdrError::Malformed {
        type_name,
        len: body.len(),
        reason: e.to_string(),
    };
    let (value, used) = match [buf[0], buf[1]] {
        [0x00, 0x01] => cdr_encoding::from_bytes::<T, LittleEndian>(body).map_err(malformed)?,
        [0x00, 0x00] => cdr_encoding::from_bytes::<T, BigEndian>(body).map_err(malformed)?,
        id => return Err(CdrError::BadHeader { type_name, id }),
    };
    let extra = body.len().saturating_sub(used);
    if extra > 3 {
        return Err(CdrError::Trailing { type_name, offset: 4 + used, extra });
    }
    Ok(value)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::msg::*;

    #[test]
    fn twist_stamped_worked_example_is_76_bytes() {
        // worked example (ROS 2 CDR = OMG XCDR1, checked against rosbags in tests/refs): header, sec, nanosec, u32 10,
        // "base_link\0", 2 pad bytes, 6 float64.
        let m = TwistStamped {
            header: Header::new(1_500_000_000, "base_link"),
            twist: Twist {
                linear: Vector3 { x: 0.5, y: 0.0, z: 0.0 },
                angular: Vector3 { x: 0.0, y: 0.0, z: -0.25 },
            },
        };
        let b = encode(&m).expect("encodes");
        assert_eq!(b.len(), 76);
        assert_eq!(&b[..4], &HEADER_LE);
        assert_eq!(&b[4..8], &1i32.to_le_bytes());
        assert_eq!(&b[8..12], &500_000_000u32.to_le_bytes());
        assert_eq!(&b[12..16], &10u32.to_le_bytes());
        assert_eq!(&b[16..26], b"base_link\0");
        assert_eq!(&b[26..28], &[0, 0]);
        assert_eq!(&b[28..36], &0.5f64.to_le_bytes());
        assert_eq!(decode::<TwistStamped>(&b).expect("decodes"), m);
        // Appended after bytes of any length, the buffer is the same (alignment counts from
        // the byte after the encapsulation header).
        for lead in 0..9 {
            let mut out = vec![0xaa; lead];
            append_to(&m, &mut out).expect("appends");
            assert_eq!(&out[lead..], &b[..], "after {lead} bytes");
        }
    }

    #[test]
    fn big_endian_and_option_bytes_are_read() {
        let m = Vector3 { x: 1.0, y: -2.0, z: 3.5 };
        let mut be = vec![0x00, 0x00, 0x00, 0x03];
        for v in [1.0f64, -2.0, 3.5] {
            be.extend_from_slice(&v.to_be_bytes());
        }
        assert_eq!(decode::<Vector3>(&be).expect("big-endian"), m);
    }

    #[test]
    fn bad_inputs_are_typed_errors() {
        assert!(matches!(decode::<Bool>(&[0, 1]), Err(CdrError::NoHeader { .. })));
        assert!(matches!(decode::<Bool>(&[0, 7, 0, 0, 1]), Err(CdrError::BadHeader { .. })));
        // String length claims 100 bytes but 2 follow.
        let mut b = HEADER_LE.to_vec();
        b.extend_from_slice(&100u32.to_le_bytes());
        b.extend_from_slice(b"ab");
        assert!(matches!(decode::<KeyValue>(&b), Err(CdrError::Malformed { .. })));
        let mut t = encode(&Bool { data: true }).expect("encodes");
        t.extend_from_slice(&[0; 8]);
        assert!(matches!(decode::<Bool>(&t), Err(CdrError::Trailing { offset: 5, extra: 8, .. })));
    }
}
