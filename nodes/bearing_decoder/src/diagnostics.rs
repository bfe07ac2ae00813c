//! The node's health for /diagnostics: one status "bearing_decoder: bearing".
//!
//! Level WARN while an input warning is younger than [`WARN_HOLD`] (the message then quotes
//! it), OK otherwise. The values list the last estimate (cue, bearing in degrees, confidence,
//! lag, each cue's state, the front/back resolution, the air speed and its source), the running
//! totals and every warning counter.

use crate::node::BearingDecoder;
use sillage_core::msg::{DiagnosticStatus, OdorBearing};
use sillage_core::Nanos;

/// How long a warning keeps the level at WARN [ns].
pub const WARN_HOLD: Nanos = 5_000_000_000;

/// The cue's name as in the message constants.
pub fn cue_name(cue: u8) -> &'static str {
    match cue {
        OdorBearing::TIMING => "TIMING",
        OdorBearing::AMPLITUDE => "AMPLITUDE",
        OdorBearing::FUSED => "FUSED",
        _ => "NONE",
    }
}

/// The status of `node` at `now` [ns].
pub fn status(node: &BearingDecoder, now: Nanos) -> DiagnosticStatus {
    let mut values: Vec<(&str, String)> = Vec::new();
    let mut summary = "no estimate yet".to_string();
    if let Some(e) = node.last_estimate() {
        let f = &e.fused;
        summary = if f.cue == OdorBearing::NONE {
            let t = match &e.timing {
                Ok(_) => "ok",
                Err(s) => s.as_str(),
            };
            format!("no bearing (timing: {t})")
        } else {
            format!("{} {:.1} deg, confidence {:.2}", cue_name(f.cue), f.bearing.to_degrees(), f.confidence)
        };
        values.push(("cue", cue_name(f.cue).into()));
        values.push(("bearing_deg", format!("{:.2}", f.bearing.to_degrees())));
        values.push(("confidence", format!("{:.3}", f.confidence)));
        values.push(("lag_s", format!("{:.4}", f.lag)));
        match &e.timing {
            Ok(t) => {
                values.push(("timing", format!("{:.1} deg, confidence {:.3}", t.bearing.to_degrees(), t.confidence)));
                values.push(("timing_matches", t.matches.to_string()));
                values.push(("timing_spread_s", format!("{:.4}", t.spread)));
                values.push(("front_back", t.resolution.as_str().into()));
                values.push(("lag_clamped", t.clamped.to_string()));
            }
            Err(s) => values.push(("timing", s.as_str().into())),
        }
        let amplitude = match &e.amplitude {
            None => "off (disabled or no chem)".to_string(),
            Some(Ok(a)) => format!("{:.1} deg, confidence {:.3}, response {:.4}", a.bearing.to_degrees(), a.confidence, a.response),
            Some(Err(crate::amplitude::AmplitudeSilence::NoSignal)) => "no signal".into(),
            Some(Err(crate::amplitude::AmplitudeSilence::Weak { response })) => format!("weak (response {response:.4})"),
        };
        values.push(("amplitude", amplitude));
        values.push(("air_speed_mps", e.air.speed.map_or("unknown".into(), |s| format!("{s:.3}"))));
        values.push(("air_source", format!("{:?}", e.air.source)));
        values.push(("motion_compensated", e.air.compensated.to_string()));
    }
    let st = node.stats();
    values.push(("events", st.events.to_string()));
    values.push(("onsets", st.onsets.to_string()));
    values.push(("published", st.published.to_string()));
    for (i, n) in ["published_timing", "published_amplitude", "published_fused", "published_none"].iter().enumerate() {
        values.push((n, st.by_cue[i].to_string()));
    }
    values.push(("front_back_unresolved", st.unresolved.to_string()));
    values.push(("lag_clamped_total", st.clamped.to_string()));
    values.push(("channels", node.channel_names().join(",")));
    for (name, count) in node.warnings().counts() {
        values.push((name, count.to_string()));
    }
    let (level, message) = match node.warnings().last() {
        Some((t, w)) if now - *t < WARN_HOLD => (DiagnosticStatus::WARN, format!("{summary}; {w}")),
        _ => (DiagnosticStatus::OK, summary),
    };
    DiagnosticStatus::from_values(level, format!("{}: bearing", crate::NODE_NAME), message, values)
}
