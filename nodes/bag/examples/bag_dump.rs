//! Prints every message of the bags as JSON lines `{"log_time", "topic", "type", "value"}` in
//! log-time order, and the read report on stderr (used by tests/refs/bag_roundtrip.py):
//!
//!     cargo run -p sillage-bag --example bag_dump -- BAG... [--strict]

use sillage_bag::{json::msg_to_json, Bag, ReadOptions};
use std::io::Write;

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let strict = args.iter().any(|a| a == "--strict");
    let bags: Vec<&String> = args.iter().filter(|a| !a.starts_with("--")).collect();
    let bag = Bag::open_many(&bags)?;
    let mut it = bag.messages(&ReadOptions { strict, ..Default::default() })?;
    let out = std::io::stdout();
    let mut out = std::io::BufWriter::new(out.lock());
    for m in it.by_ref() {
        let m = m?;
        let line = serde_json::json!({"log_time": m.log_time, "topic": &*m.topic, "type": m.type_name, "value": msg_to_json(&m.msg)});
        writeln!(out, "{line}")?;
    }
    out.flush()?;
    let r = it.report();
    for t in &r.topics {
        let skip = t.skip.as_ref().map(|s| format!(" (skipped: {s})")).unwrap_or_default();
        eprintln!("{} [{}]: {} read, {} skipped{skip}", t.name, t.type_name, t.read, t.skipped);
    }
    for w in &r.warnings {
        eprintln!("warning: {w}");
    }
    Ok(())
}
