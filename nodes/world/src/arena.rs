//! The arena: a rectangle of walls plus axis-aligned box obstacles, in the world frame.
//!
//! Contract: the free space is the inside of `bounds` minus every obstacle box. A disc
//! (the robot footprint) collides when any part of it leaves the free space; rays are
//! cast from a point in free space and stop at the first wall or box face.

/// An axis-aligned rectangle [m].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Aabb {
    /// Lower x bound [m].
    pub x_min: f64,
    /// Lower y bound [m].
    pub y_min: f64,
    /// Upper x bound [m].
    pub x_max: f64,
    /// Upper y bound [m].
    pub y_max: f64,
}

impl Aabb {
    /// A rectangle from its bounds [m].
    pub const fn new(x_min: f64, y_min: f64, x_max: f64, y_max: f64) -> Self {
        Self {
            x_min,
            y_min,
            x_max,
            y_max,
        }
    }

    /// True when the point is inside or on the border.
    pub fn contains(&self, p: [f64; 2]) -> bool {
        p[0] >= self.x_min && p[0] <= self.x_max && p[1] >= self.y_min && p[1] <= self.y_max
    }

    /// Euclidean distance from the point to the rectangle (0 inside) [m].
    pub fn distance(&self, p: [f64; 2]) -> f64 {
        let dx = (self.x_min - p[0]).max(p[0] - self.x_max).max(0.0);
        let dy = (self.y_min - p[1]).max(p[1] - self.y_max).max(0.0);
        dx.hypot(dy)
    }

    /// Width along x [m].
    pub fn width(&self) -> f64 {
        self.x_max - self.x_min
    }

    /// Height along y [m].
    pub fn height(&self) -> f64 {
        self.y_max - self.y_min
    }

    /// Distance along the ray `origin + s dir` (s >= 0) to where it enters the box, by the
    /// slab method; `None` if it misses. A ray starting inside returns `Some(0)`.
    pub fn ray_entry(&self, origin: [f64; 2], dir: [f64; 2]) -> Option<f64> {
        let mut t_near = 0.0f64;
        let mut t_far = f64::INFINITY;
        for (o, d, lo, hi) in [
            (origin[0], dir[0], self.x_min, self.x_max),
            (origin[1], dir[1], self.y_min, self.y_max),
        ] {
            if d == 0.0 {
                if o < lo || o > hi {
                    return None;
                }
            } else {
                let (a, b) = ((lo - o) / d, (hi - o) / d);
                let (a, b) = if a < b { (a, b) } else { (b, a) };
                t_near = t_near.max(a);
                t_far = t_far.min(b);
                if t_near > t_far {
                    return None;
                }
            }
        }
        Some(t_near)
    }

    /// Distance along the ray from an inside point to where it leaves the box [m].
    pub fn ray_exit(&self, origin: [f64; 2], dir: [f64; 2]) -> f64 {
        let mut t = f64::INFINITY;
        for (o, d, lo, hi) in [
            (origin[0], dir[0], self.x_min, self.x_max),
            (origin[1], dir[1], self.y_min, self.y_max),
        ] {
            if d > 0.0 {
                t = t.min((hi - o) / d);
            } else if d < 0.0 {
                t = t.min((lo - o) / d);
            }
        }
        t.max(0.0)
    }
}

/// Walls and obstacles of the simulated world.
#[derive(Debug, Clone, PartialEq)]
pub struct Arena {
    /// Inner faces of the walls [m].
    pub bounds: Aabb,
    /// Box obstacles [m].
    pub obstacles: Vec<Aabb>,
}

impl Arena {
    /// True when the point is inside the walls and outside every obstacle.
    pub fn is_free(&self, p: [f64; 2]) -> bool {
        self.bounds.contains(p) && !self.obstacles.iter().any(|b| b.contains(p))
    }

    /// True when a disc of `radius` [m] centred at `c` touches a wall or an obstacle.
    pub fn disc_collides(&self, c: [f64; 2], radius: f64) -> bool {
        let b = &self.bounds;
        c[0] - radius < b.x_min
            || c[0] + radius > b.x_max
            || c[1] - radius < b.y_min
            || c[1] + radius > b.y_max
            || self.obstacles.iter().any(|o| o.distance(c) < radius)
    }

    /// Distance [m] from `origin` along heading `angle` [rad, world frame] to the first wall
    /// or obstacle face. The origin should be in free space (inside an obstacle gives 0).
    pub fn ray_cast(&self, origin: [f64; 2], angle: f64) -> f64 {
        let (s, c) = angle.sin_cos();
        let dir = [c, s];
        let mut best = self.bounds.ray_exit(origin, dir);
        for o in &self.obstacles {
            if let Some(t) = o.ray_entry(origin, dir) {
                best = best.min(t);
            }
        }
        best
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;
    use proptest::prelude::*;
    use std::f64::consts::{FRAC_PI_2, FRAC_PI_4, PI};

    fn room() -> Arena {
        Arena {
            bounds: Aabb::new(0.0, 0.0, 10.0, 6.0),
            obstacles: vec![Aabb::new(6.0, 2.0, 7.0, 4.0)],
        }
    }

    #[test]
    fn rays_hit_walls_and_box() {
        let a = room();
        // From (2, 3): +x hits the box face x = 6 at 4 m; -x the wall at 2 m; +y the wall at 3 m.
        assert_abs_diff_eq!(a.ray_cast([2.0, 3.0], 0.0), 4.0, epsilon = 1e-12);
        assert_abs_diff_eq!(a.ray_cast([2.0, 3.0], PI), 2.0, epsilon = 1e-12);
        assert_abs_diff_eq!(a.ray_cast([2.0, 3.0], FRAC_PI_2), 3.0, epsilon = 1e-12);
        // Diagonal from (1, 1) at 45 deg reaches the top wall y = 6 after 5 sqrt 2.
        assert_abs_diff_eq!(
            a.ray_cast([1.0, 1.0], FRAC_PI_4),
            5.0 * 2f64.sqrt(),
            epsilon = 1e-12
        );
        // Passing above the box (y = 5) reaches the far wall.
        assert_abs_diff_eq!(a.ray_cast([2.0, 5.0], 0.0), 8.0, epsilon = 1e-12);
    }

    #[test]
    fn disc_collision() {
        let a = room();
        assert!(!a.disc_collides([2.0, 3.0], 0.3));
        assert!(a.disc_collides([0.2, 3.0], 0.3));
        assert!(a.disc_collides([5.8, 3.0], 0.3));
        // Corner of the box at (6, 2): distance from (5.8, 1.8) is 0.283 < 0.3.
        assert!(a.disc_collides([5.8, 1.8], 0.3));
        assert!(!a.disc_collides([5.7, 1.7], 0.3));
    }

    proptest! {
        /// The hit point of a ray lies on a wall or box face, and the segment before it is free.
        #[test]
        fn ray_hits_are_on_surfaces(x in 0.1f64..5.9, y in 0.1f64..5.9, ang in -PI..PI) {
            let a = room();
            let d = a.ray_cast([x, y], ang);
            let (s, c) = ang.sin_cos();
            let hit = [x + d * c, y + d * s];
            let on_wall = hit[0].abs() < 1e-9 || (hit[0] - 10.0).abs() < 1e-9
                || hit[1].abs() < 1e-9 || (hit[1] - 6.0).abs() < 1e-9;
            let on_box = a.obstacles[0].distance(hit) < 1e-9;
            prop_assert!(on_wall || on_box);
            let mid = [x + 0.5 * d * c, y + 0.5 * d * s];
            prop_assert!(a.is_free(mid));
        }
    }
}
