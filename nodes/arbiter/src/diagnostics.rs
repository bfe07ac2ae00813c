//! Diagnostics of the arbiter (published on /diagnostics by the executors at about 1 Hz).
//!
//! Statuses, named "arbiter: part":
//! - `arbiter: mode`: OK; the mode, its reason, the strategy, the declaration;
//! - `arbiter: guard`: ERROR while the e-stop is latched, WARN when the last command was cut
//!   by the obstacle stop or the fence or had non-finite components, else OK; the last command
//!   and the guard's counters;
//! - `arbiter: watchdog`: ERROR while a required input is stale (the robot is halted), else
//!   OK; age and timeout of every input;
//! - `arbiter: inputs`: WARN when a message was refused (malformed, duplicated, reordered) or
//!   the clock jumped back in the last [`RECENT`] seconds, else OK; per-topic counters and the
//!   last problem.

use crate::inputs::Input;
use crate::node::Arbiter;
use crate::watchdog::Watchdog;
use sillage_core::msg::DiagnosticStatus;
use sillage_core::time::nanos;
use sillage_core::Nanos;

/// How long a refused message keeps `arbiter: inputs` at WARN [s].
pub const RECENT: f64 = 5.0;

fn kv(k: &str, v: impl std::fmt::Display) -> (&str, String) {
    (k, v.to_string())
}

/// Appends the arbiter's statuses to `out`.
pub fn report(a: &Arbiter, now: Nanos, out: &mut Vec<DiagnosticStatus>) {
    let view = a.contact.view(now);
    let mut mode_values = vec![
        kv("mode", a.modes.mode().name()),
        kv("reason", a.modes.reason()),
        kv("strategy", a.strategy.name()),
        kv("transitions", a.modes.count()),
        kv("heading_target", a.heading_target),
        kv("contact_age", view.age.unwrap_or(f64::NAN)),
        kv("contacts", view.hits),
    ];
    if let Some(d) = a.declared {
        mode_values.push(kv("source_estimate", format!("({:.3}, {:.3})", d.estimate.x, d.estimate.y)));
    }
    let msg = format!("{}: {}", a.modes.mode().name(), a.modes.reason());
    out.push(DiagnosticStatus::with(DiagnosticStatus::OK, "arbiter: mode", &msg, &mode_values));

    let g = &a.guard;
    let f = g.last_flags;
    let (level, msg) = if g.latch.is_latched() {
        (DiagnosticStatus::ERROR, if g.latch.is_cleared() { "e-stop latched: waiting for e_stop_reset" } else { "e-stop latched" })
    } else if f.blinded.is_some() {
        (DiagnosticStatus::ERROR, "scan blinded toward the motion: no motion")
    } else if f.obstacle_stop {
        (DiagnosticStatus::WARN, "obstacle stop")
    } else if f.fence.is_some() {
        (DiagnosticStatus::WARN, "at the geofence")
    } else if f.nonfinite {
        (DiagnosticStatus::WARN, "non-finite command zeroed")
    } else {
        (DiagnosticStatus::OK, "ok")
    };
    let c = g.last();
    let values = [
        kv("linear.x", c.vx),
        kv("linear.y", c.vy),
        kv("angular.z", c.wz),
        kv("e_stop_latched", g.latch.is_latched()),
        kv("e_stop_presses", g.latch.presses),
        kv("e_stop_resets_refused", g.latch.refused),
        kv("e_stop_releases", g.latch.releases),
        kv("nonfinite_commands", g.counts.nonfinite),
        kv("fence_interventions", g.counts.fence),
        kv("obstacle_stops", g.counts.obstacle_stops),
        kv("blinded", g.counts.blinded),
        kv("limited_commands", g.counts.limited),
        kv("nearest_obstacle", a.scan.as_ref().map(|s| format!("{:.3}", s.sector(0.0, a.params.obstacle.sector_half_angle).nearest)).unwrap_or_else(|| "none".into())),
    ];
    out.push(DiagnosticStatus::with(level, "arbiter: guard", msg, &values));

    let required = a.required_inputs();
    let stale = a.watchdog.stale(required, &a.params.watchdog, now);
    let (level, msg) = if stale.is_empty() {
        (DiagnosticStatus::OK, "all required inputs fresh".to_string())
    } else {
        (DiagnosticStatus::ERROR, format!("halting: {}", a.watchdog.describe(stale, &a.params.watchdog, now)))
    };
    let values: Vec<(&str, String)> = Input::ALL
        .iter()
        .map(|&i| {
            let age = a.watchdog.age(i, now).map(|s| format!("{s:.3} s")).unwrap_or_else(|| "never".into());
            let timeout = Watchdog::timeout(&a.params.watchdog, i).map(|t| format!("{t} s")).unwrap_or_else(|| "none".into());
            let req = if required.contains(i) { "required" } else { "optional" };
            (i.topic(), format!("age {age}, timeout {timeout}, {req}"))
        })
        .collect();
    out.push(DiagnosticStatus::with(level, "arbiter: watchdog", &msg, &values));

    let s = &a.stats;
    let recent = s.last_problem.as_ref().filter(|(t, _)| now.saturating_sub(*t) <= nanos(RECENT));
    let (level, msg) = match recent {
        Some((_, m)) => (DiagnosticStatus::WARN, m.clone()),
        None => (DiagnosticStatus::OK, "ok".to_string()),
    };
    let mut values: Vec<(&str, String)> = Input::ALL
        .iter()
        .map(|&i| {
            let c = s.inputs[i.index()];
            (
                i.topic(),
                format!(
                    "accepted {}, malformed {}, duplicates {}, out_of_order {}, restarts {}",
                    c.accepted, c.malformed, c.duplicates, c.out_of_order, c.restarts
                ),
            )
        })
        .collect();
    values.push(kv("unknown_inputs", s.unknown));
    values.push(kv("clock_jumps", s.clock_jumps));
    values.push(kv("malformed_total", s.total_malformed()));
    values.push(kv("last_problem", s.last_problem.as_ref().map(|(_, m)| m.as_str()).unwrap_or("none")));
    out.push(DiagnosticStatus::with(level, "arbiter: inputs", &msg, &values));
}
