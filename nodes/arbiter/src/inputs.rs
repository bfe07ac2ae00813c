//! The arbiter's inputs: their order (the port indices), and the checks that turn a message
//! into a clean observation or an [`ArbiterError`] naming the topic and field.
//!
//! Contract of the checks (a message that fails is dropped, counted and diagnosed; it does not
//! feed its watchdog, so a source that keeps sending garbage ends up stale and halts the robot):
//! - `wind`: finite x, y, z; frame `frames.base` (or empty: base), or `frames.odom`.
//! - `odom`: frame `frames.odom` (or empty), child frame `frames.base` (or empty); finite
//!   position and twist; an orientation whose quaternion norm is within 10 % of 1.
//! - `odor_bearing`: frame `frames.base` (or empty); `cue` <= NONE; unless NONE, a finite
//!   bearing and a confidence in [0, 1].
//! - `plume_features`: bout rate finite >= 0 and intermittency in [0, 1], or NaN for "not
//!   known yet" (the estimator's window is still filling: such a message keeps the watchdog
//!   fed but is no evidence of contact, since every comparison with NaN fails); distance NaN
//!   (uncalibrated) or finite >= 0; sigma not negative (NaN or +inf: distance unusable).
//! - `odor_events`: every polarity is +1 or -1.
//! - `source_posterior`: frame `frames.odom` (or empty); the checks of
//!   [`crate::posterior::Posterior::from_parts`] (finite mean, symmetric PSD covariance).
//! - `scan`: finite non-zero `angle_increment`, finite `angle_min`, `0 <= range_min <
//!   range_max`, and at least one beam. Each beam is kept with its angle in base_link and a
//!   class ([`Beam`]), following REP 117: +inf is a valid clear beam; -inf (too close to
//!   measure) and finite readings below `range_min` are valid obstacles at distance 0 (a
//!   scanner reports what it cannot resolve up close as short, never as clear); NaN and finite
//!   readings above `range_max` are invalid. The guard asks for the sector around the
//!   commanded direction of motion ([`ScanObs::sector`]): a sector with too few valid beams is
//!   blinded, and blinded means no motion.

use crate::error::ArbiterError;
use crate::geometry::{wrap_angle, Pose2, Vec2};
use crate::params::{Frames, ObstacleParams};
use sillage_core::msg::*;
use sillage_core::Nanos;

/// The inputs, in port order.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Input {
    /// `odor_bearing` (OdorBearing).
    OdorBearing = 0,
    /// `plume_features` (PlumeFeatures).
    PlumeFeatures = 1,
    /// `odor_events` (OdorEventArray).
    OdorEvents = 2,
    /// `wind` (Vector3Stamped).
    Wind = 3,
    /// `odom` (Odometry).
    Odom = 4,
    /// `e_stop` (Bool).
    EStop = 5,
    /// `e_stop_reset` (Empty).
    EStopReset = 6,
    /// `scan` (LaserScan).
    Scan = 7,
    /// `search_restart` (Empty): search again after a declaration.
    SearchRestart = 8,
    /// `source_posterior` (PoseWithCovarianceStamped, optional: no watchdog).
    SourcePosterior = 9,
}

/// Number of inputs.
pub const INPUTS: usize = 10;

impl Input {
    /// Every input in port order.
    pub const ALL: [Input; INPUTS] = [
        Input::OdorBearing,
        Input::PlumeFeatures,
        Input::OdorEvents,
        Input::Wind,
        Input::Odom,
        Input::EStop,
        Input::EStopReset,
        Input::Scan,
        Input::SearchRestart,
        Input::SourcePosterior,
    ];

    /// The input at port index `i`.
    pub fn from_index(i: usize) -> Option<Input> {
        Input::ALL.get(i).copied()
    }

    /// Port index.
    pub fn index(self) -> usize {
        self as usize
    }

    /// Topic name as declared.
    pub fn topic(self) -> &'static str {
        match self {
            Input::OdorBearing => "odor_bearing",
            Input::PlumeFeatures => "plume_features",
            Input::OdorEvents => "odor_events",
            Input::Wind => "wind",
            Input::Odom => "odom",
            Input::EStop => "e_stop",
            Input::EStopReset => "e_stop_reset",
            Input::Scan => "scan",
            Input::SearchRestart => "search_restart",
            Input::SourcePosterior => "source_posterior",
        }
    }
}

/// A wind reading: air velocity [m/s], pointing where the air goes to.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct WindObs {
    /// The horizontal air velocity.
    pub air: Vec2,
    /// Whether `air` is in the odom frame (else base_link).
    pub in_odom: bool,
}

/// An odometry reading.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct OdomObs {
    /// Pose of base_link in odom.
    pub pose: Pose2,
    /// Planar velocity of base_link in base_link [m/s].
    pub velocity: Vec2,
    /// Yaw rate [rad/s] (twist.angular.z).
    pub yaw_rate: f64,
}

/// A decoded bearing.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BearingObs {
    /// Direction the odor comes from [rad] in base_link, `None` when the cue is NONE.
    pub bearing: Option<f64>,
    /// Confidence [0..1] (0 when the cue is NONE).
    pub confidence: f64,
    /// Cue constant of OdorBearing.
    pub cue: u8,
}

/// Plume features.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FeaturesObs {
    /// Bout rate [Hz].
    pub bout_rate: f64,
    /// Intermittency [0..1].
    pub intermittency: f64,
    /// Calibrated distance [m] and its sigma [m], when both are usable numbers.
    pub distance: Option<(f64, f64)>,
}

/// Counts of one OdorEventArray.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct EventsObs {
    /// Rising events (odor onsets) that rose above the minimum level.
    pub rising: u32,
}

fn frame_ok(frame: &str, expected: &str) -> bool {
    frame.is_empty() || frame == expected
}

fn frame_err(topic: Input, frame: &str, expected: &str) -> ArbiterError {
    ArbiterError::Frame { topic: topic.topic(), frame: frame.to_string(), expected: expected.to_string() }
}

fn finite(topic: Input, field: &'static str, v: f64) -> Result<f64, ArbiterError> {
    if v.is_finite() {
        Ok(v)
    } else {
        Err(ArbiterError::field(topic.topic(), field, v, "not finite"))
    }
}

/// Checks a wind reading.
pub fn wind(m: &Vector3Stamped, frames: &Frames) -> Result<WindObs, ArbiterError> {
    let t = Input::Wind;
    let x = finite(t, "vector.x", m.vector.x)?;
    let y = finite(t, "vector.y", m.vector.y)?;
    finite(t, "vector.z", m.vector.z)?;
    let f = m.header.frame_id.as_str();
    let in_odom = if frame_ok(f, &frames.base) {
        false
    } else if f == frames.odom {
        true
    } else {
        return Err(frame_err(t, f, &frames.base));
    };
    Ok(WindObs { air: Vec2::new(x, y), in_odom })
}

/// Checks an odometry reading.
pub fn odom(m: &Odometry, frames: &Frames) -> Result<OdomObs, ArbiterError> {
    let t = Input::Odom;
    if !frame_ok(&m.header.frame_id, &frames.odom) {
        return Err(frame_err(t, &m.header.frame_id, &frames.odom));
    }
    if !frame_ok(&m.child_frame_id, &frames.base) {
        return Err(frame_err(t, &m.child_frame_id, &frames.base));
    }
    let p = &m.pose.pose;
    let x = finite(t, "pose.pose.position.x", p.position.x)?;
    let y = finite(t, "pose.pose.position.y", p.position.y)?;
    let q = p.orientation;
    let norm = (q.x * q.x + q.y * q.y + q.z * q.z + q.w * q.w).sqrt();
    if !norm.is_finite() || (norm - 1.0).abs() > 0.1 {
        return Err(ArbiterError::field(t.topic(), "pose.pose.orientation", format!("|q| = {norm}"), "not a unit quaternion"));
    }
    let vx = finite(t, "twist.twist.linear.x", m.twist.twist.linear.x)?;
    let vy = finite(t, "twist.twist.linear.y", m.twist.twist.linear.y)?;
    let wz = finite(t, "twist.twist.angular.z", m.twist.twist.angular.z)?;
    // Normalised first: the yaw formula assumes a unit quaternion.
    let unit = Quaternion { x: q.x / norm, y: q.y / norm, z: q.z / norm, w: q.w / norm };
    Ok(OdomObs { pose: Pose2 { position: Vec2::new(x, y), yaw: unit.yaw() }, velocity: Vec2::new(vx, vy), yaw_rate: wz })
}

/// Checks a bearing.
pub fn bearing(m: &OdorBearing, frames: &Frames) -> Result<BearingObs, ArbiterError> {
    let t = Input::OdorBearing;
    if !frame_ok(&m.header.frame_id, &frames.base) {
        return Err(frame_err(t, &m.header.frame_id, &frames.base));
    }
    if m.cue > OdorBearing::NONE {
        return Err(ArbiterError::field(t.topic(), "cue", m.cue, "unknown cue (TIMING=0, AMPLITUDE=1, FUSED=2, NONE=3)"));
    }
    if m.cue == OdorBearing::NONE {
        return Ok(BearingObs { bearing: None, confidence: 0.0, cue: m.cue });
    }
    let b = finite(t, "bearing", m.bearing)?;
    if !(m.confidence.is_finite() && (0.0..=1.0).contains(&m.confidence)) {
        return Err(ArbiterError::field(t.topic(), "confidence", m.confidence, "not in [0, 1]"));
    }
    Ok(BearingObs { bearing: Some(wrap_angle(b)), confidence: m.confidence, cue: m.cue })
}

/// Checks plume features.
pub fn features(m: &PlumeFeatures) -> Result<FeaturesObs, ArbiterError> {
    let t = Input::PlumeFeatures.topic();
    if !(m.bout_rate.is_nan() || (m.bout_rate.is_finite() && m.bout_rate >= 0.0)) {
        return Err(ArbiterError::field(t, "bout_rate", m.bout_rate, "neither NaN (not known yet) nor a finite rate >= 0"));
    }
    if !(m.intermittency.is_nan() || (0.0..=1.0).contains(&m.intermittency)) {
        return Err(ArbiterError::field(t, "intermittency", m.intermittency, "neither NaN (not known yet) nor in [0, 1]"));
    }
    if !(m.distance.is_nan() || (m.distance.is_finite() && m.distance >= 0.0)) {
        return Err(ArbiterError::field(t, "distance", m.distance, "neither NaN (uncalibrated) nor a finite distance >= 0"));
    }
    if m.distance_sigma < 0.0 {
        return Err(ArbiterError::field(t, "distance_sigma", m.distance_sigma, "negative"));
    }
    let usable = m.distance.is_finite() && m.distance_sigma.is_finite();
    Ok(FeaturesObs {
        bout_rate: m.bout_rate,
        intermittency: m.intermittency,
        distance: usable.then_some((m.distance, m.distance_sigma)),
    })
}

/// Checks an event array and counts its rising events above `min_level` (`contact.min_event_level`).
pub fn events(m: &OdorEventArray, min_level: f64) -> Result<EventsObs, ArbiterError> {
    let mut rising = 0u32;
    for e in &m.events {
        match e.polarity {
            OdorEvent::RISING if e.level > min_level => rising = rising.saturating_add(1),
            OdorEvent::RISING => {}
            OdorEvent::FALLING => {}
            p => return Err(ArbiterError::field(Input::OdorEvents.topic(), "events[].polarity", p, "not +1 or -1")),
        }
    }
    Ok(EventsObs { rising })
}

/// Checks a source posterior received at `now`.
pub fn posterior(now: Nanos, m: &PoseWithCovarianceStamped, frames: &Frames) -> Result<crate::posterior::Posterior, ArbiterError> {
    let t = Input::SourcePosterior;
    if !frame_ok(&m.header.frame_id, &frames.odom) {
        return Err(frame_err(t, &m.header.frame_id, &frames.odom));
    }
    let p = &m.pose.pose.position;
    crate::posterior::Posterior::from_parts(now, p.x, p.y, &m.pose.covariance.0).map_err(|r| ArbiterError::field(t.topic(), r.field, r.reason, "refused"))
}

/// One beam of a scan, classified (REP 117).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Beam {
    /// A valid range [m] (0 for -inf or a reading below `range_min`; +inf: nothing in range).
    Valid(f64),
    /// NaN or a finite reading above `range_max`: says nothing.
    Invalid,
}

/// A checked scan: every beam with its angle in base_link [rad, (-pi, pi]].
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ScanObs {
    /// (angle in base_link [rad], beam).
    pub beams: Vec<(f64, Beam)>,
}

/// What a scan says about one sector.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Sector {
    /// Centre of the sector in base_link [rad].
    pub direction: f64,
    /// Beams inside the sector.
    pub beams: usize,
    /// Valid beams among them.
    pub valid: usize,
    /// Nearest valid range [m] (+inf: clear or no valid beam).
    pub nearest: f64,
}

impl Sector {
    /// The fraction of valid beams [0..1] (0 for a sector without beams).
    pub fn valid_fraction(&self) -> f64 {
        if self.beams == 0 {
            0.0
        } else {
            self.valid as f64 / self.beams as f64
        }
    }

    /// Whether fewer than `min_fraction` of the sector's beams are valid (a sector without
    /// beams is blinded whatever `min_fraction`).
    pub fn blinded(&self, min_fraction: f64) -> bool {
        self.beams == 0 || self.valid_fraction() < min_fraction
    }
}

impl ScanObs {
    /// The sector of half-angle `half` [rad] centred on `direction` [rad, base_link].
    pub fn sector(&self, direction: f64, half: f64) -> Sector {
        let mut out = Sector { direction, beams: 0, valid: 0, nearest: f64::INFINITY };
        for &(angle, beam) in &self.beams {
            if wrap_angle(angle - direction).abs() > half {
                continue;
            }
            out.beams += 1;
            if let Beam::Valid(r) = beam {
                out.valid += 1;
                out.nearest = out.nearest.min(r);
            }
        }
        out
    }
}

/// Checks a scan and classifies its beams, with their angles turned into base_link by
/// `obstacle.scan_yaw`.
pub fn scan(m: &LaserScan, p: &ObstacleParams) -> Result<ScanObs, ArbiterError> {
    let t = Input::Scan.topic();
    let inc = f64::from(m.angle_increment);
    if !inc.is_finite() || inc == 0.0 {
        return Err(ArbiterError::field(t, "angle_increment", inc, "not a finite non-zero angle"));
    }
    let a0 = f64::from(m.angle_min);
    if !a0.is_finite() {
        return Err(ArbiterError::field(t, "angle_min", a0, "not finite"));
    }
    let (rmin, rmax) = (f64::from(m.range_min), f64::from(m.range_max));
    if !(rmin.is_finite() && rmax.is_finite() && rmin >= 0.0 && rmax > rmin) {
        return Err(ArbiterError::field(t, "range_min/range_max", format!("{rmin}/{rmax}"), "need 0 <= range_min < range_max"));
    }
    if m.ranges.is_empty() {
        return Err(ArbiterError::field(t, "ranges", 0, "no beam at all"));
    }
    let beams = m
        .ranges
        .iter()
        .enumerate()
        .map(|(i, &r)| {
            let angle = wrap_angle(a0 + inc * i as f64 + p.scan_yaw);
            let r = f64::from(r);
            let beam = if r == f64::INFINITY {
                Beam::Valid(f64::INFINITY)
            } else if r == f64::NEG_INFINITY || (r.is_finite() && r < rmin) {
                Beam::Valid(0.0)
            } else if r.is_finite() && r <= rmax {
                Beam::Valid(r)
            } else {
                Beam::Invalid
            };
            (angle, beam)
        })
        .collect();
    Ok(ScanObs { beams })
}

/// Outcome of the per-topic stamp check.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum StampCheck {
    /// Newer than the last accepted stamp (or the first, or unstamped).
    Fresh,
    /// Same stamp as the last accepted message: dropped.
    Duplicate,
    /// Older than the last accepted stamp by less than [`STAMP_RESTART`]: dropped.
    OutOfOrder,
    /// Older by [`STAMP_RESTART`] or more: taken as the source's clock restarting; accepted.
    Restart,
}

/// A backward stamp step at least this long is a restart of the source's clock [ns].
pub const STAMP_RESTART: Nanos = 1_000_000_000;

/// Per-topic header-stamp order: duplicated and reordered messages are dropped. A zero stamp
/// means "unstamped" and always passes.
#[derive(Debug, Clone, Default)]
pub struct StampOrder {
    last: [Option<Nanos>; INPUTS],
}

impl StampOrder {
    /// Checks `stamp` on `input` and remembers it when accepted.
    pub fn check(&mut self, input: Input, stamp: Nanos) -> StampCheck {
        if stamp == 0 {
            return StampCheck::Fresh;
        }
        let slot = &mut self.last[input.index()];
        let verdict = match *slot {
            None => StampCheck::Fresh,
            Some(last) if stamp > last => StampCheck::Fresh,
            Some(last) if stamp == last => StampCheck::Duplicate,
            Some(last) if last.saturating_sub(stamp) >= STAMP_RESTART => StampCheck::Restart,
            Some(_) => StampCheck::OutOfOrder,
        };
        if matches!(verdict, StampCheck::Fresh | StampCheck::Restart) {
            *slot = Some(stamp);
        }
        verdict
    }

    /// Forgets every stamp (after a clock jump of the node's own clock).
    pub fn reset(&mut self) {
        self.last = [None; INPUTS];
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn laser(ranges: Vec<f32>) -> LaserScan {
        LaserScan {
            angle_min: -1.0,
            angle_max: 1.0,
            angle_increment: 2.0 / (ranges.len() as f32 - 1.0),
            range_min: 0.1,
            range_max: 10.0,
            ranges,
            ..Default::default()
        }
    }

    fn forward(m: &LaserScan, p: &ObstacleParams) -> Sector {
        super::scan(m, p).expect("valid scan").sector(0.0, p.sector_half_angle)
    }

    #[test]
    fn scan_sectors_follow_rep117_special_values() {
        // 5 beams at -1, -0.5, 0, 0.5, 1 rad; the default sector is |angle| <= 0.5.
        let p = ObstacleParams::default();
        let s = forward(&laser(vec![0.2, 5.0, 3.0, 4.0, 0.2]), &p);
        assert_eq!((s.nearest, s.beams, s.valid), (3.0, 3, 3));
        // REP 117: +inf = nothing in range (valid, clear), NaN = erroneous (invalid), -inf and
        // readings below range_min = too close to measure (an obstacle at 0).
        let s = forward(&laser(vec![0.2, f32::INFINITY, f32::NAN, 20.0, 0.2]), &p);
        assert_eq!((s.nearest, s.beams, s.valid), (f64::INFINITY, 3, 1));
        assert!(s.blinded(0.5), "1 of 3 valid is under one half");
        assert_eq!(forward(&laser(vec![9.0, 9.0, f32::NEG_INFINITY, 9.0, 9.0]), &p).nearest, 0.0);
        assert_eq!(forward(&laser(vec![9.0, 9.0, 0.05, 9.0, 9.0]), &p).nearest, 0.0, "below range_min is an obstacle");
        let all_nan = forward(&laser(vec![f32::NAN; 5]), &p);
        assert_eq!((all_nan.beams, all_nan.valid), (3, 0));
        assert!(all_nan.blinded(0.01) && all_nan.nearest == f64::INFINITY);
        // The sector follows the direction asked for: behind the robot (pi) and to its left.
        let m = LaserScan { angle_min: -3.0, angle_increment: 1.0, range_min: 0.1, range_max: 10.0, ranges: vec![1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0], ..Default::default() };
        let o = super::scan(&m, &p).expect("scan");
        assert_eq!(o.sector(std::f64::consts::PI, 0.5).nearest, 1.0, "beam at -3 rad is behind");
        assert_eq!(o.sector(std::f64::consts::FRAC_PI_2, 0.5).nearest, 6.0, "beam at +2 rad is left");
        assert!(o.sector(std::f64::consts::FRAC_PI_2 / 2.0, 0.1).blinded(0.0), "no beam there");
        // The scanner mounted backwards: its beam at pi is base_link's forward.
        let back = ObstacleParams { scan_yaw: std::f64::consts::PI, ..p.clone() };
        let m = LaserScan { angle_min: 3.0, angle_increment: 0.1, range_min: 0.1, range_max: 5.0, ranges: vec![1.5; 3], ..Default::default() };
        assert_eq!(forward(&m, &back).nearest, 1.5);
        let bad = LaserScan { angle_increment: 0.0, ..laser(vec![1.0, 1.0]) };
        assert!(super::scan(&bad, &p).is_err());
        assert!(super::scan(&laser(vec![]), &p).is_err());
    }

    #[test]
    fn stamp_order_drops_duplicates_and_small_reorders() {
        let mut s = StampOrder::default();
        assert_eq!(s.check(Input::Wind, 100), StampCheck::Fresh);
        assert_eq!(s.check(Input::Wind, 100), StampCheck::Duplicate);
        assert_eq!(s.check(Input::Wind, 50), StampCheck::OutOfOrder);
        assert_eq!(s.check(Input::Odom, 50), StampCheck::Fresh);
        assert_eq!(s.check(Input::Wind, 0), StampCheck::Fresh);
        assert_eq!(s.check(Input::Wind, 5 * STAMP_RESTART), StampCheck::Fresh);
        assert_eq!(s.check(Input::Wind, 10), StampCheck::Restart);
        assert_eq!(s.check(Input::Wind, 20), StampCheck::Fresh);
    }

    #[test]
    fn field_errors_name_topic_and_field() {
        let f = Frames::default();
        let m = OdorBearing { cue: 7, ..Default::default() };
        let e = bearing(&m, &f).expect_err("bad cue");
        assert!(e.to_string().contains("odor_bearing") && e.to_string().contains("cue"), "{e}");
        let w = Vector3Stamped { header: Header::new(0, "map"), vector: Vector3::default() };
        assert!(wind(&w, &f).expect_err("frame").to_string().contains("'map'"));
        let o = Odometry { pose: PoseWithCovariance { pose: Pose { orientation: Quaternion { w: 0.0, ..Default::default() }, ..Default::default() }, ..Default::default() }, ..Default::default() };
        assert!(odom(&o, &f).expect_err("zero quaternion").to_string().contains("orientation"));
        let mut o = Odometry::default();
        let q = Quaternion::from_yaw(1.0);
        o.pose.pose.orientation = Quaternion { x: q.x * 1.05, y: q.y * 1.05, z: q.z * 1.05, w: q.w * 1.05 };
        assert!((odom(&o, &f).expect("5 % off is accepted").pose.yaw - 1.0).abs() < 1e-12);
        let pf = PlumeFeatures { intermittency: 1.5, ..Default::default() };
        assert!(features(&pf).expect_err("range").to_string().contains("intermittency"));
        let pf = PlumeFeatures { bout_rate: f64::INFINITY, ..Default::default() };
        assert!(features(&pf).expect_err("range").to_string().contains("bout_rate"));
        // A filling window: NaN rate and intermittency are accepted, and are no contact.
        let warm = PlumeFeatures { bout_rate: f64::NAN, intermittency: f64::NAN, distance: f64::NAN, distance_sigma: f64::NAN, ..Default::default() };
        let obs = features(&warm).expect("NaN means not known yet");
        assert!(!(obs.bout_rate >= 0.0) && !(obs.intermittency >= 0.0));
        let ok = PlumeFeatures { bout_rate: 1.0, distance: f64::NAN, distance_sigma: f64::NAN, ..Default::default() };
        assert_eq!(features(&ok).map(|f| f.distance), Ok(None));
    }
}
