//! A small node core for the executor's tests: scales the wind it gets, ticks a timer, and has
//! parameters that exercise every rule (ranges, integers for doubles, nested keys, a
//! parameter that changes an output type and one that changes the timer period).

use serde::{Deserialize, Serialize};
use sillage_core::msg::{Bool, DiagnosticStatus, Header, Twist, TwistStamped, Vector3Stamped};
use sillage_core::params::{self, ensure, NodeParams, ParamError};
use sillage_core::{Msg, Nanos, NodeCore, Outbox, Port, Qos};
use std::sync::Arc;

use crate::spec::{section_text, NodeSpec};

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct Limits {
    pub max_gain: f64,
}

impl Default for Limits {
    fn default() -> Self {
        Limits { max_gain: 5.0 }
    }
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct P {
    pub gain: f64,
    pub rate: f64,
    pub stamped: bool,
    pub channels: Vec<String>,
    pub limits: Limits,
}

impl Default for P {
    fn default() -> Self {
        P { gain: 2.0, rate: 10.0, stamped: true, channels: vec!["left".into(), "right".into()], limits: Limits::default() }
    }
}

impl NodeParams for P {
    fn validate(&self) -> Result<(), ParamError> {
        ensure(self.rate > 0.0, "rate", "must be > 0 [Hz]")?;
        ensure(self.limits.max_gain > 0.0, "limits.max_gain", "must be > 0")?;
        ensure(self.gain.abs() <= self.limits.max_gain, "gain", format!("|gain| must be <= limits.max_gain = {}", self.limits.max_gain))
    }
}

pub struct Scaler {
    pub p: P,
    pub ticks: u32,
}

impl NodeCore for Scaler {
    fn name(&self) -> &str {
        "scaler"
    }
    fn inputs(&self) -> Vec<Port> {
        vec![Port::of::<Vector3Stamped>("wind", Qos::SensorData), Port::of::<Bool>("e_stop", Qos::Latched)]
    }
    fn outputs(&self) -> Vec<Port> {
        let cmd = if self.p.stamped { Port::of::<TwistStamped>("cmd_vel", Qos::Reliable) } else { Port::of::<Twist>("cmd_vel", Qos::Reliable) };
        vec![cmd, Port::of::<Bool>("tick", Qos::Reliable)]
    }
    fn timers(&self) -> Vec<Nanos> {
        vec![sillage_core::time::nanos(1.0 / self.p.rate)]
    }
    fn on_message(&mut self, now: Nanos, input: usize, msg: &Msg, out: &mut Outbox) {
        match (input, msg) {
            (0, Msg::Vector3Stamped(m)) => {
                let mut t = Twist::default();
                t.linear.x = self.p.gain * m.vector.x;
                if self.p.stamped {
                    out.publish(0, TwistStamped { header: Header::new(now, "base_link"), twist: t });
                } else {
                    out.publish(0, t);
                }
            }
            // A deliberate mistake: a Bool on the velocity output (must be caught).
            (1, Msg::Bool(b)) => out.publish(0, *b),
            _ => {}
        }
    }
    fn on_timer(&mut self, _now: Nanos, _timer: usize, out: &mut Outbox) {
        self.ticks += 1;
        out.publish(1, Bool { data: self.ticks % 2 == 0 });
    }
    fn diagnostics(&self, _now: Nanos, out: &mut Vec<DiagnosticStatus>) {
        out.push(DiagnosticStatus::with(DiagnosticStatus::OK, "scaler: core", "fine", &[("ticks", self.ticks.to_string())]));
    }
    fn params_yaml(&self) -> serde_yaml::Value {
        params::to_value(&self.p)
    }
    fn set_params_yaml(&mut self, value: &serde_yaml::Value) -> Result<(), ParamError> {
        params::apply(&mut self.p, value)
    }
}

pub fn spec() -> NodeSpec {
    NodeSpec::new(
        "scaler",
        Arc::new(|v: &serde_yaml::Value, fqn: &str, source: &str| {
            let p: P = params::load_str(&section_text(fqn, v), source, fqn)?;
            Ok(Box::new(Scaler { p, ticks: 0 }) as Box<dyn NodeCore>)
        }),
        params::to_value(&P::default()),
    )
}
