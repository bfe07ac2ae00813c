//! A direct little-endian CDR path for `nav_msgs/Odometry`, the largest message of the
//! vocabulary (two 36-element covariances) and a 50 Hz input: the generic serde path moves the
//! 736-byte struct several times per message and handles its 85 numbers one by one.
//!
//! The bytes are those of the generic codec ([`crate::cdr`]), field by field in `.msg` order
//! with each number aligned to its size from the first byte after the encapsulation header.
//! Decoding takes the direct path only for little-endian buffers with well-formed strings;
//! anything else (big-endian, a string without its NUL, bad UTF-8, a cut-off buffer) goes to
//! the generic decoder, so results and errors are exactly the generic codec's. Tests check both
//! directions against it.

use crate::cdr::{self, CdrError, HEADER_LE};
use crate::msg::{Covariance, Odometry};

/// Appends `m` as a CDR buffer (header included) to `out`: the bytes of [`cdr::append_to`].
pub fn append(m: &Odometry, out: &mut Vec<u8>) {
    out.reserve(4 + 8 + 8 + m.header.frame_id.len() + 8 + m.child_frame_id.len() + 8 + 85 * 8);
    out.extend_from_slice(&HEADER_LE);
    let base = out.len();
    let mut w = Writer { out, base };
    w.u32(m.header.stamp.sec as u32);
    w.u32(m.header.stamp.nanosec);
    w.string(&m.header.frame_id);
    w.string(&m.child_frame_id);
    let p = &m.pose.pose;
    w.f64s(&[p.position.x, p.position.y, p.position.z, p.orientation.x, p.orientation.y, p.orientation.z, p.orientation.w]);
    w.f64s(&m.pose.covariance.0);
    let t = &m.twist.twist;
    w.f64s(&[t.linear.x, t.linear.y, t.linear.z, t.angular.x, t.angular.y, t.angular.z]);
    w.f64s(&m.twist.covariance.0);
}

/// Writes into `out`, aligning from `base` (the first byte after the header).
struct Writer<'a> {
    out: &'a mut Vec<u8>,
    base: usize,
}

impl Writer<'_> {
    fn align(&mut self, n: usize) {
        let pad = (n - (self.out.len() - self.base) % n) % n;
        self.out.extend_from_slice(&[0u8; 8][..pad]);
    }
    fn u32(&mut self, v: u32) {
        self.align(4);
        self.out.extend_from_slice(&v.to_le_bytes());
    }
    fn string(&mut self, s: &str) {
        self.u32(s.len() as u32 + 1);
        self.out.extend_from_slice(s.as_bytes());
        self.out.push(0);
    }
    fn f64s(&mut self, v: &[f64]) {
        self.align(8);
        for x in v {
            self.out.extend_from_slice(&x.to_le_bytes());
        }
    }
}

/// Decodes an Odometry CDR buffer (header included), boxed.
pub fn decode(buf: &[u8]) -> Result<Box<Odometry>, CdrError> {
    let mut m = Box::<Odometry>::default();
    if buf.len() >= 4 && buf[..2] == [0x00, 0x01] && fill(&mut m, &buf[4..]).is_some() {
        return Ok(m);
    }
    cdr::decode::<Odometry>(buf).map(Box::new)
}

/// Reads `body` (after the header) into `m`; `None` to leave the buffer to the generic path.
fn fill(m: &mut Odometry, body: &[u8]) -> Option<()> {
    let mut r = Reader { body, pos: 0 };
    m.header.stamp.sec = r.u32()? as i32;
    m.header.stamp.nanosec = r.u32()?;
    r.string_into(&mut m.header.frame_id)?;
    r.string_into(&mut m.child_frame_id)?;
    let mut pose = [0.0; 7];
    r.f64s(&mut pose)?;
    let p = &mut m.pose.pose;
    [p.position.x, p.position.y, p.position.z, p.orientation.x, p.orientation.y, p.orientation.z, p.orientation.w] = pose;
    r.covariance(&mut m.pose.covariance)?;
    let mut twist = [0.0; 6];
    r.f64s(&mut twist)?;
    let t = &mut m.twist.twist;
    [t.linear.x, t.linear.y, t.linear.z, t.angular.x, t.angular.y, t.angular.z] = twist;
    r.covariance(&mut m.twist.covariance)?;
    // At most 3 trailing padding bytes, as the generic decoder allows.
    (body.len() - r.pos <= 3).then_some(())
}

struct Reader<'a> {
    body: &'a [u8],
    pos: usize,
}

impl<'a> Reader<'a> {
    fn take(&mut self, align: usize, n: usize) -> Option<&'a [u8]> {
        let start = self.pos + (align - self.pos % align) % align;
        let b = self.body.get(start..start.checked_add(n)?)?;
        self.pos = start + n;
        Some(b)
    }
    fn u32(&mut self) -> Option<u32> {
        self.take(4, 4).map(|b| u32::from_le_bytes([b[0], b[1], b[2], b[3]]))
    }
    /// A string with its NUL; anything unusual (no NUL, bad UTF-8) is `None`.
    fn string_into(&mut self, s: &mut String) -> Option<()> {
        let n = self.u32()? as usize;
        let b = self.take(1, n)?;
        let (&nul, text) = b.split_last()?;
        if nul != 0 {
            return None;
        }
        s.push_str(std::str::from_utf8(text).ok()?);
        Some(())
    }
    fn f64s(&mut self, out: &mut [f64]) -> Option<()> {
        let b = self.take(8, 8 * out.len())?;
        for (x, c) in out.iter_mut().zip(b.chunks_exact(8)) {
            let mut a = [0u8; 8];
            a.copy_from_slice(c);
            *x = f64::from_le_bytes(a);
        }
        Some(())
    }
    fn covariance(&mut self, c: &mut Covariance) -> Option<()> {
        self.f64s(&mut c.0)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::msg::*;
    use proptest::prelude::*;

    fn odometry(sec: i32, nanosec: u32, frame: String, child: String, nums: Vec<f64>) -> Odometry {
        let mut m = Odometry { header: Header { stamp: Time { sec, nanosec }, frame_id: frame }, child_frame_id: child, ..Default::default() };
        let n = |i: usize| nums[i % nums.len()] * (i as f64 + 1.0);
        let p = &mut m.pose.pose;
        [p.position.x, p.position.y, p.position.z, p.orientation.x, p.orientation.y, p.orientation.z, p.orientation.w] =
            [n(0), n(1), n(2), n(3), n(4), n(5), n(6)];
        for i in 0..36 {
            m.pose.covariance.0[i] = n(7 + i);
            m.twist.covariance.0[i] = n(50 + i);
        }
        let t = &mut m.twist.twist;
        [t.linear.x, t.linear.y, t.linear.z, t.angular.x, t.angular.y, t.angular.z] = [n(90), n(91), n(92), n(93), n(94), n(95)];
        m
    }

    proptest! {
        #[test]
        fn bytes_and_values_are_the_generic_codecs(
            sec in any::<i32>(), nanosec in any::<u32>(), frame in "\\PC{0,12}", child in "[a-z_]{0,9}",
            nums in proptest::collection::vec(-1e6f64..1e6, 1..8), lead in 0usize..9,
        ) {
            let m = odometry(sec, nanosec, frame, child, nums);
            let mut fast = vec![0xee; lead];
            append(&m, &mut fast);
            let generic = cdr::encode(&m).expect("encodes");
            prop_assert_eq!(&fast[lead..], &generic[..]);
            prop_assert_eq!(decode(&generic).map(|b| *b), cdr::decode::<Odometry>(&generic));
        }

        #[test]
        fn damaged_buffers_decode_as_the_generic_decoder_says(
            frame in "[a-z]{0,6}", cut in 0usize..900, at in 0usize..900, byte in any::<u8>(), pad in 0usize..6,
        ) {
            let m = odometry(7, 9, frame, "base_link".into(), vec![0.5, -2.0]);
            let mut b = cdr::encode(&m).expect("encodes");
            b.extend(std::iter::repeat_n(0u8, pad));
            if at < b.len() {
                b[at] = byte;
            }
            b.truncate(cut.max(1).min(b.len()));
            // Compared as bytes: a damaged number may be a NaN, which equals nothing.
            let bytes = |m: &Odometry| cdr::encode(m).expect("encodes");
            prop_assert_eq!(decode(&b).map(|m| bytes(&m)), cdr::decode::<Odometry>(&b).map(|m| bytes(&m)));
        }
    }

    #[test]
    fn big_endian_goes_the_generic_way() {
        let m = odometry(1, 2, "odom".into(), "base_link".into(), vec![3.0]);
        let le = cdr::encode(&m).expect("encodes");
        // Rebuild as big-endian: header 00 00, then every field big-endian (same layout).
        let mut be = vec![0x00, 0x00, 0x00, 0x00];
        let body = &le[4..];
        let swap = |b: &[u8]| b.iter().rev().copied().collect::<Vec<u8>>();
        let mut pos = 0;
        for n in [4usize, 4] {
            be.extend(swap(&body[pos..pos + n]));
            pos += n;
        }
        for _ in 0..2 {
            while pos % 4 != 0 {
                be.push(body[pos]);
                pos += 1;
            }
            let n = u32::from_le_bytes([body[pos], body[pos + 1], body[pos + 2], body[pos + 3]]) as usize;
            be.extend(swap(&body[pos..pos + 4]));
            be.extend_from_slice(&body[pos + 4..pos + 4 + n]);
            pos += 4 + n;
        }
        while pos % 8 != 0 {
            be.push(body[pos]);
            pos += 1;
        }
        while pos < body.len() {
            be.extend(swap(&body[pos..pos + 8]));
            pos += 8;
        }
        assert_eq!(*decode(&be).expect("decodes"), m);
    }
}
