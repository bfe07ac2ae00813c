//! sillage's progress line, on stderr.
//!
//! On a terminal one line is redrawn in place at most ten times a second:
//! `sillage replay ·  42 % · 1260 of 3000 s bag time · 3.1 s so far, about 4 s to go`.
//! Elsewhere (a log file, CI, a test that watches the process) a plain line is printed at each
//! tenth of the work, so logs stay short and a watcher can tell the run is under way. Nothing
//! is shown with `--quiet`. The line says how to stop with the outputs kept.

use std::io::{IsTerminal, Write};
use std::time::{Duration, Instant};

/// One progress line.
pub struct Progress {
    what: &'static str,
    unit: &'static str,
    total: f64,
    started: Instant,
    last_draw: Option<Instant>,
    last_tenth: u32,
    terminal: bool,
    drawn: bool,
}

/// `x` as a short duration text.
fn short(secs: f64) -> String {
    if secs < 60.0 {
        format!("{secs:.1} s")
    } else if secs < 3600.0 {
        format!("{:.0} min {:02.0} s", (secs / 60.0).floor(), secs % 60.0)
    } else {
        format!("{:.0} h {:02.0} min", (secs / 3600.0).floor(), (secs % 3600.0) / 60.0)
    }
}

impl Progress {
    /// A line for `total` units of work named `unit` (`"s bag time"`, `"episodes"`), or `None`
    /// with `quiet`.
    pub fn new(what: &'static str, unit: &'static str, total: f64, quiet: bool) -> Option<Progress> {
        (!quiet && total > 0.0).then(|| Progress {
            what,
            unit,
            total,
            started: Instant::now(),
            last_draw: None,
            last_tenth: 0,
            terminal: std::io::stderr().is_terminal(),
            drawn: false,
        })
    }

    /// The text of the line after `done` units.
    fn line(&self, done: f64) -> String {
        let frac = (done / self.total).clamp(0.0, 1.0);
        let wall = self.started.elapsed().as_secs_f64();
        let togo = if frac > 0.02 { format!(", about {} to go", short(wall * (1.0 - frac) / frac)) } else { String::new() };
        format!(
            "sillage {} · {:>3.0} % · {:.0} of {:.0} {} · {} so far{togo} (Ctrl-C stops and keeps the outputs)",
            self.what,
            100.0 * frac,
            done,
            self.total,
            self.unit,
            short(wall)
        )
    }

    /// Reports `done` units of work.
    pub fn set(&mut self, done: f64) {
        let mut err = std::io::stderr().lock();
        if self.terminal {
            if self.last_draw.is_some_and(|t| t.elapsed() < Duration::from_millis(100)) {
                return;
            }
            self.last_draw = Some(Instant::now());
            let _ = write!(err, "\r\x1b[2K{}", self.line(done));
            self.drawn = true;
        } else {
            let tenth = ((10.0 * done / self.total).floor() as u32).min(10);
            if tenth > self.last_tenth {
                self.last_tenth = tenth;
                let _ = writeln!(err, "{}", self.line(done));
            }
        }
        let _ = err.flush();
    }

    /// Clears the line (on a terminal).
    pub fn finish(self) {
        if self.terminal && self.drawn {
            let _ = write!(std::io::stderr(), "\r\x1b[2K");
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_line_names_the_work_and_its_share() {
        let p = Progress::new("sim", "episodes", 20.0, false).expect("shown");
        let l = p.line(5.0);
        assert!(l.starts_with("sillage sim ·  25 % · 5 of 20 episodes · "), "{l}");
        assert!(Progress::new("sim", "episodes", 20.0, true).is_none());
        assert_eq!(short(59.94), "59.9 s");
        assert_eq!(short(125.0), "2 min 05 s");
        assert_eq!(short(7260.0), "2 h 01 min");
    }
}
