//! Replay plots (SVG or PNG through `plotters`, colours from [`crate::palette`]): chemical
//! channels with the encoder's events marked, bearing over time, plume features, the commanded
//! velocity against the guard's caps, wind speed and direction, the mode timeline, and the
//! trajectory from odometry with source estimates. Every time plot is tinted by search mode,
//! so mode changes show on each; angles are wrapped to (-180, 180] deg and cut at the wrap;
//! frames are named; legends sit in a strip beside the chart, never over the data.
//!
//! Series are gathered with bounded memory whatever the bag's length: time series go into a
//! fixed number of time buckets (min, max and last value per bucket, so peaks survive), events
//! into per-bucket counts, the trajectory is thinned by distance.

use super::summary::mode_name;
use crate::palette;
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

/// The last angle per time bucket [deg, wrapped to (-180, 180]]: angles are not averaged or
/// given a min/max envelope (a bucket across the wrap would span the whole circle).
#[derive(Debug, Clone)]
struct AngleBuckets {
    cells: Vec<Option<f64>>,
}

impl AngleBuckets {
    fn new() -> AngleBuckets {
        AngleBuckets { cells: vec![None; BUCKETS] }
    }
    fn add(&mut self, i: usize, deg: f64) {
        if deg.is_finite() {
            self.cells[i] = Some(wrap_deg(deg));
        }
    }
    /// Line pieces of the trace, cut where it wraps or has no value.
    fn segments(&self, t_of: impl Fn(usize) -> f64) -> Vec<Vec<(f64, f64)>> {
        let pts: Vec<Option<(f64, f64)>> = self.cells.iter().enumerate().map(|(i, c)| c.map(|v| (t_of(i), v))).collect();
        angle_segments(&pts)
    }
}

/// An angle [deg] wrapped to (-180, 180].
pub fn wrap_deg(a: f64) -> f64 {
    let r = a.rem_euclid(360.0);
    if r > 180.0 { r - 360.0 } else { r }
}

/// Splits an angle trace [deg] into pieces wherever a step crosses the +-180 deg wrap (a step
/// of more than 180 deg is shorter the other way round) or a value is missing, so no line
/// joins +179 to -179 across the chart.
pub fn angle_segments(pts: &[Option<(f64, f64)>]) -> Vec<Vec<(f64, f64)>> {
    let mut out: Vec<Vec<(f64, f64)>> = Vec::new();
    let mut cur: Vec<(f64, f64)> = Vec::new();
    for p in pts {
        match p {
            Some(q) => {
                if cur.last().is_some_and(|l| (q.1 - l.1).abs() > 180.0) {
                    out.push(std::mem::take(&mut cur));
                }
                cur.push(*q);
            }
            None => {
                if !cur.is_empty() {
                    out.push(std::mem::take(&mut cur));
                }
            }
        }
    }
    if !cur.is_empty() {
        out.push(cur);
    }
    out
}

/// Speed caps of the arbiter's guard [m/s, rad/s], drawn on the cmd_vel panels.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Caps {
    /// `guard.max_linear` [m/s].
    pub max_linear: f64,
    /// `guard.max_reverse` [m/s].
    pub max_reverse: f64,
    /// `guard.max_angular` [rad/s].
    pub max_angular: f64,
}

/// Everything the plots need, gathered record by record.
pub struct PlotData {
    t0: Nanos,
    span: f64,
    channels: Vec<String>,
    chem_quantity: Option<u8>,
    chem: Vec<Buckets>,
    rising: Vec<Vec<u32>>,
    falling: Vec<Vec<u32>>,
    bearing: AngleBuckets,
    bearing_frame: String,
    confidence: Buckets,
    bout_rate: Buckets,
    intermittency: Buckets,
    distance: Buckets,
    linear: Buckets,
    angular: Buckets,
    caps: Option<Caps>,
    wind_speed: Buckets,
    wind_dir: AngleBuckets,
    wind_frame: String,
    modes: Vec<(f64, u8)>,
    path: Vec<(f64, f64)>,
    path_step: f64,
    sources: Vec<(f64, f64)>,
    odom_frame: String,
}

impl PlotData {
    /// Data for a replay covering `[t0, t1]` [ns].
    pub fn new(t0: Nanos, t1: Nanos) -> PlotData {
        PlotData {
            t0,
            span: sillage_core::time::secs((t1 - t0).max(1)),
            channels: Vec::new(),
            chem_quantity: None,
            chem: Vec::new(),
            rising: Vec::new(),
            falling: Vec::new(),
            bearing: AngleBuckets::new(),
            bearing_frame: String::new(),
            confidence: Buckets::new(),
            bout_rate: Buckets::new(),
            intermittency: Buckets::new(),
            distance: Buckets::new(),
            linear: Buckets::new(),
            angular: Buckets::new(),
            caps: None,
            wind_speed: Buckets::new(),
            wind_dir: AngleBuckets::new(),
            wind_frame: String::new(),
            modes: Vec::new(),
            path: Vec::new(),
            path_step: 0.005,
            sources: Vec::new(),
            odom_frame: String::new(),
        }
    }

    /// The guard's caps to draw on the cmd_vel panels.
    pub fn set_caps(&mut self, caps: Option<Caps>) {
        self.caps = caps;
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
                    self.chem_quantity = Some(m.quantity);
                }
                if self.chem_quantity != Some(m.quantity) {
                    self.chem_quantity = Some(u8::MAX); // mixed: no single unit
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
                if self.bearing_frame.is_empty() {
                    self.bearing_frame = m.header.frame_id.clone();
                }
                self.bearing.add(b, m.bearing.to_degrees());
                self.confidence.add(b, m.confidence);
            }
            Msg::PlumeFeatures(m) => {
                self.bout_rate.add(b, m.bout_rate);
                self.intermittency.add(b, m.intermittency);
                self.distance.add(b, m.distance);
            }
            Msg::Twist(t) => {
                self.linear.add(b, t.linear.x);
                self.angular.add(b, t.angular.z);
            }
            Msg::TwistStamped(t) => {
                self.linear.add(b, t.twist.linear.x);
                self.angular.add(b, t.twist.angular.z);
            }
            Msg::Vector3Stamped(w) if r.topic.ends_with("wind") => {
                if self.wind_frame.is_empty() {
                    self.wind_frame = w.header.frame_id.clone();
                }
                let (x, y) = (w.vector.x, w.vector.y);
                self.wind_speed.add(b, x.hypot(y));
                if x != 0.0 || y != 0.0 {
                    self.wind_dir.add(b, y.atan2(x).to_degrees());
                }
            }
            Msg::SearchState(s) if self.modes.last().is_none_or(|(_, m)| *m != s.mode) && self.modes.len() < 100_000 => {
                self.modes.push((sillage_core::time::secs(r.stamp - self.t0), s.mode));
            }
            Msg::Odometry(o) => {
                if self.odom_frame.is_empty() {
                    self.odom_frame = o.header.frame_id.clone();
                }
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

/// What a time panel draws.
enum Trace<'a> {
    /// A line (bucket envelopes).
    Line(&'a str, Vec<(f64, f64)>, RGBColor),
    /// An angle trace in pieces (no line across the wrap).
    Pieces(&'a str, Vec<Vec<(f64, f64)>>, RGBColor),
    /// A horizontal reference line (a cap), dashed.
    Level(String, f64, RGBColor),
}

impl Trace<'_> {
    fn values(&self) -> Vec<f64> {
        match self {
            Trace::Line(_, p, _) => p.iter().map(|q| q.1).collect(),
            Trace::Pieces(_, s, _) => s.iter().flatten().map(|q| q.1).collect(),
            Trace::Level(_, y, _) => vec![*y],
        }
    }
    fn name(&self) -> &str {
        match self {
            Trace::Line(n, ..) | Trace::Pieces(n, ..) => n,
            Trace::Level(n, ..) => n,
        }
    }
    fn colour(&self) -> RGBColor {
        match self {
            Trace::Line(_, _, c) | Trace::Pieces(_, _, c) | Trace::Level(_, _, c) => *c,
        }
    }
}

/// Width of the legend strip right of a chart [px].
const LEGEND_W: u32 = 170;

/// A legend in its own strip right of the chart, so it never covers data: a short line (or
/// dashes for a level) and the name per entry.
fn side_legend<DB: DrawingBackend>(area: &Area<DB>, entries: &[(String, RGBColor, bool)]) -> Result<()> {
    let font = ("sans-serif", 14).into_font();
    for (i, (name, c, dashed)) in entries.iter().enumerate() {
        let y = 40 + 20 * i as i32;
        if *dashed {
            for k in 0..3 {
                area.draw(&PathElement::new(vec![(6 + 8 * k, y), (11 + 8 * k, y)], c.stroke_width(2))).map_err(|e| anyhow!("{e:?}"))?;
            }
        } else {
            area.draw(&PathElement::new(vec![(6, y), (28, y)], c.stroke_width(2))).map_err(|e| anyhow!("{e:?}"))?;
        }
        area.draw_text(name, &font.clone().into(), (34, y - 7)).map_err(|e| anyhow!("{e:?}"))?;
    }
    Ok(())
}

/// Tinted background bands, one per search-mode segment (the colours of the mode plot).
fn mode_bands<DB: DrawingBackend>(
    chart: &mut ChartContext<'_, DB, Cartesian2d<plotters::coord::types::RangedCoordf64, plotters::coord::types::RangedCoordf64>>,
    modes: &[(f64, u8)],
    span: f64,
    lo: f64,
    hi: f64,
) -> Result<()> {
    let bands = modes.iter().enumerate().map(|(i, (t, m))| {
        let end = modes.get(i + 1).map_or(span, |n| n.0);
        Rectangle::new([(*t, lo), (end, hi)], palette::mode_colour(*m).mix(0.12).filled())
    });
    chart.draw_series(bands).map_err(|e| anyhow!("{e:?}"))?;
    Ok(())
}

/// A time panel: tinted by search mode, traces, legend strip when there is more than one
/// entry (a single trace is named by the title). `y_fixed` pins the y range (angles).
fn time_panel<DB: DrawingBackend>(area: &Area<DB>, title: &str, y_desc: &str, span: f64, modes: &[(f64, u8)], traces: &[Trace<'_>], y_fixed: Option<(f64, f64)>) -> Result<()> {
    let all: Vec<f64> = traces.iter().filter(|t| !matches!(t, Trace::Level(..))).flat_map(Trace::values).collect();
    if all.is_empty() {
        return empty(area, title, "no finite values (none published, or NaN)");
    }
    let (lo, hi) = match y_fixed {
        Some(r) => r,
        None => {
            let (lo, hi) = traces.iter().flat_map(Trace::values).fold((f64::MAX, f64::MIN), |(a, b), v| (a.min(v), b.max(v)));
            padded(lo, hi)
        }
    };
    let legend: Vec<(String, RGBColor, bool)> = traces.iter().map(|t| (t.name().to_string(), t.colour(), matches!(t, Trace::Level(..)))).collect();
    let (plot_area, legend_area) = if legend.len() > 1 { area.split_horizontally(area.dim_in_pixel().0.saturating_sub(LEGEND_W)) } else { (area.clone(), area.clone()) };
    let mut chart = ChartBuilder::on(&plot_area)
        .caption(title, ("sans-serif", 17))
        .margin(8)
        .x_label_area_size(34)
        .y_label_area_size(70)
        .build_cartesian_2d(0.0..span, lo..hi)
        .map_err(|e| anyhow!("{e:?}"))?;
    mode_bands(&mut chart, modes, span, lo, hi)?;
    let mut mesh = chart.configure_mesh();
    mesh.x_desc("time since replay start [s]").y_desc(y_desc);
    if y_fixed.is_some() {
        mesh.y_labels(9);
    }
    mesh.draw().map_err(|e| anyhow!("{e:?}"))?;
    // Reference levels first, so the data is drawn over them.
    for t in traces {
        if let Trace::Level(_, y, c) = t {
            let dashes = (0..80).map(|k| {
                let x0 = span * k as f64 / 80.0;
                PathElement::new(vec![(x0, *y), (x0 + span / 160.0, *y)], c.mix(0.8).stroke_width(2))
            });
            chart.draw_series(dashes).map_err(|e| anyhow!("{e:?}"))?;
        }
    }
    for t in traces {
        match t {
            Trace::Line(_, pts, c) => {
                chart.draw_series(LineSeries::new(pts.iter().copied(), c.stroke_width(2))).map_err(|e| anyhow!("{e:?}"))?;
            }
            Trace::Pieces(_, segs, c) => {
                // Angles as dots joined within each piece: sparse values still show.
                for seg in segs {
                    chart.draw_series(LineSeries::new(seg.iter().copied(), c.stroke_width(1))).map_err(|e| anyhow!("{e:?}"))?;
                    chart.draw_series(seg.iter().map(|q| Circle::new(*q, 2, c.filled()))).map_err(|e| anyhow!("{e:?}"))?;
                }
            }
            Trace::Level(..) => {}
        }
    }
    if legend.len() > 1 {
        side_legend(&legend_area, &legend)?;
    }
    Ok(())
}

/// Unit of a ChemSample quantity (sillage_msgs/ChemSample constants).
fn quantity_label(q: Option<u8>) -> &'static str {
    match q {
        Some(0) => "resistance [ohm]",
        Some(1) => "conductance [S]",
        Some(2) => "voltage [V]",
        Some(3) => "concentration [ppm]",
        Some(4) => "relative value [1]",
        _ => "value [mixed or unknown unit]",
    }
}

const COLORS: [RGBColor; 8] = palette::SERIES;

impl PlotData {
    fn chem_plot<DB: DrawingBackend>(&self, area: &Area<DB>) -> Result<()> {
        let title = "chemical channels (triangles: rising events, crosses: falling events)";
        let Some((lo, hi)) = self.chem.iter().filter_map(Buckets::range).reduce(|a, b| (a.0.min(b.0), a.1.max(b.1))) else {
            return empty(area, title, "no chemical samples");
        };
        let (lo, hi) = padded(lo, hi);
        let (plot_area, legend_area) = area.split_horizontally(area.dim_in_pixel().0.saturating_sub(LEGEND_W));
        let mut chart = ChartBuilder::on(&plot_area)
            .caption(title, ("sans-serif", 17))
            .margin(8)
            .x_label_area_size(34)
            .y_label_area_size(80)
            .build_cartesian_2d(0.0..self.span, lo..hi)
            .map_err(|e| anyhow!("{e:?}"))?;
        mode_bands(&mut chart, &self.modes, self.span, lo, hi)?;
        chart.configure_mesh().x_desc("time since replay start [s]").y_desc(quantity_label(self.chem_quantity)).draw().map_err(|e| anyhow!("{e:?}"))?;
        let t_of = self.t_of();
        let mut legend = Vec::new();
        for (i, b) in self.chem.iter().enumerate() {
            let mut ups = Vec::new();
            let mut downs = Vec::new();
            let c = COLORS[i % COLORS.len()];
            chart.draw_series(LineSeries::new(b.envelope(&t_of), c.stroke_width(1))).map_err(|e| anyhow!("{e:?}"))?;
            legend.push((self.channels[i].clone(), c, false));
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
        side_legend(&legend_area, &legend)?;
        Ok(())
    }

    fn modes_plot<DB: DrawingBackend>(&self, area: &Area<DB>) -> Result<()> {
        let title = "search mode (each change marked; the same tints shade the other time plots)";
        if self.modes.is_empty() {
            return empty(area, title, "no search state published");
        }
        let mut chart = ChartBuilder::on(area)
            .caption(title, ("sans-serif", 17))
            .margin(8)
            .x_label_area_size(34)
            .y_label_area_size(90)
            .build_cartesian_2d(0.0..self.span, -0.5..4.5)
            .map_err(|e| anyhow!("{e:?}"))?;
        mode_bands(&mut chart, &self.modes, self.span, -0.5, 4.5)?;
        chart
            .configure_mesh()
            .x_desc("time since replay start [s]")
            .y_desc("mode")
            .y_labels(5)
            .y_label_formatter(&|v: &f64| if (v - v.round()).abs() < 1e-6 { mode_name(v.round() as u8).to_string() } else { String::new() })
            .draw()
            .map_err(|e| anyhow!("{e:?}"))?;
        for (i, (t, m)) in self.modes.iter().enumerate() {
            let end = self.modes.get(i + 1).map_or(self.span, |n| n.0);
            let c = palette::mode_colour(*m);
            let y = f64::from(*m);
            chart.draw_series(LineSeries::new([(*t, y), (end, y)], c.stroke_width(3))).map_err(|e| anyhow!("{e:?}"))?;
            chart.draw_series([Circle::new((*t, y), 3, c.filled())]).map_err(|e| anyhow!("{e:?}"))?;
        }
        Ok(())
    }

    fn path_plot<DB: DrawingBackend>(&self, area: &Area<DB>) -> Result<()> {
        let frame = if self.odom_frame.is_empty() { "odometry" } else { self.odom_frame.as_str() };
        let title = format!("trajectory in the {frame} frame");
        let pts: Vec<(f64, f64)> = self.path.iter().chain(self.sources.iter()).copied().collect();
        if pts.is_empty() {
            return empty(area, &title, "no odometry");
        }
        let (x0, x1) = pts.iter().fold((f64::MAX, f64::MIN), |(a, b), p| (a.min(p.0), b.max(p.0)));
        let (y0, y1) = pts.iter().fold((f64::MAX, f64::MIN), |(a, b), p| (a.min(p.1), b.max(p.1)));
        // Equal scales on both axes.
        let half = ((x1 - x0).max(y1 - y0) * 0.55).max(0.5);
        let (cx, cy) = ((x0 + x1) / 2.0, (y0 + y1) / 2.0);
        let (w, h) = area.dim_in_pixel();
        let (plot_area, legend_area) = area.split_horizontally(w.saturating_sub(LEGEND_W));
        let side = (w.saturating_sub(LEGEND_W)).min(h);
        let plot_area = plot_area.shrink((0, 0), (side, side));
        let mut chart = ChartBuilder::on(&plot_area)
            .caption(&title, ("sans-serif", 17))
            .margin(8)
            .x_label_area_size(34)
            .y_label_area_size(50)
            .build_cartesian_2d(cx - half..cx + half, cy - half..cy + half)
            .map_err(|e| anyhow!("{e:?}"))?;
        chart.configure_mesh().x_desc("x [m]").y_desc("y [m]").draw().map_err(|e| anyhow!("{e:?}"))?;
        chart.draw_series(LineSeries::new(self.path.iter().copied(), COLORS[0].stroke_width(2))).map_err(|e| anyhow!("{e:?}"))?;
        let mut legend = vec![("path".to_string(), COLORS[0], false)];
        if let (Some(a), Some(b)) = (self.path.first(), self.path.last()) {
            chart.draw_series([Circle::new(*a, 5, palette::GREEN.filled())]).map_err(|e| anyhow!("{e:?}"))?;
            chart.draw_series([Circle::new(*b, 5, palette::VERMILLION.filled())]).map_err(|e| anyhow!("{e:?}"))?;
            legend.push(("start (dot)".to_string(), palette::GREEN, false));
            legend.push(("end (dot)".to_string(), palette::VERMILLION, false));
        }
        if !self.sources.is_empty() {
            chart.draw_series(self.sources.iter().map(|p| Cross::new(*p, 5, palette::PURPLE.stroke_width(2)))).map_err(|e| anyhow!("{e:?}"))?;
            legend.push(("source estimates (x)".to_string(), palette::PURPLE, false));
        }
        side_legend(&legend_area, &legend)?;
        Ok(())
    }

    fn draw<DB: DrawingBackend>(&self, name: &str, area: Area<DB>) -> Result<()> {
        area.fill(&WHITE).map_err(|e| anyhow!("{e:?}"))?;
        let t_of = self.t_of();
        let m = &self.modes;
        match name {
            "chem" => self.chem_plot(&area)?,
            "bearing" => {
                let parts = area.split_evenly((2, 1));
                let frame = if self.bearing_frame.is_empty() { "the robot's" } else { self.bearing_frame.as_str() };
                let title = format!("odor bearing in the {frame} frame (REP 103: 0 = ahead, + = to the left; where the odor comes from)");
                time_panel(&parts[0], &title, "bearing [deg]", self.span, m, &[Trace::Pieces("bearing", self.bearing.segments(&t_of), COLORS[0])], Some((-180.0, 180.0)))?;
                time_panel(&parts[1], "bearing confidence", "confidence [1]", self.span, m, &[Trace::Line("confidence", self.confidence.envelope(&t_of), COLORS[2])], None)?;
            }
            "plume" => {
                let parts = area.split_evenly((3, 1));
                time_panel(&parts[0], "bout rate", "bout rate [Hz]", self.span, m, &[Trace::Line("bout rate", self.bout_rate.envelope(&t_of), COLORS[0])], None)?;
                time_panel(&parts[1], "intermittency (fraction of time above threshold)", "intermittency [1]", self.span, m, &[Trace::Line("intermittency", self.intermittency.envelope(&t_of), COLORS[1])], None)?;
                time_panel(&parts[2], "distance estimate", "distance [m]", self.span, m, &[Trace::Line("distance", self.distance.envelope(&t_of), COLORS[2])], None)?;
            }
            "cmd_vel" => {
                let parts = area.split_evenly((2, 1));
                let mut lin = vec![Trace::Line("linear.x", self.linear.envelope(&t_of), COLORS[0])];
                let mut ang = vec![Trace::Line("angular.z", self.angular.envelope(&t_of), COLORS[1])];
                if let Some(c) = self.caps {
                    lin.push(Trace::Level(format!("max_linear {:.2}", c.max_linear), c.max_linear, palette::VERMILLION));
                    lin.push(Trace::Level(format!("-max_reverse {:.2}", c.max_reverse), -c.max_reverse, palette::VERMILLION));
                    ang.push(Trace::Level(format!("+max_angular {:.2}", c.max_angular), c.max_angular, palette::VERMILLION));
                    ang.push(Trace::Level(format!("-max_angular {:.2}", c.max_angular), -c.max_angular, palette::VERMILLION));
                }
                time_panel(&parts[0], "commanded forward speed against the guard's caps", "linear.x [m/s]", self.span, m, &lin, None)?;
                time_panel(&parts[1], "commanded turn rate against the guard's cap", "angular.z [rad/s]", self.span, m, &ang, None)?;
            }
            "wind" => {
                let parts = area.split_evenly((2, 1));
                let frame = if self.wind_frame.is_empty() { "the anemometer's" } else { self.wind_frame.as_str() };
                time_panel(&parts[0], "wind speed (horizontal)", "speed [m/s]", self.span, m, &[Trace::Line("speed", self.wind_speed.envelope(&t_of), COLORS[0])], None)?;
                let title = format!("wind direction in the {frame} frame (REP 103: where the air goes, 0 = +x, + = counter-clockwise)");
                time_panel(&parts[1], &title, "direction [deg]", self.span, m, &[Trace::Pieces("direction", self.wind_dir.segments(&t_of), COLORS[4])], Some((-180.0, 180.0)))?;
            }
            "modes" => self.modes_plot(&area)?,
            _ => self.path_plot(&area)?,
        }
        area.present().map_err(|e| anyhow!("{e:?}"))?;
        Ok(())
    }

    /// Writes the plots into `dir`; returns their paths.
    pub fn write(&self, dir: &Path, format: Format) -> Result<Vec<PathBuf>> {
        std::fs::create_dir_all(dir)?;
        let mut out = Vec::new();
        let plots = [
            ("chem", (1200, 500)),
            ("bearing", (1200, 600)),
            ("plume", (1200, 800)),
            ("cmd_vel", (1200, 600)),
            ("wind", (1200, 600)),
            ("modes", (1200, 340)),
            ("trajectory", (970, 800)),
        ];
        for (name, size) in plots {
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn angles_wrap_into_the_half_open_circle() {
        assert_eq!(wrap_deg(190.0), -170.0);
        assert_eq!(wrap_deg(-180.0), 180.0);
        assert_eq!(wrap_deg(180.0), 180.0);
        assert_eq!(wrap_deg(-540.0), 180.0);
        assert!((wrap_deg(725.0) - 5.0).abs() < 1e-12);
    }

    #[test]
    fn a_trace_crossing_the_wrap_is_cut_there_and_at_gaps() {
        // 170, 178, -176 (= 184: a 6 deg step the short way), -170, gap, 10, 20.
        let p = |t: f64, v: f64| Some((t, v));
        let pts = [p(0.0, 170.0), p(1.0, 178.0), p(2.0, -176.0), p(3.0, -170.0), None, p(5.0, 10.0), p(6.0, 20.0)];
        let segs = angle_segments(&pts);
        assert_eq!(segs.len(), 3);
        assert_eq!(segs[0], vec![(0.0, 170.0), (1.0, 178.0)]);
        assert_eq!(segs[1], vec![(2.0, -176.0), (3.0, -170.0)]);
        // No piece holds a step longer than half the circle.
        assert!(segs.iter().all(|s| s.windows(2).all(|w| (w[1].1 - w[0].1).abs() <= 180.0)));
    }
}
