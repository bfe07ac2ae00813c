//! Per-channel signal conditioning, shared by every node that reads chemical channels.
//!
//! **Contract: a larger conditioned value means more gas, for every quantity.** For MOX
//! RESISTANCE the resistance falls with gas, so the resistive transforms invert it
//! (conductance, log-conductance, R0/R); CONDUCTANCE already rises with gas; VOLTAGE,
//! CONCENTRATION and RELATIVE pass through and are assumed to rise with gas (give a front end
//! whose voltage falls with gas a negative `gain`).
//!
//! Per sample, in this order ([`Conditioner::step`]):
//! 1. the raw value must be finite, the quantity known ([`SampleFault`] otherwise);
//! 2. health on the raw value: rails (saturated) and stuck value (dead), see [`health`];
//! 3. calibration `c = gain * raw + offset` (in the quantity's units);
//! 4. the transform of [`transform`] (resistive inputs must be > 0 after calibration);
//!    `r0_ratio` uses `r0` [ohm] if set, otherwise R0 is learned as the mean resistance over the
//!    first `r0_learn_time` seconds (the sensor must sit in clean air then; status `Learning`);
//! 5. baseline removal ([`baseline`]): output = transformed - baseline, where the baseline rises
//!    with `baseline_time_constant` and falls with `baseline_fall_time_constant` (it does not
//!    follow odor transients that are short against `baseline_time_constant`); the baseline is
//!    frozen while the channel is saturated. `baseline_time_constant = 0` turns removal off.
//!
//! A rejected sample leaves every state untouched. A change of quantity resets the state (the
//! old baseline is in other units).

pub mod baseline;
pub mod health;
pub mod transform;

pub use transform::Transform;

use crate::overrides::overridable;
use baseline::Baseline;
use health::Health;
use sillage_core::params::{ensure, ParamError};
use sillage_core::Nanos;
use thiserror::Error;

overridable! {
    /// Conditioning parameters of a channel (node-wide, or per channel via the overrides).
    pub struct ConditioningParams / ConditioningOverrides {
        /// Conversion to a value that grows with gas: `auto`, `conductance`,
        /// `log_conductance`, `r0_ratio`, `pass_through` (see [`Transform`]).
        pub transform: Transform = Transform::Auto,
        /// Calibration gain: c = gain * raw + offset [quantity units per raw unit]; non-zero.
        pub gain: f64 = 1.0,
        /// Calibration offset [quantity units].
        pub offset: f64 = 0.0,
        /// Clean-air resistance R0 for `r0_ratio` [ohm]; 0 = learn it.
        pub r0: f64 = 0.0,
        /// Time over which R0 is learned from the first samples [s] (> 0).
        pub r0_learn_time: f64 = 10.0,
        /// Baseline time constant for rises [s]; 0 = no baseline removal.
        pub baseline_time_constant: f64 = 300.0,
        /// Baseline time constant for falls [s]; 0 = follow falls at once.
        pub baseline_fall_time_constant: f64 = 20.0,
        /// Low rail [raw units]: readings at or below it are saturated (on if low < high).
        pub rail_low: f64 = 0.0,
        /// High rail [raw units]: readings at or above it are saturated (on if low < high).
        pub rail_high: f64 = 0.0,
        /// A reading unchanged for this long marks the channel dead [s]; 0 = off.
        pub stuck_time: f64 = 30.0,
        /// Largest change still counted as "unchanged" for the stuck rule [raw units].
        pub stuck_tolerance: f64 = 0.0,
    }
}

impl ConditioningParams {
    /// Checks ranges; `prefix` is the dotted key of this group (e.g. `conditioning`).
    pub fn check(&self, prefix: &str) -> Result<(), ParamError> {
        let key = |k: &str| if prefix.is_empty() { k.to_string() } else { format!("{prefix}.{k}") };
        ensure(self.gain.is_finite() && self.gain != 0.0, &key("gain"), "must be finite and non-zero")?;
        ensure(self.offset.is_finite(), &key("offset"), "must be finite")?;
        ensure(self.r0.is_finite() && self.r0 >= 0.0, &key("r0"), "must be >= 0 [ohm] (0 = learn)")?;
        ensure(self.r0_learn_time.is_finite() && self.r0_learn_time > 0.0, &key("r0_learn_time"), "must be > 0 [s]")?;
        ensure(
            self.baseline_time_constant.is_finite() && self.baseline_time_constant >= 0.0,
            &key("baseline_time_constant"),
            "must be >= 0 [s]",
        )?;
        ensure(
            self.baseline_fall_time_constant.is_finite() && self.baseline_fall_time_constant >= 0.0,
            &key("baseline_fall_time_constant"),
            "must be >= 0 [s]",
        )?;
        ensure(!self.rail_low.is_nan(), &key("rail_low"), "must be a number")?;
        ensure(!self.rail_high.is_nan(), &key("rail_high"), "must be a number")?;
        ensure(self.stuck_time.is_finite() && self.stuck_time >= 0.0, &key("stuck_time"), "must be >= 0 [s]")?;
        ensure(self.stuck_tolerance.is_finite() && self.stuck_tolerance >= 0.0, &key("stuck_tolerance"), "must be >= 0")
    }
}

/// Why one channel value was rejected.
#[derive(Debug, Error, Clone, Copy, PartialEq)]
pub enum SampleFault {
    /// The raw value is NaN or infinite.
    #[error("value {value} is not finite")]
    NonFinite { value: f64 },
    /// A resistance or conductance (after calibration) is zero or negative.
    #[error("{} {value} must be > 0", quantity_name(*quantity))]
    NonPositive { value: f64, quantity: u8 },
    /// The quantity code is none of ChemSample's constants.
    #[error("unknown quantity {quantity} (known: 0 RESISTANCE .. 4 RELATIVE)")]
    UnknownQuantity { quantity: u8 },
    /// The transform does not apply to the quantity (it would break "larger = more gas").
    #[error("transform '{}' does not apply to {}", transform.as_str(), quantity_name(*quantity))]
    Unsupported { transform: Transform, quantity: u8 },
    /// The transform of a finite value is not finite (e.g. 1/R for a denormal R).
    #[error("transform '{}' of {value} is not finite", transform.as_str())]
    Overflow { value: f64, transform: Transform },
}

impl SampleFault {
    /// A short, stable name of the fault kind (for counters).
    pub fn kind(&self) -> &'static str {
        match self {
            SampleFault::NonFinite { .. } => "non_finite",
            SampleFault::NonPositive { .. } => "non_positive",
            SampleFault::UnknownQuantity { .. } => "unknown_quantity",
            SampleFault::Unsupported { .. } => "unsupported",
            SampleFault::Overflow { .. } => "overflow",
        }
    }
}

/// The name and unit of a ChemSample quantity code.
pub fn quantity_name(quantity: u8) -> &'static str {
    match quantity {
        0 => "resistance [ohm]",
        1 => "conductance [S]",
        2 => "voltage [V]",
        3 => "concentration [ppm]",
        4 => "relative value",
        _ => "unknown quantity",
    }
}

/// Health of a conditioned channel, worst first.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum ChannelStatus {
    /// No valid sample yet.
    Unknown,
    /// The raw value has been stuck for `stuck_time`.
    Dead,
    /// The raw value is at a rail (the conditioned value is passed on, the baseline frozen).
    Saturated,
    /// R0 is still being learned (`r0_ratio` with `r0 = 0`).
    Learning,
    /// Healthy.
    Ok,
}

impl ChannelStatus {
    /// Lower-case name (`ok`, `dead`, ...).
    pub fn as_str(self) -> &'static str {
        match self {
            ChannelStatus::Unknown => "unknown",
            ChannelStatus::Dead => "dead",
            ChannelStatus::Saturated => "saturated",
            ChannelStatus::Learning => "learning",
            ChannelStatus::Ok => "ok",
        }
    }
}

/// Clean-air resistance: fixed, or the running mean over the learning window.
#[derive(Debug, Clone, Copy, PartialEq)]
struct R0 {
    fixed: f64,
    window: Nanos,
    start: Option<Nanos>,
    sum: f64,
    n: u64,
    learning: bool,
}

impl R0 {
    fn new(p: &ConditioningParams) -> R0 {
        R0 { fixed: p.r0, window: sillage_core::time::nanos(p.r0_learn_time), start: None, sum: 0.0, n: 0, learning: false }
    }

    /// The R0 to use at `t` given a new resistance `r` (learns while in the window).
    #[inline]
    fn update(&mut self, t: Nanos, r: f64) -> f64 {
        if self.fixed > 0.0 {
            return self.fixed;
        }
        if let (Some(start), false) = (self.start, self.learning) {
            if self.n > 0 && t >= start {
                return self.sum / self.n as f64; // learned: frozen
            }
        }
        let start = *self.start.get_or_insert(t);
        self.learning = t.saturating_sub(start) < self.window;
        if self.learning || self.n == 0 {
            self.sum += r;
            self.n += 1;
        }
        self.sum / self.n as f64
    }

    fn value(&self) -> Option<f64> {
        if self.fixed > 0.0 {
            Some(self.fixed)
        } else if self.n > 0 {
            Some(self.sum / self.n as f64)
        } else {
            None
        }
    }
}

/// The conditioning state of one channel.
#[derive(Debug, Clone, PartialEq)]
pub struct Conditioner {
    params: ConditioningParams,
    quantity: Option<u8>,
    transform: Transform,
    r0: R0,
    baseline: Baseline,
    health: Health,
    last_t: Nanos,
    transformed: Option<f64>,
    output: Option<f64>,
}

impl Conditioner {
    /// A conditioner with parameters `p` (check them first with [`ConditioningParams::check`]).
    pub fn new(p: &ConditioningParams) -> Conditioner {
        Conditioner {
            params: p.clone(),
            quantity: None,
            transform: p.transform,
            r0: R0::new(p),
            baseline: Baseline::new(p.baseline_time_constant, p.baseline_fall_time_constant),
            health: Health::new(p.rail_low, p.rail_high, p.stuck_time, p.stuck_tolerance),
            last_t: 0,
            transformed: None,
            output: None,
        }
    }

    /// The parameters in use.
    pub fn params(&self) -> &ConditioningParams {
        &self.params
    }

    /// Replaces the parameters. The learned R0 and the baseline level are kept unless the
    /// transform, the calibration or the R0 settings changed (then the channel starts over);
    /// the health trackers start over.
    pub fn set_params(&mut self, p: &ConditioningParams) {
        let old = &self.params;
        let same_signal = p.transform == old.transform
            && p.gain == old.gain
            && p.offset == old.offset
            && p.r0 == old.r0
            && p.r0_learn_time == old.r0_learn_time;
        let mut next = Conditioner::new(p);
        if same_signal {
            next.quantity = self.quantity;
            next.transform = self.transform;
            next.r0 = self.r0;
            next.last_t = self.last_t;
            next.transformed = self.transformed;
            next.output = self.output;
            if let Some(b) = self.baseline.value() {
                next.baseline.seed(self.last_t, b);
            }
        }
        *self = next;
    }

    /// Forgets everything learned (baseline, R0, health, quantity).
    pub fn reset(&mut self) {
        *self = Conditioner::new(&self.params);
    }

    /// Conditions `raw` (in `quantity` units, see [`sillage_core::msg::ChemSample`]) taken at
    /// `t` [ns]: the baseline-free value, larger = more gas. A fault leaves the state as it was;
    /// a change of quantity starts the channel over. Times must not go backwards (a step back
    /// is treated as no time passing).
    #[inline]
    pub fn step(&mut self, t: Nanos, raw: f64, quantity: u8) -> Result<f64, SampleFault> {
        if !raw.is_finite() {
            return Err(SampleFault::NonFinite { value: raw });
        }
        match self.quantity {
            Some(q) if q == quantity => {}
            Some(_) => return self.restart(t, raw, quantity),
            None => self.transform = self.params.transform.resolve(quantity)?,
        }
        let c = self.params.gain * raw + self.params.offset;
        if !c.is_finite() {
            return Err(SampleFault::NonFinite { value: c });
        }
        let y = if self.transform == Transform::R0Ratio {
            if c <= 0.0 {
                return Err(SampleFault::NonPositive { value: c, quantity });
            }
            // Learn on a copy: a fault below must not leave the sample in the R0 mean.
            let mut r0 = self.r0;
            let r0_now = r0.update(t, transform::resistance(c, quantity));
            let y = transform::apply(self.transform, c, quantity, r0_now)?;
            self.r0 = r0;
            y
        } else {
            transform::apply(self.transform, c, quantity, 0.0)?
        };
        Ok(self.finish(t, raw, quantity, y))
    }

    /// A change of quantity: a fresh conditioner takes the value (and replaces this one only
    /// if it accepts it).
    #[cold]
    #[inline(never)]
    fn restart(&mut self, t: Nanos, raw: f64, quantity: u8) -> Result<f64, SampleFault> {
        let mut fresh = Conditioner::new(&self.params);
        let out = fresh.step(t, raw, quantity)?;
        *self = fresh;
        Ok(out)
    }

    #[inline]
    fn finish(&mut self, t: Nanos, raw: f64, quantity: u8, y: f64) -> f64 {
        let t = t.max(self.last_t);
        self.quantity = Some(quantity);
        self.health.update(t, raw);
        let out = if self.params.baseline_time_constant > 0.0 {
            y - self.baseline.update(t, y, self.health.saturated())
        } else {
            y
        };
        self.last_t = t;
        self.transformed = Some(y);
        self.output = Some(out);
        out
    }

    /// The current baseline [transformed units] (None before the first valid sample or when
    /// baseline removal is off).
    pub fn baseline(&self) -> Option<f64> {
        if self.params.baseline_time_constant > 0.0 { self.baseline.value() } else { None }
    }

    /// The health of the channel after the last valid sample.
    pub fn status(&self) -> ChannelStatus {
        if self.quantity.is_none() {
            ChannelStatus::Unknown
        } else if self.health.dead() {
            ChannelStatus::Dead
        } else if self.health.saturated() {
            ChannelStatus::Saturated
        } else if self.transform == Transform::R0Ratio && self.r0.learning {
            ChannelStatus::Learning
        } else {
            ChannelStatus::Ok
        }
    }

    /// R0 [ohm] in use for `r0_ratio` (fixed, or learned so far).
    pub fn r0(&self) -> Option<f64> {
        if self.transform == Transform::R0Ratio { self.r0.value() } else { None }
    }

    /// The transform in use (resolved for the current quantity).
    pub fn transform(&self) -> Transform {
        self.transform
    }

    /// The quantity of the last valid sample.
    pub fn quantity(&self) -> Option<u8> {
        self.quantity
    }

    /// The last transformed value, before baseline removal.
    pub fn transformed(&self) -> Option<f64> {
        self.transformed
    }

    /// The last conditioned output.
    pub fn output(&self) -> Option<f64> {
        self.output
    }

    /// Seconds the raw value has been unchanged (for diagnostics).
    pub fn stuck_for(&self) -> f64 {
        self.health.stuck_for(self.last_t)
    }
}

#[cfg(test)]
mod tests;
