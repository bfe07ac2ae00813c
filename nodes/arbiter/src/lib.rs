//! The arbiter node core: the behaviour state machine that steers an odor-guided robot, with a
//! safety guard applied last to every command.
//!
//! Inputs (port order): `odor_bearing` (OdorBearing), `plume_features` (PlumeFeatures),
//! `odor_events` (OdorEventArray), `wind` (Vector3Stamped, base_link, air velocity pointing where
//! the air goes to), `odom` (Odometry), `e_stop` (Bool), `e_stop_reset` (Empty), `scan`
//! (LaserScan, optional), `source_posterior` (PoseWithCovarianceStamped, odom, optional). Outputs: `cmd_vel` (TwistStamped or Twist by `cmd_vel_stamped`,
//! frame base_link, at the control rate), `search_state` (SearchState, latched),
//! `source_estimate` (PointStamped, odom).
//!
//! Modules, each with its contract:
//! - [`params`]: the typed parameters and their validation;
//! - [`inputs`]: input order and the checks of every message; [`stats`]: their counters;
//! - [`watchdog`]: input freshness; [`wind`]: wind in odom; [`contact`]: the contact decision;
//! - [`modes`]: modes, precedence and transitions; [`strategy`]: the behaviour strategies and
//!   how to add one; [`declare`]: source declaration from the plume features;
//!   [`plume_end`]: source declaration where the plume keeps ending upwind;
//!   [`posterior`]: the optional source posterior and its declaration rule;
//!   [`avoid`]: local obstacle avoidance that bends headings around what the laser sees;
//! - [`drive`]: from motion intent to a body command; [`guard`]: caps, rate limits, e-stop
//!   latch, obstacle stop, geofence;
//! - [`node`]: the [`NodeCore`](sillage_core::NodeCore) implementation; [`diagnostics`].
//!
//! Safety decisions (details in [`guard`]): the e-stop zeroes the command at once, bypassing
//! the deceleration limits, in the very call that receives `e_stop = true`; the latch releases
//! only on an `e_stop_reset` that follows an `e_stop = false`; the obstacle stop also bypasses
//! the deceleration limit; watchdog halts, WAITING and DECLARED ramp down under the
//! deceleration limits; every input is stale until its first message; a non-finite value never
//! reaches `cmd_vel`.

pub mod avoid;
pub mod contact;
pub mod declare;
pub mod diagnostics;
pub mod drive;
pub mod error;
pub mod plume_end;
pub mod posterior;
pub mod geometry;
pub mod guard;
pub mod inputs;
pub mod modes;
pub mod node;
pub mod params;
pub mod stats;
pub mod strategy;
pub mod watchdog;
pub mod wind;

pub use error::ArbiterError;
pub use modes::Mode;
pub use node::{Arbiter, Declared, NODE_NAME};
pub use params::Params;
pub use strategy::Strategy;
