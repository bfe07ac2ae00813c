//! Front/back ambiguity of a two-sensor cue, settled with the wind.
//!
//! A pair measures only the component of the arrival direction along its axis: the answers
//! `axis + a` and `axis - a` fit equally well (for the default left/right pair: theta and
//! pi - theta, in front of or behind the robot). Odor comes from upwind, so the candidate
//! nearer the upwind direction wins, provided the upwind direction is at least `min_angle`
//! off the axis; otherwise (no wind known, or wind along the axis) the ambiguity cannot be
//! resolved: the candidate nearer the robot's heading (+x) is given, marked unresolved, and
//! the caller lowers its confidence. Candidates closer than `2 min_angle` to each other are not
//! an ambiguity worth the name ([`Resolution::Coincident`]).

use crate::geometry::angle_diff;

/// How a bearing was chosen between its mirror candidates.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Resolution {
    /// No mirror candidate (N-sensor fit, or the candidates nearly coincide).
    Coincident,
    /// The candidate nearer upwind was chosen.
    ByWind,
    /// Unresolved: no usable wind direction; the forward candidate was given.
    NoWind,
    /// Unresolved: the wind blows along the sensor axis; the forward candidate was given.
    WindAlongAxis,
}

impl Resolution {
    /// Whether the front/back choice is a guess.
    pub fn is_unresolved(self) -> bool {
        matches!(self, Resolution::NoWind | Resolution::WindAlongAxis)
    }

    /// Lower-case name for diagnostics.
    pub fn as_str(self) -> &'static str {
        match self {
            Resolution::Coincident => "coincident",
            Resolution::ByWind => "by_wind",
            Resolution::NoWind => "unresolved_no_wind",
            Resolution::WindAlongAxis => "unresolved_wind_along_axis",
        }
    }
}

/// Chooses between `axis + half_angle` and `axis - half_angle` [rad] given the upwind
/// direction [rad] (the direction the air comes from, base_link) when known; returns the
/// bearing in (-pi, pi] and how it was chosen.
pub fn resolve(axis: f64, half_angle: f64, upwind: Option<f64>, min_angle: f64) -> (f64, Resolution) {
    let plus = angle_diff(axis + half_angle, 0.0);
    let minus = angle_diff(axis - half_angle, 0.0);
    let nearer = |reference: f64| {
        if angle_diff(minus, reference).abs() < angle_diff(plus, reference).abs() {
            minus
        } else {
            plus
        }
    };
    let coincident = half_angle.sin().abs() < min_angle.sin();
    match upwind {
        Some(psi) if coincident => (nearer(psi), Resolution::Coincident),
        _ if coincident => (nearer(0.0), Resolution::Coincident),
        Some(psi) if angle_diff(psi, axis).sin().abs() >= min_angle.sin() => (nearer(psi), Resolution::ByWind),
        Some(_) => (nearer(0.0), Resolution::WindAlongAxis),
        None => (nearer(0.0), Resolution::NoWind),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const DEG: f64 = std::f64::consts::PI / 180.0;
    const MIN: f64 = 15.0 * DEG;

    /// Left/right pair, lag for 30 deg: axis 90 deg, half angle 60 deg -> 30 or 150 deg.
    #[test]
    fn wind_picks_the_upwind_hemisphere() {
        let (b, r) = resolve(90.0 * DEG, 60.0 * DEG, Some(10.0 * DEG), MIN);
        assert_eq!(r, Resolution::ByWind);
        assert!((b - 30.0 * DEG).abs() < 1e-12);
        let (b, r) = resolve(90.0 * DEG, 60.0 * DEG, Some(170.0 * DEG), MIN);
        assert_eq!(r, Resolution::ByWind);
        assert!((b - 150.0 * DEG).abs() < 1e-12, "odor from behind-left: {}", b / DEG);
    }

    #[test]
    fn ambiguity_that_cannot_be_resolved_is_said() {
        let (b, r) = resolve(90.0 * DEG, 60.0 * DEG, None, MIN);
        assert_eq!(r, Resolution::NoWind);
        assert!((b - 30.0 * DEG).abs() < 1e-12, "forward candidate");
        // Wind straight from the left, along the left/right axis.
        let (_, r) = resolve(90.0 * DEG, 60.0 * DEG, Some(95.0 * DEG), MIN);
        assert_eq!(r, Resolution::WindAlongAxis);
        assert!(r.is_unresolved());
        // A lag at the clamp: both candidates are 90 deg, nothing to resolve.
        let (b, r) = resolve(90.0 * DEG, 0.0, None, MIN);
        assert_eq!(r, Resolution::Coincident);
        assert!((b - 90.0 * DEG).abs() < 1e-12);
    }
}
