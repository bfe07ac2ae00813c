//! Replay plots (SVG or PNG through `plotters`): chemical channels with the encoder's events
//! marked, bearing over time, plume features, the mode timeline, and the trajectory from
//! odometry with source estimates.
//!
//! Series are gathered with bounded memory whatever the bag's length: time series go into a
//! fixed number of time buckets (min, max and last value per bucket, so peaks survive), events
//! into per-bucket counts, the trajectory is thinned by distance.

use super::summary::mode_name;
use anyhow::{anyhow, Result};
use plotters::coord::Shift;
use plotters::prelude::*;
use sillage_core::executor::Record;
use sillage_core::msg::OdorEvent;
use sillage_core::{Msg, Nanos};
use std::path::{Path, PathBuf};

/// Time buckets per series.
const BUCKETS: usize = 1200;
/// Most trajectory points kept.
const MAX_PATH: usize = 20_000;
/// Most chemical channels plotted.
const MAX_CHANNELS: usize = 8;

/// Min, max and last value per time bucket.
#[derive(Debug, Clone)]
struct Buckets {
    cells: Vec<Option<(f64, f64, f64)>>,
}

impl Buckets {
    fn new() -> Buckets {
        Buckets { cells: vec![None; BUCKETS] }
    }
    fn add(&mut self, i: usize, v: f64) {
        if !v.is_finite() {
            return;
        }
        let c = &mut self.cells[i];
        *c = Some(match *c {
            None => (v, v, v),
            Some((lo, hi, _)) => (lo.min(v), hi.max(v), v),
        });
    }
    /// Points for a line that shows each bucket's range: (t, min), (t, max) per bucket.
    fn envelope(&self, t_of: impl Fn(usize) -> f64) -> Vec<(f64, f64)> {
        let mut out = Vec::new();
        for (i, c) in self.cells.iter().enumerate() {
            if let Some((lo, hi, _)) = c {
                out.push((t_of(i), *lo));
                if hi != lo {
                    out.push((t_of(i), *hi));
                }
            }
        }
        out
    }
    fn range(&self) -> Option<(f64, f64)> {
        self.cells.iter().flatten().fold(None, |acc, (lo, hi, _)| Some(acc.map_or((*lo, *hi), |(a, b): (f64, f64)| (a.min(*lo), b.max(*hi)))))
    }
}

/// Everything the plots need, gathered record by record.
pub struct PlotData {
    t0: Nanos,
    span: f64,
    channels: Vec<String>,
    chem: Vec<Buckets>,
    rising: Vec<Vec<u32>>,
    falling: Vec<Vec<u32>>,
    bearing: Buckets,
    confidence: Buckets,
    bout_rate: Buckets,
    intermittency: Buckets,
    distance: Buckets,
    modes: Vec<(f64, u8)>,
    path: Vec<(f64, f64)>,
    path_step: f64,
    sources: Vec<(f64, f64)>,
}

impl PlotData {
    /// Data for a replay covering `[t0, t1]` [ns].
    pub fn new(t0: Nanos, t1: Nanos) -> PlotData {
        PlotData {
            t0,
            span: sillage_core::time::secs((t1 - t0).max(1)),
            channels: Vec::new(),
            chem: Vec::new(),
            rising: Vec::new(),
            falling: Vec::new(),
            bearing: Buckets::new(),
            confidence: Buckets::new(),
            bout_rate: Buckets::new(),
            intermittency: Buckets::new(),
            distance: Buckets::new(),
            modes: Vec::new(),
            path: Vec::new(),
            path_step: 0.005,
            sources: Vec::new(),
        }
    }

    fn bucket(&self, t: Nanos) -> usize {
        let x = sillage_core::time::secs(t - self.t0) / self.span * BUCKETS as f64;
        (x.max(0.0) as usize).min(BUCKETS - 1)
    }

    fn t_of(&self) -> impl Fn(usize) -> f64 + '_ {
        move |i| (i as f64 + 0.5) * self.span / BUCKETS as f64
    }

    fn event(&mut self, e: &OdorEvent) {
        let c = e.channel as usize;
        if c >= self.rising.len() {
            return;
        }
        let b = self.bucket(e.stamp.to_nanos());
        if e.polarity > 0 {
            self.rising[c][b] += 1;
        } else {
            self.falling[c][b] += 1;
        }
    }

    /// Takes one delivered message.
    pub fn record(&mut self, r: &Record) {
        let b = self.bucket(r.stamp);
        match r.msg {
            Msg::ChemSample(m) => {
                if self.channels.is_empty() {
                    let n = m.values.len().min(MAX_CHANNELS);
                    self.channels = (0..n).map(|i| m.channels.get(i).cloned().unwrap_or_else(|| format!("ch{i}"))).collect();
                    self.chem = vec![Buckets::new(); n];
                    self.rising = vec![vec![0; BUCKETS]; n];
                    self.falling = vec![vec![0; BUCKETS]; n];
                }
                for (i, v) in m.values.iter().enumerate().take(self.chem.len()) {
                    self.chem[i].add(b, *v);
                }
            }
            Msg::OdorEventArray(a) => {
                for e in &a.events {
                    self.event(e);
                }
            }
            Msg::OdorBearing(m) => {
                self.bearing.add(b, m.bearing.to_degrees());
                self.confidence.add(b, m.confidence);
            }
            Msg::PlumeFeatures(m) => {
                self.bout_rate.add(b, m.bout_rate);
                self.intermittency.add(b, m.intermittency);
                self.distance.add(b, m.distance);
            }
            Msg::SearchState(s) if self.modes.last().is_none_or(|(_, m)| *m != s.mode) && self.modes.len() < 100_000 => {
                self.modes.push((sillage_core::time::secs(r.stamp - self.t0), s.mode));
            }
            Msg::Odometry(o) => {
                let p = (o.pose.pose.position.x, o.pose.pose.position.y);
                if self.path.last().is_none_or(|q| (q.0 - p.0).hypot(q.1 - p.1) >= self.path_step) {
                    self.path.push(p);
                    if self.path.len() > MAX_PATH {
                        // Keep every other point and double the spacing: bounded, still even.
                        self.path = self.path.iter().step_by(2).copied().collect();
                        self.path_step *= 2.0;
                    }
                }
            }
            Msg::PointStamped(p) => {
                if self.sources.len() >= 1000 {
                    self.sources.remove(0);
                }
                self.sources.push((p.point.x, p.point.y));
            }
            _ => {}
        }
    }
}

/// Image format of the plots.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum Format {
    /// Scalable vector graphics (no fonts needed).
    Svg,
    /// Bitmap (uses the system's fonts for text).
    Png,
}

type Area<'a, DB> = DrawingArea<DB, Shift>;

fn padded(lo: f64, hi: f64) -> (f64, f64) {
    let pad = ((hi - lo).abs() * 0.05).max(1e-9);
    (lo - pad, hi + pad)
}

fn empty<DB: DrawingBackend>(area: &Area<DB>, title: &str, why: &str) -> Result<()> {
    area.fill(&WHITE).map_err(|e| anyhow!("{e:?}"))?;
    let style = ("sans-serif", 18).into_font();
    area.draw_text(&format!("{title}: {why}"), &style.into(), (20, 20)).map_err(|e| anyhow!("{e:?}"))?;
    Ok(())
}

/// A named, coloured line.
type Line<'a> = (&'a str, Vec<(f64, f64)>, RGBColor);

fn line_chart<DB: DrawingBackend>(area: &Area<DB>, title: &str, y_desc: &str, span: f64, series: &[Line<'_>]) -> Result<()> {
    let all: Vec<f64> = series.iter().flat_map(|(_, p, _)| p.iter().map(|q| q.1)).collect();
    if all.is_empty() {
        return empty(area, title, "no finite values (none published, or NaN)");
    }
    let (lo, hi) = all.iter().fold((f64::MAX, f64::MIN), |(a, b), v| (a.min(*v), b.max(*v)));
    let (lo, hi) = padded(lo, hi);
    let mut chart = ChartBuilder::on(area)
        .caption(title, ("sans-serif", 18))
        .margin(8)
        .x_label_area_size(32)
        .y_label_area_size(64)
        .build_cartesian_2d(0.0..span, lo..hi)
        .map_err(|e| anyhow!("{e:?}"))?;
    chart.configure_mesh().x_desc("time [s]").y_desc(y_desc).draw().map_err(|e| anyhow!("{e:?}"))?;
    for (name, pts, color) in series {
        let c = *color;
        chart
            .draw_series(LineSeries::new(pts.iter().copied(), c.stroke_width(1)))
            .map_err(|e| anyhow!("{e:?}"))?
            .label(*name)
            .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 16, y)], c));
    }
    chart.configure_series_labels().background_style(WHITE.mix(0.8)).border_style(BLACK).draw().map_err(|e| anyhow!("{e:?}"))?;
    Ok(())
}

const COLORS: [RGBColor; 8] = [
    RGBColor(31, 119, 180),
    RGBColor(214, 39, 40),
    RGBColor(44, 160, 44),
    RGBColor(148, 103, 189),
    RGBColor(255, 127, 14),
    RGBColor(23, 190, 207),
    RGBColor(140, 86, 75),
    RGBColor(127, 127, 127),
];

impl PlotData {
    fn chem_plot<DB: DrawingBackend>(&self, area: &Area<DB>) -> Result<()> {
        let title = "chemical channels (triangles: rising events, crosses: falling events)";
        let Some((lo, hi)) = self.chem.iter().filter_map(Buckets::range).reduce(|a, b| (a.0.min(b.0), a.1.max(b.1))) else {
            return empty(area, title, "no chemical samples");
        };
        let (lo, hi) = padded(lo, hi);
        let mut chart = ChartBuilder::on(area)
            .caption(title, ("sans-serif", 18))
            .margin(8)
            .x_label_area_size(32)
            .y_label_area_size(72)
            .build_cartesian_2d(0.0..self.span, lo..hi)
            .map_err(|e| anyhow!("{e:?}"))?;
        chart.configure_mesh().x_desc("time [s]").y_desc("sample value").draw().map_err(|e| anyhow!("{e:?}"))?;
        let t_of = self.t_of();
        for (i, b) in self.chem.iter().enumerate() {
            let mut ups = Vec::new();
            let mut downs = Vec::new();
            let c = COLORS[i % COLORS.len()];
            chart
                .draw_series(LineSeries::new(b.envelope(&t_of), c.stroke_width(1)))
                .map_err(|e| anyhow!("{e:?}"))?
                .label(self.channels[i].as_str())
                .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 16, y)], c));
            for (k, cell) in b.cells.iter().enumerate() {
                if let Some((vlo, vhi, _)) = cell {
                    if self.rising[i][k] > 0 {
                        ups.push(TriangleMarker::new((t_of(k), *vhi), 5, c.filled()));
                    }
                    if self.falling[i][k] > 0 {
                        downs.push(Cross::new((t_of(k), *vlo), 4, c.stroke_width(2)));
                    }
                }
            }
            chart.draw_series(ups).map_err(|e| anyhow!("{e:?}"))?;
            chart.draw_series(downs).map_err(|e| anyhow!("{e:?}"))?;
        }
        chart.configure_series_labels().background_style(WHITE.mix(0.8)).border_style(BLACK).draw().map_err(|e| anyhow!("{e:?}"))?;
        Ok(())
    }

    fn modes_plot<DB: DrawingBackend>(&self, area: &Area<DB>) -> Result<()> {
        let title = "search mode";
        if self.modes.is_empty() {
            return empty(area, title, "no search state published");
        }
        let mut chart = ChartBuilder::on(area)
            .caption(title, ("sans-serif", 18))
            .margin(8)
            .x_label_area_size(32)
            .y_label_area_size(90)
            .build_cartesian_2d(0.0..self.span, -0.5..4.5)
            .map_err(|e| anyhow!("{e:?}"))?;
        chart
            .configure_mesh()
            .x_desc("time [s]")
            .y_labels(5)
            .y_label_formatter(&|v: &f64| if (v - v.round()).abs() < 1e-6 { mode_name(v.round() as u8).to_string() } else { String::new() })
            .draw()
            .map_err(|e| anyhow!("{e:?}"))?;
        let mut pts = Vec::new();
        for (i, (t, m)) in self.modes.iter().enumerate() {
            let end = self.modes.get(i + 1).map_or(self.span, |n| n.0);
            pts.push((*t, f64::from(*m)));
            pts.push((end, f64::from(*m)));
        }
        chart.draw_series(LineSeries::new(pts, COLORS[0].stroke_width(2))).map_err(|e| anyhow!("{e:?}"))?;
        Ok(())
    }

    fn path_plot<DB: DrawingBackend>(&self, area: &Area<DB>) -> Result<()> {
        let title = "trajectory (odom frame)";
        let pts: Vec<(f64, f64)> = self.path.iter().chain(self.sources.iter()).copied().collect();
        if pts.is_empty() {
            return empty(area, title, "no odometry");
        }
        let (x0, x1) = pts.iter().fold((f64::MAX, f64::MIN), |(a, b), p| (a.min(p.0), b.max(p.0)));
        let (y0, y1) = pts.iter().fold((f64::MAX, f64::MIN), |(a, b), p| (a.min(p.1), b.max(p.1)));
        // Equal scales on both axes.
        let half = ((x1 - x0).max(y1 - y0) * 0.55).max(0.5);
        let (cx, cy) = ((x0 + x1) / 2.0, (y0 + y1) / 2.0);
        let mut chart = ChartBuilder::on(area)
            .caption(title, ("sans-serif", 18))
            .margin(8)
            .x_label_area_size(32)
            .y_label_area_size(50)
            .build_cartesian_2d(cx - half..cx + half, cy - half..cy + half)
            .map_err(|e| anyhow!("{e:?}"))?;
        chart.configure_mesh().x_desc("x [m]").y_desc("y [m]").draw().map_err(|e| anyhow!("{e:?}"))?;
        chart
            .draw_series(LineSeries::new(self.path.iter().copied(), COLORS[0].stroke_width(2)))
            .map_err(|e| anyhow!("{e:?}"))?
            .label("path")
            .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 16, y)], COLORS[0]));
        if let (Some(a), Some(b)) = (self.path.first(), self.path.last()) {
            chart.draw_series([Circle::new(*a, 5, COLORS[2].filled())]).map_err(|e| anyhow!("{e:?}"))?.label("start").legend(|(x, y)| Circle::new((x + 8, y), 4, COLORS[2].filled()));
            chart.draw_series([Circle::new(*b, 5, COLORS[1].filled())]).map_err(|e| anyhow!("{e:?}"))?.label("end").legend(|(x, y)| Circle::new((x + 8, y), 4, COLORS[1].filled()));
        }
        if !self.sources.is_empty() {
            chart
                .draw_series(self.sources.iter().map(|p| Cross::new(*p, 4, COLORS[4].stroke_width(2))))
                .map_err(|e| anyhow!("{e:?}"))?
                .label("source estimates")
                .legend(|(x, y)| Cross::new((x + 8, y), 4, COLORS[4]));
        }
        chart.configure_series_labels().background_style(WHITE.mix(0.8)).border_style(BLACK).draw().map_err(|e| anyhow!("{e:?}"))?;
        Ok(())
    }

    fn draw<DB: DrawingBackend>(&self, name: &str, area: Area<DB>) -> Result<()> {
        area.fill(&WHITE).map_err(|e| anyhow!("{e:?}"))?;
        let t_of = self.t_of();
        match name {
            "chem" => self.chem_plot(&area)?,
            "bearing" => {
                let parts = area.split_evenly((2, 1));
                line_chart(&parts[0], "odor bearing (REP 103, direction the odor comes from)", "bearing [deg]", self.span, &[("bearing", self.bearing.envelope(&t_of), COLORS[0])])?;
                line_chart(&parts[1], "bearing confidence", "confidence [0..1]", self.span, &[("confidence", self.confidence.envelope(&t_of), COLORS[2])])?;
            }
            "plume" => {
                let parts = area.split_evenly((3, 1));
                line_chart(&parts[0], "bout rate", "bouts [Hz]", self.span, &[("bout rate", self.bout_rate.envelope(&t_of), COLORS[0])])?;
                line_chart(&parts[1], "intermittency", "fraction [0..1]", self.span, &[("intermittency", self.intermittency.envelope(&t_of), COLORS[1])])?;
                line_chart(&parts[2], "distance estimate", "distance [m]", self.span, &[("distance", self.distance.envelope(&t_of), COLORS[2])])?;
            }
            "modes" => self.modes_plot(&area)?,
            _ => self.path_plot(&area)?,
        }
        area.present().map_err(|e| anyhow!("{e:?}"))?;
        Ok(())
    }

    /// Writes the five plots into `dir`; returns their paths.
    pub fn write(&self, dir: &Path, format: Format) -> Result<Vec<PathBuf>> {
        std::fs::create_dir_all(dir)?;
        let mut out = Vec::new();
        for (name, size) in [("chem", (1200, 500)), ("bearing", (1200, 600)), ("plume", (1200, 800)), ("modes", (1200, 320)), ("trajectory", (800, 800))] {
            let path = dir.join(format!("{name}.{}", match format { Format::Svg => "svg", Format::Png => "png" }));
            match format {
                Format::Svg => self.draw(name, SVGBackend::new(&path, size).into_drawing_area())?,
                Format::Png => self.draw(name, BitMapBackend::new(&path, size).into_drawing_area())?,
            }
            out.push(path);
        }
        Ok(out)
    }
}
