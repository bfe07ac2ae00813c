//! Sensor geometry: where every chemical sensor sits in `base_link`, and the sensor pairs the
//! timing cue compares.
//!
//! Contract: an array has at least two sensors with unique names, finite positions and no two
//! sensors closer than [`MIN_BASELINE`]. Two sensors form a [`Layout::Pair`] (the plane-wave
//! relation gives one component of the arrival direction, the other comes from the wind);
//! three or more must span the plane ([`Layout::Planar`], least-squares fit of the full 2-D
//! arrival direction), collinear ones are refused because that fit is singular.
//!
//! Frame: `base_link`, REP 103 (x forward, y left) [m]. Angles are CCW from +x [rad].

use nalgebra::{Matrix2, Vector2};
use thiserror::Error;

/// A 2-D vector in `base_link` [m], [m/s] or [s/m] as the context says.
pub type Vec2 = Vector2<f64>;

/// Sensors closer than this [m] count as coincident.
pub const MIN_BASELINE: f64 = 1e-3;

/// Three or more sensors whose spread across their main axis is below this fraction of the
/// spread along it count as collinear (the plane-wave fit would be ill-conditioned).
pub const MIN_ASPECT: f64 = 0.02;

/// The unit vector at angle `theta` [rad] from +x, CCW.
pub fn unit(theta: f64) -> Vec2 {
    Vec2::new(theta.cos(), theta.sin())
}

/// The angle of `v` [rad, -pi..pi], CCW from +x.
pub fn angle(v: &Vec2) -> f64 {
    v.y.atan2(v.x)
}

/// `a - b` wrapped to (-pi, pi] [rad].
pub fn angle_diff(a: f64, b: f64) -> f64 {
    let d = (a - b).rem_euclid(std::f64::consts::TAU);
    if d > std::f64::consts::PI {
        d - std::f64::consts::TAU
    } else {
        d
    }
}

/// What is wrong with a sensor layout (mapped onto parameter keys by the caller).
#[derive(Debug, Error, Clone, PartialEq)]
pub enum GeometryError {
    /// The name, x and y lists differ in length.
    #[error("{names} names but {xs} x and {ys} y values")]
    Lengths { names: usize, xs: usize, ys: usize },
    /// Fewer than two sensors.
    #[error("{count} sensor(s): at least two are needed")]
    TooFew { count: usize },
    /// A name is empty or appears twice.
    #[error("sensor name '{name}' is empty or repeated")]
    BadName { name: String },
    /// A coordinate is NaN or infinite.
    #[error("sensor '{name}' has a non-finite position")]
    NonFinite { name: String },
    /// Two sensors are closer than [`MIN_BASELINE`].
    #[error("sensors '{a}' and '{b}' are {distance} m apart (coincident; at least {MIN_BASELINE} m needed)")]
    Coincident { a: String, b: String, distance: f64 },
    /// Three or more sensors on one line.
    #[error("the {count} sensors are collinear (aspect {aspect:.4} < {MIN_ASPECT}): the plane-wave fit is singular; use two sensors or move one off the line")]
    Collinear { count: usize, aspect: f64 },
}

/// How the array resolves the arrival direction.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Layout {
    /// Two sensors: one lag, one direction component; the wind settles the rest.
    Pair,
    /// Three or more sensors spanning the plane: full 2-D least-squares fit.
    Planar,
}

/// Two sensors compared by the timing cue. The lag is `t_b - t_a` [s].
#[derive(Debug, Clone, PartialEq)]
pub struct SensorPair {
    /// Index of the first sensor.
    pub a: usize,
    /// Index of the second sensor.
    pub b: usize,
    /// `p_a - p_b` [m], base_link: a front coming from this direction reaches `a` first.
    pub baseline: Vec2,
}

impl SensorPair {
    /// The baseline length [m].
    pub fn length(&self) -> f64 {
        self.baseline.norm()
    }
}

/// The validated sensor layout.
#[derive(Debug, Clone, PartialEq)]
pub struct SensorArray {
    names: Vec<String>,
    positions: Vec<Vec2>,
    pairs: Vec<SensorPair>,
    layout: Layout,
    centroid: Vec2,
    rms_radius: f64,
}

impl SensorArray {
    /// Builds and checks the layout from parallel lists of names and coordinates [m].
    pub fn new(names: &[String], xs: &[f64], ys: &[f64]) -> Result<SensorArray, GeometryError> {
        if names.len() != xs.len() || names.len() != ys.len() {
            return Err(GeometryError::Lengths { names: names.len(), xs: xs.len(), ys: ys.len() });
        }
        if names.len() < 2 {
            return Err(GeometryError::TooFew { count: names.len() });
        }
        for (i, n) in names.iter().enumerate() {
            if n.is_empty() || names[..i].contains(n) {
                return Err(GeometryError::BadName { name: n.clone() });
            }
        }
        let mut positions = Vec::with_capacity(names.len());
        for ((n, &x), &y) in names.iter().zip(xs).zip(ys) {
            if !(x.is_finite() && y.is_finite()) {
                return Err(GeometryError::NonFinite { name: n.clone() });
            }
            positions.push(Vec2::new(x, y));
        }
        let mut pairs = Vec::new();
        for a in 0..positions.len() {
            for b in a + 1..positions.len() {
                let baseline = positions[a] - positions[b];
                let distance = baseline.norm();
                if distance < MIN_BASELINE {
                    return Err(GeometryError::Coincident { a: names[a].clone(), b: names[b].clone(), distance });
                }
                pairs.push(SensorPair { a, b, baseline });
            }
        }
        let n = positions.len() as f64;
        let centroid = positions.iter().sum::<Vec2>() / n;
        let scatter = positions.iter().fold(Matrix2::zeros(), |m, p| {
            let d = p - centroid;
            m + d * d.transpose()
        });
        let rms_radius = (scatter.trace() / n).sqrt();
        let layout = if positions.len() == 2 {
            Layout::Pair
        } else {
            let eig = scatter.symmetric_eigenvalues();
            let (lo, hi) = (eig.min().max(0.0), eig.max());
            let aspect = if hi > 0.0 { (lo / hi).sqrt() } else { 0.0 };
            if aspect < MIN_ASPECT {
                return Err(GeometryError::Collinear { count: positions.len(), aspect });
            }
            Layout::Planar
        };
        Ok(SensorArray { names: names.to_vec(), positions, pairs, layout, centroid, rms_radius })
    }

    /// Number of sensors.
    pub fn len(&self) -> usize {
        self.positions.len()
    }

    /// Always false: a valid array has at least two sensors.
    pub fn is_empty(&self) -> bool {
        self.positions.is_empty()
    }

    /// The sensor names, in parameter order.
    pub fn names(&self) -> &[String] {
        &self.names
    }

    /// The index of the sensor called `name`.
    pub fn index_of(&self, name: &str) -> Option<usize> {
        self.names.iter().position(|n| n == name)
    }

    /// Position of sensor `i` [m], base_link.
    pub fn position(&self, i: usize) -> Vec2 {
        self.positions[i]
    }

    /// Every pair `(a, b)` with `a < b`, in lexicographic order.
    pub fn pairs(&self) -> &[SensorPair] {
        &self.pairs
    }

    /// Pair or planar.
    pub fn layout(&self) -> Layout {
        self.layout
    }

    /// Mean sensor position [m].
    pub fn centroid(&self) -> Vec2 {
        self.centroid
    }

    /// Root-mean-square distance of the sensors from their centroid [m] (half the spacing for
    /// two sensors).
    pub fn rms_radius(&self) -> f64 {
        self.rms_radius
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn names(v: &[&str]) -> Vec<String> {
        v.iter().map(|s| s.to_string()).collect()
    }

    #[test]
    fn default_pair_layout() {
        let a = SensorArray::new(&names(&["left", "right"]), &[0.0, 0.0], &[0.1, -0.1]).expect("valid");
        assert_eq!(a.layout(), Layout::Pair);
        assert_eq!(a.pairs().len(), 1);
        assert_eq!(a.pairs()[0].baseline, Vec2::new(0.0, 0.2));
        assert!((a.rms_radius() - 0.1).abs() < 1e-15);
        assert_eq!(a.index_of("right"), Some(1));
    }

    #[test]
    fn triangle_is_planar_with_three_pairs() {
        let a = SensorArray::new(&names(&["l", "r", "f"]), &[0.0, 0.0, 0.15], &[0.1, -0.1, 0.0]).expect("valid");
        assert_eq!(a.layout(), Layout::Planar);
        let p: Vec<(usize, usize)> = a.pairs().iter().map(|p| (p.a, p.b)).collect();
        assert_eq!(p, vec![(0, 1), (0, 2), (1, 2)]);
    }

    #[test]
    fn bad_layouts_are_refused() {
        let e = SensorArray::new(&names(&["a", "b"]), &[0.0, 0.0], &[0.1, 0.1]).expect_err("coincident");
        assert!(matches!(e, GeometryError::Coincident { .. }), "{e}");
        let e = SensorArray::new(&names(&["a", "b", "c"]), &[0.0, 0.0, 0.0], &[0.1, 0.0, -0.1]).expect_err("line");
        assert!(matches!(e, GeometryError::Collinear { count: 3, .. }), "{e}");
        let e = SensorArray::new(&names(&["a", "a"]), &[0.0, 0.0], &[0.1, -0.1]).expect_err("dup");
        assert!(matches!(e, GeometryError::BadName { .. }));
        let e = SensorArray::new(&names(&["a", "b"]), &[0.0], &[0.1, -0.1]).expect_err("lengths");
        assert!(matches!(e, GeometryError::Lengths { .. }));
        let e = SensorArray::new(&names(&["a"]), &[0.0], &[0.1]).expect_err("one");
        assert!(matches!(e, GeometryError::TooFew { count: 1 }));
        let e = SensorArray::new(&names(&["a", "b"]), &[f64::NAN, 0.0], &[0.1, -0.1]).expect_err("nan");
        assert!(matches!(e, GeometryError::NonFinite { .. }));
    }

    #[test]
    fn angle_helpers_wrap() {
        assert!((angle_diff(3.0, -3.0) - (6.0 - std::f64::consts::TAU)).abs() < 1e-12);
        assert!((angle(&unit(2.5)) - 2.5).abs() < 1e-12);
        assert_eq!(angle_diff(std::f64::consts::PI, -std::f64::consts::PI), 0.0);
    }
}
