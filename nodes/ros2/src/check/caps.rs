//! Speed and acceleration caps beyond what this class of robot normally runs.
//!
//! A cap above the robot's declared limit (`limits.*`) is an error of the arbiter's own
//! validation (a hard ceiling). This module adds *warnings*: a `guard.*` cap or a `limits.*`
//! ceiling above [`TYPICAL`], the values a small indoor research base that searches for an
//! odor source near people normally runs. The thresholds are common practice (from memory:
//! walking pace is about 1.4 m/s, and such bases are usually run well below it), not a
//! standard's figure; the integrator's risk assessment decides.

use super::Problem;
use serde_yaml::Value;

/// (parameter name under `guard.` and `limits.`, threshold, unit): common practice.
pub const TYPICAL: &[(&str, f64, &str)] = &[
    ("max_linear", 1.0, "m/s"),
    ("max_reverse", 0.5, "m/s"),
    ("max_angular", 2.0, "rad/s"),
    ("max_linear_accel", 1.0, "m/s^2"),
    ("max_linear_decel", 2.0, "m/s^2"),
    ("max_angular_accel", 4.0, "rad/s^2"),
    ("max_angular_decel", 8.0, "rad/s^2"),
];

/// Warnings for the arbiter parameters `params` (its whole, validated parameter map) of the
/// node section `key` in `file`.
pub fn warnings(file: &str, key: &str, params: &Value) -> Vec<Problem> {
    let flat = sillage_core::params::flatten(params);
    let mut out = Vec::new();
    for group in ["limits", "guard"] {
        for (name, typical, unit) in TYPICAL {
            let k = format!("{group}.{name}");
            let Some(v) = flat.iter().find(|(f, _)| *f == k).and_then(|(_, v)| v.as_f64()) else { continue };
            if v > *typical {
                out.push(Problem::warning(
                    file,
                    format!("{key}.ros__parameters.{k}"),
                    format!("{v} {unit} is beyond what a small indoor research base normally runs (<= {typical} {unit}, common practice); check it against the base's data sheet and the site's risk assessment"),
                ));
            }
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn values_above_the_typical_ones_warn_and_name_the_key() {
        let v: Value = serde_yaml::from_str("guard:\n  max_linear: 0.3\n  max_angular: 2.5\nlimits:\n  max_linear: 1.0\n  max_linear_accel: 3.0\n").expect("yaml");
        let w: Vec<String> = warnings("f.yaml", "/arbiter", &v).iter().map(ToString::to_string).collect();
        assert_eq!(w.len(), 2, "{w:#?}");
        assert!(w[0].starts_with("f.yaml:/arbiter.ros__parameters.limits.max_linear_accel: warning: 3 m/s^2"), "{w:#?}");
        assert!(w[1].contains("guard.max_angular: warning: 2.5 rad/s") && w[1].contains("common practice"), "{w:#?}");
    }
}
