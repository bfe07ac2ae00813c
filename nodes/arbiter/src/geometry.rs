//! Planar geometry in SI units and REP 103 conventions: [`Vec2`] [m or m/s], angles [rad]
//! counter-clockwise positive, [`Pose2`] of base_link in the odom frame, and the simple
//! [`Polygon`] used for the geofence (validated once: at least 3 distinct vertices, non-zero
//! area, no two edges crossing or touching except neighbours at their shared vertex).

use crate::error::ArbiterError;
use std::f64::consts::{PI, TAU};
use std::ops::{Add, Mul, Neg, Sub};

/// A 2-D vector.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Vec2 {
    /// x [m or m/s].
    pub x: f64,
    /// y [m or m/s].
    pub y: f64,
}

impl Vec2 {
    /// The zero vector.
    pub const ZERO: Vec2 = Vec2 { x: 0.0, y: 0.0 };

    /// A vector from its components.
    pub const fn new(x: f64, y: f64) -> Vec2 {
        Vec2 { x, y }
    }

    /// The unit vector at `angle` [rad] from +x.
    pub fn from_angle(angle: f64) -> Vec2 {
        let (s, c) = angle.sin_cos();
        Vec2 { x: c, y: s }
    }

    /// Euclidean length.
    pub fn norm(self) -> f64 {
        self.x.hypot(self.y)
    }

    /// Dot product.
    pub fn dot(self, o: Vec2) -> f64 {
        self.x * o.x + self.y * o.y
    }

    /// z of the cross product.
    pub fn cross(self, o: Vec2) -> f64 {
        self.x * o.y - self.y * o.x
    }

    /// Angle from +x [rad, -pi..pi].
    pub fn angle(self) -> f64 {
        self.y.atan2(self.x)
    }

    /// This vector rotated by `angle` [rad] counter-clockwise.
    pub fn rotated(self, angle: f64) -> Vec2 {
        let (s, c) = angle.sin_cos();
        Vec2 { x: c * self.x - s * self.y, y: s * self.x + c * self.y }
    }

    /// Distance to `o`.
    pub fn distance(self, o: Vec2) -> f64 {
        (self - o).norm()
    }

    /// Both components finite.
    pub fn is_finite(self) -> bool {
        self.x.is_finite() && self.y.is_finite()
    }
}

impl Add for Vec2 {
    type Output = Vec2;
    fn add(self, o: Vec2) -> Vec2 {
        Vec2::new(self.x + o.x, self.y + o.y)
    }
}

impl Sub for Vec2 {
    type Output = Vec2;
    fn sub(self, o: Vec2) -> Vec2 {
        Vec2::new(self.x - o.x, self.y - o.y)
    }
}

impl Mul<f64> for Vec2 {
    type Output = Vec2;
    fn mul(self, k: f64) -> Vec2 {
        Vec2::new(self.x * k, self.y * k)
    }
}

impl Neg for Vec2 {
    type Output = Vec2;
    fn neg(self) -> Vec2 {
        Vec2::new(-self.x, -self.y)
    }
}

/// The pose of base_link in the odom frame.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Pose2 {
    /// Position [m].
    pub position: Vec2,
    /// Yaw [rad], counter-clockwise from odom +x.
    pub yaw: f64,
}

impl Pose2 {
    /// A body-frame vector expressed in the odom frame.
    pub fn to_odom(&self, body: Vec2) -> Vec2 {
        body.rotated(self.yaw)
    }

    /// An odom-frame vector expressed in the body frame.
    pub fn to_body(&self, odom: Vec2) -> Vec2 {
        odom.rotated(-self.yaw)
    }
}

/// `angle` wrapped to (-pi, pi] [rad]; non-finite input gives 0.
pub fn wrap_angle(angle: f64) -> f64 {
    if !angle.is_finite() {
        return 0.0;
    }
    let a = (angle + PI).rem_euclid(TAU) - PI;
    if a <= -PI {
        a + TAU
    } else {
        a
    }
}

/// The point of segment `a`-`b` nearest to `p`.
pub fn nearest_on_segment(p: Vec2, a: Vec2, b: Vec2) -> Vec2 {
    let ab = b - a;
    let len2 = ab.dot(ab);
    if len2 <= 0.0 {
        return a;
    }
    let t = ((p - a).dot(ab) / len2).clamp(0.0, 1.0);
    a + ab * t
}

/// Whether segments `a`-`b` and `c`-`d` share at least one point (touching counts).
pub fn segments_touch(a: Vec2, b: Vec2, c: Vec2, d: Vec2) -> bool {
    let o1 = (b - a).cross(c - a);
    let o2 = (b - a).cross(d - a);
    let o3 = (d - c).cross(a - c);
    let o4 = (d - c).cross(b - c);
    let on = |p: Vec2, q: Vec2, r: Vec2| r.x >= p.x.min(q.x) && r.x <= p.x.max(q.x) && r.y >= p.y.min(q.y) && r.y <= p.y.max(q.y);
    if ((o1 > 0.0 && o2 < 0.0) || (o1 < 0.0 && o2 > 0.0)) && ((o3 > 0.0 && o4 < 0.0) || (o3 < 0.0 && o4 > 0.0)) {
        return true;
    }
    (o1 == 0.0 && on(a, b, c)) || (o2 == 0.0 && on(a, b, d)) || (o3 == 0.0 && on(c, d, a)) || (o4 == 0.0 && on(c, d, b))
}

/// A simple polygon (validated on construction).
#[derive(Debug, Clone, PartialEq)]
pub struct Polygon {
    vertices: Vec<Vec2>,
}

impl Polygon {
    /// A polygon from a flat list `[x0, y0, x1, y1, ...]` [m]; refuses fewer than 3 vertices,
    /// an odd count, non-finite values, repeated consecutive vertices, zero area and crossing
    /// or touching edges.
    pub fn from_flat(flat: &[f64]) -> Result<Polygon, ArbiterError> {
        let err = |reason: String| Err(ArbiterError::Polygon { reason });
        if flat.is_empty() {
            return err("empty (need at least 3 vertices as [x0, y0, x1, y1, x2, y2, ...])".into());
        }
        if flat.len() % 2 != 0 {
            return err(format!("odd number of values ({}): expected x, y pairs", flat.len()));
        }
        if let Some(i) = flat.iter().position(|v| !v.is_finite()) {
            return err(format!("value {i} is not finite"));
        }
        let vertices: Vec<Vec2> = flat.chunks_exact(2).map(|c| Vec2::new(c[0], c[1])).collect();
        Polygon::new(vertices)
    }

    /// A polygon from its vertices (see [`Polygon::from_flat`] for the checks).
    pub fn new(vertices: Vec<Vec2>) -> Result<Polygon, ArbiterError> {
        let err = |reason: String| Err(ArbiterError::Polygon { reason });
        let n = vertices.len();
        if n < 3 {
            return err(format!("{n} vertices, need at least 3"));
        }
        for i in 0..n {
            if vertices[i] == vertices[(i + 1) % n] {
                return err(format!("vertices {i} and {} coincide", (i + 1) % n));
            }
        }
        let p = Polygon { vertices };
        for i in 0..n {
            for j in (i + 1)..n {
                let (a, b) = p.edge(i);
                let (c, d) = p.edge(j);
                let neighbours = j == i + 1 || (i == 0 && j == n - 1);
                if neighbours {
                    // Neighbours share one vertex; they must not fold back onto each other.
                    let (shared, other_a, other_b) = if j == i + 1 { (b, a, d) } else { (a, b, c) };
                    let (u, v) = (other_a - shared, other_b - shared);
                    if u.cross(v) == 0.0 && u.dot(v) > 0.0 {
                        return err(format!("edges {i} and {j} overlap"));
                    }
                } else if segments_touch(a, b, c, d) {
                    return err(format!("self-intersecting: edges {i} and {j} cross"));
                }
            }
        }
        if p.signed_area().abs() < 1e-12 {
            return err("zero area".into());
        }
        Ok(p)
    }

    /// The vertices.
    pub fn vertices(&self) -> &[Vec2] {
        &self.vertices
    }

    /// Edge `i`: from vertex `i` to the next one.
    pub fn edge(&self, i: usize) -> (Vec2, Vec2) {
        let n = self.vertices.len();
        (self.vertices[i % n], self.vertices[(i + 1) % n])
    }

    /// Signed area (positive for counter-clockwise vertices) [m^2] (shoelace formula).
    pub fn signed_area(&self) -> f64 {
        let n = self.vertices.len();
        (0..n).map(|i| self.vertices[i].cross(self.vertices[(i + 1) % n])).sum::<f64>() * 0.5
    }

    /// Whether `p` is inside (even-odd ray crossing; points on the boundary may go either way).
    pub fn contains(&self, p: Vec2) -> bool {
        let n = self.vertices.len();
        let mut inside = false;
        for i in 0..n {
            let (a, b) = self.edge(i);
            if (a.y > p.y) != (b.y > p.y) {
                let x = a.x + (p.y - a.y) * (b.x - a.x) / (b.y - a.y);
                if p.x < x {
                    inside = !inside;
                }
            }
        }
        inside
    }

    /// The boundary point nearest to `p`.
    pub fn nearest_on_boundary(&self, p: Vec2) -> Vec2 {
        let mut best = self.vertices[0];
        let mut best_d = f64::INFINITY;
        for i in 0..self.vertices.len() {
            let (a, b) = self.edge(i);
            let q = nearest_on_segment(p, a, b);
            let d = q.distance(p);
            if d < best_d {
                best_d = d;
                best = q;
            }
        }
        best
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    #[test]
    fn wrap_angle_stays_in_half_open_range() {
        assert_abs_diff_eq!(wrap_angle(3.0 * PI), PI, epsilon = 1e-12);
        assert_abs_diff_eq!(wrap_angle(-PI), PI, epsilon = 1e-12);
        assert_abs_diff_eq!(wrap_angle(-0.5), -0.5, epsilon = 1e-15);
        assert_abs_diff_eq!(wrap_angle(TAU + 0.25), 0.25, epsilon = 1e-12);
        assert_eq!(wrap_angle(f64::NAN), 0.0);
    }

    #[test]
    fn rotation_follows_rep103() {
        // REP 103: yaw counter-clockwise positive, so +x rotated by +90 deg is +y.
        let v = Vec2::new(1.0, 0.0).rotated(PI / 2.0);
        assert_abs_diff_eq!(v.x, 0.0, epsilon = 1e-15);
        assert_abs_diff_eq!(v.y, 1.0, epsilon = 1e-15);
        let pose = Pose2 { position: Vec2::ZERO, yaw: PI / 2.0 };
        let b = pose.to_body(Vec2::new(0.0, 1.0));
        assert_abs_diff_eq!(b.x, 1.0, epsilon = 1e-15);
    }

    #[test]
    fn polygon_checks_follow_the_shoelace_formula_and_ray_crossing() {
        // Unit square counter-clockwise: shoelace area +1 (common practice).
        let sq = Polygon::from_flat(&[0.0, 0.0, 1.0, 0.0, 1.0, 1.0, 0.0, 1.0]).expect("square");
        assert_abs_diff_eq!(sq.signed_area(), 1.0, epsilon = 1e-15);
        assert!(sq.contains(Vec2::new(0.5, 0.5)));
        assert!(!sq.contains(Vec2::new(1.5, 0.5)));
        // L shape (area 3): the notch at (1.5, 1.5) is outside.
        let l = Polygon::from_flat(&[0.0, 0.0, 2.0, 0.0, 2.0, 1.0, 1.0, 1.0, 1.0, 2.0, 0.0, 2.0]).expect("L");
        assert_abs_diff_eq!(l.signed_area(), 3.0, epsilon = 1e-12);
        assert!(l.contains(Vec2::new(0.5, 1.5)) && !l.contains(Vec2::new(1.5, 1.5)));
        let q = l.nearest_on_boundary(Vec2::new(1.5, 1.6));
        assert_abs_diff_eq!(q.distance(Vec2::new(1.5, 1.0)).min(q.distance(Vec2::new(1.0, 1.6))), 0.0, epsilon = 1e-12);
    }

    #[test]
    fn bad_polygons_are_refused_with_the_reason() {
        let bow_tie = [0.0, 0.0, 1.0, 1.0, 1.0, 0.0, 0.0, 1.0];
        let e = Polygon::from_flat(&bow_tie).expect_err("bow tie");
        assert!(e.to_string().contains("self-intersecting"), "{e}");
        assert!(Polygon::from_flat(&[]).expect_err("empty").to_string().contains("empty"));
        assert!(Polygon::from_flat(&[0.0, 0.0, 1.0]).expect_err("odd").to_string().contains("odd"));
        assert!(Polygon::from_flat(&[0.0, 0.0, 1.0, 0.0]).is_err());
        assert!(Polygon::from_flat(&[0.0, 0.0, 1.0, 0.0, 2.0, 0.0]).is_err(), "collinear");
        assert!(Polygon::from_flat(&[0.0, 0.0, 1.0, 0.0, 1.0, 0.0, 0.0, 1.0]).expect_err("dup").to_string().contains("coincide"));
        assert!(Polygon::from_flat(&[0.0, 0.0, f64::NAN, 0.0, 0.0, 1.0]).is_err());
        // A vertex touching a non-adjacent edge.
        let touch = [0.0, 0.0, 2.0, 0.0, 2.0, 2.0, 1.0, 0.0, 0.0, 2.0];
        assert!(Polygon::from_flat(&touch).is_err());
    }
}
