//! Statistics over episodes: the headline success rate (first declaration correct) and the
//! secondary "correct after resets" rate, each with its Wilson score interval; quantiles of
//! the time to declare and of the path ratio (over successful episodes), of the time from first
//! contact to declaration; time in each mode; the odor cues' figures; totals.
//!
//! Cue figures over episodes ([`CueSummary`], definitions in [`crate::cues`]): coverage pools
//! the time (covered in-plume time of all episodes / their in-plume time); each error is the
//! distribution over episodes of the per-episode medians (every episode with at least one
//! value weighs the same).
//!
//! Wilson score interval (Wilson, J. Am. Stat. Assoc. 22:209-212, 1927): with p = k/n and
//! z the normal quantile, centre (p + z^2/2n) / (1 + z^2/n), half-width
//! z sqrt(p(1-p)/n + z^2/4n^2) / (1 + z^2/n). Quantiles interpolate linearly between order
//! statistics (Hyndman and Fan type 7, numpy's default).

use crate::cues::{ErrorStat, CUE_NAMES};
use crate::episode::{EpisodeResult, Outcome};
use serde::Serialize;
use std::collections::BTreeMap;

/// The 97.5 % quantile of the standard normal distribution (two-sided 95 %).
pub const Z95: f64 = 1.959_963_984_540_054;

/// Wilson score interval (low, high) for `k` successes in `n` trials at normal quantile `z`;
/// (0, 1) when `n` is 0.
pub fn wilson(k: usize, n: usize, z: f64) -> (f64, f64) {
    if n == 0 {
        return (0.0, 1.0);
    }
    let (k, n) = (k as f64, n as f64);
    let p = k / n;
    let z2 = z * z;
    let denom = 1.0 + z2 / n;
    let centre = (p + z2 / (2.0 * n)) / denom;
    let half = z * (p * (1.0 - p) / n + z2 / (4.0 * n * n)).sqrt() / denom;
    ((centre - half).max(0.0), (centre + half).min(1.0))
}

/// The `q` quantile (0..=1) of `sorted` (ascending, finite) by linear interpolation (type 7);
/// `None` when empty.
pub fn quantile(sorted: &[f64], q: f64) -> Option<f64> {
    let n = sorted.len();
    if n == 0 {
        return None;
    }
    let h = (n - 1) as f64 * q.clamp(0.0, 1.0);
    let lo = h.floor() as usize;
    let hi = (lo + 1).min(n - 1);
    Some(sorted[lo] + (h - lo as f64) * (sorted[hi] - sorted[lo]))
}

/// Quartiles and the 10/90 % quantiles of a sample.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Quantiles {
    /// Sample size.
    pub n: usize,
    /// 10 % quantile.
    pub q10: f64,
    /// 25 % quantile.
    pub q25: f64,
    /// Median.
    pub median: f64,
    /// 75 % quantile.
    pub q75: f64,
    /// 90 % quantile.
    pub q90: f64,
}

impl Quantiles {
    /// Quantiles of the finite values of `values` (`None` when there are none).
    pub fn of(values: impl Iterator<Item = f64>) -> Option<Quantiles> {
        let mut v: Vec<f64> = values.filter(|x| x.is_finite()).collect();
        v.sort_by(f64::total_cmp);
        let q = |p| quantile(&v, p);
        Some(Quantiles { n: v.len(), q10: q(0.1)?, q25: q(0.25)?, median: q(0.5)?, q75: q(0.75)?, q90: q(0.9)? })
    }
}

/// Summary over a set of episodes.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Summary {
    /// Episodes.
    pub episodes: usize,
    /// Successful episodes: the first declaration was correct (the headline).
    pub successes: usize,
    /// successes / episodes.
    pub success_rate: f64,
    /// Wilson 95 % interval of the success rate (low, high).
    pub success_wilson95: (f64, f64),
    /// Episodes with a correct declaration, after operator resets or not (secondary).
    pub correct_after_resets: usize,
    /// Wilson 95 % interval of the correct-after-resets rate (low, high).
    pub correct_after_resets_wilson95: (f64, f64),
    /// Episodes with at least one false declaration.
    pub episodes_with_false_declarations: usize,
    /// Episodes in which the robot came within the success radius (declared or not).
    pub reached: usize,
    /// Wilson 95 % interval of the reach rate (low, high).
    pub reached_wilson95: (f64, f64),
    /// Outcome counts.
    pub outcomes: BTreeMap<&'static str, usize>,
    /// Time to a correct declaration [s], successful episodes.
    pub time_to_declare: Option<Quantiles>,
    /// Path length over straight-line distance, successful episodes.
    pub path_ratio: Option<Quantiles>,
    /// Time to first come within the success radius [s], episodes that did.
    pub time_to_reach: Option<Quantiles>,
    /// Path length until then over the straight-line distance, episodes that did.
    pub reach_path_ratio: Option<Quantiles>,
    /// Smallest distance to the source reached [m], all episodes.
    pub min_distance: Option<Quantiles>,
    /// From the first contact to the first declaration [s], episodes with both.
    pub contact_to_declare: Option<Quantiles>,
    /// Time in each mode [s], all episodes together.
    pub time_in_mode: BTreeMap<&'static str, f64>,
    /// The odor cues' figures.
    pub cues: CueSummary,
    /// False declarations, all episodes.
    pub false_declarations: u64,
    /// HALTED entries after start-up, all episodes.
    pub halts: u64,
    /// Halt reasons over all episodes.
    pub halt_reasons: BTreeMap<String, u64>,
    /// Obstacle stops of the guard, all episodes.
    pub obstacle_stops: u64,
    /// Collisions, all episodes.
    pub collisions: u64,
    /// Episodes with at least one collision.
    pub episodes_with_collisions: usize,
    /// Simulated time [s], all episodes.
    pub sim_time: f64,
}

/// The odor cues over episodes (see the module docs).
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct CueSummary {
    /// In-plume time, all episodes [s].
    pub in_plume_time: f64,
    /// Share of the in-plume time with a bearing of each cue (`timing`, `amplitude`, `fused`,
    /// `any`); `None` without in-plume time.
    pub coverage: BTreeMap<&'static str, Option<f64>>,
    /// Per-episode median bearing errors against the source, per cue and `all` [rad].
    pub bearing_error_source: BTreeMap<&'static str, Quantiles>,
    /// Per-episode median bearing errors against upwind, per cue and `all` [rad].
    pub bearing_error_upwind: BTreeMap<&'static str, Quantiles>,
    /// Per-episode median distance errors |ln(estimate / truth)|.
    pub distance_error: Option<Quantiles>,
}

impl CueSummary {
    /// The cue figures of `results`.
    pub fn of(results: &[EpisodeResult]) -> CueSummary {
        let in_plume_time: f64 = results.iter().map(|r| r.cues.in_plume_time).sum();
        let mut coverage = BTreeMap::new();
        for name in CUE_NAMES.iter().chain(&["any"]) {
            let covered: f64 = results.iter().filter_map(|r| r.cues.covered_time.get(name)).sum();
            coverage.insert(*name, (in_plume_time > 0.0).then(|| covered / in_plume_time));
        }
        let per_cue = |get: &dyn Fn(&EpisodeResult) -> &BTreeMap<&'static str, ErrorStat>| {
            let mut m = BTreeMap::new();
            for name in CUE_NAMES.iter().chain(&["all"]) {
                if let Some(q) = Quantiles::of(results.iter().filter_map(|r| get(r).get(name).map(|e| e.median))) {
                    m.insert(*name, q);
                }
            }
            m
        };
        CueSummary {
            in_plume_time,
            coverage,
            bearing_error_source: per_cue(&|r| &r.cues.bearing_error_source),
            bearing_error_upwind: per_cue(&|r| &r.cues.bearing_error_upwind),
            distance_error: Quantiles::of(results.iter().filter_map(|r| r.cues.distance_error.map(|e| e.median))),
        }
    }
}

/// The snake_case name of an outcome (as in `episodes.json`).
pub fn outcome_name(o: Outcome) -> &'static str {
    match o {
        Outcome::Success => "success",
        Outcome::CorrectAfterReset => "correct_after_reset",
        Outcome::FalseDeclaration => "false_declaration",
        Outcome::TimeLimit => "time_limit",
        Outcome::Stalled => "stalled",
    }
}

impl Summary {
    /// Summarises `results`.
    pub fn of(results: &[EpisodeResult]) -> Summary {
        let n = results.len();
        let ok: Vec<&EpisodeResult> = results.iter().filter(|r| r.success).collect();
        let mut outcomes = BTreeMap::new();
        let mut halt_reasons = BTreeMap::new();
        let mut time_in_mode = BTreeMap::new();
        let after_resets = results.iter().filter(|r| r.correct_after_resets).count();
        for r in results {
            *outcomes.entry(outcome_name(r.outcome)).or_default() += 1;
            for (k, v) in &r.time_in_mode {
                *time_in_mode.entry(*k).or_default() += v;
            }
            for (k, v) in &r.halt_reasons {
                *halt_reasons.entry(k.clone()).or_default() += u64::from(*v);
            }
        }
        Summary {
            episodes: n,
            successes: ok.len(),
            success_rate: if n > 0 { ok.len() as f64 / n as f64 } else { 0.0 },
            success_wilson95: wilson(ok.len(), n, Z95),
            correct_after_resets: after_resets,
            correct_after_resets_wilson95: wilson(after_resets, n, Z95),
            episodes_with_false_declarations: results.iter().filter(|r| r.false_declarations > 0).count(),
            reached: results.iter().filter(|r| r.reached).count(),
            reached_wilson95: wilson(results.iter().filter(|r| r.reached).count(), n, Z95),
            outcomes,
            time_to_declare: Quantiles::of(ok.iter().filter_map(|r| r.time_to_declare)),
            path_ratio: Quantiles::of(ok.iter().map(|r| r.path_ratio)),
            time_to_reach: Quantiles::of(results.iter().filter_map(|r| r.time_to_reach)),
            reach_path_ratio: Quantiles::of(results.iter().filter_map(|r| r.reach_path_ratio)),
            min_distance: Quantiles::of(results.iter().map(|r| r.min_distance)),
            contact_to_declare: Quantiles::of(results.iter().filter_map(|r| r.contact_to_declare)),
            time_in_mode,
            cues: CueSummary::of(results),
            false_declarations: results.iter().map(|r| u64::from(r.false_declarations)).sum(),
            halts: results.iter().map(|r| u64::from(r.halts)).sum(),
            halt_reasons,
            obstacle_stops: results.iter().filter_map(|r| r.obstacle_stops).sum(),
            collisions: results.iter().map(|r| u64::from(r.collisions)).sum(),
            episodes_with_collisions: results.iter().filter(|r| r.collisions > 0).count(),
            sim_time: results.iter().map(|r| r.sim_time).sum(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;
    use proptest::prelude::*;

    /// Newcombe, "Two-sided confidence intervals for the single proportion: comparison of seven
    /// methods", Statistics in Medicine 17:857-872, 1998, Table I, score method (values from
    /// memory, checked by hand against scipy 1.17.1 `binomtest(k, n).proportion_ci(method=
    /// "wilson")`: 0.25529/0.36621, 0.06239/0.16049, 0/0.16113, 0.00611/0.17176).
    #[test]
    fn wilson_matches_published_examples() {
        for (k, n, lo, hi) in [(81, 263, 0.2553, 0.3662), (15, 148, 0.0624, 0.1605), (0, 20, 0.0, 0.1611), (1, 29, 0.0061, 0.1718)] {
            let (a, b) = wilson(k, n, Z95);
            assert_abs_diff_eq!(a, lo, epsilon = 1e-4);
            assert_abs_diff_eq!(b, hi, epsilon = 1e-4);
        }
        // Closed form at k = 0: the upper bound is z^2 / (n + z^2).
        let (_, hi) = wilson(0, 50, Z95);
        assert_abs_diff_eq!(hi, Z95 * Z95 / (50.0 + Z95 * Z95), epsilon = 1e-15);
    }

    /// scipy 1.17.1 `binomtest(k, n).proportion_ci(confidence_level=0.95, method="wilson")`
    /// for n = 1, 10, 20, 50 (every k) and a few large n (tests/refs/wilson_ci.py).
    #[test]
    fn wilson_matches_scipy() {
        let text = include_str!("../../../tests/fixtures/stats/wilson_cases.json");
        let cases: Vec<serde_json::Value> = serde_json::from_str(text).expect("fixture");
        assert!(cases.len() > 80);
        for c in &cases {
            let get = |k: &str| c[k].as_f64().expect("number");
            let (k, n) = (get("k") as usize, get("n") as usize);
            let (lo, hi) = wilson(k, n, Z95);
            assert_abs_diff_eq!(lo, get("low"), epsilon = 1e-12);
            assert_abs_diff_eq!(hi, get("high"), epsilon = 1e-12);
        }
    }

    /// numpy 2.x `np.quantile([3, 1, 4, 1, 5, 9, 2, 6], [0.1, 0.25, 0.5, 0.75, 0.9])`
    /// (linear method) = [1.0, 1.75, 3.5, 5.25, 6.9] (run by hand).
    #[test]
    fn quantiles_match_numpy_linear() {
        let q = Quantiles::of([3.0, 1.0, 4.0, 1.0, 5.0, 9.0, 2.0, 6.0, f64::NAN].into_iter()).expect("values");
        assert_eq!(q.n, 8);
        for (a, b) in [(q.q10, 1.0), (q.q25, 1.75), (q.median, 3.5), (q.q75, 5.25), (q.q90, 6.9)] {
            assert_abs_diff_eq!(a, b, epsilon = 1e-12);
        }
        assert_eq!(Quantiles::of(std::iter::empty()), None);
    }

    proptest! {
        /// The interval holds the point estimate, stays in [0, 1], and narrows with n.
        #[test]
        fn wilson_contains_the_estimate(k in 0usize..500, extra in 0usize..500) {
            let n = k + extra + 1;
            let (lo, hi) = wilson(k, n, Z95);
            let p = k as f64 / n as f64;
            prop_assert!(0.0 <= lo && lo <= p + 1e-12 && p <= hi + 1e-12 && hi <= 1.0);
            let (lo4, hi4) = wilson(4 * k, 4 * n, Z95);
            prop_assert!(hi4 - lo4 <= hi - lo + 1e-12);
        }
    }
}
