//! Fusion of the timing and amplitude cues by confidence.
//!
//! - Neither cue: `cue = NONE`, bearing and lag NaN, confidence 0.
//! - One cue: it wins as it is.
//! - Both: agreement `a = (1 + cos(delta)) / 2` (delta: angle between the cues). If they agree
//!   within 90 deg (`a >= 0.5`) and the weaker has at least `min_ratio` of the stronger's
//!   confidence, the bearing is their confidence-weighted circular mean, `cue = FUSED`, and the
//!   confidence is `(1 - (1 - c_t)(1 - c_a)) * a` (independent evidence, discounted by
//!   disagreement). Otherwise the stronger wins alone with its confidence times
//!   `1 - c_weaker (1 - a)` (a confident contradiction lowers it).
//!
//! The lag is the timing cue's whenever timing contributes, NaN otherwise.

use sillage_core::msg::OdorBearing;

/// One cue's vote: bearing [rad], confidence 0..1, lag [s] (NaN for amplitude).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Vote {
    /// Direction the odor comes from [rad], base_link.
    pub bearing: f64,
    /// 0..1.
    pub confidence: f64,
    /// Inter-sensor lag [s] or NaN.
    pub lag: f64,
}

/// The fused answer, ready for an [`OdorBearing`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Fused {
    /// [rad] in (-pi, pi], NaN for NONE.
    pub bearing: f64,
    /// [s] or NaN.
    pub lag: f64,
    /// 0..1.
    pub confidence: f64,
    /// `OdorBearing::TIMING`, `AMPLITUDE`, `FUSED` or `NONE`.
    pub cue: u8,
    /// Agreement of the two cues (0..1) when both spoke.
    pub agreement: Option<f64>,
}

impl Fused {
    /// Nothing to say.
    pub const NONE: Fused = Fused { bearing: f64::NAN, lag: f64::NAN, confidence: 0.0, cue: OdorBearing::NONE, agreement: None };
}

fn alone(v: Vote, cue: u8) -> Fused {
    Fused { bearing: v.bearing, lag: v.lag, confidence: v.confidence.clamp(0.0, 1.0), cue, agreement: None }
}

/// Fuses the cues; `min_ratio` (0..1) is the weaker/stronger confidence ratio needed to fuse.
pub fn fuse(timing: Option<Vote>, amplitude: Option<Vote>, min_ratio: f64) -> Fused {
    let usable = |v: Option<Vote>| v.filter(|v| v.confidence > 0.0 && v.bearing.is_finite());
    match (usable(timing), usable(amplitude)) {
        (None, None) => Fused::NONE,
        (Some(t), None) => alone(t, OdorBearing::TIMING),
        (None, Some(a)) => alone(a, OdorBearing::AMPLITUDE),
        (Some(t), Some(a)) => {
            let agreement = 0.5 * (1.0 + (t.bearing - a.bearing).cos());
            let (strong, weak, strong_cue) =
                if t.confidence >= a.confidence { (t, a, OdorBearing::TIMING) } else { (a, t, OdorBearing::AMPLITUDE) };
            if agreement >= 0.5 && weak.confidence >= min_ratio * strong.confidence {
                let (sy, sx) = (
                    t.confidence * t.bearing.sin() + a.confidence * a.bearing.sin(),
                    t.confidence * t.bearing.cos() + a.confidence * a.bearing.cos(),
                );
                let combined = 1.0 - (1.0 - t.confidence) * (1.0 - a.confidence);
                Fused {
                    bearing: sy.atan2(sx),
                    lag: t.lag,
                    confidence: (combined * agreement).clamp(0.0, 1.0),
                    cue: OdorBearing::FUSED,
                    agreement: Some(agreement),
                }
            } else {
                let mut f = alone(strong, strong_cue);
                f.confidence = (strong.confidence * (1.0 - weak.confidence * (1.0 - agreement))).clamp(0.0, 1.0);
                f.agreement = Some(agreement);
                f
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    const DEG: f64 = std::f64::consts::PI / 180.0;

    fn vote(deg: f64, c: f64, lag: f64) -> Option<Vote> {
        Some(Vote { bearing: deg * DEG, confidence: c, lag })
    }

    #[test]
    fn which_cue_wins() {
        let none = fuse(None, None, 0.25);
        assert_eq!(none.cue, OdorBearing::NONE);
        assert!(none.bearing.is_nan() && none.lag.is_nan() && none.confidence == 0.0);
        assert_eq!(fuse(vote(10.0, 0.6, 0.1), None, 0.25).cue, OdorBearing::TIMING);
        let amp = fuse(None, vote(10.0, 0.6, f64::NAN), 0.25);
        assert_eq!(amp.cue, OdorBearing::AMPLITUDE);
        assert!(amp.lag.is_nan());
        // Agreeing cues of similar weight fuse between them, with more confidence than either.
        let f = fuse(vote(10.0, 0.6, 0.1), vote(30.0, 0.6, f64::NAN), 0.25);
        assert_eq!(f.cue, OdorBearing::FUSED);
        assert!((f.bearing - 20.0 * DEG).abs() < 1e-12 && f.lag == 0.1);
        assert!(f.confidence > 0.6 && f.confidence < 0.84, "{f:?}");
        // A much weaker cue does not fuse.
        assert_eq!(fuse(vote(10.0, 0.8, 0.1), vote(30.0, 0.1, f64::NAN), 0.25).cue, OdorBearing::TIMING);
        // Contradicting cues: the stronger wins with its confidence lowered.
        let c = fuse(vote(10.0, 0.5, 0.1), vote(-170.0, 0.8, f64::NAN), 0.25);
        assert_eq!(c.cue, OdorBearing::AMPLITUDE);
        assert!((c.confidence - 0.8 * 0.5).abs() < 1e-12, "{c:?}");
        assert!(c.lag.is_nan(), "timing did not contribute");
    }

    proptest! {
        #[test]
        fn output_is_always_well_formed(
            t in proptest::option::of((-4.0f64..4.0, 0.0f64..1.0)),
            a in proptest::option::of((-4.0f64..4.0, 0.0f64..1.0)),
            ratio in 0.0f64..1.0,
        ) {
            let v = |x: Option<(f64, f64)>| x.map(|(b, c)| Vote { bearing: b, confidence: c, lag: 0.0 });
            let f = fuse(v(t), v(a), ratio);
            prop_assert!((0.0..=1.0).contains(&f.confidence));
            prop_assert_eq!(f.cue == OdorBearing::NONE, f.bearing.is_nan());
        }
    }
}
