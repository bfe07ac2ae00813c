//! Bytes in, bytes out: how sillage's own CDR buffers cross RustDDS unchanged.
//!
//! - Writing: [`Encoded`] holds the payload after the 4-byte encapsulation header and
//!   serialises as a tuple of octets, which the CDR serializer writes as they are (octets
//!   need no alignment and a tuple has no length prefix). RustDDS adds the little-endian
//!   header itself, so the wire carries exactly the bytes `sillage_core::cdr` produced.
//! - Reading: [`RawAdapter`] accepts every representation identifier and hands the payload
//!   over with its header rebuilt from the identifier, so an unsupported encoding (e.g.
//!   XCDR2) reaches sillage's decoder and is refused there with a typed, counted error
//!   instead of being dropped silently inside the middleware.

use ros2_client::dds::rustdds::no_key::{Decode, DefaultDecoder, DeserializerAdapter};
use ros2_client::dds::rustdds::RepresentationIdentifier as Rep;
use serde::ser::{Serialize, SerializeTuple, Serializer};

/// A CDR payload (without the encapsulation header) to publish as it is.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Encoded(pub Vec<u8>);

impl Serialize for Encoded {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        let mut t = s.serialize_tuple(self.0.len())?;
        for b in &self.0 {
            t.serialize_element(b)?;
        }
        t.end()
    }
}

/// A received sample: the encapsulation header (from the representation identifier, option
/// bytes zero) followed by the payload.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct RawSample(pub Vec<u8>);

/// Deserializer adapter that keeps the bytes.
pub struct RawAdapter;

/// Its decoder.
#[derive(Debug, Clone, Copy)]
pub struct RawDecoder;

/// Every identifier of RTPS 2.3 table 10.3 and DDS-XTypes 1.2 table 60.
static ALL_REPRESENTATIONS: [Rep; 17] = [
    Rep::CDR_BE,
    Rep::CDR_LE,
    Rep::PL_CDR_BE,
    Rep::PL_CDR_LE,
    Rep::CDR2_BE,
    Rep::CDR2_LE,
    Rep::PL_CDR2_BE,
    Rep::PL_CDR2_LE,
    Rep::D_CDR_BE,
    Rep::D_CDR_LE,
    Rep::XML,
    Rep::XCDR2_BE,
    Rep::XCDR2_LE,
    Rep::D_CDR2_BE,
    Rep::D_CDR2_LE,
    Rep::PL_XCDR2_BE,
    Rep::PL_XCDR2_LE,
];

impl DeserializerAdapter<RawSample> for RawAdapter {
    type Error = std::convert::Infallible;
    type Decoded = RawSample;

    fn supported_encodings() -> &'static [Rep] {
        &ALL_REPRESENTATIONS
    }

    fn transform_decoded(decoded: RawSample) -> RawSample {
        decoded
    }
}

impl DefaultDecoder<RawSample> for RawAdapter {
    type Decoder = RawDecoder;
    const DECODER: RawDecoder = RawDecoder;
}

impl<'de> Decode<'de, RawSample> for RawDecoder {
    type Error = std::convert::Infallible;

    fn decode_bytes(self, input: &'de [u8], encoding: Rep) -> Result<RawSample, Self::Error> {
        let mut v = Vec::with_capacity(4 + input.len());
        v.extend_from_slice(&encoding.to_bytes());
        v.extend_from_slice(&[0, 0]);
        v.extend_from_slice(input);
        Ok(RawSample(v))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use ros2_client::dds::rustdds::cdr_encoding;
    use sillage_core::cdr::{self, HEADER_LE};
    use sillage_core::msg::{Header, Twist, TwistStamped, Vector3};

    #[test]
    fn encoded_payloads_cross_the_serializer_byte_for_byte() {
        // The 76-byte TwistStamped (OMG DDS-XTypes XCDR1 little-endian, checked against rosbags in tests/refs).
        let m = TwistStamped {
            header: Header::new(1_500_000_000, "base_link"),
            twist: Twist { linear: Vector3 { x: 0.5, y: 0.0, z: 0.0 }, angular: Vector3 { x: 0.0, y: 0.0, z: -0.25 } },
        };
        let ours = cdr::encode(&m).expect("encodes");
        assert_eq!(ours.len(), 76);
        assert_eq!(&ours[..4], &HEADER_LE);
        let through = cdr_encoding::to_vec::<_, byteorder::LittleEndian>(&Encoded(ours[4..].to_vec())).expect("serializes");
        assert_eq!(through, ours[4..].to_vec());
        // RustDDS's own serde path over our mirror gives the same bytes (same CDR rules).
        let theirs = cdr_encoding::to_vec::<_, byteorder::LittleEndian>(&m).expect("serializes");
        assert_eq!(theirs, ours[4..].to_vec());
    }

    #[test]
    fn received_payloads_keep_their_encapsulation() {
        let be = RawDecoder.decode_bytes(&[1, 2], Rep::CDR_BE).expect("infallible");
        assert_eq!(be.0, vec![0, 0, 0, 0, 1, 2]);
        let x2 = RawDecoder.decode_bytes(&[9], Rep::XCDR2_LE).expect("infallible");
        assert_eq!(x2.0, vec![0, 7, 0, 0, 9]);
        let e = cdr::decode::<TwistStamped>(&x2.0).expect_err("XCDR2 is refused by our codec");
        assert!(e.to_string().contains("unsupported encapsulation"), "{e}");
        assert!(RawAdapter::supported_encodings().contains(&Rep::PL_CDR_LE));
    }
}
