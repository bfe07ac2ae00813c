//! Time as data: signed nanoseconds since an epoch (the ROS clock's, or a bag's).

use crate::msg::Time;

/// Nanoseconds on the ROS clock (system or simulated time).
pub type Nanos = i64;

/// One second in nanoseconds.
pub const SECOND: Nanos = 1_000_000_000;

/// Seconds (f64) from nanoseconds.
pub fn secs(t: Nanos) -> f64 {
    t as f64 * 1e-9
}

/// Nanoseconds from seconds, rounded to the nearest nanosecond; saturates on overflow and maps
/// NaN to 0.
pub fn nanos(s: f64) -> Nanos {
    let v = (s * 1e9).round();
    if v.is_nan() {
        0
    } else {
        v as Nanos // `as` saturates on overflow
    }
}

impl Time {
    /// The stamp as nanoseconds since the epoch.
    pub fn to_nanos(&self) -> Nanos {
        i64::from(self.sec) * SECOND + i64::from(self.nanosec)
    }

    /// A stamp from nanoseconds since the epoch (floor division, so `nanosec` is in
    /// `0..1e9` also for negative times); seconds saturate to the i32 range.
    pub fn from_nanos(t: Nanos) -> Time {
        let sec = t.div_euclid(SECOND);
        let nanosec = t.rem_euclid(SECOND) as u32;
        Time { sec: sec.clamp(i64::from(i32::MIN), i64::from(i32::MAX)) as i32, nanosec }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn time_round_trip_including_negative() {
        for t in [0, 1, SECOND - 1, SECOND, 1_700_000_000_123_456_789, -1, -SECOND - 5] {
            let s = Time::from_nanos(t);
            assert!(s.nanosec < 1_000_000_000);
            assert_eq!(s.to_nanos(), t, "{t}");
        }
        assert_eq!(Time::from_nanos(-1), Time { sec: -1, nanosec: 999_999_999 });
    }

    #[test]
    fn seconds_conversion() {
        assert_eq!(nanos(1.5), 1_500_000_000);
        assert_eq!(nanos(f64::NAN), 0);
        assert_eq!(nanos(f64::INFINITY), i64::MAX);
        assert!((secs(2_500_000_000) - 2.5).abs() < 1e-12);
    }
}
