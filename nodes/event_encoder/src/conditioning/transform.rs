//! The quantity conversion: from a calibrated reading to a value that grows with gas.
//!
//! Metal-oxide (MOX) sensors follow the power law Rs/R0 = (C/C0)^(-beta) (Clifford and Tuma,
//! Sensors and Actuators 3, 1982-83): resistance FALLS with gas, so every resistive transform
//! inverts it. Conductance G = 1/Rs grows as C^beta; log-conductance ln G is linear in ln C
//! with slope beta; the ratio R0/Rs is 1 in clean air and (C/C0)^beta in gas.

use super::SampleFault;
use serde::{Deserialize, Serialize};
use sillage_core::msg::ChemSample;

/// Which conversion a channel applies (parameter `transform`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Transform {
    /// `log_conductance` for RESISTANCE and CONDUCTANCE, `pass_through` for the others.
    Auto,
    /// G = 1/R [S] (a CONDUCTANCE input passes through).
    Conductance,
    /// ln(G / 1 S) = -ln(R / 1 ohm) [dimensionless, natural log].
    LogConductance,
    /// R0/R = G/G0 with R0 the clean-air resistance [dimensionless, 1 in clean air].
    R0Ratio,
    /// The calibrated value unchanged (VOLTAGE, CONCENTRATION, RELATIVE; refused for
    /// RESISTANCE, which falls with gas).
    PassThrough,
}

impl Transform {
    /// The parameter spelling (`log_conductance`, ...).
    pub fn as_str(self) -> &'static str {
        match self {
            Transform::Auto => "auto",
            Transform::Conductance => "conductance",
            Transform::LogConductance => "log_conductance",
            Transform::R0Ratio => "r0_ratio",
            Transform::PassThrough => "pass_through",
        }
    }

    /// The concrete transform for `quantity` (resolves `auto`); `Err` for an unknown quantity
    /// or a pairing that would break "larger = more gas".
    pub fn resolve(self, quantity: u8) -> Result<Transform, SampleFault> {
        let resistive = is_resistive(quantity);
        if quantity > ChemSample::RELATIVE {
            return Err(SampleFault::UnknownQuantity { quantity });
        }
        let t = match self {
            Transform::Auto if resistive => Transform::LogConductance,
            Transform::Auto => Transform::PassThrough,
            other => other,
        };
        let fits = match t {
            Transform::PassThrough => quantity != ChemSample::RESISTANCE,
            _ => resistive,
        };
        if fits {
            Ok(t)
        } else {
            Err(SampleFault::Unsupported { transform: t, quantity })
        }
    }
}

/// Whether `quantity` is RESISTANCE or CONDUCTANCE.
pub fn is_resistive(quantity: u8) -> bool {
    quantity == ChemSample::RESISTANCE || quantity == ChemSample::CONDUCTANCE
}

/// The resistance [ohm] a resistive reading stands for (`c` must be > 0).
#[inline]
pub fn resistance(c: f64, quantity: u8) -> f64 {
    if quantity == ChemSample::CONDUCTANCE {
        1.0 / c
    } else {
        c
    }
}

/// Applies the resolved transform `t` to the calibrated reading `c`; `r0` [ohm] is used by
/// [`Transform::R0Ratio`] only. Resistive inputs must be > 0.
#[inline]
pub fn apply(t: Transform, c: f64, quantity: u8, r0: f64) -> Result<f64, SampleFault> {
    if t != Transform::PassThrough && c <= 0.0 {
        return Err(SampleFault::NonPositive { value: c, quantity });
    }
    let conductance = quantity == ChemSample::CONDUCTANCE;
    let y = match t {
        Transform::Conductance if conductance => c,
        Transform::Conductance => 1.0 / c,
        Transform::LogConductance if conductance => c.ln(),
        Transform::LogConductance => -c.ln(),
        Transform::R0Ratio if conductance => c * r0,
        Transform::R0Ratio => r0 / c,
        Transform::PassThrough | Transform::Auto => c,
    };
    if y.is_finite() {
        Ok(y)
    } else {
        Err(SampleFault::Overflow { value: c, transform: t })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const R: u8 = ChemSample::RESISTANCE;
    const G: u8 = ChemSample::CONDUCTANCE;

    /// Power-law MOX response Rs = R0 (C/C0)^(-beta) (Clifford and Tuma, Sensors and Actuators
    /// 3, 1982-83; docs/references.md).
    fn rs(c: f64, beta: f64) -> f64 {
        10_000.0 * (c / 50.0).powf(-beta)
    }

    #[test]
    fn quadrupling_concentration_doubles_conductance_at_beta_one_half() {
        // docs/references.md: "with beta = 0.5, quadrupling C halves Rs", so G doubles.
        for c in [5.0, 50.0, 400.0] {
            let g1 = apply(Transform::Conductance, rs(c, 0.5), R, 0.0).expect("valid");
            let g4 = apply(Transform::Conductance, rs(4.0 * c, 0.5), R, 0.0).expect("valid");
            assert!((g4 / g1 - 2.0).abs() < 1e-12, "c={c}: ratio {}", g4 / g1);
            // The same through a CONDUCTANCE input and through R0/R with R0 = Rs(C0).
            let q1 = apply(Transform::R0Ratio, 1.0 / rs(c, 0.5), G, 10_000.0).expect("valid");
            let q4 = apply(Transform::R0Ratio, 1.0 / rs(4.0 * c, 0.5), G, 10_000.0).expect("valid");
            assert!((q4 / q1 - 2.0).abs() < 1e-12);
        }
        // R0/R at C = C0 is exactly 1 (clean-air reference).
        assert!((apply(Transform::R0Ratio, rs(50.0, 0.5), R, 10_000.0).expect("valid") - 1.0).abs() < 1e-12);
    }

    #[test]
    fn log_conductance_is_linear_in_log_concentration_with_slope_beta() {
        // Least-squares slope of ln G against ln C over two decades must equal beta.
        for beta in [0.3, 0.5, 0.8] {
            let pts: Vec<(f64, f64)> = (0..40)
                .map(|i| {
                    let c = 1.0 * 10f64.powf(i as f64 / 20.0);
                    (c.ln(), apply(Transform::LogConductance, rs(c, beta), R, 0.0).expect("valid"))
                })
                .collect();
            let n = pts.len() as f64;
            let (mx, my) = (pts.iter().map(|p| p.0).sum::<f64>() / n, pts.iter().map(|p| p.1).sum::<f64>() / n);
            let sxy: f64 = pts.iter().map(|p| (p.0 - mx) * (p.1 - my)).sum();
            let sxx: f64 = pts.iter().map(|p| (p.0 - mx).powi(2)).sum();
            let slope = sxy / sxx;
            assert!((slope - beta).abs() < 1e-12, "beta {beta}: slope {slope}");
            let resid = pts.iter().map(|p| (p.1 - my - slope * (p.0 - mx)).abs()).fold(0.0, f64::max);
            assert!(resid < 1e-9, "not linear: residual {resid}");
        }
    }

    #[test]
    fn resolution_keeps_larger_is_more_gas() {
        assert_eq!(Transform::Auto.resolve(R), Ok(Transform::LogConductance));
        assert_eq!(Transform::Auto.resolve(ChemSample::VOLTAGE), Ok(Transform::PassThrough));
        assert_eq!(Transform::Auto.resolve(ChemSample::CONCENTRATION), Ok(Transform::PassThrough));
        assert!(matches!(Transform::PassThrough.resolve(R), Err(SampleFault::Unsupported { .. })));
        assert!(matches!(Transform::Conductance.resolve(ChemSample::VOLTAGE), Err(SampleFault::Unsupported { .. })));
        assert_eq!(Transform::Auto.resolve(9), Err(SampleFault::UnknownQuantity { quantity: 9 }));
        // Resistance falls with gas, every resistive transform rises.
        for t in [Transform::Conductance, Transform::LogConductance, Transform::R0Ratio] {
            let clean = apply(t, 10_000.0, R, 10_000.0).expect("valid");
            let gas = apply(t, 5_000.0, R, 10_000.0).expect("valid");
            assert!(gas > clean, "{t:?}");
        }
    }

    #[test]
    fn bad_resistive_values_are_faults() {
        for v in [0.0, -3.0] {
            assert_eq!(apply(Transform::Conductance, v, R, 0.0), Err(SampleFault::NonPositive { value: v, quantity: R }));
        }
        assert!(matches!(apply(Transform::Conductance, 1e-320, R, 0.0), Err(SampleFault::Overflow { .. })));
        assert_eq!(apply(Transform::PassThrough, -3.0, ChemSample::VOLTAGE, 0.0), Ok(-3.0));
    }
}
