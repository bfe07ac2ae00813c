//! The ranking of a sweep's points: per objective term, the statistic over the point's cases
//! with its 95 % interval; the score `sum(weight * statistic)` (higher is better) with a
//! conservative interval (each term at the end of its interval that lowers, then raises, the
//! score); points sorted by score, NaN scores last, ties by design order.
//!
//! Records are sorted by case key before any statistic is taken and bootstrap seeds come from
//! the point id, so the ranking is the same whatever order (or shards) the records came in.

use crate::design::ParamValue;
use crate::results::Record;
use crate::stats::{bootstrap, mean, median, wilson, Z95};
use crate::sweep::{fnv1a, Stat, Sweep};
use serde::Serialize;
use std::collections::BTreeMap;

/// One objective term of one point.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TermEstimate {
    /// Metric.
    pub metric: String,
    /// Statistic.
    pub stat: Stat,
    /// Weight.
    pub weight: f64,
    /// Cases with a finite value.
    pub n: usize,
    /// The statistic (or the term's `missing` value; NaN when neither).
    pub estimate: f64,
    /// Its 95 % interval.
    pub low: f64,
    /// Its 95 % interval.
    pub high: f64,
}

/// One ranked point.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Ranked {
    /// 1-based rank.
    pub rank: usize,
    /// Point id.
    pub point: String,
    /// Design index.
    pub index: usize,
    /// Its values.
    pub values: Vec<(String, ParamValue)>,
    /// Cases evaluated without error.
    pub cases: usize,
    /// Cases whose evaluation failed (left out of the statistics).
    pub errors: usize,
    /// The score (higher is better).
    pub score: f64,
    /// Conservative 95 % interval of the score.
    pub score_low: f64,
    /// Conservative 95 % interval of the score.
    pub score_high: f64,
    /// Whether the score interval overlaps the best point's (not clearly worse).
    pub overlaps_best: bool,
    /// Per term.
    pub terms: Vec<TermEstimate>,
}

fn term(records: &[&Record], t: &crate::sweep::Term, seed: u64) -> TermEstimate {
    let mut v: Vec<f64> = records.iter().map(|r| r.metric(&t.metric)).filter(|x| x.is_finite()).collect();
    v.sort_by(f64::total_cmp);
    let n = v.len();
    let (estimate, (low, high)) = match t.stat {
        Stat::Rate => {
            let k = v.iter().filter(|x| **x > 0.5).count();
            if n == 0 {
                (f64::NAN, (0.0, 1.0))
            } else {
                // Exact ends at k = 0 and k = n (the closed form rounds to 1e-17 there).
                let (lo, hi) = wilson(k, n, Z95);
                (k as f64 / n as f64, (if k == 0 { 0.0 } else { lo }, if k == n { 1.0 } else { hi }))
            }
        }
        Stat::Median => (median(&v).unwrap_or(f64::NAN), bootstrap(&v, median, seed).unwrap_or((f64::NAN, f64::NAN))),
        Stat::Mean => (mean(&v).unwrap_or(f64::NAN), bootstrap(&v, mean, seed).unwrap_or((f64::NAN, f64::NAN))),
    };
    let (estimate, low, high) = match (n, t.missing) {
        (0, Some(m)) => (m, m, m),
        _ => (estimate, low, high),
    };
    TermEstimate { metric: t.metric.clone(), stat: t.stat, weight: t.weight, n, estimate, low, high }
}

/// Ranks the points in `records` under the sweep's objective.
pub fn rank(sweep: &Sweep, records: &[Record]) -> Vec<Ranked> {
    let mut by_point: BTreeMap<&str, Vec<&Record>> = BTreeMap::new();
    for r in records {
        by_point.entry(r.point.as_str()).or_default().push(r);
    }
    let mut out: Vec<Ranked> = by_point
        .into_iter()
        .filter_map(|(id, mut rs)| {
            rs.sort_by(|a, b| a.case.cmp(&b.case));
            let first = *rs.first()?;
            let ok: Vec<&Record> = rs.iter().copied().filter(|r| r.error.is_none()).collect();
            let terms: Vec<TermEstimate> = sweep
                .objective
                .iter()
                .map(|t| term(&ok, t, fnv1a(format!("{id}/{}", t.metric).as_bytes())))
                .collect();
            let score = terms.iter().map(|e| e.weight * e.estimate).sum::<f64>();
            let ends = |lower: bool| terms.iter().map(|e| e.weight * if (e.weight > 0.0) == lower { e.low } else { e.high }).sum::<f64>();
            let score = if ok.is_empty() { f64::NAN } else { score };
            Some(Ranked {
                rank: 0,
                point: id.to_string(),
                index: first.index,
                values: first.values.clone(),
                cases: ok.len(),
                errors: rs.len() - ok.len(),
                score,
                score_low: ends(true),
                score_high: ends(false),
                overlaps_best: false,
                terms,
            })
        })
        .collect();
    out.sort_by(|a, b| match (a.score.is_nan(), b.score.is_nan()) {
        (false, false) => b.score.total_cmp(&a.score).then(a.index.cmp(&b.index)),
        (x, y) => x.cmp(&y).then(a.index.cmp(&b.index)),
    });
    let best_low = out.first().map_or(f64::NAN, |b| b.score_low);
    for (i, r) in out.iter_mut().enumerate() {
        r.rank = i + 1;
        r.overlaps_best = r.score_high >= best_low;
    }
    out
}
