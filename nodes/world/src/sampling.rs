//! Fixed-rate sample clocks in integer nanoseconds: sample k (k >= 1) is due at
//! k * period, so stamps never drift however the caller steps.

/// A periodic sample schedule.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct SampleClock {
    period_ns: u64,
    count: u64,
}

impl SampleClock {
    /// A clock at `rate` [Hz] (> 0); the period is rounded to whole nanoseconds.
    pub fn new(rate: f64) -> Self {
        let period_ns = ((1e9 / rate).round() as u64).max(1);
        Self {
            period_ns,
            count: 1,
        }
    }

    /// Time of the next sample [ns].
    pub fn next_ns(&self) -> u64 {
        self.count * self.period_ns
    }

    /// Period [ns].
    pub fn period_ns(&self) -> u64 {
        self.period_ns
    }

    /// If a sample is due at `now_ns` (its time has been reached), returns its stamp and
    /// moves to the next one.
    pub fn take_due(&mut self, now_ns: u64) -> Option<u64> {
        let t = self.next_ns();
        if t <= now_ns {
            self.count += 1;
            Some(t)
        } else {
            None
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn stamps_are_multiples_of_the_period() {
        let mut c = SampleClock::new(20.0);
        assert_eq!(c.period_ns(), 50_000_000);
        assert_eq!(c.take_due(49_999_999), None);
        assert_eq!(c.take_due(50_000_000), Some(50_000_000));
        assert_eq!(c.take_due(260_000_000), Some(100_000_000));
        assert_eq!(c.next_ns(), 150_000_000);
    }
}
