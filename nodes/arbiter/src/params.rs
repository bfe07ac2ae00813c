//! The arbiter's parameters: one typed, nested struct (a ROS parameter file's `ros__parameters`
//! map; nested maps are dotted names such as `guard.max_linear`), with documented defaults and
//! units, and [`NodeParams::validate`] refusing bad values with the dotted key named.
//!
//! Start-up-only keys: `rate` and `cmd_vel_stamped` fix the timer and the output port type, and
//! `base` must not switch under a moving robot (a holonomic base's `linear.y` would be cut
//! without a ramp), so a run-time change of them is refused (see [`crate::Arbiter`]). So is
//! every `limits.*` key and `e_stop.required`: the limits are the hard ceilings of the `guard.*`
//! caps, and a run-time change of a cap above its ceiling is refused by [`NodeParams::validate`]
//! with both keys named.

use crate::geometry::Polygon;
use serde::{Deserialize, Serialize};
use sillage_core::params::{ensure, NodeParams, ParamError};

/// Which behaviour drives the search (every one shares the guard).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum StrategyKind {
    /// Surge upwind while in contact, cast crosswind with growing legs after a loss.
    CastSurge,
    /// Upwind zigzag whose angle resets on each contact and opens up after a loss.
    Zigzag,
    /// Archimedean spiral around the last contact (or the start) for weak or unreliable wind.
    Spiral,
    /// Bare bilateral reaction: turn toward the bearing, move forward (a baseline).
    Reactive,
}

impl StrategyKind {
    /// The parameter value naming this strategy.
    pub fn name(self) -> &'static str {
        match self {
            StrategyKind::CastSurge => "cast_surge",
            StrategyKind::Zigzag => "zigzag",
            StrategyKind::Spiral => "spiral",
            StrategyKind::Reactive => "reactive",
        }
    }
}

/// Kind of mobile base.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum BaseKind {
    /// Differential drive: `linear.y` is always 0.
    DiffDrive,
    /// Holonomic: may translate sideways with `linear.y`.
    Holonomic,
}

/// What a strategy does when its search pattern reaches its limit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum LimitAction {
    /// Stop and wait (WAITING) where the robot is.
    GiveUp,
    /// Drive back to the last contact point, then wait there.
    Return,
    /// Keep searching: acquisition sweeps ([`crate::strategy::Sweep`]) around the most likely
    /// source region (the posterior mean when there is one, else the last contact point).
    Search,
}

/// What the guard does at the geofence.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum FenceAction {
    /// Refuse the linear motion that would leave the fence (rotation stays allowed).
    Stop,
    /// Replace it by a turn toward the inside and a move back in.
    TurnBack,
}

/// Frame names (REP 105).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct Frames {
    /// Robot body frame: `cmd_vel.header.frame_id`, expected frame of `wind` and `odor_bearing`.
    pub base: String,
    /// Odometry frame: expected `odom.header.frame_id`, frame of the geofence, `search_state`
    /// headings and `source_estimate`.
    pub odom: String,
}

impl Default for Frames {
    fn default() -> Self {
        Frames { base: "base_link".into(), odom: "odom".into() }
    }
}

/// Wind conditioning: how the `wind` topic is read (the shared meaning of `sillage_air`: a
/// base-frame reading is relative wind when `relative`, an odom-frame one is always true
/// wind) and how it is filtered.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct WindParams {
    /// A base_link reading is the relative wind at the moving anemometer: the anemometer's own
    /// velocity (odometry twist and lever arm) is added back to get the true wind.
    pub relative: bool,
    /// Anemometer x in base_link (lever arm of the rotation term) [m].
    pub anemometer_x: f64,
    /// Anemometer y in base_link [m].
    pub anemometer_y: f64,
    /// Below this filtered true-wind speed the air is still: no direction [m/s] (> 0).
    pub min_speed: f64,
    /// Time constant of the first-order low-pass applied in the odom frame [s] (0: none).
    pub filter_tau: f64,
}

impl WindParams {
    /// The shared air parameters.
    pub fn air(&self) -> sillage_air::AirParams {
        sillage_air::AirParams { relative: self.relative, anemometer_x: self.anemometer_x, anemometer_y: self.anemometer_y, min_speed: self.min_speed }
    }
}

impl Default for WindParams {
    fn default() -> Self {
        let a = sillage_air::AirParams::default();
        WindParams { relative: a.relative, anemometer_x: a.anemometer_x, anemometer_y: a.anemometer_y, min_speed: a.min_speed, filter_tau: 1.0 }
    }
}

/// When the robot counts as in contact with the plume.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct ContactParams {
    /// Rising odor events needed within `hit_window` for a contact (1..=64).
    pub hits_required: u32,
    /// Window for counting rising events [s].
    pub hit_window: f64,
    /// A rising event counts only if it rises above this level [conditioned units, 0 = the
    /// channel's baseline]: a rise that ends at or below the baseline is the recovery of a
    /// signal that had dipped under it (baseline tracking after a strong hit), not odor.
    pub min_event_level: f64,
    /// Bout rate that starts a contact [Hz].
    pub bout_rate_enter: f64,
    /// Bout rate that keeps a contact going [Hz] (<= `bout_rate_enter`).
    pub bout_rate_exit: f64,
    /// Intermittency that starts a contact [0..1].
    pub intermittency_enter: f64,
    /// Intermittency that keeps a contact going [0..1] (<= `intermittency_enter`).
    pub intermittency_exit: f64,
    /// Contact is lost when no evidence came for this long [s].
    pub loss_timeout: f64,
    /// Feature hits keep a contact going only this long after its last event hit (or its
    /// start) [s]: windowed features outlast the plume ([`crate::contact`]).
    pub feature_hold: f64,
    /// A channel's last event level at least this starts a contact (a sustained concentration
    /// above the clean-air baseline) [conditioned units, 0 = baseline]; 0 = no level hits.
    pub level_enter: f64,
    /// The level that keeps a contact going [conditioned units] (<= `level_enter`).
    pub level_exit: f64,
    /// A channel with no event for this long holds a steady level [s].
    pub level_steady: f64,
}

impl Default for ContactParams {
    fn default() -> Self {
        ContactParams {
            hits_required: 1,
            hit_window: 1.0,
            min_event_level: 0.0,
            bout_rate_enter: 0.3,
            bout_rate_exit: 0.1,
            intermittency_enter: 0.1,
            intermittency_exit: 0.03,
            loss_timeout: 2.0,
            feature_hold: 3.0,
            level_enter: 0.2,
            level_exit: 0.1,
            level_steady: 3.0,
        }
    }
}

/// The shared heading controller.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct DriveParams {
    /// Yaw rate per radian of heading error [1/s].
    pub heading_gain: f64,
    /// Differential drive: forward speed falls to zero at this heading error [rad] (0..pi].
    pub align_angle: f64,
}

impl Default for DriveParams {
    fn default() -> Self {
        DriveParams { heading_gain: 1.5, align_angle: 0.8 }
    }
}

/// Surging toward the source.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct SurgeParams {
    /// Speed while surging [m/s].
    pub speed: f64,
    /// Weight of the decoded bearing against the upwind heading [0..1], scaled by the bearing's
    /// confidence: 0 = pure upwind, 1 with full confidence = pure bearing.
    pub bearing_gain: f64,
    /// Bearings with a lower confidence are ignored [0..1].
    pub min_confidence: f64,
}

impl Default for SurgeParams {
    fn default() -> Self {
        SurgeParams { speed: 0.25, bearing_gain: 0.5, min_confidence: 0.2 }
    }
}

/// Crosswind casting after a loss (also the shared limit of every search pattern).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct CastParams {
    /// Speed while casting [m/s].
    pub speed: f64,
    /// Half-width of the first leg, measured from the last contact point [m].
    pub leg_initial: f64,
    /// Each leg is this much longer than the previous one (>= 1).
    pub growth: f64,
    /// Legs stop growing at this half-width [m] (>= `leg_initial`).
    pub leg_max: f64,
    /// Legs without contact before `on_limit` applies (>= 1).
    pub max_legs: u32,
    /// What to do at the limit.
    pub on_limit: LimitAction,
    /// A leg's end (or the return point) counts as reached within this distance [m].
    pub arrive_tolerance: f64,
    /// A leg also ends after this multiple of its nominal duration (length / speed) (>= 1).
    pub leg_time_factor: f64,
}

impl Default for CastParams {
    fn default() -> Self {
        CastParams {
            speed: 0.2,
            leg_initial: 0.5,
            growth: 1.5,
            leg_max: 4.0,
            max_legs: 8,
            on_limit: LimitAction::Search,
            arrive_tolerance: 0.15,
            leg_time_factor: 3.0,
        }
    }
}

/// Plume acquisition sweeps ([`crate::strategy::Sweep`]); speed, arrival and leg time-out
/// are `cast.*`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct SweepParams {
    /// Half-width of the first crosswind leg [m].
    pub width_initial: f64,
    /// Each leg's half-width is this much larger than the previous one (>= 1).
    pub growth: f64,
    /// Half-widths stop growing here [m] (>= `width_initial`).
    pub width_max: f64,
    /// Each leg runs this much further downwind (or upwind, on the way back) [m].
    pub spacing: f64,
    /// Legs turn back upwind beyond this distance downwind of the origin [m].
    pub max_downwind: f64,
    /// Legs turn back downwind beyond this distance upwind of the origin [m].
    pub max_upwind: f64,
}

impl Default for SweepParams {
    fn default() -> Self {
        SweepParams { width_initial: 1.0, growth: 1.5, width_max: 6.0, spacing: 1.0, max_downwind: 12.0, max_upwind: 6.0 }
    }
}

/// Local obstacle avoidance ([`crate::avoid`]).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct AvoidParams {
    /// Bend headings around what the scan sees (once a scan has been received).
    pub enabled: bool,
    /// Half-width of the corridor that must be clear: the robot's half-width plus a margin [m].
    pub half_width: f64,
    /// Length of that corridor ahead [m].
    pub look_ahead: f64,
    /// Heading step of the search for a free direction [rad].
    pub step: f64,
    /// Largest bend from the wanted heading [rad] (<= pi).
    pub max_turn: f64,
    /// An odor hit within this time of the wanted heading being blocked is "at an obstacle
    /// face": a plume whose upwind end is such a hit does not count for the plume-end rule [s].
    pub distrust: f64,
}

impl Default for AvoidParams {
    fn default() -> Self {
        AvoidParams { enabled: true, half_width: 0.45, look_ahead: 1.2, step: 0.1745, max_turn: 1.75, distrust: 1.0 }
    }
}

/// The zigzag variant.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct ZigzagParams {
    /// Length of one zigzag leg while in contact [m]; out of contact legs grow by
    /// `cast.growth` up to `cast.leg_max`.
    pub leg_length: f64,
    /// Angle between a leg and the upwind direction after a contact [rad].
    pub angle_initial: f64,
    /// Factor by which the angle opens after each leg without contact (>= 1).
    pub angle_growth: f64,
    /// Largest angle [rad] (<= pi/2: pure crosswind).
    pub angle_max: f64,
}

impl Default for ZigzagParams {
    fn default() -> Self {
        ZigzagParams { leg_length: 1.0, angle_initial: 0.5, angle_growth: 1.4, angle_max: std::f64::consts::FRAC_PI_2 }
    }
}

/// The spiral search.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct SpiralParams {
    /// Distance between successive turns [m] (r = b theta with b = spacing / 2 pi).
    pub spacing: f64,
    /// Speed along the spiral [m/s].
    pub speed: f64,
    /// The spiral's limit radius [m]; beyond it `cast.on_limit` applies.
    pub max_radius: f64,
    /// Pursuit distance along the spiral [m].
    pub lookahead: f64,
    /// Spiral around the start position before the first contact (else wait).
    pub search_before_contact: bool,
}

impl Default for SpiralParams {
    fn default() -> Self {
        SpiralParams { spacing: 0.6, speed: 0.2, max_radius: 5.0, lookahead: 0.3, search_before_contact: true }
    }
}

/// The bilateral reactive baseline.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct ReactiveParams {
    /// Forward speed [m/s].
    pub speed: f64,
    /// Yaw rate per radian of bearing [1/s].
    pub turn_gain: f64,
}

impl Default for ReactiveParams {
    fn default() -> Self {
        ReactiveParams { speed: 0.2, turn_gain: 1.0 }
    }
}

/// Source declaration.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct DeclareParams {
    /// Declare at all (either rule).
    pub enabled: bool,
    /// Calibrated distance at most [m].
    pub max_distance: f64,
    /// Its sigma at most [m]; a larger (or NaN) sigma makes the distance unusable.
    pub max_sigma: f64,
    /// Without a usable distance never declare (else bout rate and intermittency suffice).
    pub require_distance: bool,
    /// Bout rate at least [Hz].
    pub min_bout_rate: f64,
    /// Intermittency at least [0..1].
    pub min_intermittency: f64,
    /// The evidence must hold, in contact, on every features message for this long [s].
    pub dwell: f64,
    /// The second rule: where the plume keeps ending upwind ([`crate::plume_end`]).
    pub plume_end: PlumeEndParams,
    /// The third rule: the source posterior is concentrated ([`crate::posterior`]).
    pub posterior: PosteriorDeclareParams,
}

/// Declaration from the source posterior ([`crate::posterior`]).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct PosteriorDeclareParams {
    /// Declare by this rule (also needs `cues.use_posterior` and a fresh posterior).
    pub enabled: bool,
    /// Radius around the posterior mean whose probability mass counts [m].
    pub radius: f64,
    /// Mass within `radius` at least [0..1] (Gaussian approximation from the covariance).
    pub min_mass: f64,
    /// The robot must be within this distance of the mean [m] (it has sampled the region).
    pub near: f64,
    /// A posterior older than this is not used [s].
    pub max_age: f64,
}

impl Default for PosteriorDeclareParams {
    fn default() -> Self {
        PosteriorDeclareParams { enabled: false, radius: 0.5, min_mass: 0.8, near: 1.0, max_age: 5.0 }
    }
}

/// Plume-end declaration ([`crate::plume_end`]).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct PlumeEndParams {
    /// Declare by this rule at all.
    pub enabled: bool,
    /// Rising-event hits a contact period needs for its front to count (1..=1000).
    pub min_hits: u32,
    /// A front further upwind than the best one by more than this is progress [m].
    pub advance: f64,
    /// A front within this distance of the best one that does not advance it is a stall [m].
    pub radius: f64,
    /// Stalls needed to declare (1..=100).
    pub min_stalls: u32,
}

impl Default for PlumeEndParams {
    fn default() -> Self {
        PlumeEndParams { enabled: true, min_hits: 2, advance: 0.3, radius: 0.6, min_stalls: 2 }
    }
}

impl Default for DeclareParams {
    fn default() -> Self {
        DeclareParams {
            enabled: true,
            max_distance: 0.5,
            max_sigma: 0.3,
            require_distance: false,
            min_bout_rate: 1.0,
            min_intermittency: 0.3,
            dwell: 3.0,
            plume_end: PlumeEndParams::default(),
            posterior: PosteriorDeclareParams::default(),
        }
    }
}

/// Speed caps and rate limits, applied last to every command.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct GuardParams {
    /// Planar speed cap, |(linear.x, linear.y)| [m/s].
    pub max_linear: f64,
    /// Largest backward speed, -linear.x (<= `max_linear`) [m/s].
    pub max_reverse: f64,
    /// Yaw rate cap |angular.z| [rad/s].
    pub max_angular: f64,
    /// Linear acceleration limit per axis [m/s^2].
    pub max_linear_accel: f64,
    /// Linear deceleration limit per axis [m/s^2].
    pub max_linear_decel: f64,
    /// Angular acceleration limit [rad/s^2].
    pub max_angular_accel: f64,
    /// Angular deceleration limit [rad/s^2].
    pub max_angular_decel: f64,
}

impl Default for GuardParams {
    fn default() -> Self {
        GuardParams {
            max_linear: 0.3,
            max_reverse: 0.0,
            max_angular: 1.0,
            max_linear_accel: 0.5,
            max_linear_decel: 1.0,
            max_angular_accel: 2.0,
            max_angular_decel: 4.0,
        }
    }
}

/// The robot's declared limits: hard ceilings of the `guard.*` caps (start-up only; a
/// `guard.*` value above its ceiling is refused, at start and at run time).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct LimitsParams {
    /// Ceiling of `guard.max_linear` [m/s].
    pub max_linear: f64,
    /// Ceiling of `guard.max_reverse` [m/s].
    pub max_reverse: f64,
    /// Ceiling of `guard.max_angular` [rad/s].
    pub max_angular: f64,
    /// Ceiling of `guard.max_linear_accel` [m/s^2].
    pub max_linear_accel: f64,
    /// Ceiling of `guard.max_linear_decel` [m/s^2].
    pub max_linear_decel: f64,
    /// Ceiling of `guard.max_angular_accel` [rad/s^2].
    pub max_angular_accel: f64,
    /// Ceiling of `guard.max_angular_decel` [rad/s^2].
    pub max_angular_decel: f64,
}

impl Default for LimitsParams {
    fn default() -> Self {
        // A small indoor research base (common practice for this class of robot; set the
        // values of your own base from its data sheet).
        LimitsParams {
            max_linear: 1.0,
            max_reverse: 0.5,
            max_angular: 2.0,
            max_linear_accel: 1.0,
            max_linear_decel: 2.0,
            max_angular_accel: 4.0,
            max_angular_decel: 8.0,
        }
    }
}

impl LimitsParams {
    /// Each cap with its ceiling: (guard key, cap, limits key, ceiling).
    pub fn pairs(&self, g: &GuardParams) -> [(&'static str, f64, &'static str, f64); 7] {
        [
            ("guard.max_linear", g.max_linear, "limits.max_linear", self.max_linear),
            ("guard.max_reverse", g.max_reverse, "limits.max_reverse", self.max_reverse),
            ("guard.max_angular", g.max_angular, "limits.max_angular", self.max_angular),
            ("guard.max_linear_accel", g.max_linear_accel, "limits.max_linear_accel", self.max_linear_accel),
            ("guard.max_linear_decel", g.max_linear_decel, "limits.max_linear_decel", self.max_linear_decel),
            ("guard.max_angular_accel", g.max_angular_accel, "limits.max_angular_accel", self.max_angular_accel),
            ("guard.max_angular_decel", g.max_angular_decel, "limits.max_angular_decel", self.max_angular_decel),
        ]
    }
}

/// The e-stop input.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct EStopParams {
    /// Stay HALTED until one `e_stop` message has been heard (start-up only). Set false only
    /// for a robot that has no e-stop topic at all.
    pub required: bool,
}

impl Default for EStopParams {
    fn default() -> Self {
        EStopParams { required: true }
    }
}

/// Input timeouts [s]: an input older than its timeout, or never received, is stale.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct WatchdogParams {
    /// `odor_bearing` [s].
    pub odor_bearing: f64,
    /// `plume_features` [s].
    pub plume_features: f64,
    /// `odor_events` (one array per sample, empty ones included) [s].
    pub odor_events: f64,
    /// `wind` [s] (halts only strategies that use the wind).
    pub wind: f64,
    /// `odom` [s].
    pub odom: f64,
    /// `scan` [s] (when the scan is enabled or has been received).
    pub scan: f64,
    /// `e_stop` as a heartbeat [s]; 0: the e-stop topic need not repeat.
    pub e_stop: f64,
}

impl Default for WatchdogParams {
    fn default() -> Self {
        WatchdogParams { odor_bearing: 1.0, plume_features: 2.0, odor_events: 1.0, wind: 1.0, odom: 0.5, scan: 0.5, e_stop: 0.0 }
    }
}

/// Obstacle stop on the sector of `scan` toward the commanded direction of motion.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct ObstacleParams {
    /// Require a scan from the start (else the stop is active once a scan has been received).
    pub enabled: bool,
    /// Half-angle of the guarded sector around the direction of motion [rad] (0..pi].
    pub sector_half_angle: f64,
    /// Planar motion toward an obstacle is zeroed at once closer than this [m].
    pub stop_distance: f64,
    /// Planar speed is scaled down linearly below this [m] (>= `stop_distance`).
    pub slow_distance: f64,
    /// Yaw of the scanner's x axis in base_link [rad].
    pub scan_yaw: f64,
    /// The guarded sector (centred on the commanded direction of motion) is blinded when fewer
    /// than this fraction of its beams are valid [0..1]; blinded means no motion.
    pub min_valid_fraction: f64,
}

impl Default for ObstacleParams {
    fn default() -> Self {
        ObstacleParams { enabled: false, sector_half_angle: 0.5, stop_distance: 0.3, slow_distance: 0.8, scan_yaw: 0.0, min_valid_fraction: 0.5 }
    }
}

/// Optional geofence in the odom frame.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct GeofenceParams {
    /// Enforce the fence.
    pub enabled: bool,
    /// Vertices as a flat list `[x0, y0, x1, y1, ...]` [m] in the odom frame; a simple polygon
    /// of at least 3 vertices (not closed: the last vertex joins the first).
    pub polygon: Vec<f64>,
    /// What to do at the fence.
    pub action: FenceAction,
    /// Look-ahead along the motion: a command whose look-ahead point is outside counts as
    /// leaving [m].
    pub margin: f64,
}

impl Default for GeofenceParams {
    fn default() -> Self {
        GeofenceParams { enabled: false, polygon: Vec::new(), action: FenceAction::Stop, margin: 0.5 }
    }
}

/// Parameters of the arbiter.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct Params {
    /// Control rate: `cmd_vel` is published at this rate [Hz] (start-up only).
    pub rate: f64,
    /// Behaviour strategy: `cast_surge`, `zigzag`, `spiral` or `reactive`.
    pub strategy: StrategyKind,
    /// Base kind: `diff_drive` or `holonomic` (start-up only).
    pub base: BaseKind,
    /// Publish `cmd_vel` as TwistStamped (true) or Twist (false) (start-up only).
    pub cmd_vel_stamped: bool,
    /// `search_state` is republished at least this often [s] (and on every transition).
    pub state_period: f64,
    /// Frame names.
    pub frames: Frames,
    /// Wind conditioning.
    pub wind: WindParams,
    /// Contact decision.
    pub contact: ContactParams,
    /// Heading controller.
    pub drive: DriveParams,
    /// Surging.
    pub surge: SurgeParams,
    /// Casting and the shared search limit.
    pub cast: CastParams,
    /// Zigzag strategy.
    pub zigzag: ZigzagParams,
    /// Plume acquisition sweeps.
    pub sweep: SweepParams,
    /// Local obstacle avoidance.
    pub avoid: AvoidParams,
    /// Spiral strategy.
    pub spiral: SpiralParams,
    /// Reactive strategy.
    pub reactive: ReactiveParams,
    /// Source declaration.
    pub declare: DeclareParams,
    /// Caps and rate limits.
    pub guard: GuardParams,
    /// The robot's declared limits: ceilings of the caps (start-up only).
    pub limits: LimitsParams,
    /// The e-stop input.
    pub e_stop: EStopParams,
    /// Input timeouts.
    pub watchdog: WatchdogParams,
    /// Obstacle stop.
    pub obstacle: ObstacleParams,
    /// Geofence.
    pub geofence: GeofenceParams,
    /// Which odor cues the behaviour may use (ablation switches).
    pub cues: CueParams,
}

/// Which odor cues the behaviour may use. Both off is the ablation that leaves the arbiter
/// with the wind and the contact decision only, to measure what the direction cues add.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct CueParams {
    /// Use the content of `odor_bearing` (direction and confidence) for steering and for the
    /// declared position. When false the bearing is ignored, but `odor_bearing` is still
    /// required and watchdogged like every input (its liveness keeps the safety contract).
    pub use_bearing: bool,
    /// Use a posterior over the source position, once the arbiter takes one (it has no
    /// posterior input yet; a posterior-based behaviour must honour this switch).
    pub use_posterior: bool,
}

impl Default for CueParams {
    fn default() -> Self {
        CueParams { use_bearing: true, use_posterior: true }
    }
}

impl Default for Params {
    fn default() -> Self {
        Params {
            rate: 10.0,
            strategy: StrategyKind::CastSurge,
            base: BaseKind::DiffDrive,
            cmd_vel_stamped: true,
            state_period: 1.0,
            frames: Frames::default(),
            wind: WindParams::default(),
            contact: ContactParams::default(),
            drive: DriveParams::default(),
            surge: SurgeParams::default(),
            cast: CastParams::default(),
            zigzag: ZigzagParams::default(),
            sweep: SweepParams::default(),
            avoid: AvoidParams::default(),
            spiral: SpiralParams::default(),
            reactive: ReactiveParams::default(),
            declare: DeclareParams::default(),
            guard: GuardParams::default(),
            limits: LimitsParams::default(),
            e_stop: EStopParams::default(),
            watchdog: WatchdogParams::default(),
            obstacle: ObstacleParams::default(),
            geofence: GeofenceParams::default(),
            cues: CueParams::default(),
        }
    }
}

impl Params {
    /// The control period [s].
    pub fn period(&self) -> f64 {
        1.0 / self.rate
    }

    /// The geofence polygon if the fence is enforced.
    pub fn fence_polygon(&self) -> Option<Polygon> {
        if self.geofence.enabled {
            Polygon::from_flat(&self.geofence.polygon).ok()
        } else {
            None
        }
    }
}

/// `value` finite and > 0.
fn positive(value: f64, key: &str, unit: &str) -> Result<(), ParamError> {
    ensure(value.is_finite() && value > 0.0, key, format!("must be > 0 [{unit}], got {value}"))
}

/// `value` finite and >= 0.
fn non_negative(value: f64, key: &str, unit: &str) -> Result<(), ParamError> {
    ensure(value.is_finite() && value >= 0.0, key, format!("must be >= 0 [{unit}], got {value}"))
}

/// `value` finite in `lo..=hi`.
fn within(value: f64, lo: f64, hi: f64, key: &str) -> Result<(), ParamError> {
    ensure(value.is_finite() && (lo..=hi).contains(&value), key, format!("must be in [{lo}, {hi}], got {value}"))
}

/// `low <= high` for an ordered pair of limits (reported on the `low` key).
fn ordered(low: f64, high: f64, low_key: &str, high_key: &str) -> Result<(), ParamError> {
    ensure(low <= high, low_key, format!("must be <= {high_key} ({low} > {high}): inverted limits"))
}

fn frame(name: &str, key: &str) -> Result<(), ParamError> {
    ensure(!name.is_empty() && !name.contains(char::is_whitespace), key, "must be a non-empty frame name without spaces")
}

impl NodeParams for Params {
    fn validate(&self) -> Result<(), ParamError> {
        positive(self.rate, "rate", "Hz")?;
        ensure(self.rate <= 1000.0, "rate", format!("must be <= 1000 [Hz], got {}", self.rate))?;
        positive(self.state_period, "state_period", "s")?;
        frame(&self.frames.base, "frames.base")?;
        frame(&self.frames.odom, "frames.odom")?;

        let w = &self.wind;
        w.air().check("wind")?;
        non_negative(w.filter_tau, "wind.filter_tau", "s")?;

        let c = &self.contact;
        ensure((1..=64).contains(&c.hits_required), "contact.hits_required", format!("must be in 1..=64, got {}", c.hits_required))?;
        positive(c.hit_window, "contact.hit_window", "s")?;
        ensure(c.min_event_level.is_finite(), "contact.min_event_level", format!("must be finite, got {}", c.min_event_level))?;
        non_negative(c.bout_rate_enter, "contact.bout_rate_enter", "Hz")?;
        non_negative(c.bout_rate_exit, "contact.bout_rate_exit", "Hz")?;
        ordered(c.bout_rate_exit, c.bout_rate_enter, "contact.bout_rate_exit", "contact.bout_rate_enter")?;
        within(c.intermittency_enter, 0.0, 1.0, "contact.intermittency_enter")?;
        within(c.intermittency_exit, 0.0, 1.0, "contact.intermittency_exit")?;
        ordered(c.intermittency_exit, c.intermittency_enter, "contact.intermittency_exit", "contact.intermittency_enter")?;
        positive(c.loss_timeout, "contact.loss_timeout", "s")?;
        non_negative(c.feature_hold, "contact.feature_hold", "s")?;
        non_negative(c.level_enter, "contact.level_enter", "conditioned units")?;
        non_negative(c.level_exit, "contact.level_exit", "conditioned units")?;
        if c.level_enter > 0.0 {
            ordered(c.level_exit, c.level_enter, "contact.level_exit", "contact.level_enter")?;
        }
        non_negative(c.level_steady, "contact.level_steady", "s")?;

        positive(self.drive.heading_gain, "drive.heading_gain", "1/s")?;
        ensure(
            self.drive.align_angle.is_finite() && self.drive.align_angle > 0.0 && self.drive.align_angle <= std::f64::consts::PI,
            "drive.align_angle",
            format!("must be in (0, pi] [rad], got {}", self.drive.align_angle),
        )?;

        non_negative(self.surge.speed, "surge.speed", "m/s")?;
        within(self.surge.bearing_gain, 0.0, 1.0, "surge.bearing_gain")?;
        within(self.surge.min_confidence, 0.0, 1.0, "surge.min_confidence")?;

        let k = &self.cast;
        non_negative(k.speed, "cast.speed", "m/s")?;
        positive(k.leg_initial, "cast.leg_initial", "m")?;
        ensure(k.growth.is_finite() && k.growth >= 1.0, "cast.growth", format!("must be >= 1, got {}", k.growth))?;
        positive(k.leg_max, "cast.leg_max", "m")?;
        ordered(k.leg_initial, k.leg_max, "cast.leg_initial", "cast.leg_max")?;
        ensure(k.max_legs >= 1, "cast.max_legs", "must be >= 1")?;
        positive(k.arrive_tolerance, "cast.arrive_tolerance", "m")?;
        ensure(
            k.leg_time_factor.is_finite() && k.leg_time_factor >= 1.0,
            "cast.leg_time_factor",
            format!("must be >= 1, got {}", k.leg_time_factor),
        )?;

        let w = &self.sweep;
        positive(w.width_initial, "sweep.width_initial", "m")?;
        ensure(w.growth.is_finite() && w.growth >= 1.0, "sweep.growth", format!("must be >= 1, got {}", w.growth))?;
        ordered(w.width_initial, w.width_max, "sweep.width_initial", "sweep.width_max")?;
        positive(w.spacing, "sweep.spacing", "m")?;
        non_negative(w.max_downwind, "sweep.max_downwind", "m")?;
        non_negative(w.max_upwind, "sweep.max_upwind", "m")?;

        let a = &self.avoid;
        positive(a.half_width, "avoid.half_width", "m")?;
        positive(a.look_ahead, "avoid.look_ahead", "m")?;
        positive(a.step, "avoid.step", "rad")?;
        ensure(a.max_turn.is_finite() && a.max_turn >= a.step && a.max_turn <= std::f64::consts::PI, "avoid.max_turn", format!("must be in [avoid.step, pi] [rad], got {}", a.max_turn))?;
        non_negative(a.distrust, "avoid.distrust", "s")?;

        let z = &self.zigzag;
        positive(z.leg_length, "zigzag.leg_length", "m")?;
        ensure(
            z.angle_initial.is_finite() && z.angle_initial >= 0.0 && z.angle_initial <= std::f64::consts::FRAC_PI_2,
            "zigzag.angle_initial",
            format!("must be in [0, pi/2] [rad], got {}", z.angle_initial),
        )?;
        ensure(z.angle_growth.is_finite() && z.angle_growth >= 1.0, "zigzag.angle_growth", "must be >= 1")?;
        ensure(
            z.angle_max.is_finite() && z.angle_max <= std::f64::consts::FRAC_PI_2 + 1e-12,
            "zigzag.angle_max",
            format!("must be <= pi/2 [rad], got {}", z.angle_max),
        )?;
        ordered(z.angle_initial, z.angle_max, "zigzag.angle_initial", "zigzag.angle_max")?;

        let s = &self.spiral;
        positive(s.spacing, "spiral.spacing", "m")?;
        non_negative(s.speed, "spiral.speed", "m/s")?;
        positive(s.max_radius, "spiral.max_radius", "m")?;
        positive(s.lookahead, "spiral.lookahead", "m")?;

        non_negative(self.reactive.speed, "reactive.speed", "m/s")?;
        non_negative(self.reactive.turn_gain, "reactive.turn_gain", "1/s")?;

        let d = &self.declare;
        non_negative(d.max_distance, "declare.max_distance", "m")?;
        non_negative(d.max_sigma, "declare.max_sigma", "m")?;
        non_negative(d.min_bout_rate, "declare.min_bout_rate", "Hz")?;
        within(d.min_intermittency, 0.0, 1.0, "declare.min_intermittency")?;
        non_negative(d.dwell, "declare.dwell", "s")?;
        let f = &d.plume_end;
        ensure((1..=1000).contains(&f.min_hits), "declare.plume_end.min_hits", format!("must be in 1..=1000, got {}", f.min_hits))?;
        non_negative(f.advance, "declare.plume_end.advance", "m")?;
        positive(f.radius, "declare.plume_end.radius", "m")?;
        ensure((1..=100).contains(&f.min_stalls), "declare.plume_end.min_stalls", format!("must be in 1..=100, got {}", f.min_stalls))?;
        let q = &d.posterior;
        positive(q.radius, "declare.posterior.radius", "m")?;
        within(q.min_mass, 0.0, 1.0, "declare.posterior.min_mass")?;
        non_negative(q.near, "declare.posterior.near", "m")?;
        positive(q.max_age, "declare.posterior.max_age", "s")?;

        let g = &self.guard;
        non_negative(g.max_linear, "guard.max_linear", "m/s")?;
        non_negative(g.max_reverse, "guard.max_reverse", "m/s")?;
        ordered(g.max_reverse, g.max_linear, "guard.max_reverse", "guard.max_linear")?;
        non_negative(g.max_angular, "guard.max_angular", "rad/s")?;
        positive(g.max_linear_accel, "guard.max_linear_accel", "m/s^2")?;
        positive(g.max_linear_decel, "guard.max_linear_decel", "m/s^2")?;
        positive(g.max_angular_accel, "guard.max_angular_accel", "rad/s^2")?;
        positive(g.max_angular_decel, "guard.max_angular_decel", "rad/s^2")?;
        for (key, cap, limit_key, ceiling) in self.limits.pairs(g) {
            non_negative(ceiling, limit_key, "robot limit")?;
            ensure(
                cap <= ceiling,
                key,
                format!("{cap} is above the robot's declared limit {limit_key} = {ceiling} (a hard ceiling, set at start-up)"),
            )?;
        }

        let t = &self.watchdog;
        positive(t.odor_bearing, "watchdog.odor_bearing", "s")?;
        positive(t.plume_features, "watchdog.plume_features", "s")?;
        positive(t.odor_events, "watchdog.odor_events", "s")?;
        positive(t.wind, "watchdog.wind", "s")?;
        positive(t.odom, "watchdog.odom", "s")?;
        positive(t.scan, "watchdog.scan", "s")?;
        non_negative(t.e_stop, "watchdog.e_stop", "s")?;

        let o = &self.obstacle;
        ensure(
            o.sector_half_angle.is_finite() && o.sector_half_angle > 0.0 && o.sector_half_angle <= std::f64::consts::PI,
            "obstacle.sector_half_angle",
            format!("must be in (0, pi] [rad], got {}", o.sector_half_angle),
        )?;
        non_negative(o.stop_distance, "obstacle.stop_distance", "m")?;
        non_negative(o.slow_distance, "obstacle.slow_distance", "m")?;
        ordered(o.stop_distance, o.slow_distance, "obstacle.stop_distance", "obstacle.slow_distance")?;
        ensure(o.scan_yaw.is_finite(), "obstacle.scan_yaw", "must be finite [rad]")?;
        within(o.min_valid_fraction, 0.0, 1.0, "obstacle.min_valid_fraction")?;

        let f = &self.geofence;
        non_negative(f.margin, "geofence.margin", "m")?;
        if f.enabled || !f.polygon.is_empty() {
            Polygon::from_flat(&f.polygon).map_err(|e| ParamError::OutOfRange { key: "geofence.polygon".into(), reason: e.to_string() })?;
        }
        Ok(())
    }
}
