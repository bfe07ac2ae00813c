//! `sillage sim` plots (SVG or PNG through `plotters`): every episode's trajectory over the
//! mean concentration map, the first episode's concentration, resistance, distance and mode
//! timelines with its odor cues' errors over time (bearing minus the true source and upwind
//! directions, robot frame; ln of the distance estimate over the true distance), and
//! histograms of outcomes and of the time to declare.

use anyhow::{anyhow, Result};
use plotters::coord::Shift;
use plotters::prelude::*;
use sillage_sim::metrics::mode_name;
use sillage_sim::summary::outcome_name;
use sillage_sim::EpisodeResult;
use sillage_world::{GridSpec, Scenario, World};
use std::path::{Path, PathBuf};

/// Image format of the plots.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum Format {
    /// Scalable vector graphics (no fonts needed).
    Svg,
    /// Bitmap (uses the system's fonts for text).
    Png,
}

/// Cells of the mean map along its longer side.
const MAP_CELLS: f64 = 120.0;

/// A mean concentration map: grid and values [g/m^3], row-major.
pub struct MeanMap {
    grid: GridSpec,
    values: Vec<f64>,
}

/// The time-averaged concentration at the sensors' height over one episode length (world of
/// seed `seed`, robot idle: the plume does not depend on the robot).
pub fn mean_map(s: &Scenario, seed: u64, seconds: f64) -> Option<MeanMap> {
    let a = &s.arena;
    let (w, h) = (a.max[0] - a.min[0], a.max[1] - a.min[1]);
    let res = w.max(h) / MAP_CELLS;
    let z = s.sensors.channels.first().map_or(0.3, |c| c.position[2]);
    let grid = GridSpec { origin: [a.min[0] + res / 2.0, a.min[1] + res / 2.0], resolution: res, nx: (w / res) as usize, ny: (h / res) as usize, z };
    let mut world = World::new(s, seed, 0).ok()?;
    world.start_mean_map(grid.clone(), 1.0);
    world.step(seconds);
    let (_, values, _) = world.mean_map()?;
    Some(MeanMap { grid, values })
}

type Area<'a, DB> = DrawingArea<DB, Shift>;

fn e<E: std::fmt::Debug>(x: E) -> anyhow::Error {
    anyhow!("{x:?}")
}

// sillage's own palette (crate::palette): success green, failure vermillion.
use crate::palette::{BLUE, GREEN as GREEN_, ORANGE, VERMILLION as RED_};

fn heat(v: f64) -> RGBColor {
    // v in [0, 1]: white -> yellow -> orange -> dark red.
    let v = v.clamp(0.0, 1.0);
    let r = 255.0 - 95.0 * (v - 0.6).max(0.0) / 0.4;
    let g = 255.0 - 230.0 * v;
    let b = 255.0 - 255.0 * (v / 0.3).min(1.0);
    RGBColor(r as u8, g as u8, b as u8)
}

fn trajectories<DB: DrawingBackend>(area: &Area<DB>, s: &Scenario, eps: &[EpisodeResult], map: Option<&MeanMap>) -> Result<()> {
    let a = &s.arena;
    let mut chart = ChartBuilder::on(area)
        .caption("trajectories over the mean concentration (log scale; green: success, red: failure)", ("sans-serif", 16))
        .margin(8)
        .x_label_area_size(32)
        .y_label_area_size(44)
        .build_cartesian_2d(a.min[0]..a.max[0], a.min[1]..a.max[1])
        .map_err(e)?;
    chart.configure_mesh().x_desc("x [m] (odom)").y_desc("y [m]").draw().map_err(e)?;
    if let Some(m) = map {
        let peak = m.values.iter().copied().fold(0.0, f64::max);
        if peak > 0.0 {
            let floor = peak * 1e-4;
            let g = &m.grid;
            let half = g.resolution / 2.0;
            chart
                .draw_series((0..g.ny).flat_map(|j| (0..g.nx).map(move |i| (i, j))).filter_map(|(i, j)| {
                    let v = m.values[j * g.nx + i];
                    (v > floor).then(|| {
                        let p = g.point(i, j);
                        let t = (v / floor).ln() / (peak / floor).ln();
                        Rectangle::new([(p[0] - half, p[1] - half), (p[0] + half, p[1] + half)], heat(t).filled())
                    })
                }))
                .map_err(e)?;
        }
    }
    for o in &s.arena.obstacles {
        chart.draw_series([Rectangle::new([(o.min[0], o.min[1]), (o.max[0], o.max[1])], RGBColor(120, 120, 120).filled())]).map_err(e)?;
    }
    for r in eps {
        let c = if r.success { GREEN_ } else { RED_ };
        chart.draw_series(LineSeries::new(r.path.iter().map(|p| (p[0], p[1])), c.mix(0.6).stroke_width(1))).map_err(e)?;
        if let Some(p) = r.path.first() {
            chart.draw_series([Circle::new((p[0], p[1]), 3, BLUE.filled())]).map_err(e)?;
        }
        for d in &r.declarations {
            chart.draw_series([Cross::new((d.estimate[0], d.estimate[1]), 4, ORANGE.stroke_width(2))]).map_err(e)?;
        }
    }
    for src in &s.sources {
        let (x, y) = (src.position[0], src.position[1]);
        chart.draw_series([Circle::new((x, y), 6, BLACK.stroke_width(2))]).map_err(e)?;
    }
    Ok(())
}

fn timeline<DB: DrawingBackend>(area: &Area<DB>, r: &EpisodeResult) -> Result<()> {
    let parts = area.split_evenly((6, 1));
    let ep = format!("episode {}", r.spec.index);
    let Some(tl) = &r.timeline else {
        return Ok(());
    };
    let span = tl.t.last().copied().unwrap_or(1.0).max(1e-3);
    let colors = [BLUE, RED_, GREEN_, ORANGE];
    let series = |k: usize, get: &dyn Fn(usize, usize) -> f64| -> Vec<(f64, f64)> { tl.t.iter().enumerate().map(|(i, t)| (*t, get(i, k))).filter(|p| p.1.is_finite()).collect() };
    let draw = |area: &Area<DB>, title: &str, y: &str, log: bool, get: &dyn Fn(usize, usize) -> f64, n: usize| -> Result<()> {
        let all: Vec<Vec<(f64, f64)>> = (0..n).map(|k| series(k, get)).map(|v| if log { v.into_iter().map(|(t, c)| (t, c.max(1e-9).log10())).collect() } else { v }).collect();
        let (lo, hi) = all.iter().flatten().fold((f64::MAX, f64::MIN), |(a, b), p| (a.min(p.1), b.max(p.1)));
        let (lo, hi) = if lo < hi { (lo, hi) } else { (lo - 1.0, lo + 1.0) };
        let mut chart = ChartBuilder::on(area).caption(title, ("sans-serif", 15)).margin(6).x_label_area_size(28).y_label_area_size(64).build_cartesian_2d(0.0..span, lo..hi).map_err(e)?;
        chart.configure_mesh().x_desc("time [s]").y_desc(y).draw().map_err(e)?;
        for (k, pts) in all.into_iter().enumerate() {
            let c = colors[k % colors.len()];
            let name = tl.channels.get(k).cloned().unwrap_or_default();
            chart.draw_series(LineSeries::new(pts, c.stroke_width(1))).map_err(e)?.label(name).legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 14, y)], c));
        }
        if n > 1 {
            chart.configure_series_labels().background_style(WHITE.mix(0.8)).border_style(BLACK).draw().map_err(e)?;
        }
        Ok(())
    };
    let nch = tl.channels.len();
    draw(&parts[0], &format!("{ep}: true concentration at the sensors"), "log10 [g/m^3]", true, &|i, k| tl.concentration[i].get(k).copied().unwrap_or(f64::NAN), nch)?;
    draw(&parts[1], &format!("{ep}: published sensor resistance (chem)"), "resistance [ohm]", false, &|i, k| tl.resistance[i].get(k).copied().unwrap_or(f64::NAN), nch)?;
    draw(&parts[2], &format!("{ep}: distance to the source"), "distance [m]", false, &|i, _| tl.distance[i], 1)?;
    cue_errors(&parts[4], &parts[5], &ep, span, tl)?;
    let mut chart = ChartBuilder::on(&parts[3]).caption(format!("{ep}: search mode"), ("sans-serif", 15)).margin(6).x_label_area_size(28).y_label_area_size(90).build_cartesian_2d(0.0..span, -0.5..4.5).map_err(e)?;
    chart
        .configure_mesh()
        .x_desc("time [s]")
        .y_labels(5)
        .y_label_formatter(&|v: &f64| if (v - v.round()).abs() < 1e-6 { mode_name(v.round() as u8).to_string() } else { String::new() })
        .draw()
        .map_err(e)?;
    let pts: Vec<(f64, f64)> = tl.t.iter().zip(&tl.mode).filter(|(_, m)| **m != 255).map(|(t, m)| (*t, f64::from(*m))).collect();
    chart.draw_series(LineSeries::new(pts, BLUE.stroke_width(2))).map_err(e)?;
    Ok(())
}

/// The cue errors over time: bearing errors as dots (no lines across the +-180 deg wrap),
/// in-plume samples shaded; the distance estimate's log ratio.
fn cue_errors<DB: DrawingBackend>(bearing: &Area<DB>, distance: &Area<DB>, ep: &str, span: f64, tl: &sillage_sim::Timeline) -> Result<()> {
    let title = format!("{ep}: published odor_bearing minus the truth (base_link; shaded: in plume)");
    let mut chart = ChartBuilder::on(bearing).caption(title, ("sans-serif", 15)).margin(6).x_label_area_size(28).y_label_area_size(64).build_cartesian_2d(0.0..span, -180.0..180.0).map_err(e)?;
    chart.configure_mesh().x_desc("time [s]").y_desc("error [deg]").y_labels(7).draw().map_err(e)?;
    let dt = tl.t.windows(2).next().map_or(0.1, |w| w[1] - w[0]);
    chart
        .draw_series(tl.t.iter().zip(&tl.in_plume).filter(|(_, p)| **p).map(|(t, _)| Rectangle::new([(t - dt, -180.0), (*t, 180.0)], RGBColor(230, 230, 230).filled())))
        .map_err(e)?;
    for (values, color, name) in [(&tl.bearing_error_source, BLUE, "vs source direction"), (&tl.bearing_error_upwind, ORANGE, "vs upwind direction")] {
        let pts = tl.t.iter().zip(values.iter()).filter(|(_, v)| v.is_finite()).map(|(t, v)| Circle::new((*t, v.to_degrees()), 1, color.filled()));
        chart.draw_series(pts).map_err(e)?.label(name).legend(move |(x, y)| Circle::new((x + 7, y), 3, color.filled()));
    }
    chart.configure_series_labels().position(SeriesLabelPosition::UpperRight).background_style(WHITE.mix(0.8)).border_style(BLACK).draw().map_err(e)?;
    let pts: Vec<(f64, f64)> = tl.t.iter().zip(&tl.distance_log_ratio).filter(|(_, v)| v.is_finite()).map(|(t, v)| (*t, *v)).collect();
    let top = pts.iter().fold(1.0f64, |m, p| m.max(p.1.abs())).min(5.0);
    let mut chart = ChartBuilder::on(distance)
        .caption(format!("{ep}: distance estimate (plume_features) against the true distance{}", if pts.is_empty() { ": none published (uncalibrated)" } else { "" }), ("sans-serif", 15))
        .margin(6)
        .x_label_area_size(28)
        .y_label_area_size(64)
        .build_cartesian_2d(0.0..span, -top..top)
        .map_err(e)?;
    chart.configure_mesh().x_desc("time [s]").y_desc("ln(estimate / true)").draw().map_err(e)?;
    chart.draw_series(pts.into_iter().map(|(t, v)| Circle::new((t, v.clamp(-top, top)), 1, GREEN_.filled()))).map_err(e)?;
    Ok(())
}

fn histograms<DB: DrawingBackend>(area: &Area<DB>, s: &Scenario, eps: &[EpisodeResult]) -> Result<()> {
    let parts = area.split_evenly((1, 2));
    let names = ["success", "correct_after_reset", "false_declaration", "time_limit", "stalled"];
    let counts: Vec<u32> = names.iter().map(|n| eps.iter().filter(|r| outcome_name(r.outcome) == *n).count() as u32).collect();
    let top = counts.iter().copied().max().unwrap_or(1).max(1);
    let mut chart = ChartBuilder::on(&parts[0])
        .caption("episode outcomes", ("sans-serif", 16))
        .margin(8)
        .x_label_area_size(32)
        .y_label_area_size(40)
        .build_cartesian_2d((0u32..names.len() as u32).into_segmented(), 0u32..top + 1)
        .map_err(e)?;
    chart
        .configure_mesh()
        .x_label_formatter(&|v| match v {
            SegmentValue::CenterOf(i) => names.get(*i as usize).copied().unwrap_or("").to_string(),
            _ => String::new(),
        })
        .y_desc("episodes")
        .draw()
        .map_err(e)?;
    chart.draw_series(Histogram::vertical(&chart).style(BLUE.filled()).margin(12).data(counts.iter().enumerate().map(|(i, c)| (i as u32, *c)))).map_err(e)?;
    let limit = eps.iter().map(|r| r.sim_time).fold(s.time_limit, f64::max);
    let bins = 20u32;
    let width = limit / f64::from(bins);
    let mut hist = vec![0u32; bins as usize];
    for t in eps.iter().filter_map(|r| r.time_to_declare) {
        hist[((t / width) as usize).min(bins as usize - 1)] += 1;
    }
    let top = hist.iter().copied().max().unwrap_or(1).max(1);
    let mut chart = ChartBuilder::on(&parts[1])
        .caption("time to a correct declaration", ("sans-serif", 16))
        .margin(8)
        .x_label_area_size(32)
        .y_label_area_size(40)
        .build_cartesian_2d(0.0..limit, 0u32..top + 1)
        .map_err(e)?;
    chart.configure_mesh().x_desc("time [s]").y_desc("episodes").draw().map_err(e)?;
    chart
        .draw_series(hist.iter().enumerate().map(|(i, c)| Rectangle::new([(i as f64 * width, 0), ((i as f64 + 1.0) * width, *c)], GREEN_.filled())))
        .map_err(e)?;
    Ok(())
}

fn draw<DB: DrawingBackend>(name: &str, area: Area<DB>, s: &Scenario, eps: &[EpisodeResult], map: Option<&MeanMap>) -> Result<()> {
    area.fill(&WHITE).map_err(e)?;
    match name {
        "trajectories" => trajectories(&area, s, eps, map)?,
        n if n.starts_with("episode") => {
            if let Some(r) = eps.first() {
                timeline(&area, r)?;
            }
        }
        _ => histograms(&area, s, eps)?,
    }
    area.present().map_err(e)?;
    Ok(())
}

/// Writes the plots into `dir`; returns their paths.
pub fn write(dir: &Path, format: Format, s: &Scenario, eps: &[EpisodeResult], map: Option<&MeanMap>) -> Result<Vec<PathBuf>> {
    std::fs::create_dir_all(dir)?;
    let a = &s.arena;
    let aspect = (a.max[1] - a.min[1]) / (a.max[0] - a.min[0]).max(1e-9);
    let traj_size = (1000, ((1000.0 * aspect) as u32 + 60).clamp(300, 1400));
    let mut out = Vec::new();
    let first = format!("episode{}", eps.first().map_or(0, |r| r.spec.index));
    for (name, size) in [("trajectories", traj_size), (first.as_str(), (1200, 1500)), ("histograms", (1200, 450))] {
        let path = dir.join(format!("{name}.{}", match format { Format::Svg => "svg", Format::Png => "png" }));
        match format {
            Format::Svg => draw(name, SVGBackend::new(&path, size).into_drawing_area(), s, eps, map)?,
            Format::Png => draw(name, BitMapBackend::new(&path, size).into_drawing_area(), s, eps, map)?,
        }
        out.push(path);
    }
    Ok(out)
}
