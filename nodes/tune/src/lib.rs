//! Parameter sweeps over the sillage node graph (the logic behind `sillage tune`).
//!
//! - [`sweep`]: the sweep file (YAML, unknown keys refused), loaded and validated against the
//!   nodes' own parameter lists; [`bags`]: its bag section (bags, truth topic, windows);
//! - [`design`]: the points of a sweep (grid, seeded random, seeded Latin hypercube);
//! - [`params_out`]: a point as a ROS 2 parameter file the nodes load unchanged;
//! - [`run`]: the [`Evaluator`] trait, the work units of a sweep, shards, the parallel loop;
//! - [`results`]: the streamed JSON-lines results file, resume and merge;
//! - [`stats`] and [`rank`]: statistics over seeds with confidence intervals, and the ranking.
//!
//! Nothing here knows the simulator: an [`Evaluator`] turns (point, case) into metrics, so the
//! same sweep runs against the simulator, against bags, or against a synthetic objective in tests.

pub mod bags;
pub mod design;
pub mod error;
pub mod params_out;
pub mod rank;
pub mod results;
pub mod run;
pub mod stats;
pub mod sweep;

pub use design::{ParamValue, Point};
pub use error::TuneError;
pub use rank::{rank, Ranked, TermEstimate};
pub use results::{Record, ResultsFile};
pub use run::{Case, CaseKind, Evaluator, Metrics, Shard, Unit};
pub use sweep::{LoadedSweep, MetricNames, Sweep};
pub use run::{run_sweep, RunReport};
