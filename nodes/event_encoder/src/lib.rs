//! Event encoder node core (skeleton: ports and parameters only; the algorithm lands with its issue).

mod decay;
mod overrides;
pub mod conditioning;
pub mod encoding;

use serde::{Deserialize, Serialize};
use sillage_core::msg::*;
use sillage_core::params::{self, NodeParams, ParamError};
use sillage_core::{Msg, Nanos, NodeCore, Outbox, Port, Qos};

/// Default ROS node name.
pub const NODE_NAME: &str = "event_encoder";

/// Parameters of the node.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct Params {
    /// Output rate [Hz].
    pub rate: f64,
}

impl Default for Params {
    fn default() -> Self {
        Params { rate: 10.0 }
    }
}

impl NodeParams for Params {
    fn validate(&self) -> Result<(), ParamError> {
        params::ensure(self.rate.is_finite() && self.rate > 0.0, "rate", "must be > 0 [Hz]")
    }
}

/// The node core.
#[derive(Debug, Clone)]
pub struct EventEncoder {
    params: Params,
}

impl EventEncoder {
    /// A core with validated parameters.
    pub fn new(params: Params) -> Result<Self, ParamError> {
        params.validate()?;
        Ok(EventEncoder { params })
    }
}

impl NodeCore for EventEncoder {
    fn name(&self) -> &str {
        NODE_NAME
    }
    fn inputs(&self) -> Vec<Port> {
        vec![Port::of::<ChemSample>("chem", Qos::SensorData)]
    }
    fn outputs(&self) -> Vec<Port> {
        vec![Port::of::<OdorEventArray>("odor_events", Qos::Reliable)]
    }
    fn timers(&self) -> Vec<Nanos> {
        vec![sillage_core::time::nanos(1.0 / self.params.rate)]
    }
    fn on_message(&mut self, _now: Nanos, _input: usize, _msg: &Msg, _out: &mut Outbox) {}
    fn params_yaml(&self) -> serde_yaml::Value {
        params::to_value(&self.params)
    }
    fn set_params_yaml(&mut self, value: &serde_yaml::Value) -> Result<(), ParamError> {
        params::apply(&mut self.params, value)
    }
}
