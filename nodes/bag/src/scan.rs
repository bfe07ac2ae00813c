//! A full read of a bag for `sillage bag info`: every record of every file is visited (not
//! decoded), so the figures are what the files really hold, not what their indexes claim.
//!
//! Per topic: type, encoding, count, first and last log time, mean rate and the spread of the
//! intervals, the largest gap. Integrity: damage met (cut-off files, damaged chunks skipped,
//! with the messages their index says were lost) and, for bag folders, every topic's count
//! against `metadata.yaml`. Times stay integer nanoseconds throughout; [`stamp_text`] and
//! [`utc_text`] print them exactly.

use crate::error::{BagError, Damage};
use crate::reader::{Bag, ReadOptions};
use crate::source::Storage;
use sillage_core::{Msg, Nanos};
use std::collections::BTreeMap;
use std::path::PathBuf;

/// One topic as read.
#[derive(Debug, Clone, PartialEq)]
pub struct TopicScan {
    /// Topic name.
    pub name: String,
    /// Declared type.
    pub type_name: String,
    /// Message encoding.
    pub encoding: String,
    /// Whether the type is in sillage's vocabulary.
    pub known: bool,
    /// Messages read.
    pub count: u64,
    /// First and last log time [ns].
    pub span: Option<(Nanos, Nanos)>,
    /// Mean interval between messages [ns] (`(last - first) / (count - 1)`).
    pub mean_interval: Option<f64>,
    /// Standard deviation of the intervals [ns] (population).
    pub interval_sd: Option<f64>,
    /// Largest interval [ns] and the log time of the message that ends it [ns].
    pub largest_gap: Option<(Nanos, Nanos)>,
    /// Count in `metadata.yaml`, when a bag folder lists the topic.
    pub expected: Option<u64>,
}

impl TopicScan {
    /// Mean rate [Hz].
    pub fn mean_rate(&self) -> Option<f64> {
        self.mean_interval.filter(|m| *m > 0.0).map(|m| 1e9 / m)
    }
}

/// A count that differs from `metadata.yaml`.
#[derive(Debug, Clone, PartialEq)]
pub struct Shortfall {
    /// Topic name.
    pub topic: String,
    /// Count in `metadata.yaml`.
    pub expected: u64,
    /// Messages read.
    pub read: u64,
}

/// The whole bag as read.
#[derive(Debug, Clone, PartialEq)]
pub struct Scan {
    /// Storage files: path, storage, size [bytes].
    pub files: Vec<(PathBuf, Storage, u64)>,
    /// Topics by name.
    pub topics: Vec<TopicScan>,
    /// Messages read.
    pub message_count: u64,
    /// Total in `metadata.yaml` (summed over the bags that have one).
    pub expected_count: Option<u64>,
    /// First and last log time [ns].
    pub span: Option<(Nanos, Nanos)>,
    /// Damage met.
    pub damage: Vec<Damage>,
    /// Topic counts that differ from `metadata.yaml`.
    pub shortfalls: Vec<Shortfall>,
    /// Warnings of the read (opening and reading).
    pub warnings: Vec<String>,
}

impl Scan {
    /// No damage and every count as the metadata says.
    pub fn intact(&self) -> bool {
        self.damage.is_empty() && self.shortfalls.is_empty() && self.expected_count.is_none_or(|e| e == self.message_count)
    }

    /// Messages known to be missing (metadata count minus read, per topic; else what the
    /// damaged chunks' indexes say).
    pub fn lost(&self) -> u64 {
        let by_meta: u64 = self.shortfalls.iter().map(|s| s.expected.saturating_sub(s.read)).sum();
        let by_index: u64 = self.damage.iter().flat_map(|d| d.lost.iter().map(|l| l.1)).sum();
        by_meta.max(by_index)
    }
}

/// Topic counts in the bags' `metadata.yaml` files (summed per topic name), and their total;
/// `None` when no bag folder has metadata.
pub fn expected_counts(bag: &Bag) -> Option<(BTreeMap<String, u64>, u64)> {
    if bag.metadata.is_empty() {
        return None;
    }
    let mut per = BTreeMap::new();
    let mut total = 0;
    for (_, m) in &bag.metadata {
        total += m.message_count;
        for t in &m.topics_with_message_count {
            *per.entry(t.topic_metadata.name.clone()).or_insert(0) += t.message_count;
        }
    }
    Some((per, total))
}

/// The topics whose count read differs from `metadata.yaml`.
pub fn shortfalls(expected: &BTreeMap<String, u64>, read: &BTreeMap<String, u64>) -> Vec<Shortfall> {
    let mut out = Vec::new();
    for (topic, &e) in expected {
        let r = read.get(topic).copied().unwrap_or(0);
        if r != e {
            out.push(Shortfall { topic: topic.clone(), expected: e, read: r });
        }
    }
    for (topic, &r) in read {
        if !expected.contains_key(topic) && r > 0 {
            out.push(Shortfall { topic: topic.clone(), expected: 0, read: r });
        }
    }
    out
}

/// Reads every file of `bag` front to back (damaged chunks skipped and recorded).
pub fn scan(bag: &Bag) -> Result<Scan, BagError> {
    let mut times: BTreeMap<(String, String, String), Vec<Nanos>> = BTreeMap::new();
    let mut damage = Vec::new();
    let mut warnings: Vec<String> = bag.warnings.iter().map(ToString::to_string).collect();
    let mut files = Vec::new();
    let opts = ReadOptions::default();
    for f in &bag.files {
        let size = std::fs::metadata(&f.path).map_err(|e| BagError::io(&f.path, e))?.len();
        files.push((f.path.clone(), f.storage, size));
        let mut src = Bag::open_file(f, &opts)?;
        let mut decls: BTreeMap<i64, (String, String, String)> = BTreeMap::new();
        loop {
            let more = src.advance();
            warnings.extend(src.take_warnings());
            damage.extend(src.take_damage());
            if !more? {
                break;
            }
            let Some(h) = src.head() else { break };
            let (t, id) = (h.log_time, h.topic);
            let key = match decls.get(&id) {
                Some(k) => k.clone(),
                None => {
                    let k = src.topic(id).map_or_else(|| (format!("(unknown topic id {id})"), String::new(), String::new()), |d| (d.name, d.type_name, d.encoding));
                    decls.insert(id, k.clone());
                    k
                }
            };
            times.entry(key).or_default().push(t);
        }
        // Topics declared but without messages still show.
        if f.storage == Storage::Sqlite3 {
            if let Ok(c) = crate::sqlite_read::open_db(&f.path) {
                if let Ok(ts) = crate::sqlite_read::read_topics(&c, &f.path) {
                    for d in ts.into_values() {
                        times.entry((d.name, d.type_name, d.encoding)).or_default();
                    }
                }
            }
        }
    }
    let expected = expected_counts(bag);
    let mut topics = Vec::new();
    let mut read = BTreeMap::new();
    let mut span: Option<(Nanos, Nanos)> = None;
    for ((name, type_name, encoding), mut ts) in times {
        ts.sort_unstable();
        let count = ts.len() as u64;
        *read.entry(name.clone()).or_insert(0) += count;
        let s = ts.first().zip(ts.last()).map(|(a, b)| (*a, *b));
        if let Some((a, b)) = s {
            span = Some(span.map_or((a, b), |(x, y)| (x.min(a), y.max(b))));
        }
        let (mean_interval, interval_sd, largest_gap) = interval_stats(&ts);
        let expected_n = expected.as_ref().and_then(|(per, _)| per.get(&name).copied());
        topics.push(TopicScan { known: Msg::is_known_type(&type_name), name, type_name, encoding, count, span: s, mean_interval, interval_sd, largest_gap, expected: expected_n });
    }
    let message_count = read.values().sum();
    let short = expected.as_ref().map(|(per, _)| shortfalls(per, &read)).unwrap_or_default();
    Ok(Scan { files, topics, message_count, expected_count: expected.map(|e| e.1), span, damage, shortfalls: short, warnings })
}

/// Mean interval, its standard deviation [ns] and the largest gap (length, end time) of
/// sorted log times.
fn interval_stats(ts: &[Nanos]) -> (Option<f64>, Option<f64>, Option<(Nanos, Nanos)>) {
    if ts.len() < 2 {
        return (None, None, None);
    }
    let n = (ts.len() - 1) as f64;
    let mean = (ts[ts.len() - 1] - ts[0]) as f64 / n;
    let mut var = 0.0;
    let mut gap = (0, ts[1]);
    for w in ts.windows(2) {
        let d = w[1] - w[0];
        var += (d as f64 - mean).powi(2);
        if d > gap.0 {
            gap = (d, w[1]);
        }
    }
    (Some(mean), Some((var / n).sqrt()), Some(gap))
}

/// A log time [ns] as exact seconds: `1700000000.000000123` (integer arithmetic, no rounding).
pub fn stamp_text(t: Nanos) -> String {
    let s = t.div_euclid(1_000_000_000);
    let ns = t.rem_euclid(1_000_000_000);
    format!("{s}.{ns:09}")
}

/// A duration [ns] as exact seconds (sign first).
pub fn duration_text(d: Nanos) -> String {
    if d < 0 {
        format!("-{}", stamp_text(-d))
    } else {
        stamp_text(d)
    }
}

/// A log time [ns since the Unix epoch] as a UTC calendar date and time with nanoseconds:
/// `2023-11-14 22:13:20.000000000 UTC`. The calendar conversion is the days-to-civil
/// algorithm for the proleptic Gregorian calendar (H. Hinnant, "chrono-Compatible Low-Level
/// Date Algorithms", `civil_from_days`).
pub fn utc_text(t: Nanos) -> String {
    let secs = t.div_euclid(1_000_000_000);
    let ns = t.rem_euclid(1_000_000_000);
    let days = secs.div_euclid(86_400);
    let sod = secs.rem_euclid(86_400);
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    let y = yoe + era * 400 + i64::from(m <= 2);
    format!("{y:04}-{m:02}-{d:02} {:02}:{:02}:{:02}.{ns:09} UTC", sod / 3600, sod % 3600 / 60, sod % 60)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn utc_dates_match_gnu_date() {
        // Expected values from GNU coreutils `date -u -d @S '+%F %T'` (run 2026-12-02).
        assert_eq!(utc_text(1_700_000_000_000_000_000), "2023-11-14 22:13:20.000000000 UTC");
        assert_eq!(utc_text(951_782_400_000_000_007), "2000-02-29 00:00:00.000000007 UTC");
        assert_eq!(utc_text(-1_000_000_000), "1969-12-31 23:59:59.000000000 UTC");
        assert_eq!(utc_text(0), "1970-01-01 00:00:00.000000000 UTC");
    }

    #[test]
    fn stamps_print_exactly() {
        // 2^53 + 1 ns is not representable as an f64 number of nanoseconds; the text keeps it.
        assert_eq!(stamp_text(9_007_199_254_740_993), "9007199.254740993");
        assert_eq!(stamp_text(1_790_000_000_000_000_123), "1790000000.000000123");
        assert_eq!(stamp_text(-1), "-1.999999999");
        assert_eq!(duration_text(-1), "-0.000000001");
    }

    #[test]
    fn interval_figures_of_a_known_series() {
        // Intervals 1, 1, 4 (ns): mean 2, population sd sqrt(((1-2)^2*2 + (4-2)^2)/3) = sqrt(2).
        let (m, sd, gap) = interval_stats(&[10, 11, 12, 16]);
        assert_eq!(m, Some(2.0));
        assert!((sd.expect("sd") - 2f64.sqrt()).abs() < 1e-12);
        assert_eq!(gap, Some((4, 16)));
        assert_eq!(interval_stats(&[5]), (None, None, None));
    }

    #[test]
    fn shortfalls_list_missing_and_unlisted_topics() {
        let e: BTreeMap<String, u64> = [("/a".to_string(), 10), ("/b".to_string(), 5)].into();
        let r: BTreeMap<String, u64> = [("/a".to_string(), 7), ("/b".to_string(), 5), ("/c".to_string(), 1)].into();
        let s = shortfalls(&e, &r);
        assert_eq!(s, vec![Shortfall { topic: "/a".into(), expected: 10, read: 7 }, Shortfall { topic: "/c".into(), expected: 0, read: 1 }]);
    }
}
