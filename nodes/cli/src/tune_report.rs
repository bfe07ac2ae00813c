//! What `sillage tune` writes after a run or a merge: `ranking.csv` and `ranking.json` (every
//! point with its statistics and 95 % intervals), `best_params.yaml` (the best point as a
//! ROS 2 parameter file), and `plots/sensitivity_<key>.svg` (the score of every point against
//! each parameter, with the mean score per value).

use anyhow::{Context, Result};
use plotters::prelude::*;
use crate::palette;
use sillage_tune::params_out::point_params_text;
use sillage_tune::{LoadedSweep, ParamValue, Point, Ranked};
use std::fmt::Write as _;
use std::path::{Path, PathBuf};

fn csv_field(s: &str) -> String {
    if s.contains([',', '"', '\n']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

/// The ranking as CSV text.
pub fn ranking_csv(sweep: &LoadedSweep, ranked: &[Ranked]) -> String {
    let keys: Vec<&str> = sweep.sweep.parameters.iter().map(|p| p.key.as_str()).collect();
    let mut head: Vec<String> = vec!["rank".into(), "point".into(), "index".into()];
    head.extend(keys.iter().map(|k| (*k).to_string()));
    head.extend(["cases", "errors", "score", "score_low", "score_high", "overlaps_best"].map(String::from));
    for t in &sweep.sweep.objective {
        let stat = serde_json::to_value(t.stat).ok().and_then(|v| v.as_str().map(String::from)).unwrap_or_default();
        let name = format!("{}_{stat}", t.metric);
        head.extend([name.clone(), format!("{name}_low"), format!("{name}_high"), format!("{name}_n")]);
    }
    let mut out = head.iter().map(|h| csv_field(h)).collect::<Vec<_>>().join(",");
    out.push('\n');
    for r in ranked {
        let mut row = vec![r.rank.to_string(), r.point.clone(), r.index.to_string()];
        row.extend(keys.iter().map(|k| r.values.iter().find(|(key, _)| key == k).map(|(_, v)| csv_field(&v.label())).unwrap_or_default()));
        row.extend([r.cases.to_string(), r.errors.to_string(), r.score.to_string(), r.score_low.to_string(), r.score_high.to_string(), r.overlaps_best.to_string()]);
        for t in &r.terms {
            row.extend([t.estimate.to_string(), t.low.to_string(), t.high.to_string(), t.n.to_string()]);
        }
        let _ = writeln!(out, "{}", row.join(","));
    }
    out
}

/// The best point's parameter file text.
pub fn best_params(sweep: &LoadedSweep, best: &Ranked) -> Result<String> {
    let point = Point::new(best.index, best.values.clone());
    let mut header = vec![
        format!("Best point of sweep '{}' (sillage tune): point {} (#{}), {} cases", sweep.name, best.point, best.index, best.cases),
        format!("score {:.6} (95 % interval {:.6} .. {:.6})", best.score, best.score_low, best.score_high),
    ];
    for t in &best.terms {
        header.push(format!("{} {:?}: {:.6} ({:.6} .. {:.6}, n = {}), weight {}", t.metric, t.stat, t.estimate, t.low, t.high, t.n, t.weight));
    }
    header.extend(best.values.iter().map(|(k, v)| format!("{k} = {}", v.label())));
    Ok(point_params_text(sweep.base_text.as_deref(), &sweep.sweep.namespace, &point, &header)?)
}

fn plot_param(path: &Path, key: &str, ranked: &[Ranked]) -> Result<()> {
    let vals: Vec<(&ParamValue, f64)> = ranked.iter().filter(|r| r.score.is_finite()).filter_map(|r| r.values.iter().find(|(k, _)| k == key).map(|(_, v)| (v, r.score))).collect();
    // Strings are placed at their index among the distinct values, in first-seen order.
    let mut labels: Vec<String> = Vec::new();
    let xy: Vec<(f64, f64)> = vals
        .iter()
        .map(|(v, s)| {
            let x = v.as_f64().unwrap_or_else(|| {
                let l = v.label();
                let i = labels.iter().position(|x| *x == l).unwrap_or_else(|| {
                    labels.push(l);
                    labels.len() - 1
                });
                i as f64
            });
            (x, *s)
        })
        .collect();
    if xy.is_empty() {
        return Ok(());
    }
    let (mut x0, mut x1) = xy.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), (x, _)| (a.min(*x), b.max(*x)));
    let (mut y0, mut y1) = xy.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), (_, y)| (a.min(*y), b.max(*y)));
    let pad = |a: &mut f64, b: &mut f64| {
        let d = if *b > *a { (*b - *a) * 0.05 } else { 0.5_f64.max(a.abs() * 0.05) };
        *a -= d;
        *b += d;
    };
    pad(&mut x0, &mut x1);
    pad(&mut y0, &mut y1);
    let mut means: Vec<(f64, f64, usize)> = Vec::new();
    for (x, y) in &xy {
        match means.iter_mut().find(|m| m.0 == *x) {
            Some(m) => {
                m.1 += y;
                m.2 += 1;
            }
            None => means.push((*x, *y, 1)),
        }
    }
    means.sort_by(|a, b| a.0.total_cmp(&b.0));
    let root = SVGBackend::new(path, (720, 480)).into_drawing_area();
    root.fill(&WHITE).map_err(|e| anyhow::anyhow!("{e}"))?;
    let mut chart = ChartBuilder::on(&root)
        .caption(format!("score vs {key}"), ("sans-serif", 20))
        .margin(12)
        .x_label_area_size(40)
        .y_label_area_size(60)
        .build_cartesian_2d(x0..x1, y0..y1)
        .map_err(|e| anyhow::anyhow!("{e}"))?;
    let label_text = labels.clone();
    chart
        .configure_mesh()
        .x_desc(key)
        .y_desc("score (higher is better)")
        .x_label_formatter(&|x| if label_text.is_empty() { format!("{x:.3}") } else { label_text.get(x.round() as usize).cloned().unwrap_or_default() })
        .draw()
        .map_err(|e| anyhow::anyhow!("{e}"))?;
    chart.draw_series(xy.iter().map(|(x, y)| Circle::new((*x, *y), 3, palette::BLUE.mix(0.5).filled()))).map_err(|e| anyhow::anyhow!("{e}"))?;
    chart
        .draw_series(LineSeries::new(means.iter().map(|(x, s, n)| (*x, s / *n as f64)), palette::VERMILLION.stroke_width(2)))
        .map_err(|e| anyhow::anyhow!("{e}"))?
        .label("mean score per value")
        .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], palette::VERMILLION));
    chart.configure_series_labels().background_style(WHITE.mix(0.8)).border_style(BLACK).draw().map_err(|e| anyhow::anyhow!("{e}"))?;
    root.present().map_err(|e| anyhow::anyhow!("{e}"))?;
    Ok(())
}

/// Writes the ranking, the best parameter file and the plots into `dir`; returns the files.
pub fn write(dir: &Path, sweep: &LoadedSweep, ranked: &[Ranked], plots: bool) -> Result<Vec<PathBuf>> {
    let mut files = Vec::new();
    let mut put = |name: &str, text: String| -> Result<()> {
        let p = dir.join(name);
        std::fs::write(&p, text).with_context(|| format!("{}: cannot write", p.display()))?;
        files.push(p);
        Ok(())
    };
    put("ranking.csv", ranking_csv(sweep, ranked))?;
    put("ranking.json", serde_json::to_string_pretty(ranked)?)?;
    if let Some(best) = ranked.first().filter(|b| b.score.is_finite()) {
        put("best_params.yaml", best_params(sweep, best)?)?;
    }
    if plots {
        let pd = dir.join("plots");
        std::fs::create_dir_all(&pd).with_context(|| format!("{}: cannot create", pd.display()))?;
        for p in &sweep.sweep.parameters {
            let path = pd.join(format!("sensitivity_{}.svg", p.key.replace(['.', '/'], "_")));
            plot_param(&path, &p.key, ranked).with_context(|| format!("{}: plot", path.display()))?;
            files.push(path);
        }
    }
    Ok(files)
}
