//! A coverage-free mutation fuzzer for machines where libFuzzer cannot run (no nightly
//! toolchain and no `RUSTC_BOOTSTRAP`): the same target bodies, a fixed number of executions,
//! inputs made by mutating the seed files (bit flips, random and boundary bytes and words,
//! inserted, deleted and repeated ranges, truncation, splices of two seeds, and for the text
//! targets YAML fragments).
//!
//!     cargo run --release --example drive -- TARGET RUNS SEED_DIR [SEED]
//!
//! A panic is caught, its input saved to `artifacts/TARGET/crash-<n>` and counted; the run
//! goes on. Prints executions, crashes (distinct panic messages) and the slowest execution.
//! Exit status 1 when anything crashed.

use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

fn target(name: &str) -> Option<fn(&[u8])> {
    Some(match name {
        "cdr_decode" => |d| {
            sillage_bag::fuzzing::decode_any(d);
        },
        "mcap_reader" => |d| {
            let _ = sillage_bag::fuzzing::drain_mcap(d, 100_000);
        },
        "sqlite_reader" => sillage_fuzz::sqlite_reader,
        "params_text" => sillage_fuzz::params_text,
        "params_values" => sillage_fuzz::params_values,
        "scenario_text" => sillage_fuzz::scenario_text,
        _ => return None,
    })
}

struct Rng(u64);
impl Rng {
    fn next(&mut self) -> u64 {
        self.0 ^= self.0 << 13;
        self.0 ^= self.0 >> 7;
        self.0 ^= self.0 << 17;
        self.0
    }
    fn below(&mut self, n: usize) -> usize {
        if n == 0 { 0 } else { (self.next() % n as u64) as usize }
    }
}

const FRAGMENTS: &[&str] = &[
    ": ", "\n", "\n  ", "  ", "- ", "[]", "{}", "~", "null", "true", "false", "0", "-1", "1e308", "-1e308", "1e-320", ".nan", ".inf",
    "-.inf", "4294967296", "18446744073709551616", "0.0", "\"\"", "'", "\"", "&a", "*a", "!!str ", "ros__parameters:", "/**:", "[1, 2, 3]",
    "{a: 1}", "#", "\t", "\u{0}", "\u{fffd}",
];
const WORDS: &[u32] = &[0, 1, 0x7f, 0x80, 0xff, 0xffff, 0x7fff_ffff, 0x8000_0000, 0xffff_ffff, 0x1000, 0x0010_0000];

fn mutate(rng: &mut Rng, seeds: &[Vec<u8>], text: bool) -> Vec<u8> {
    let mut d = if seeds.is_empty() { Vec::new() } else { seeds[rng.below(seeds.len())].clone() };
    for _ in 0..1 + rng.below(8) {
        let len = d.len();
        match rng.below(if text { 10 } else { 9 }) {
            0 if len > 0 => {
                let i = rng.below(len);
                d[i] ^= 1 << rng.below(8);
            }
            1 if len > 0 => {
                let i = rng.below(len);
                d[i] = rng.next() as u8;
            }
            2 if len > 0 => {
                let i = rng.below(len);
                d[i] = [0u8, 0xff, 0x7f, 0x80, 1][rng.below(5)];
            }
            3 if len >= 4 => {
                let i = rng.below(len - 3);
                d[i..i + 4].copy_from_slice(&WORDS[rng.below(WORDS.len())].to_le_bytes());
            }
            4 => {
                let i = rng.below(len + 1);
                let n = 1 + rng.below(16);
                let bytes: Vec<u8> = (0..n).map(|_| rng.next() as u8).collect();
                d.splice(i..i, bytes);
            }
            5 if len > 0 => {
                let i = rng.below(len);
                let n = 1 + rng.below((len - i).min(256));
                d.drain(i..i + n);
            }
            6 if len > 0 => {
                let i = rng.below(len);
                let n = 1 + rng.below((len - i).min(64));
                let chunk = d[i..i + n].to_vec();
                let at = rng.below(d.len() + 1);
                d.splice(at..at, chunk);
            }
            7 if len > 0 => d.truncate(rng.below(len)),
            8 if seeds.len() > 1 => {
                let other = &seeds[rng.below(seeds.len())];
                let cut = rng.below(len + 1);
                let from = rng.below(other.len() + 1);
                d.truncate(cut);
                d.extend_from_slice(&other[from..]);
            }
            9 => {
                let f = FRAGMENTS[rng.below(FRAGMENTS.len())].as_bytes();
                let i = rng.below(len + 1);
                d.splice(i..i, f.iter().copied());
            }
            _ => {}
        }
    }
    d
}

fn read_seeds(dir: &Path) -> Vec<Vec<u8>> {
    let mut files: Vec<PathBuf> = std::fs::read_dir(dir).map(|r| r.filter_map(|e| Some(e.ok()?.path())).filter(|p| p.is_file()).collect()).unwrap_or_default();
    files.sort();
    files.iter().filter_map(|p| std::fs::read(p).ok()).collect()
}

fn main() {
    let args: Vec<String> = std::env::args().collect();
    let (Some(name), Some(runs), Some(dir)) = (args.get(1), args.get(2).and_then(|r| r.parse::<u64>().ok()), args.get(3)) else {
        eprintln!("usage: drive TARGET RUNS SEED_DIR [SEED]");
        std::process::exit(2);
    };
    let Some(f) = target(name) else {
        eprintln!("unknown target {name}");
        std::process::exit(2);
    };
    let seed: u64 = args.get(4).and_then(|s| s.parse().ok()).unwrap_or(0x5eed);
    let seeds = read_seeds(Path::new(dir));
    let text = name.starts_with("params") || name.starts_with("scenario");
    let mut rng = Rng(seed | 1);
    // Keep the panic's location for the report instead of printing every panic.
    static WHERE: std::sync::Mutex<String> = std::sync::Mutex::new(String::new());
    std::panic::set_hook(Box::new(|info| {
        if let (Ok(mut w), Some(l)) = (WHERE.lock(), info.location()) {
            *w = format!("{}:{}:{}", l.file(), l.line(), l.column());
        }
    }));
    let artifacts = PathBuf::from("artifacts").join(name);
    let mut crashes: Vec<String> = Vec::new();
    let mut crash_inputs = 0u64;
    let mut slowest = Duration::ZERO;
    let started = Instant::now();
    for i in 0..runs {
        let input = if i < seeds.len() as u64 { seeds[i as usize].clone() } else { mutate(&mut rng, &seeds, text) };
        let t = Instant::now();
        let r = catch_unwind(AssertUnwindSafe(|| f(&input)));
        slowest = slowest.max(t.elapsed());
        if let Err(p) = r {
            let text = p.downcast_ref::<String>().cloned().or_else(|| p.downcast_ref::<&str>().map(|s| s.to_string())).unwrap_or_default();
            let at = WHERE.lock().map(|w| w.clone()).unwrap_or_default();
            let msg = format!("{text} at {at}");
            crash_inputs += 1;
            let _ = std::fs::create_dir_all(&artifacts);
            let _ = std::fs::write(artifacts.join(format!("crash-{crash_inputs}")), &input);
            if !crashes.contains(&msg) {
                println!("{name}: crash at execution {i}: {msg} (input saved as {}/crash-{crash_inputs})", artifacts.display());
                crashes.push(msg);
            }
        }
    }
    println!(
        "{name}: {runs} executions in {:.1} s from {} seeds, {crash_inputs} crashing inputs ({} distinct panics), slowest execution {:.1} ms",
        started.elapsed().as_secs_f64(),
        seeds.len(),
        crashes.len(),
        slowest.as_secs_f64() * 1e3
    );
    if crash_inputs > 0 {
        std::process::exit(1);
    }
}
