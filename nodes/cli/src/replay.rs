//! `sillage replay` (the node graph over recorded bags in virtual bag time) and `sillage bag`
//! (inspecting bags).
//!
//! Replay reads the bags (MCAP or sqlite3, merged by log time), builds the stack from the
//! parameter file, injects each message on a graph input at its log time, and writes to the
//! output folder: `bag/` (every delivered topic, inputs and node outputs, in MCAP with
//! metadata.yaml; left out with `--no-bag`), `summary.json` and `summary.txt`, and `plots/`.
//! The output bag is framed, compressed and written on a thread of its own while the graph
//! runs. A replay stopped by a bad record still closes the output bag and writes the summary,
//! which says why it stopped.

#![allow(clippy::result_large_err)] // sillage_bag's errors carry file, topic and offset

mod graph;
mod plots;
mod summary;

use anyhow::{Context, Result};
use sillage_bag::scan::{duration_text, stamp_text, utc_text, Scan};
use sillage_bag::{bag_info, Bag, BagWriter, QosProfile, ReadOptions, WriterOptions};
use sillage_core::executor::Record;
use sillage_core::time::{nanos, secs};
use sillage_stack::StackConfig;
use std::path::PathBuf;
use std::time::Instant;
use crate::progress::Progress;

/// Arguments of `sillage replay`.
#[derive(clap::Args)]
pub struct Args {
    /// Bags to replay (folders with metadata.yaml, or .mcap / .db3 files), read as one stream.
    #[arg(required = true)]
    pub bags: Vec<PathBuf>,
    /// ROS 2 parameter file for the nodes (default: built-in defaults).
    #[arg(long)]
    pub params: Option<PathBuf>,
    /// Output folder (default: out/replay-<bag name>).
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// Topic remap `from:=to` applied to every node (repeatable), e.g. `chem:=/robot/mox`.
    #[arg(long = "remap", value_name = "FROM:=TO")]
    pub remaps: Vec<String>,
    /// Namespace of the nodes (their relative topics resolve inside it).
    #[arg(long, default_value = "")]
    pub namespace: String,
    /// Start this many seconds after the bag's first message.
    #[arg(long, value_name = "S")]
    pub start: Option<f64>,
    /// Replay only this many seconds.
    #[arg(long, value_name = "S")]
    pub duration: Option<f64>,
    /// Plot image format.
    #[arg(long, value_enum, default_value = "svg")]
    pub plot_format: plots::Format,
    /// Do not draw plots.
    #[arg(long)]
    pub no_plots: bool,
    /// Do not write the output bag (summary and plots only).
    #[arg(long)]
    pub no_bag: bool,
    /// Chunk compression of the output bag.
    #[arg(long, value_enum, default_value = "zstd")]
    pub bag_compression: BagCompression,
    /// Stop at the first undecodable message, schema mismatch or backward log time.
    #[arg(long)]
    pub strict: bool,
    /// Do not show the progress line.
    #[arg(long)]
    pub quiet: bool,
    /// Exit 0 even when the input bag is damaged or holds fewer messages than its
    /// metadata.yaml (the readable part is replayed either way).
    #[arg(long)]
    pub allow_partial: bool,
}

/// The arbiter's speed caps (`guard.max_linear`, `guard.max_reverse`, `guard.max_angular`), read
/// from the running node's parameters.
fn guard_caps(ex: &sillage_core::executor::Executor) -> Option<plots::Caps> {
    let names = ex.node_names();
    let i = names.iter().position(|n| n.rsplit('/').next() == Some("arbiter"))?;
    let p = ex.node(i)?.params_yaml();
    let g = p.get("guard")?;
    let f = |k: &str| g.get(k).and_then(serde_yaml::Value::as_f64);
    Some(plots::Caps { max_linear: f("max_linear")?, max_reverse: f("max_reverse")?, max_angular: f("max_angular")? })
}

/// Damage met and, when the whole bag was read, topic counts short of metadata.yaml.
fn integrity_lines(bag: &Bag, report: &sillage_bag::ReadReport, whole: bool) -> Vec<String> {
    let mut out: Vec<String> = report.damage.iter().map(ToString::to_string).collect();
    if let (true, Some((expected, _))) = (whole, sillage_bag::scan::expected_counts(bag)) {
        let read = report.topics.iter().fold(std::collections::BTreeMap::new(), |mut m, t| {
            *m.entry(t.name.clone()).or_insert(0) += t.read + t.skipped;
            m
        });
        for m in sillage_bag::scan::shortfalls(&expected, &read) {
            out.push(format!("topic {}: {} read, metadata.yaml lists {} ({:+})", m.topic, m.read, m.expected, m.read as i64 - m.expected as i64));
        }
    }
    out
}

/// Chunk compression of the output bag.
#[derive(Clone, Copy, Debug, PartialEq, Eq, clap::ValueEnum)]
pub enum BagCompression {
    /// Uncompressed chunks (largest file, least CPU).
    None,
    /// LZ4 frames.
    Lz4,
    /// Zstandard (the smallest file).
    Zstd,
}

impl BagCompression {
    fn mcap(self) -> Option<sillage_bag::Compression> {
        match self {
            BagCompression::None => None,
            BagCompression::Lz4 => Some(sillage_bag::Compression::Lz4),
            BagCompression::Zstd => Some(sillage_bag::Compression::Zstd),
        }
    }
}

/// `sillage bag ...` subcommands.
#[derive(clap::Subcommand)]
pub enum BagCommand {
    /// Reads a whole bag: storage, start (UTC), length, integrity, and per topic its type,
    /// count, rate and its spread, first/last log time and largest gap. Exits non-zero when
    /// messages were lost (damage, or counts short of metadata.yaml).
    Info {
        /// The bag (folder or file).
        bag: PathBuf,
        /// Print JSON instead of text.
        #[arg(long)]
        json: bool,
        /// Exit 0 even when the bag is damaged or holds fewer messages than its metadata.
        #[arg(long)]
        allow_partial: bool,
    },
}

fn parse_remap(s: &str) -> Result<(String, String)> {
    let (a, b) = s.split_once(":=").with_context(|| format!("remap '{s}' is not of the form from:=to"))?;
    anyhow::ensure!(!a.is_empty() && !b.is_empty(), "remap '{s}' has an empty side");
    Ok((a.to_string(), b.to_string()))
}

/// Runs `sillage replay`.
pub fn run(args: Args) -> Result<()> {
    let started = Instant::now();
    let bag = Bag::open_many(&args.bags)?;
    let info = bag_info(&bag)?;
    let (first, last) = info.span.unwrap_or((0, 0));
    let start = first + args.start.map_or(0, nanos);
    let end = match args.duration {
        Some(d) => start.saturating_add(nanos(d)),
        None => last,
    };
    anyhow::ensure!(end >= start, "--start/--duration select nothing: the bag spans {:.3} s", secs(last - first));
    let remaps = args.remaps.iter().map(|r| parse_remap(r)).collect::<Result<Vec<_>>>()?;
    let cfg = StackConfig { namespace: args.namespace.clone(), params_file: args.params.clone(), remaps, ..Default::default() };
    let graph = graph::Graph::of(&cfg)?;
    let inputs = graph.inputs();
    let mut ex = sillage_stack::build(&cfg)?;

    let out_dir = args.out.clone().unwrap_or_else(|| PathBuf::from("out").join(format!("replay-{}", bag.name)));
    std::fs::create_dir_all(&out_dir).with_context(|| format!("creating {}", out_dir.display()))?;
    let mut writer = if args.no_bag {
        None
    } else {
        let opts = WriterOptions { overwrite: true, background: true, compression: args.bag_compression.mcap(), ..Default::default() };
        Some(BagWriter::create(out_dir.join("bag"), opts)?)
    };

    let read = ReadOptions { start, end, topics: None, strict: args.strict };
    let mut messages = bag.messages(&read)?;
    let mut collector = summary::Collector::new(None);
    let mut plot = plots::PlotData::new(start, end);
    plot.set_caps(guard_caps(&ex));
    let mut bar = if end - start >= 10 * sillage_core::time::SECOND { Progress::new("replay", "s bag time", secs(end - start), args.quiet) } else { None };
    let mut record = |r: &Record| -> Result<(), sillage_bag::BagError> {
        collector.record(r);
        plot.record(r);
        match writer.as_mut() {
            Some(w) => w.write_on(r.topic, r.stamp, r.msg, &[QosProfile::from(graph.qos(r.topic))]),
            None => Ok(()),
        }
    };
    let mut progress = |t: sillage_core::Nanos| {
        if let Some(b) = bar.as_mut() {
            b.set(secs((t - start).max(0)));
        }
    };
    let outcome = sillage_bag::replay::replay_until(&mut ex, &mut messages, &inputs, &mut record, &mut progress, crate::signals::flag());
    if let Some(b) = bar {
        b.finish();
    }
    collector.finish();
    let written = writer.map(BagWriter::finish);
    let wall = started.elapsed().as_secs_f64();

    let mut outputs = Vec::new();
    let mut interrupted = outcome.error.as_ref().map(ToString::to_string);
    if outcome.stopped {
        let at = outcome.span.map_or_else(|| "before the first message".to_string(), |(_, t)| format!("at {:.3} s of bag time", secs(t - first)));
        interrupted = crate::signals::interrupted_note().map(|n| format!("{n} ({at})"));
    }
    match &written {
        Some(Ok(s)) => outputs.push(format!("{} ({} messages)", s.dir.display(), s.metadata.message_count)),
        Some(Err(e)) => interrupted = Some(interrupted.map_or_else(|| e.to_string(), |i| format!("{i}; then closing the output bag: {e}"))),
        None => {}
    }
    if !args.no_plots {
        match plot.write(&out_dir.join("plots"), args.plot_format) {
            Ok(paths) => outputs.extend(paths.iter().map(|p| p.display().to_string())),
            Err(e) => eprintln!("warning: plots not drawn: {e}"),
        }
    }
    let report = messages.report();
    let integrity = integrity_lines(&bag, report, args.start.is_none() && args.duration.is_none() && !outcome.stopped && outcome.error.is_none());
    let mut skipped: Vec<summary::SkippedLine> = report
        .topics
        .iter()
        .filter_map(|t| t.skip.as_ref().map(|s| summary::SkippedLine { topic: t.name.clone(), type_name: t.type_name.clone(), count: t.skipped, reason: s.to_string() }))
        .collect();
    for (topic, (ty, n, why)) in &outcome.not_injected {
        let reason = match why {
            Some(sillage_bag::replay::NotInjected::Recomputed) => "published by the graph itself (recomputed)".to_string(),
            Some(sillage_bag::replay::NotInjected::WrongType(t)) => format!("the graph expects {t} on it"),
            _ => "no node subscribes to it".to_string(),
        };
        skipped.push(summary::SkippedLine { topic: topic.clone(), type_name: ty.clone(), count: *n, reason });
    }
    let stats = ex.stats();
    let executor = [("events", stats.events), ("late_inputs", stats.late_inputs), ("type_mismatches", stats.type_mismatches)]
        .into_iter()
        .map(|(k, v)| (k.to_string(), v))
        .collect();
    let json_path = out_dir.join("summary.json");
    let text_path = out_dir.join("summary.txt");
    outputs.push(json_path.display().to_string());
    outputs.push(text_path.display().to_string());
    let s = collector.summary(summary::Parts {
        bags: args.bags.iter().map(|b| b.display().to_string()).collect(),
        wall_s: wall,
        injected: outcome.injected,
        topic_counts: ex.topic_counts().into_iter().map(|(t, ty, n)| (t.to_string(), ty.to_string(), n)).collect(),
        graph: &graph,
        skipped,
        executor,
        warnings: report.warnings.iter().map(ToString::to_string).collect(),
        warnings_dropped: report.warnings_dropped,
        interrupted: interrupted.clone(),
        integrity: integrity.clone(),
        start_offset_s: args.start.unwrap_or(0.0),
        outputs,
    });
    std::fs::write(&json_path, serde_json::to_string_pretty(&s)? + "\n").with_context(|| format!("writing {}", json_path.display()))?;
    let text = s.text();
    std::fs::write(&text_path, &text).with_context(|| format!("writing {}", text_path.display()))?;
    print!("{text}");
    if outcome.injected == 0 && interrupted.is_none() {
        let mut want: Vec<String> = inputs.inject.iter().map(|(t, ty)| format!("{t} ({ty})")).collect();
        want.sort();
        if !integrity.is_empty() {
            anyhow::bail!("no bag message fed the graph: the bag is damaged ({})", integrity.join("; "));
        }
        let have: Vec<String> = report.topics.iter().map(|t| format!("{} ({})", t.name, t.type_name)).collect();
        if have.is_empty() {
            anyhow::bail!("no bag message fed the graph: no message in the selected time range of the bag");
        }
        anyhow::bail!("no bag message fed the graph: it reads {}; the bag has {} (use --remap or --namespace)", want.join(", "), have.join(", "));
    }
    if !integrity.is_empty() && !args.allow_partial && interrupted.is_none() {
        anyhow::bail!("the input bag is damaged: {} (outputs in {} hold what was readable; --allow-partial accepts it)", integrity.join("; "), out_dir.display());
    }
    if let Some(e) = interrupted {
        anyhow::bail!("replay stopped early: {e} (outputs in {} hold what was computed until then)", out_dir.display());
    }
    Ok(())
}

fn human_size(n: u64) -> String {
    let units = ["B", "KiB", "MiB", "GiB", "TiB"];
    let mut v = n as f64;
    let mut i = 0;
    while v >= 1024.0 && i + 1 < units.len() {
        v /= 1024.0;
        i += 1;
    }
    if i == 0 { format!("{n} B") } else { format!("{v:.1} {}", units[i]) }
}

/// Runs `sillage bag ...`.
pub fn run_bag(c: BagCommand) -> Result<()> {
    let BagCommand::Info { bag, json, allow_partial } = c;
    let b = Bag::open(&bag)?;
    let scan = sillage_bag::scan::scan(&b)?;
    if json {
        println!("{}", serde_json::to_string_pretty(&bag_info_json(&scan))?);
    } else {
        print!("{}", bag_info_text(&b.name, &scan));
    }
    if !scan.intact() && !allow_partial {
        anyhow::bail!("{}: damaged or incomplete: {} message(s) known lost (see integrity above; --allow-partial accepts it)", bag.display(), scan.lost());
    }
    Ok(())
}

fn opt_stamp(t: Option<sillage_core::Nanos>) -> serde_json::Value {
    t.map_or(serde_json::Value::Null, |t| serde_json::Value::String(stamp_text(t)))
}

/// `sillage bag info --json`: times as integer nanoseconds and as exact decimal strings.
fn bag_info_json(s: &Scan) -> serde_json::Value {
    serde_json::json!({
        "files": s.files.iter().map(|(p, st, size)| serde_json::json!({"path": p.display().to_string(), "storage": st.identifier(), "bytes": size})).collect::<Vec<_>>(),
        "message_count": s.message_count,
        "metadata_message_count": s.expected_count,
        "start_ns": s.span.map(|x| x.0), "end_ns": s.span.map(|x| x.1),
        "start_s": opt_stamp(s.span.map(|x| x.0)), "end_s": opt_stamp(s.span.map(|x| x.1)),
        "start_utc": s.span.map(|x| utc_text(x.0)),
        "duration_ns": s.span.map(|x| x.1 - x.0),
        "duration_s": s.span.map(|x| secs(x.1 - x.0)),
        "topics": s.topics.iter().map(|t| serde_json::json!({
            "name": t.name, "type": t.type_name, "encoding": t.encoding, "read_by_sillage": t.known,
            "count": t.count, "metadata_count": t.expected,
            "first_ns": t.span.map(|x| x.0), "last_ns": t.span.map(|x| x.1),
            "mean_rate_hz": t.mean_rate(), "interval_mean_ns": t.mean_interval, "interval_sd_ns": t.interval_sd,
            "largest_gap_ns": t.largest_gap.map(|g| g.0), "largest_gap_end_ns": t.largest_gap.map(|g| g.1),
        })).collect::<Vec<_>>(),
        "integrity": {
            "intact": s.intact(),
            "lost_messages": s.lost(),
            "damage": s.damage.iter().map(|d| serde_json::json!({
                "file": d.path.display().to_string(), "byte": d.offset, "kind": format!("{:?}", d.kind).to_lowercase(), "reason": d.reason,
                "lost": d.lost.iter().map(|(t, n)| serde_json::json!({"topic": t, "count": n})).collect::<Vec<_>>(),
            })).collect::<Vec<_>>(),
            "count_mismatches": s.shortfalls.iter().map(|m| serde_json::json!({"topic": m.topic, "metadata": m.expected, "read": m.read})).collect::<Vec<_>>(),
        },
        "warnings": s.warnings,
    })
}

/// `sillage bag info`: a header block (storage, start, length, integrity), then one block per
/// topic.
fn bag_info_text(name: &str, s: &Scan) -> String {
    use std::fmt::Write as _;
    let mut o = String::new();
    let size: u64 = s.files.iter().map(|f| f.2).sum();
    let mut storages: Vec<&str> = s.files.iter().map(|f| f.1.identifier()).collect();
    storages.dedup();
    let names: Vec<String> = s.files.iter().map(|f| f.0.file_name().map(|n| n.to_string_lossy().into_owned()).unwrap_or_default()).collect();
    let _ = writeln!(o, "bag '{name}'");
    let _ = writeln!(o, "  storage    {} in {} file(s), {}: {}", storages.join("+"), s.files.len(), human_size(size), names.join(", "));
    match s.span {
        Some((a, z)) => {
            let _ = writeln!(o, "  starts     {}  (log time {} s)", utc_text(a), stamp_text(a));
            let _ = writeln!(o, "  lasts      {} s, to log time {} s", duration_text(z - a), stamp_text(z));
        }
        None => {
            let _ = writeln!(o, "  starts     (no message)");
        }
    }
    let _ = writeln!(o, "  holds      {} message(s) on {} topic(s)", s.message_count, s.topics.len());
    let meta = s.expected_count.map_or_else(|| "no metadata.yaml to compare with".to_string(), |e| format!("metadata.yaml lists {e}"));
    if s.intact() {
        let _ = writeln!(o, "  integrity  intact: every record readable, {} read, {meta}", s.message_count);
    } else {
        let _ = writeln!(o, "  integrity  DAMAGED: {} read, {meta}; {} known lost", s.message_count, s.lost());
        for d in &s.damage {
            let _ = writeln!(o, "             - {d}");
        }
        for m in &s.shortfalls {
            let _ = writeln!(o, "             - topic {}: {} read, metadata.yaml lists {} ({:+})", m.topic, m.read, m.expected, m.read as i64 - m.expected as i64);
        }
    }
    for t in &s.topics {
        let note = if t.known { "" } else { "  [not read by the node graph]" };
        let _ = writeln!(o, "\n  {}  <{}, {}>{note}", t.name, t.type_name, t.encoding);
        let rate = match (t.mean_rate(), t.interval_sd) {
            (Some(r), Some(sd)) => format!("{r:.3} Hz mean, interval {:.3} ms +- {:.3} ms (1 sd)", t.mean_interval.unwrap_or(0.0) / 1e6, sd / 1e6),
            _ => "rate n/a (fewer than 2 messages)".to_string(),
        };
        let _ = writeln!(o, "      {} message(s), {rate}", t.count);
        if let Some((a, z)) = t.span {
            let _ = writeln!(o, "      first {} s, last {} s", stamp_text(a), stamp_text(z));
        }
        if let (Some((g, end)), Some((a, _))) = (t.largest_gap, t.span) {
            let _ = writeln!(o, "      largest gap {} s, ending {} s after its first message", duration_text(g), duration_text(end - a));
        }
    }
    for w in &s.warnings {
        let _ = writeln!(o, "warning: {w}");
    }
    o
}
