//! Labelled windows for calibration: features and ground-truth distances from CSV text, a
//! ground-truth time series, and the pairing of published windows with it. Pure functions of
//! text and values; the `sillage calibrate` command does the file and bag I/O.
//!
//! CSV: comma-separated, a header row naming the columns (any order, extra columns ignored),
//! `#` starts a comment line, blank lines are skipped.
//! - features: `bout_rate` [Hz], `distance` [m], optionally `bout_amplitude` and
//!   `wind_speed` [m/s] (the mean true wind speed over the window);
//! - truth: `distance` [m] and either `time` [s on the recording's log-time clock, e.g. Unix
//!   time] or `elapsed` [s since the recording's first message].
//!
//! A window `(stamp - window, stamp]` is labelled with the mean of the truth interpolated at
//! its start, middle and end (each needs truth samples around it no further apart than
//! `max_gap`); a window over which the truth changes by more than `max_spread` (relative to
//! its mean) is skipped: its features mix distances. Windows without a finite bout rate are
//! skipped; by default only non-overlapping windows are kept (overlapping ones are strongly
//! correlated and would understate the fit's uncertainty).

use crate::calibration::CalibrationPoint;
use crate::error::PlumeError;
use sillage_core::msg::PlumeFeatures;
use sillage_core::Nanos;

/// A parsed CSV: header names and rows of cells with their line numbers.
struct Table {
    file: String,
    names: Vec<String>,
    rows: Vec<(usize, Vec<String>)>,
}

fn csv_error(file: &str, line: usize, reason: impl Into<String>) -> PlumeError {
    PlumeError::Csv { file: file.to_string(), line, reason: reason.into() }
}

fn parse_table(text: &str, file: &str) -> Result<Table, PlumeError> {
    let mut names: Option<Vec<String>> = None;
    let mut rows = Vec::new();
    for (i, raw) in text.lines().enumerate() {
        let line = raw.trim();
        if line.is_empty() || line.starts_with('#') {
            continue;
        }
        let cells: Vec<&str> = line.split(',').map(str::trim).collect();
        match &names {
            None => names = Some(cells.iter().map(|c| c.to_ascii_lowercase()).collect()),
            Some(h) => {
                if cells.len() != h.len() {
                    return Err(csv_error(file, i + 1, format!("{} fields, the header has {}", cells.len(), h.len())));
                }
                rows.push((i + 1, cells.iter().map(|c| c.to_string()).collect()));
            }
        }
    }
    let names = names.ok_or_else(|| csv_error(file, 1, "empty file (expected a header row)"))?;
    Ok(Table { file: file.to_string(), names, rows })
}

impl Table {
    fn column(&self, name: &str) -> Option<usize> {
        self.names.iter().position(|n| n == name)
    }

    fn require(&self, name: &str) -> Result<usize, PlumeError> {
        self.column(name).ok_or_else(|| csv_error(&self.file, 1, format!("no '{name}' column (header: {})", self.names.join(","))))
    }

    /// The number in column `col` of `row` (only the columns used are parsed).
    fn number(&self, row: &(usize, Vec<String>), col: usize) -> Result<f64, PlumeError> {
        let cell = &row.1[col];
        cell.parse::<f64>().map_err(|_| csv_error(&self.file, row.0, format!("column '{}': '{cell}' is not a number", self.names[col])))
    }
}

/// Calibration points from a features CSV (`bout_rate`, `distance`, optional
/// `bout_amplitude` and `wind_speed`; a missing one is NaN). Values are checked by the fit, which names
/// the point; the line of point `i` is `lines[i]`.
pub fn parse_features_csv(text: &str, file: &str) -> Result<(Vec<CalibrationPoint>, Vec<usize>), PlumeError> {
    let t = parse_table(text, file)?;
    let (r, d) = (t.require("bout_rate")?, t.require("distance")?);
    let (a, w) = (t.column("bout_amplitude"), t.column("wind_speed"));
    let mut points = Vec::with_capacity(t.rows.len());
    for row in &t.rows {
        let optional = |c: Option<usize>| c.map_or(Ok(f64::NAN), |c| t.number(row, c));
        let (bout_amplitude, wind_speed) = (optional(a)?, optional(w)?);
        points.push(CalibrationPoint { bout_rate: t.number(row, r)?, bout_amplitude, distance: t.number(row, d)?, wind_speed });
    }
    Ok((points, t.rows.iter().map(|(l, _)| *l).collect()))
}

/// The clock of a truth CSV.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum TimeBase {
    /// Seconds on the recording's log-time clock.
    Absolute,
    /// Seconds since the recording's first message.
    Elapsed,
}

/// Ground-truth distance over time, sorted by time.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Truth {
    samples: Vec<(Nanos, f64)>,
}

impl Truth {
    /// An empty series.
    pub fn new() -> Truth {
        Truth::default()
    }

    /// Adds a sample (kept sorted; a sample at an existing time replaces it).
    pub fn push(&mut self, t: Nanos, distance: f64) {
        match self.samples.binary_search_by_key(&t, |s| s.0) {
            Ok(i) => self.samples[i].1 = distance,
            Err(i) => self.samples.insert(i, (t, distance)),
        }
    }

    /// Samples.
    pub fn samples(&self) -> &[(Nanos, f64)] {
        &self.samples
    }

    /// A truth CSV: `distance` [m] with `time` or `elapsed` [s]; elapsed times are offset by
    /// `origin` [ns]. Distances must be finite and > 0.
    pub fn from_csv(text: &str, file: &str, origin: Nanos) -> Result<(Truth, TimeBase), PlumeError> {
        let t = parse_table(text, file)?;
        let d = t.require("distance")?;
        let (c, base) = match (t.column("time"), t.column("elapsed")) {
            (Some(c), None) => (c, TimeBase::Absolute),
            (None, Some(c)) => (c, TimeBase::Elapsed),
            _ => return Err(csv_error(file, 1, "needs exactly one of the columns 'time' (log-time clock [s]) and 'elapsed' (since the first message [s])")),
        };
        let mut truth = Truth::new();
        for row in &t.rows {
            let (dist, time) = (t.number(row, d)?, t.number(row, c)?);
            if !(dist.is_finite() && dist > 0.0) {
                return Err(csv_error(file, row.0, format!("distance {dist} must be finite and > 0 [m]")));
            }
            if !time.is_finite() {
                return Err(csv_error(file, row.0, format!("time {time} is not finite")));
            }
            let offset = if base == TimeBase::Elapsed { origin } else { 0 };
            truth.push(offset.saturating_add(sillage_core::time::nanos(time)), dist);
        }
        if truth.samples.is_empty() {
            return Err(csv_error(file, 1, "no data rows"));
        }
        Ok((truth, base))
    }

    /// The distance at `t`, linearly interpolated between the samples around it if they are at
    /// most `max_gap` [ns] apart (a sample exactly at `t` is used as it is); `None` outside.
    pub fn at(&self, t: Nanos, max_gap: Nanos) -> Option<f64> {
        match self.samples.binary_search_by_key(&t, |s| s.0) {
            Ok(i) => Some(self.samples[i].1),
            Err(0) => None,
            Err(i) if i == self.samples.len() => None,
            Err(i) => {
                let ((t0, d0), (t1, d1)) = (self.samples[i - 1], self.samples[i]);
                (t1 - t0 <= max_gap).then(|| d0 + (d1 - d0) * ((t - t0) as f64 / (t1 - t0) as f64))
            }
        }
    }
}

/// How windows are labelled.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LabelOptions {
    /// Window length [s] (the estimator's `features.window`).
    pub window: f64,
    /// Keep overlapping windows too (default: only every `window / step`-th).
    pub overlapping: bool,
    /// Largest gap between truth samples to interpolate across [ns].
    pub max_gap: Nanos,
    /// Largest (max - min) / mean of the truth over a window.
    pub max_spread: f64,
}

/// A published window with its truth.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Labelled {
    /// Window end (the PlumeFeatures stamp) [ns].
    pub stamp: Nanos,
    /// Features and true distance.
    pub point: CalibrationPoint,
}

/// Why windows were not labelled.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct LabelCounts {
    /// Windows offered.
    pub windows: usize,
    /// Skipped: overlapping an earlier kept window.
    pub overlapping: usize,
    /// Skipped: no finite bout rate (too little data).
    pub no_rate: usize,
    /// Skipped: no truth over the whole window.
    pub no_truth: usize,
    /// Skipped: the truth changed too much within the window.
    pub moving: usize,
}

/// Labels `features` (in publication order) with `truth`.
pub fn label_windows(features: &[PlumeFeatures], truth: &Truth, o: &LabelOptions) -> (Vec<Labelled>, LabelCounts) {
    label_windows_in_wind(features, &[], truth, o)
}

/// [`label_windows`] with the mean true wind speed of each window (`wind[i]` for
/// `features[i]` [m/s]; missing or `None`: NaN, which a fit with the wind refuses by name).
pub fn label_windows_in_wind(features: &[PlumeFeatures], wind: &[Option<f64>], truth: &Truth, o: &LabelOptions) -> (Vec<Labelled>, LabelCounts) {
    let w = sillage_core::time::nanos(o.window);
    let mut counts = LabelCounts::default();
    let mut out = Vec::new();
    let mut last_kept: Option<Nanos> = None;
    for (i, f) in features.iter().enumerate() {
        counts.windows += 1;
        let stamp = f.header.stamp.to_nanos();
        if !o.overlapping && last_kept.is_some_and(|k| stamp - k < w) {
            counts.overlapping += 1;
            continue;
        }
        if !f.bout_rate.is_finite() {
            counts.no_rate += 1;
            continue;
        }
        let at = |t| truth.at(t, o.max_gap);
        let (Some(a), Some(b), Some(c)) = (at(stamp - w), at(stamp - w / 2), at(stamp)) else {
            counts.no_truth += 1;
            continue;
        };
        let mean = (a + b + c) / 3.0;
        if (a.max(b).max(c) - a.min(b).min(c)) > o.max_spread * mean {
            counts.moving += 1;
            continue;
        }
        last_kept = Some(stamp);
        let wind_speed = wind.get(i).copied().flatten().unwrap_or(f64::NAN);
        out.push(Labelled { stamp, point: CalibrationPoint { bout_rate: f.bout_rate, bout_amplitude: f.bout_amplitude, distance: mean, wind_speed } });
    }
    (out, counts)
}

#[cfg(test)]
mod tests {
    use super::*;
    use sillage_core::msg::Header;

    const S: Nanos = 1_000_000_000;

    #[test]
    fn features_csv_by_column_name_with_errors_naming_the_line() {
        let text = "# recorded in the hall\ndistance,bout_rate,note\n1.5,0.4,near door\n\n2.5,0.2,2\n";
        let (p, lines) = parse_features_csv(text, "f.csv").expect("parses");
        assert_eq!(p.len(), 2);
        assert_eq!((p[1].bout_rate, p[1].distance, lines[1]), (0.2, 2.5, 5));
        assert!(p[0].bout_amplitude.is_nan());
        let e = parse_features_csv("bout_rate,distance\n0.1,x\n", "f.csv").expect_err("not a number");
        assert_eq!(e.to_string(), "f.csv:2: column 'distance': 'x' is not a number");
        let e = parse_features_csv("bout_rate,distance\n0.1\n", "f.csv").expect_err("short row");
        assert!(e.to_string().starts_with("f.csv:2: 1 fields"), "{e}");
        let e = parse_features_csv("rate,distance\n", "f.csv").expect_err("column");
        assert!(e.to_string().contains("no 'bout_rate' column"), "{e}");
        assert!(parse_features_csv("", "f.csv").is_err());
    }

    #[test]
    fn truth_interpolates_within_gaps_only() {
        let (t, base) = Truth::from_csv("elapsed,distance\n0,2.0\n10,3.0\n30,3.0\n", "t.csv", 100 * S).expect("parses");
        assert_eq!(base, TimeBase::Elapsed);
        assert_eq!(t.at(105 * S, 15 * S), Some(2.5));
        assert_eq!(t.at(120 * S, 15 * S), None, "20 s between samples");
        assert_eq!(t.at(130 * S, 15 * S), Some(3.0), "exact sample");
        assert_eq!(t.at(99 * S, 15 * S), None);
        assert!(Truth::from_csv("time,elapsed,distance\n1,1,1\n", "t.csv", 0).is_err());
        let e = Truth::from_csv("time,distance\n1,-2\n", "t.csv", 0).expect_err("negative");
        assert!(e.to_string().starts_with("t.csv:2:"), "{e}");
    }

    fn features(stamp_s: i64, rate: f64) -> PlumeFeatures {
        PlumeFeatures { header: Header::new(stamp_s * S, ""), bout_rate: rate, bout_amplitude: 1.0, ..Default::default() }
    }

    #[test]
    fn windows_are_labelled_non_overlapping_and_still() {
        let mut truth = Truth::new();
        for s in 0..=100 {
            // Standing at 2 m until 50 s, then walking to 4 m by 60 s, then standing.
            let d = if s <= 50 { 2.0 } else if s <= 60 { 2.0 + 0.2 * (s - 50) as f64 } else { 4.0 };
            truth.push(s * S, d);
        }
        let f: Vec<PlumeFeatures> = (10..=100).step_by(5).map(|s| features(s, if s == 30 { f64::NAN } else { 0.5 })).collect();
        let o = LabelOptions { window: 10.0, overlapping: false, max_gap: 2 * S, max_spread: 0.1 };
        let (l, c) = label_windows(&f, &truth, &o);
        let stamps: Vec<i64> = l.iter().map(|x| x.stamp / S).collect();
        assert_eq!(stamps, vec![10, 20, 35, 45, 70, 80, 90, 100]);
        assert_eq!((c.windows, c.no_rate, c.moving), (19, 1, 3));
        assert_eq!(l[0].point.distance, 2.0);
        assert_eq!(l[4].point.distance, 4.0);
        let (all, _) = label_windows(&f, &truth, &LabelOptions { overlapping: true, ..o });
        assert!(all.len() > l.len());
    }
}
