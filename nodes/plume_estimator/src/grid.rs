//! The uniform sample grid the filters run on.
//!
//! Filter coefficients are designed for one sample period `dt`. Sensor stamps jitter, and
//! samples go missing, so each channel's samples are mapped onto a grid of period `dt`
//! (integer nanoseconds, so the grid never drifts) anchored at the channel's first sample:
//! every grid time in `(t_prev, t]` gets the value linearly interpolated between the previous
//! and the new sample (exactly the new value when a grid time equals its stamp). A regular
//! input at the grid rate therefore passes through unchanged; jitter moves values by at most
//! the interpolation error; a gap of up to `max_gap` is bridged by a straight line; a longer
//! gap restarts the grid (and the channel's chain) at the new sample.

use sillage_core::Nanos;

/// Grid period [ns] for a rate [Hz] (rounded to the nearest nanosecond, at least 1).
pub fn period_ns(rate: f64) -> Nanos {
    sillage_core::time::nanos(1.0 / rate).max(1)
}

/// What a new sample did to the grid.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum GridEvent {
    /// The first sample: it is the first grid point.
    Started,
    /// The sample followed the previous one within `max_gap`.
    Continued,
    /// The gap since the previous sample exceeded `max_gap`: the grid starts over here.
    Restarted,
}

/// One channel's grid.
#[derive(Debug, Clone, PartialEq)]
pub struct Grid {
    period: Nanos,
    max_gap: Nanos,
    next: Nanos,
    last: Option<(Nanos, f64)>,
}

impl Grid {
    /// A grid of period `period` [ns] that restarts after gaps longer than `max_gap` [ns].
    pub fn new(period: Nanos, max_gap: Nanos) -> Grid {
        Grid { period: period.max(1), max_gap, next: 0, last: None }
    }

    /// The grid period [ns].
    pub fn period(&self) -> Nanos {
        self.period
    }

    /// Forgets the previous sample (the next one starts the grid).
    pub fn reset(&mut self) {
        self.last = None;
    }

    /// Adds sample `x` at `t` [ns] (after the previous one; earlier or equal stamps are
    /// ignored and reported as `None`) and calls `emit(grid_time, value, fresh)` for every grid
    /// point it completes, in time order; `fresh` is true for the first point after a start or
    /// restart (the consumer starts its filters over there).
    #[inline]
    pub fn push(&mut self, t: Nanos, x: f64, mut emit: impl FnMut(Nanos, f64, bool)) -> Option<GridEvent> {
        let event = match self.last {
            Some((t0, _)) if t <= t0 => return None,
            Some((t0, _)) if t - t0 > self.max_gap => GridEvent::Restarted,
            Some(_) => GridEvent::Continued,
            None => GridEvent::Started,
        };
        match (event, self.last) {
            (GridEvent::Continued, Some((t0, x0))) => {
                let span = (t - t0) as f64;
                while self.next <= t {
                    let v = if self.next == t { x } else { x0 + (x - x0) * ((self.next - t0) as f64 / span) };
                    emit(self.next, v, false);
                    self.next += self.period;
                }
            }
            _ => {
                emit(t, x, true);
                self.next = t + self.period;
            }
        }
        self.last = Some((t, x));
        Some(event)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn run(grid: &mut Grid, samples: &[(Nanos, f64)]) -> Vec<(Nanos, f64)> {
        let mut out = Vec::new();
        for &(t, x) in samples {
            grid.push(t, x, |tg, v, _| out.push((tg, v)));
        }
        out
    }

    #[test]
    fn regular_input_passes_through_exactly() {
        let mut g = Grid::new(10_000_000, 1_000_000_000);
        let s: Vec<(Nanos, f64)> = (0..50).map(|k| (5 + k * 10_000_000, (k as f64 * 0.37).sin())).collect();
        assert_eq!(run(&mut g, &s), s);
    }

    #[test]
    fn gaps_are_bridged_or_restart() {
        let mut g = Grid::new(10, 35);
        let out = run(&mut g, &[(0, 0.0), (30, 3.0), (100, 5.0), (104, 6.0), (110, 7.0)]);
        // 0..30 interpolated on the grid 10, 20, 30; the 70 ns gap restarts at 100; 104 makes no
        // point; 110 = the next grid time exactly.
        assert_eq!(out, vec![(0, 0.0), (10, 1.0), (20, 2.0), (30, 3.0), (100, 5.0), (110, 7.0)]);
        assert_eq!(g.push(110, 1.0, |_, _, _| panic!("no point for a repeated stamp")), None);
    }

    proptest! {
        /// Grid times are strictly increasing, exactly one period apart between restarts, and
        /// interpolated values stay within the range of the two samples around them.
        #[test]
        fn grid_points_are_regular_and_bounded(steps in proptest::collection::vec((1i64..40, -5.0f64..5.0), 1..200)) {
            let mut g = Grid::new(10, 60);
            let mut t = 0;
            let mut prev: Option<(Nanos, f64)> = None;
            let mut last_point: Option<Nanos> = None;
            for (dt, x) in steps {
                t += dt;
                let mut pts = Vec::new();
                let ev = g.push(t, x, |tg, v, fresh| pts.push((tg, v, fresh)));
                for (k, &(tg, v, fresh)) in pts.iter().enumerate() {
                    prop_assert!(tg <= t);
                    prop_assert_eq!(fresh, k == 0 && ev != Some(GridEvent::Continued));
                    if ev == Some(GridEvent::Continued) {
                        let (t0, x0) = prev.expect("previous sample");
                        prop_assert!(tg > t0);
                        prop_assert!(v >= x0.min(x) - 1e-12 && v <= x0.max(x) + 1e-12);
                        if let Some(lp) = last_point { prop_assert_eq!(tg - lp, 10); }
                    }
                    last_point = Some(tg);
                }
                prev = Some((t, x));
            }
        }
    }
}
