//! What `sillage calibrate` checks before it writes a distance model, and what it writes with
//! it: the quality gate, the provenance header, and the `--source` argument.
//!
//! The gate refuses (unless `--force`) a fit that would mislead the node:
//! - R^2 in ln space below `--min-r2` [default 0.5]: bout rate explains little of the distance;
//! - a rate coefficient >= 0: the bout rate does not fall with distance, the opposite of what
//!   plume structure shows (bouts arrive more often nearer the source; common practice in
//!   plume-distance cues, so a positive slope means mislabelled or unusable data);
//! - a leave-one-out mean relative error above `--max-loo-error` [default 0.5, i.e. 50 %];
//! - truth distances covering less than a factor `--min-distance-ratio` [default 2] between
//!   the 5th and 95th percentiles, or fewer than 3 distinct distances (to the centimetre): an
//!   extrapolation, not a fit.
//!
//! The header names every input (bag or features CSV) with its digest, the fit's figures, the
//! gate's verdict, the date (UTC) and whether the run was forced or interrupted.

use anyhow::{bail, Result};
use sillage_plume_estimator::calibration::Fit;
use std::path::{Path, PathBuf};

/// Thresholds of the gate.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Gate {
    /// Smallest R^2 (ln space).
    pub min_r2: f64,
    /// Largest leave-one-out mean relative error (fraction).
    pub max_loo_relative: f64,
    /// Smallest ratio of the 95th to the 5th percentile of the truth distances.
    pub min_distance_ratio: f64,
}

/// Distinct distances (to the centimetre) a fit needs.
pub const MIN_DISTINCT_DISTANCES: usize = 3;

/// The 5th and 95th percentiles of the distances (nearest rank) [m], and how many distinct
/// values (to the centimetre) they hold.
pub fn distance_coverage(distances: &[f64]) -> (f64, f64, usize) {
    let mut d: Vec<f64> = distances.iter().copied().filter(|x| x.is_finite()).collect();
    d.sort_by(f64::total_cmp);
    if d.is_empty() {
        return (f64::NAN, f64::NAN, 0);
    }
    let rank = |q: f64| d[((q * d.len() as f64).ceil() as usize).clamp(1, d.len()) - 1];
    let mut cm: Vec<i64> = d.iter().map(|x| (x * 100.0).round() as i64).collect();
    cm.dedup();
    (rank(0.05), rank(0.95), cm.len())
}

/// Why the fit fails the gate (empty: it passes).
pub fn judge(fit: &Fit, distances: &[f64], gate: &Gate) -> Vec<String> {
    let mut out = Vec::new();
    if fit.r_squared.is_nan() || fit.r_squared < gate.min_r2 {
        out.push(format!("R^2 {:.3} is below {:.3} (--min-r2): the bout rate explains little of the distance", fit.r_squared, gate.min_r2));
    }
    if fit.rate_coef.is_nan() || fit.rate_coef >= 0.0 {
        out.push(format!("the rate coefficient is {:+.4} ln m/Hz: distance should fall as the bout rate rises (< 0)", fit.rate_coef));
    }
    if fit.loo_mean_relative.is_nan() || fit.loo_mean_relative > gate.max_loo_relative {
        out.push(format!(
            "leave-one-out mean relative error {:.0} % is above {:.0} % (--max-loo-error)",
            100.0 * fit.loo_mean_relative,
            100.0 * gate.max_loo_relative
        ));
    }
    let (lo, hi, distinct) = distance_coverage(distances);
    if distinct < MIN_DISTINCT_DISTANCES {
        out.push(format!("the truth holds {distinct} distinct distance(s); at least {MIN_DISTINCT_DISTANCES} are needed"));
    } else if (hi / lo).is_nan() || hi / lo < gate.min_distance_ratio {
        out.push(format!(
            "the distances cover {lo:.2} to {hi:.2} m (5th to 95th percentile), a factor {:.2}, less than {:.1} (--min-distance-ratio)",
            hi / lo,
            gate.min_distance_ratio
        ));
    }
    out
}

/// One input of the fit for the header: its path and digest.
pub fn input_line(path: &Path) -> String {
    match sillage_tune::bags::bag_digest(path) {
        Ok(d) => format!("{} (digest {d})", path.display()),
        Err(e) => format!("{} (no digest: {e})", path.display()),
    }
}

/// What the header says.
pub struct Provenance<'a> {
    /// Inputs with digests.
    pub inputs: Vec<String>,
    /// The fit.
    pub fit: &'a Fit,
    /// Distances used [m].
    pub distances: &'a [f64],
    /// Why the gate refused it (empty: passed).
    pub refusals: &'a [String],
    /// Written although refused.
    pub forced: bool,
    /// Date and time of the run [ns since the epoch].
    pub now_ns: i64,
}

/// The comment lines put before the parameter file's text.
pub fn header(p: &Provenance<'_>) -> String {
    let f = p.fit;
    let (lo, hi, distinct) = distance_coverage(p.distances);
    let mut out = vec![
        "# Distance model written by `sillage calibrate`.".to_string(),
        format!("# date: {}", sillage_bag::scan::utc_text(p.now_ns)),
    ];
    for i in &p.inputs {
        out.push(format!("# input: {i}"));
    }
    out.push(format!(
        "# fit: {} windows, R^2 (ln d) {:.4}, rate coefficient {:+.6} ln m/Hz, residual sd {:.4} ln m",
        f.n, f.r_squared, f.rate_coef, f.residual_std
    ));
    out.push(format!("# leave-one-out: RMSE {:.3} m, mean relative error {:.1} %", f.loo_rmse, 100.0 * f.loo_mean_relative));
    out.push(format!("# distances: {lo:.2} to {hi:.2} m (5th to 95th percentile), {distinct} distinct"));
    if p.refusals.is_empty() {
        out.push("# quality gate: passed".to_string());
    } else {
        out.push(format!("# quality gate: FAILED{}", if p.forced { ", written with --force" } else { "" }));
        for r in p.refusals {
            out.push(format!("#   - {r}"));
        }
    }
    out.join("\n") + "\n"
}

/// `--source` values: `X Y [Z]` as separate numbers or `X,Y[,Z]` in one, mixed as given.
/// Values after the coordinates that are not numbers are bags the option took by mistake
/// (`--source 1 2 bag_b`): they are handed back to be read as bags.
pub fn parse_source(values: &[String]) -> Result<(Option<Vec<f64>>, Vec<PathBuf>)> {
    if values.is_empty() {
        return Ok((None, Vec::new()));
    }
    let mut xyz = Vec::new();
    let mut rest = Vec::new();
    for v in values {
        let parts: Vec<&str> = v.split(',').map(str::trim).filter(|p| !p.is_empty()).collect();
        let nums: Option<Vec<f64>> = parts.iter().map(|p| p.parse::<f64>().ok().filter(|x| x.is_finite())).collect();
        match nums {
            Some(n) if rest.is_empty() && !n.is_empty() => xyz.extend(n),
            _ if xyz.len() >= 2 => rest.push(PathBuf::from(v)),
            _ => bail!("--source {}: expected X Y [Z] or X,Y[,Z] in metres, '{v}' is not a number", values.join(" ")),
        }
    }
    if !(2..=3).contains(&xyz.len()) {
        bail!("--source {}: expected 2 or 3 coordinates [m], got {}", values.join(" "), xyz.len());
    }
    Ok((Some(xyz), rest))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn fit(r2: f64, slope: f64, loo: f64) -> Fit {
        Fit {
            use_amplitude: false,
            use_wind: false,
            intercept: 1.0,
            rate_coef: slope,
            amplitude_coef: 0.0,
            wind_coef: 0.0,
            n: 40,
            r_squared: r2,
            residual_std: 0.2,
            rmse: 0.5,
            loo_rmse: 0.6,
            loo_rmse_ln: 0.25,
            loo_mean_relative: loo,
        }
    }

    const GATE: Gate = Gate { min_r2: 0.5, max_loo_relative: 0.5, min_distance_ratio: 2.0 };

    #[test]
    fn the_fit_of_the_report_is_refused_on_every_count() {
        // The figures of a real refused fit: R^2 0.04, slope of the wrong sign, 151 % error,
        // all at one distance.
        let r = judge(&fit(0.04, 0.3, 1.51), &[2.0; 30], &GATE);
        assert_eq!(r.len(), 4, "{r:#?}");
        let good: Vec<f64> = (0..30).map(|i| 1.0 + 0.25 * i as f64).collect();
        assert!(judge(&fit(0.8, -0.9, 0.2), &good, &GATE).is_empty());
        // Only the range fails: 5th to 95th percentile 3.0 to 4.0 m.
        let narrow: Vec<f64> = (0..20).map(|i| 3.0 + 0.05 * i as f64).collect();
        let r = judge(&fit(0.8, -0.9, 0.2), &narrow, &GATE);
        assert!(r.len() == 1 && r[0].contains("a factor"), "{r:?}");
        // NaN figures never pass.
        assert_eq!(judge(&fit(f64::NAN, f64::NAN, f64::NAN), &good, &GATE).len(), 3);
    }

    #[test]
    fn coverage_uses_nearest_rank_percentiles() {
        // Nearest-rank percentile: the ceil(q n)-th smallest value (NIST/SEMATECH e-Handbook,
        // 7.2.6.2, the "nearest rank" definition); n = 20: 5th -> 1st value, 95th -> 19th.
        let d: Vec<f64> = (1..=20).map(f64::from).collect();
        assert_eq!(distance_coverage(&d), (1.0, 19.0, 20));
        assert_eq!(distance_coverage(&[2.001, 2.0, 2.004]).2, 1);
    }

    #[test]
    fn source_takes_both_spellings_and_gives_back_bags() {
        let s = |v: &[&str]| parse_source(&v.iter().map(|x| x.to_string()).collect::<Vec<_>>());
        assert_eq!(s(&["1.5,-2"]).ok(), Some((Some(vec![1.5, -2.0]), vec![])));
        assert_eq!(s(&["1.5", "-2", "0.3"]).ok(), Some((Some(vec![1.5, -2.0, 0.3]), vec![])));
        assert_eq!(s(&["1,2", "bag_b"]).ok(), Some((Some(vec![1.0, 2.0]), vec![PathBuf::from("bag_b")])));
        assert_eq!(s(&["1", "2", "bag_b"]).ok(), Some((Some(vec![1.0, 2.0]), vec![PathBuf::from("bag_b")])));
        assert!(s(&["1"]).is_err());
        assert!(s(&["1,2,3,4"]).is_err());
        assert!(s(&["x", "2"]).is_err());
        assert_eq!(s(&[]).ok(), Some((None, vec![])));
    }
}
