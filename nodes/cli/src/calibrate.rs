//! `sillage calibrate`: fits the plume estimator's distance model
//! `ln(d) = intercept + rate_coef * bout_rate [+ amplitude_coef * ln(bout_amplitude)]
//! [+ wind_coef * ln(wind_speed)]` from
//! labelled recordings and writes a parameter file the node loads as it is.
//!
//! Inputs, one of:
//! - `BAG... --truth FILE_OR_TOPIC`: each bag is run through the plume estimator on its own (in
//!   the in-process executor, in bag time, parameters from `--params` or the defaults); every
//!   published window is labelled with the ground truth (see
//!   `sillage_plume_estimator::labels`). The truth is a CSV file (`distance` with `time` on the
//!   bag's log-time clock or `elapsed` since the bag's first message), or a topic in the bags:
//!   `geometry_msgs/PointStamped` (distance = |point|, the source relative to the sensor) or
//!   `nav_msgs/Odometry` (distance from the pose to `--source X,Y[,Z]`); see [`crate::truth`],
//!   which `sillage tune` shares for its bag objectives.
//! - `--features CSV`: windows already computed (`bout_rate`, `distance`, optionally
//!   `bout_amplitude` and `wind_speed`).
//!
//! With `--use-wind` the mean true wind speed of each window is a predictor too: from the
//! CSV's `wind_speed` column, or for bags from `--wind-topic` (and `--odom-topic` to correct a
//! wind measured on the moving robot), averaged over each window as the estimator does.
//!
//! Outputs: the fit on stdout, a plot (`--plot`, SVG unless the name ends in .png; default next
//! to `--out`), the parameter file `--out` (the base parameters with the fitted `distance`
//! group), and with `--save-features` the labelled windows as a features CSV.

use anyhow::{bail, Context, Result};
use plotters::coord::Shift;
use plotters::prelude::*;
use sillage_bag::{bag_info, Bag, ReadOptions};
use sillage_core::any::normalize_type_name;
use sillage_core::executor::{resolve_topic, Executor, Placement, Record};
use sillage_core::msg::{ChemSample, DiagnosticStatus, Odometry, PlumeFeatures, Vector3Stamped};
use sillage_core::{Msg, RosMessage};
use sillage_plume_estimator::calibration::{fit_model, CalibrationPoint, FitReport, Model};
use sillage_plume_estimator::labels::{label_windows_in_wind, parse_features_csv, LabelCounts, LabelOptions, Truth};
use sillage_plume_estimator::{calibration, Params, PlumeError, PlumeEstimator, NODE_NAME};
use std::path::{Path, PathBuf};

/// Arguments of `sillage calibrate`.
#[derive(clap::Args)]
pub struct Args {
    /// Labelled recordings (rosbag2 folders, .mcap or .db3 files); each is run separately.
    pub bags: Vec<PathBuf>,
    /// Ground truth for the bags: a CSV file (distance with time or elapsed [s]) or a topic in
    /// the bags (geometry_msgs/PointStamped, or nav_msgs/Odometry with --source).
    #[arg(long, value_name = "FILE_OR_TOPIC")]
    pub truth: Option<String>,
    /// Windows already computed, instead of bags: CSV with bout_rate, distance[,
    /// bout_amplitude][, wind_speed].
    #[arg(long, value_name = "CSV", conflicts_with_all = ["bags", "truth"])]
    pub features: Option<PathBuf>,
    /// Parameter file to write (e.g. config/plume_estimator.yaml).
    #[arg(long)]
    pub out: PathBuf,
    /// Base parameters (the estimator's settings for bags, and what the written file keeps).
    #[arg(long)]
    pub params: Option<PathBuf>,
    /// Namespace of the node (selects its section of --params).
    #[arg(long, default_value = "")]
    pub namespace: String,
    /// ChemSample topic in the bags (default: the only one).
    #[arg(long)]
    pub chem_topic: Option<String>,
    /// Source position for an Odometry truth topic: X,Y[,Z] in the odometry frame [m].
    #[arg(long, value_delimiter = ',', num_args = 2..=3)]
    pub source: Option<Vec<f64>>,
    /// Fit ln(bout amplitude) too.
    #[arg(long)]
    pub use_amplitude: bool,
    /// Fit ln(wind speed) too: the mean true wind speed of each window, from the features
    /// CSV's `wind_speed` column or, for bags, from --wind-topic (and --odom-topic).
    #[arg(long)]
    pub use_wind: bool,
    /// Vector3Stamped wind topic in the bags (with --use-wind).
    #[arg(long)]
    pub wind_topic: Option<String>,
    /// Odometry topic in the bags, to correct a wind measured on the moving robot (with
    /// --use-wind; without it a relative wind cannot be corrected and is not used; see the
    /// estimator's `wind` parameters).
    #[arg(long)]
    pub odom_topic: Option<String>,
    /// Plot file (.svg or .png; default: --out with the extension .svg).
    #[arg(long)]
    pub plot: Option<PathBuf>,
    /// Largest gap between truth samples to interpolate across [s] (default: unlimited for a
    /// CSV, 5 s for a topic).
    #[arg(long)]
    pub truth_max_gap: Option<f64>,
    /// Skip windows over which the truth changes by more than this fraction of its mean.
    #[arg(long, default_value_t = 0.2)]
    pub max_spread: f64,
    /// Keep overlapping windows too (default: non-overlapping only).
    #[arg(long)]
    pub overlapping: bool,
    /// Also write the labelled windows as a features CSV.
    #[arg(long, value_name = "CSV")]
    pub save_features: Option<PathBuf>,
}

/// One labelled window and where it came from.
struct Row {
    origin: String,
    point: CalibrationPoint,
}

/// Runs the subcommand.
pub fn run(args: Args) -> Result<()> {
    let fqn = resolve_topic(NODE_NAME, &args.namespace, NODE_NAME);
    let base: Params = match &args.params {
        Some(p) => sillage_core::params::load_file(p, &fqn)?,
        None => Params::default(),
    };
    let rows = match (&args.features, args.bags.is_empty()) {
        (Some(csv), _) => features_rows(csv)?,
        (None, false) => bag_rows(&args, &base)?,
        (None, true) => bail!("give labelled bags with --truth, or --features CSV"),
    };
    let points: Vec<CalibrationPoint> = rows.iter().map(|r| r.point).collect();
    let report = fit_model(&points, Model { amplitude: args.use_amplitude, wind: args.use_wind }).map_err(|e| match e {
        PlumeError::BadPoint { index, .. } => anyhow::anyhow!("{} ({})", e, rows[index].origin),
        e => e.into(),
    })?;
    print_fit(&report, &rows);

    let plot = args.plot.clone().unwrap_or_else(|| args.out.with_extension("svg"));
    draw(&plot, &points, &report).with_context(|| format!("drawing {}", plot.display()))?;
    let text = calibration::parameter_file(&base, &report.fit);
    // The node must load what is written, as it is.
    let back: Params = sillage_core::params::load_str(&text, &args.out.display().to_string(), &fqn)?;
    anyhow::ensure!(back.distance == report.fit.to_params(), "the written parameter file does not load back to the fit");
    if let Some(dir) = args.out.parent().filter(|d| !d.as_os_str().is_empty()) {
        std::fs::create_dir_all(dir).with_context(|| format!("creating {}", dir.display()))?;
    }
    std::fs::write(&args.out, text).with_context(|| format!("writing {}", args.out.display()))?;
    if let Some(csv) = &args.save_features {
        let mut s = String::from("origin,bout_rate,bout_amplitude,distance,wind_speed\n");
        for r in &rows {
            s += &format!("{},{},{},{},{}\n", r.origin.replace(',', ";"), r.point.bout_rate, r.point.bout_amplitude, r.point.distance, r.point.wind_speed);
        }
        std::fs::write(csv, s).with_context(|| format!("writing {}", csv.display()))?;
        println!("labelled windows: {}", csv.display());
    }
    println!("plot: {}", plot.display());
    println!("parameters: {} (node key '{NODE_NAME}')", args.out.display());
    Ok(())
}

fn features_rows(csv: &Path) -> Result<Vec<Row>> {
    let label = csv.display().to_string();
    let text = std::fs::read_to_string(csv).with_context(|| format!("reading {label}"))?;
    let (points, lines) = parse_features_csv(&text, &label)?;
    Ok(points.into_iter().zip(lines).map(|(point, line)| Row { origin: format!("{label}:{line}"), point }).collect())
}

/// Where the truth comes from.
enum TruthSource {
    Csv(PathBuf, String),
    Topic(String),
}

fn bag_rows(args: &Args, base: &Params) -> Result<Vec<Row>> {
    let spec = args.truth.as_deref().context("--truth FILE_OR_TOPIC is needed with bags")?;
    let source = if Path::new(spec).is_file() {
        TruthSource::Csv(PathBuf::from(spec), std::fs::read_to_string(spec).with_context(|| format!("reading {spec}"))?)
    } else {
        TruthSource::Topic(spec.to_string())
    };
    let mut rows = Vec::new();
    for path in &args.bags {
        let bag = Bag::open(path)?;
        let (features, winds, truth, diag) = run_bag(args, base, &bag, &source).with_context(|| format!("bag {}", path.display()))?;
        let default_gap = if matches!(source, TruthSource::Csv(..)) { f64::INFINITY } else { 5.0 };
        let opts = LabelOptions {
            window: base.features.window,
            overlapping: args.overlapping,
            max_gap: sillage_core::time::nanos(args.truth_max_gap.unwrap_or(default_gap)),
            max_spread: args.max_spread,
        };
        let (labelled, counts) = label_windows_in_wind(&features, &winds, &truth, &opts);
        println!("{}: {}", path.display(), describe(&counts, labelled.len(), truth.samples().len()));
        if let Some(d) = diag {
            println!("  estimator input: {}", d);
        }
        rows.extend(labelled.into_iter().map(|l| Row { origin: format!("{} t={:.3}", path.display(), l.stamp as f64 * 1e-9), point: l.point }));
    }
    Ok(rows)
}

fn describe(c: &LabelCounts, kept: usize, truth: usize) -> String {
    format!(
        "{} windows, {kept} labelled (skipped: {} overlapping, {} without a bout rate, {} without truth, {} moving; {truth} truth samples)",
        c.windows, c.overlapping, c.no_rate, c.no_truth, c.moving
    )
}

/// Runs one bag through the estimator; returns its outputs, the mean true wind speed over each
/// output's window (with --use-wind), the truth series and the input diagnostic at the end.
#[allow(clippy::type_complexity)]
fn run_bag(args: &Args, base: &Params, bag: &Bag, source: &TruthSource) -> Result<(Vec<PlumeFeatures>, Vec<Option<f64>>, Truth, Option<String>)> {
    let info = bag_info(bag)?;
    let type_of = |name: &str| info.topics.iter().find(|t| t.name == name).map(|t| normalize_type_name(&t.type_name).to_string());
    let chem_topic = match &args.chem_topic {
        Some(t) => {
            anyhow::ensure!(type_of(t).as_deref() == Some(ChemSample::TYPE_NAME), "topic {t} is not a {} topic of the bag", ChemSample::TYPE_NAME);
            t.clone()
        }
        None => {
            let chem: Vec<&str> = info.topics.iter().filter(|t| normalize_type_name(&t.type_name) == ChemSample::TYPE_NAME).map(|t| t.name.as_str()).collect();
            match chem.as_slice() {
                [one] => one.to_string(),
                [] => bail!("no {} topic in the bag", ChemSample::TYPE_NAME),
                many => bail!("several {} topics ({}): choose one with --chem-topic", ChemSample::TYPE_NAME, many.join(", ")),
            }
        }
    };
    let truth_topic = match source {
        TruthSource::Topic(t) => {
            let list = crate::truth::topic_list(&info);
            anyhow::ensure!(type_of(t).is_some(), "--truth {t}: neither a file nor a topic of the bag (topics: {list})");
            crate::truth::truth_kind(&info, t, args.source.is_some(), "--truth", "--source X,Y[,Z]")?;
            Some(t.clone())
        }
        TruthSource::Csv(..) => None,
    };

    let mut ex = Executor::new();
    let core = PlumeEstimator::new(base.clone())?;
    let placement = Placement { namespace: args.namespace.clone(), name: None, remaps: vec![("chem".into(), chem_topic.clone())] };
    let idx = ex.add_placed(Box::new(core), &placement)?;
    let out_topic = resolve_topic("plume_features", &args.namespace, NODE_NAME);
    let mut features = Vec::new();
    let mut winds = Vec::new();
    // The window's wind, from the estimator's own wind averaging fed with the bag's topics.
    let wind = std::cell::RefCell::new(sillage_plume_estimator::wind::WindSpeed::new(base.wind.clone(), base.features.window));
    let mut sink = |r: &Record| {
        if let (true, Msg::PlumeFeatures(f)) = (r.topic == out_topic, r.msg) {
            features.push(f.clone());
            winds.push(wind.borrow_mut().mean(r.stamp));
        }
    };
    let wind_topics: Vec<String> = if args.use_wind {
        let w = args.wind_topic.clone().context("--use-wind with bags needs --wind-topic")?;
        anyhow::ensure!(type_of(&w).as_deref() == Some(Vector3Stamped::TYPE_NAME), "--wind-topic {w} is not a {} topic of the bag", Vector3Stamped::TYPE_NAME);
        if let Some(o) = &args.odom_topic {
            anyhow::ensure!(type_of(o).as_deref() == Some(Odometry::TYPE_NAME), "--odom-topic {o} is not a {} topic of the bag", Odometry::TYPE_NAME);
        }
        std::iter::once(w).chain(args.odom_topic.clone()).collect()
    } else {
        Vec::new()
    };
    let mut truth = Truth::new();
    let topics = std::iter::once(chem_topic.clone()).chain(truth_topic.clone()).chain(wind_topics.iter().cloned()).collect();
    let mut last = None;
    for item in bag.messages(&ReadOptions { topics: Some(topics), ..Default::default() })? {
        let m = item?;
        let t = m.log_time;
        if m.topic.as_ref() == chem_topic {
            ex.run_until(t, &mut sink)?;
            ex.inject(t, &chem_topic, m.msg)?;
            last = Some(t);
        } else if wind_topics.iter().any(|w| m.topic.as_ref() == w) {
            match &m.msg {
                Msg::Vector3Stamped(v) => {
                    wind.borrow_mut().on_wind(t, v);
                }
                Msg::Odometry(o) => wind.borrow_mut().on_odom(t, o),
                _ => {}
            }
        } else if let Some(d) = truth_distance(&m.msg, args.source.as_deref()) {
            truth.push(t, d);
        }
    }
    if let Some(t) = last {
        ex.run_until(t, &mut sink)?;
    }
    if let TruthSource::Csv(path, text) = source {
        let origin = info.span.map_or(0, |s| s.0);
        truth = Truth::from_csv(text, &path.display().to_string(), origin)?.0;
    }
    let diag = ex.node(idx).and_then(|n| {
        let mut d: Vec<DiagnosticStatus> = Vec::new();
        n.diagnostics(last.unwrap_or(0), &mut d);
        d.into_iter().find(|s| s.name.ends_with(": input")).map(|s| {
            let v = |k: &str| s.values.iter().find(|kv| kv.key == k).map_or("?".to_string(), |kv| kv.value.clone());
            format!("{} accepted of {} received, grid {} Hz ({})", v("accepted"), v("received"), v("grid_rate_hz"), s.message)
        })
    });
    drop(sink);
    Ok((features, winds, truth, diag))
}

/// The true distance a truth message carries [m].
fn truth_distance(msg: &Msg, source: Option<&[f64]>) -> Option<f64> {
    crate::truth::relative_source(msg, source).map(|r| crate::truth::norm(&r)).filter(|d| *d > 0.0)
}

fn print_fit(r: &FitReport, rows: &[Row]) {
    let f = &r.fit;
    println!("fitted {} windows:", f.n);
    let amp = if f.use_amplitude { format!(" {:+.6} ln(bout_amplitude)", f.amplitude_coef) } else { String::new() };
    let amp = if f.use_wind { format!("{amp} {:+.6} ln(wind_speed)", f.wind_coef) } else { amp };
    println!("  ln(d / 1 m) = {:.6} {:+.6} bout_rate{amp}", f.intercept, f.rate_coef);
    println!("  R^2 (ln d) {:.4}, residual std {:.4} ln m (distance_sigma = {:.1} % of the distance)", f.r_squared, f.residual_std, 100.0 * f.residual_std);
    println!("  in-sample RMSE {:.3} m; leave-one-out RMSE {:.3} m ({:.4} ln m), mean relative error {:.1} %", f.rmse, f.loo_rmse, f.loo_rmse_ln, 100.0 * f.loo_mean_relative);
    // Per true distance (rounded to the centimetre): how the leave-one-out estimates spread.
    let mut groups: Vec<(i64, Vec<(f64, f64)>)> = Vec::new();
    for (row, loo) in rows.iter().zip(&r.loo) {
        let key = (row.point.distance * 100.0).round() as i64;
        match groups.iter_mut().find(|g| g.0 == key) {
            Some(g) => g.1.push((row.point.bout_rate, *loo)),
            None => groups.push((key, vec![(row.point.bout_rate, *loo)])),
        }
    }
    if groups.len() <= 30 {
        groups.sort_by_key(|g| g.0);
        println!("  {:>10} {:>8} {:>14} {:>16}", "true [m]", "windows", "bout rate [Hz]", "LOO estimate [m]");
        for (key, v) in &groups {
            let n = v.len() as f64;
            let rate = v.iter().map(|x| x.0).sum::<f64>() / n;
            let est = v.iter().map(|x| x.1).sum::<f64>() / n;
            println!("  {:>10.2} {:>8} {:>14.4} {:>16.3}", *key as f64 / 100.0, v.len(), rate, est);
        }
    }
}

fn draw(path: &Path, points: &[CalibrationPoint], r: &FitReport) -> Result<()> {
    let size = (1200, 520);
    let png = path.extension().is_some_and(|e| e.eq_ignore_ascii_case("png"));
    if let Some(dir) = path.parent().filter(|d| !d.as_os_str().is_empty()) {
        std::fs::create_dir_all(dir)?;
    }
    if png {
        draw_on(BitMapBackend::new(path, size).into_drawing_area(), points, r)
    } else {
        draw_on(SVGBackend::new(path, size).into_drawing_area(), points, r)
    }
}

fn plot_err<E: std::fmt::Debug>(e: E) -> anyhow::Error {
    anyhow::anyhow!("{e:?}")
}

type Panel<'a, DB> = ChartContext<'a, DB, Cartesian2d<plotters::coord::types::RangedCoordf64, plotters::coord::types::RangedCoordf64>>;

/// A captioned chart from 0 to `x.0` and 0 to `y.0`, with axis descriptions `x.1`, `y.1`.
fn panel<'a, DB: DrawingBackend>(area: &'a DrawingArea<DB, Shift>, title: &str, x: (f64, &str), y: (f64, &str)) -> Result<Panel<'a, DB>>
where
    DB::ErrorType: 'static,
{
    let mut chart = ChartBuilder::on(area)
        .caption(title, ("sans-serif", 18))
        .margin(12)
        .x_label_area_size(36)
        .y_label_area_size(56)
        .build_cartesian_2d(0.0..x.0, 0.0..y.0)
        .map_err(plot_err)?;
    chart.configure_mesh().x_desc(x.1).y_desc(y.1).draw().map_err(plot_err)?;
    Ok(chart)
}

fn draw_on<DB: DrawingBackend>(area: DrawingArea<DB, Shift>, points: &[CalibrationPoint], r: &FitReport) -> Result<()>
where
    DB::ErrorType: 'static,
{
    area.fill(&WHITE).map_err(plot_err)?;
    let (left, right) = area.split_horizontally(600);
    let f = &r.fit;
    let rate_max = points.iter().map(|p| p.bout_rate).fold(0.0f64, f64::max).max(1e-3) * 1.05;
    let d_max = points.iter().map(|p| p.distance).chain(r.loo.iter().copied()).fold(0.0f64, f64::max).max(1e-3) * 1.1;
    let mut chart = panel(&left, "distance against bout rate", (rate_max, "bout rate [Hz]"), (d_max, "true distance [m]"))?;
    chart.draw_series(points.iter().map(|p| Circle::new((p.bout_rate, p.distance), 3, BLUE.filled()))).map_err(plot_err)?;
    // The model (at the median amplitude and wind speed when it uses them).
    let median = |v: &mut Vec<f64>| {
        v.sort_by(f64::total_cmp);
        v.get(v.len() / 2).copied().unwrap_or(1.0)
    };
    let amp = median(&mut points.iter().map(|p| p.bout_amplitude).filter(|a| *a > 0.0).collect());
    let wind = median(&mut points.iter().map(|p| p.wind_speed).filter(|u| *u > 0.0).collect());
    let curve = (0..=200).map(|k| {
        let x = rate_max * k as f64 / 200.0;
        (x, f.predict_ln_in(x, amp, wind).exp().min(d_max))
    });
    chart.draw_series(LineSeries::new(curve, RED.stroke_width(2))).map_err(plot_err)?;

    let mut chart = panel(&right, "leave-one-out estimate against truth", (d_max, "true distance [m]"), (d_max, "estimated distance [m]"))?;
    chart.draw_series(LineSeries::new([(0.0, 0.0), (d_max, d_max)], BLACK.stroke_width(1))).map_err(plot_err)?;
    chart
        .draw_series(points.iter().zip(&r.loo).map(|(p, e)| Circle::new((p.distance, e.min(d_max)), 3, BLUE.filled())))
        .map_err(plot_err)?;
    area.present().map_err(plot_err)?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use sillage_bag::{BagWriter, WriterOptions};
    use sillage_core::msg::{Header, Point, PointStamped};
    use sillage_core::Nanos;

    fn temp(name: &str) -> PathBuf {
        let d = std::env::temp_dir().join(format!("sillage-calibrate-{}-{name}", std::process::id()));
        let _ = std::fs::remove_dir_all(&d);
        std::fs::create_dir_all(&d).expect("temp dir");
        d
    }

    fn args(out: PathBuf) -> Args {
        Args {
            bags: Vec::new(),
            truth: None,
            features: None,
            out,
            params: None,
            namespace: String::new(),
            chem_topic: None,
            source: None,
            use_amplitude: false,
            use_wind: false,
            wind_topic: None,
            odom_topic: None,
            plot: None,
            truth_max_gap: None,
            max_spread: 0.2,
            overlapping: false,
            save_features: None,
        }
    }

    /// A 100 s recording at `distance`: clean air for 8 s, then a gas pulse every
    /// `1.5 * distance` seconds (bouts fall with distance), with a PointStamped truth at 1 Hz.
    fn write_bag(dir: &Path, distance: f64) -> PathBuf {
        let path = dir.join(format!("d{}", (distance * 10.0) as i64));
        let mut w = BagWriter::create(&path, WriterOptions::default()).expect("creates");
        let t0: Nanos = 1_700_000_000_000_000_000;
        let every = 1.5 * distance;
        for k in 0..10_000i64 {
            let t = t0 + k * 10_000_000;
            let s = k as f64 * 0.01;
            let gas = if s > 8.0 && (s - 8.0) % every < 0.3 { 0.05 } else { 0.0 };
            let noise = 1e-4 * ((s * 97.0).sin() + (s * 331.0).cos());
            let v = 1.0 + gas + noise;
            let m = Msg::ChemSample(ChemSample { header: Header::new(t, "nose"), channels: vec!["a".into()], values: vec![v], quantity: 4 });
            w.write_on("/chem", t, &m, &[]).expect("writes");
            if k % 100 == 0 {
                let p = Msg::PointStamped(PointStamped { header: Header::new(t, "nose"), point: Point { x: distance, y: 0.0, z: 0.0 } });
                w.write_on("/truth", t, &p, &[]).expect("writes");
            }
        }
        w.finish().expect("finishes");
        path
    }

    #[test]
    fn bags_with_a_truth_topic_give_a_parameter_file_the_node_loads() {
        let dir = temp("bags");
        let base = dir.join("base.yaml");
        std::fs::write(&base, "plume_estimator:\n  ros__parameters:\n    conditioning:\n      baseline_time_constant: 0.0\n").expect("writes");
        let mut a = args(dir.join("out/plume_estimator.yaml"));
        a.bags = [1.0, 1.5, 2.0, 3.0].iter().map(|&d| write_bag(&dir, d)).collect();
        a.truth = Some("/truth".into());
        a.params = Some(base);
        a.save_features = Some(dir.join("windows.csv"));
        run(a).expect("calibrates");
        let text = std::fs::read_to_string(dir.join("out/plume_estimator.yaml")).expect("written");
        let p: Params = sillage_core::params::load_str(&text, "out", "/plume_estimator").expect("loads as it is");
        assert!(p.distance.calibrated && p.distance.rate_coef < 0.0, "{:?}", p.distance);
        assert_eq!(p.conditioning.baseline_time_constant, 0.0, "base parameters kept");
        let svg = std::fs::read_to_string(dir.join("out/plume_estimator.svg")).expect("plot");
        assert!(svg.starts_with("<svg") && svg.contains("bout rate [Hz]"));
        // The saved windows refit to the same model.
        let mut b = args(dir.join("again.yaml"));
        b.features = Some(dir.join("windows.csv"));
        run(b).expect("refits");
        let again: Params = sillage_core::params::load_str(&std::fs::read_to_string(dir.join("again.yaml")).expect("written"), "again", "/plume_estimator").expect("loads");
        assert!((again.distance.rate_coef - p.distance.rate_coef).abs() < 1e-9 * p.distance.rate_coef.abs());
        let _ = std::fs::remove_dir_all(&dir);
    }

    #[test]
    fn the_wind_speed_is_fitted_from_a_features_csv() {
        // ln d = 1.0 - 0.5 r - 0.7 ln U, exact: the written model holds the wind coefficient;
        // without the column the fit with --use-wind is refused and names the line.
        let dir = temp("wind");
        let csv = dir.join("w.csv");
        let mut text = String::from("bout_rate,distance,wind_speed\n");
        for k in 0..10 {
            let (r, u) = (0.1 + 0.1 * k as f64, 0.3 + 0.2 * ((k * 3) % 4) as f64);
            text += &format!("{r},{},{u}\n", (1.0 - 0.5 * r - 0.7 * f64::ln(u)).exp());
        }
        std::fs::write(&csv, &text).expect("writes");
        let mut a = args(dir.join("o.yaml"));
        a.features = Some(csv.clone());
        a.use_wind = true;
        run(a).expect("fits");
        let written = std::fs::read_to_string(dir.join("o.yaml")).expect("written");
        let p: Params = sillage_core::params::load_str(&written, "o.yaml", "/plume_estimator").expect("loads");
        assert!(p.distance.use_wind && (p.distance.wind_coef + 0.7).abs() < 1e-9, "{:?}", p.distance);
        std::fs::write(&csv, "bout_rate,distance\n0.1,3.0\n0.2,2.0\n0.3,1.5\n0.4,1.0\n0.5,0.8\n").expect("writes");
        let mut a = args(dir.join("o2.yaml"));
        a.features = Some(csv);
        a.use_wind = true;
        let e = run(a).expect_err("no wind column");
        assert!(e.to_string().contains("wind_speed") && e.to_string().contains("w.csv:2"), "{e}");
    }

    #[test]
    fn bad_inputs_are_refused_with_the_reason() {
        let dir = temp("bad");
        let csv = dir.join("few.csv");
        std::fs::write(&csv, "bout_rate,distance\n0.5,1.0\n0.3,2.0\n0.2,3.0\n").expect("writes");
        let mut a = args(dir.join("o.yaml"));
        a.features = Some(csv.clone());
        let e = run(a).expect_err("too few");
        assert!(e.to_string().contains("at least 4 points"), "{e}");
        std::fs::write(&csv, "bout_rate,distance\n0.5,1.0\n0.3,-2.0\n0.2,3.0\n0.1,4.0\n").expect("writes");
        let mut a = args(dir.join("o.yaml"));
        a.features = Some(csv.clone());
        let e = run(a).expect_err("negative distance");
        assert!(e.to_string().contains("few.csv:3"), "names the line: {e}");
        let bag = write_bag(&dir, 1.0);
        let mut a = args(dir.join("o.yaml"));
        a.bags = vec![bag];
        a.truth = Some("/nowhere".into());
        let e = format!("{:#}", run(a).expect_err("no such topic"));
        assert!(e.contains("/nowhere") && e.contains("/truth"), "{e}");
        assert!(!dir.join("o.yaml").exists(), "nothing written on error");
        let _ = std::fs::remove_dir_all(&dir);
    }
}
