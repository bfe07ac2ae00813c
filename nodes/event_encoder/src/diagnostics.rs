//! Diagnostics: one status for the input ("event_encoder: input") and one per tracked channel
//! ("event_encoder: <channel>"): stale / ok / learning / saturated / dead / rejecting, with the
//! counters and the current conditioning and encoding state as key-value pairs.

use crate::channel::FAULT_KINDS;
use crate::conditioning::{quantity_name, ChannelStatus};
use crate::layout::{Slot, Tracked};
use crate::node::EventEncoder;
use crate::NODE_NAME;
use sillage_core::msg::DiagnosticStatus;
use sillage_core::time::{nanos, secs};
use sillage_core::Nanos;

/// Appends the node's statuses at `now` [ns].
pub fn report(e: &EventEncoder, now: Nanos, out: &mut Vec<DiagnosticStatus>) {
    out.push(input_status(e, now));
    // Channels of the current set in array order, then the ones out of the set.
    let mut order: Vec<&Tracked> = e.layout.tracked().iter().collect();
    order.sort_by_key(|t| t.index.unwrap_or(usize::MAX));
    for t in order {
        out.push(channel_status(e, t, now));
    }
}

fn fmt(v: Option<f64>) -> String {
    v.map(|x| format!("{x}")).unwrap_or_else(|| "none".into())
}

fn input_status(e: &EventEncoder, now: Nanos) -> DiagnosticStatus {
    let c = &e.counts;
    let stale = nanos(e.params.stale_timeout);
    let problems: Vec<String> = e
        .layout
        .slots()
        .iter()
        .enumerate()
        .filter_map(|(i, s)| match s {
            Slot::Channel(_) => None,
            Slot::Empty => Some(format!("[{i}] empty name")),
            Slot::Duplicate(j) => Some(format!("[{i}] repeats [{j}]")),
            Slot::Full => Some(format!("[{i}] no room")),
        })
        .collect();
    let recent_error = e.last_error.as_ref().filter(|(t, _)| now.saturating_sub(*t) <= stale);
    let (level, message) = match (e.last_stamp, recent_error) {
        (None, None) => (DiagnosticStatus::STALE, "no sample yet".to_string()),
        (_, Some((_, err))) => (DiagnosticStatus::WARN, err.to_string()),
        (Some(_), None) if !problems.is_empty() => (DiagnosticStatus::WARN, format!("channel names unusable: {}", problems.join(", "))),
        (Some(t), None) if now.saturating_sub(t) > stale => (DiagnosticStatus::STALE, format!("no sample for {:.1} s", secs(now.saturating_sub(t)))),
        _ => (DiagnosticStatus::OK, "ok".to_string()),
    };
    let mut values = vec![
        ("samples", c.samples.to_string()),
        ("accepted", c.accepted.to_string()),
        ("dropped_not_newer", c.dropped_old.to_string()),
        ("rejected_samples", c.rejected_samples().to_string()),
        ("rejected_length_mismatch", c.length_mismatch.to_string()),
        ("rejected_too_many_channels", c.too_many_channels.to_string()),
        ("rejected_unknown_quantity", c.unknown_quantity.to_string()),
        ("rejected_values", c.rejected_values.to_string()),
        ("backward_resets", c.backward_resets.to_string()),
        ("channel_set_changes", c.channel_set_changes.to_string()),
        ("channels", e.layout.names().join(", ")),
        ("arrays_published", c.arrays.to_string()),
        ("events_published", c.events.to_string()),
        ("wrong_type", c.wrong_type.to_string()),
        ("warnings_held_back", e.warnings.suppressed().to_string()),
    ];
    if let Some((t, change)) = &e.last_change {
        values.push(("last_channel_set_change", format!("{change} (t = {t} ns)")));
    }
    if let Some(w) = e.warnings.latest() {
        values.push(("last_warning", w.to_string()));
    }
    DiagnosticStatus::from_values(level, format!("{NODE_NAME}: input"), message, values)
}

fn channel_status(e: &EventEncoder, t: &Tracked, now: Nanos) -> DiagnosticStatus {
    let ch = &t.channel;
    let cond = ch.conditioner();
    let enc = ch.encoder();
    let stale = nanos(e.params.stale_timeout);
    let status = cond.status();
    let fault_now = ch.last_fault().filter(|(ft, _)| Some(*ft) == t.last_seen && ch.last_valid() != t.last_seen);
    let (level, message) = match (t.index, t.last_seen) {
        (None, _) => (DiagnosticStatus::STALE, "stale: not in the current channel set".to_string()),
        (_, None) => (DiagnosticStatus::STALE, "stale: no sample yet".to_string()),
        (_, Some(seen)) if now.saturating_sub(seen) > stale => (DiagnosticStatus::STALE, format!("stale: no sample for {:.1} s", secs(now.saturating_sub(seen)))),
        _ if fault_now.is_some() => {
            let f = fault_now.map(|(_, f)| f.to_string()).unwrap_or_default();
            (DiagnosticStatus::WARN, format!("rejecting values: {f}"))
        }
        _ => match status {
            ChannelStatus::Dead => (DiagnosticStatus::ERROR, format!("dead: value unchanged for {:.1} s", ch.conditioner().stuck_for())),
            ChannelStatus::Saturated => (DiagnosticStatus::WARN, "saturated: value at a rail".to_string()),
            ChannelStatus::Learning => (DiagnosticStatus::OK, "learning R0 (keep the sensor in clean air)".to_string()),
            ChannelStatus::Unknown => (DiagnosticStatus::WARN, "no valid value yet".to_string()),
            ChannelStatus::Ok => (DiagnosticStatus::OK, "ok".to_string()),
        },
    };
    let counts = ch.counts();
    let ec = enc.counts();
    let mut values = vec![
        ("index", t.index.map(|i| i.to_string()).unwrap_or_else(|| "none".into())),
        ("status", status.as_str().to_string()),
        ("quantity", cond.quantity().map(|q| quantity_name(q).to_string()).unwrap_or_else(|| "none".into())),
        ("transform", cond.transform().as_str().to_string()),
        ("accepted", counts.accepted.to_string()),
        ("rejected", counts.rejected_total().to_string()),
    ];
    for (kind, n) in FAULT_KINDS.iter().zip(counts.rejected) {
        if n > 0 {
            values.push((kind, n.to_string()));
        }
    }
    values.extend([
        ("events_rising", ec.rising.to_string()),
        ("events_falling", ec.falling.to_string()),
        ("suppressed_refractory", ec.suppressed.to_string()),
        ("filtered_polarity", ec.filtered.to_string()),
        ("overflow", ec.overflow.to_string()),
        ("gaps", counts.gaps.to_string()),
        ("quantity_changes", counts.quantity_changes.to_string()),
        ("last_raw", fmt(ch.last_valid().map(|_| ch.last_raw()))),
        ("transformed", fmt(cond.transformed())),
        ("conditioned", fmt(cond.output())),
        ("baseline", fmt(cond.baseline())),
        ("r0_ohm", fmt(cond.r0())),
        ("reference", fmt(enc.reference())),
        ("delta", format!("{}", enc.delta())),
    ]);
    DiagnosticStatus::from_values(level, format!("{NODE_NAME}: {}", t.name), message, values)
}
