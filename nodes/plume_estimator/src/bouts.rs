//! Bouts: maximal runs in which the smoothed derivative keeps rising.
//!
//! Rule (the 2016 bout method as summarised in docs/references.md): a run starts at the
//! sample before the first strict rise (`e[n] > e[n-1]`) and ends at the last sample of the
//! rise (a tie or a fall ends it); its *onset* is the run's first sample, its *peak* the last,
//! its *amplitude* the rise of the smoothed derivative over the run, `e[peak] - e[onset]`
//! [signal units / s]. A bout is known one sample after its peak (when the rise stops), so
//! detection is causal; a run still rising is not yet a bout. Runs below the amplitude
//! threshold are noise, not bouts (the caller applies the threshold).
//!
//! A run that starts below zero (the smoothed derivative recovering from the fall after an
//! earlier filament) includes that recovery; its amplitude too, as the rule says. The part of
//! the run where the signal itself rises (derivative > 0) starts at `rise_start`. A run that
//! never gets above zero is only a recovery from a fall, not a rise of the signal; the
//! `bouts.positive_peak` rule (on by default) drops such runs.

use sillage_core::Nanos;

/// One completed rising run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Bout {
    /// Grid time of the run's first sample [ns].
    pub onset: Nanos,
    /// Grid time of the run's last (highest) sample [ns].
    pub peak: Nanos,
    /// Rise of the smoothed derivative over the run [signal units / s] (> 0).
    pub amplitude: f64,
    /// Grid time of the last sample of the run with a derivative <= 0 (the onset when the
    /// run starts above 0): from here to the peak the signal rises [ns].
    pub rise_start: Nanos,
    /// Smoothed derivative at the peak [signal units / s]; <= 0 means the signal never rose
    /// during the run (it only fell more slowly).
    pub peak_value: f64,
}

/// Streaming rising-run detector.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct BoutTracker {
    prev: Option<(Nanos, f64)>,
    onset: Option<(Nanos, f64)>,
    rise_start: Nanos,
}

impl BoutTracker {
    /// A tracker with no history.
    pub fn new() -> BoutTracker {
        BoutTracker::default()
    }

    /// Forgets the history (a run in progress is dropped).
    pub fn reset(&mut self) {
        *self = BoutTracker::default();
    }

    /// Whether a rise is in progress.
    pub fn rising(&self) -> bool {
        self.onset.is_some()
    }

    /// Adds the smoothed derivative `e` at grid time `t`; returns the run that this sample
    /// ended, if any.
    #[inline]
    pub fn step(&mut self, t: Nanos, e: f64) -> Option<Bout> {
        let prev = self.prev.replace((t, e));
        let (tp, ep) = prev?;
        if e > ep {
            if self.onset.is_none() {
                self.onset = Some((tp, ep));
                self.rise_start = tp;
            }
            if e <= 0.0 {
                self.rise_start = t;
            }
            None
        } else {
            let (t0, e0) = self.onset.take()?;
            Some(Bout { onset: t0, peak: tp, amplitude: ep - e0, rise_start: self.rise_start, peak_value: ep })
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn bouts(e: &[f64]) -> Vec<(usize, usize, f64)> {
        let mut tr = BoutTracker::new();
        e.iter()
            .enumerate()
            .filter_map(|(n, &v)| tr.step(n as Nanos, v))
            .map(|b| (b.onset as usize, b.peak as usize, b.amplitude))
            .collect()
    }

    #[test]
    fn runs_onsets_peaks_and_amplitudes() {
        let e = [0.0, 1.0, 3.0, 2.0, 2.0, 5.0, 5.0, 4.0, 6.0];
        // Runs: 0..=2 (rise 3), 4..=5 (rise 3), 7..=8 still rising at the end (not a bout).
        assert_eq!(bouts(&e), vec![(0, 2, 3.0), (4, 5, 3.0)]);
        // A run from below zero: the signal rises from where the derivative last was <= 0.
        let mut tr = BoutTracker::new();
        let b: Vec<Bout> = [-2.0, -1.0, 0.0, 1.5, 2.0, 1.0].iter().enumerate().filter_map(|(n, &v)| tr.step(n as Nanos, v)).collect();
        assert_eq!(b, vec![Bout { onset: 0, peak: 4, amplitude: 4.0, rise_start: 2, peak_value: 2.0 }]);
        assert!(bouts(&[1.0, 1.0, 1.0]).is_empty(), "ties are not rises");
    }

    proptest! {
        /// Bouts never overlap, onsets precede peaks, amplitudes are positive, and the sum of
        /// amplitudes equals the total positive variation inside the runs.
        #[test]
        fn bouts_partition_the_rises(e in proptest::collection::vec(-3.0f64..3.0, 2..300)) {
            let b = bouts(&e);
            let mut last_peak = None;
            let mut tr = BoutTracker::new();
            for bt in e.iter().enumerate().filter_map(|(n, &v)| tr.step(n as Nanos, v)) {
                prop_assert!(bt.onset <= bt.rise_start && bt.rise_start <= bt.peak);
                let rs = bt.rise_start as usize;
                prop_assert!(e[rs] <= 0.0 || rs == bt.onset as usize);
                prop_assert!((rs + 1..=bt.peak as usize).all(|n| e[n] > 0.0));
            }
            for &(on, pk, a) in &b {
                prop_assert!(on < pk && a > 0.0);
                prop_assert!((a - (e[pk] - e[on])).abs() < 1e-12);
                prop_assert!((on + 1..=pk).all(|n| e[n] > e[n - 1]));
                if let Some(lp) = last_peak { prop_assert!(on >= lp); }
                last_peak = Some(pk);
            }
            // Every strict rise before the last fall belongs to exactly one bout.
            let last_fall = (1..e.len()).rev().find(|&n| e[n] <= e[n - 1]);
            if let Some(lf) = last_fall {
                let rises = (1..lf).filter(|&n| e[n] > e[n - 1]).count();
                let covered: usize = b.iter().map(|&(on, pk, _)| pk - on).sum();
                prop_assert_eq!(rises, covered);
            }
        }
    }
}
