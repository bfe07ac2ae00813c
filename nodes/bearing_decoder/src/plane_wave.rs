//! The plane-wave relation between inter-sensor lags and the arrival direction.
//!
//! Model (docs/references.md, "Bilateral direction"): an odor front is a plane whose normal
//! points downwind; it reaches sensor `i` at `t_i = t0 + p_i . s` with slowness `s = n / c`,
//! `n` the unit propagation direction and `c` the front's speed relative to the sensors. The
//! bearing is the direction the odor comes from, `u = -n`, at angle `theta` CCW from +x in
//! base_link.
//!
//! Two sensors with baseline `b = p_a - p_b` give one lag `tau = t_b - t_a = b . u / c`; for a
//! baseline of length `d` on the y axis this is the textbook `tau = d sin(theta) / U`.
//! On a moving robot the front still moves with the air: with ground speed `U` along its
//! normal and the sensors moving at `v` (base_link), `c = U + v . u`, so
//! `(b - tau v) . u = tau U`: `theta = phi +- acos(tau U / |b - tau v|)` with `phi` the angle
//! of `b - tau v` (two mirror candidates about the baseline axis; [`crate::front_back`]
//! chooses). `|tau U / |b - tau v|| > 1` is not reachable by a plane wave; it is clamped to the
//! axis and reported. Sensor rotation is neglected: it enters at second order in the sensor
//! offsets and cancels for a symmetric pair.
//!
//! Three or more sensors give `tau_ab = (p_b - p_a) . s` for every pair: a weighted linear
//! least-squares fit gives `s` (nalgebra), hence the full 2-D direction, the apparent speed
//! `1 / |s|` and the rms residual, with no front/back ambiguity and no need for the air speed.

use crate::geometry::{angle, unit, Vec2, MIN_ASPECT};
use nalgebra::Matrix2;

/// Lag `t_b - t_a` [s] of a pair with baseline `p_a - p_b` [m] for a front arriving from
/// `theta` [rad] at ground speed `speed` [m/s], the sensors moving at `velocity` [m/s].
pub fn pair_lag(baseline: &Vec2, theta: f64, speed: f64, velocity: &Vec2) -> f64 {
    let u = unit(theta);
    baseline.dot(&u) / (speed + velocity.dot(&u))
}

/// The two mirror candidates `axis +- half_angle` of a pair lag.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PairSolution {
    /// Angle of `b - tau v` [rad]: the candidates are symmetric about it.
    pub axis: f64,
    /// Half the angle between the candidates [rad, 0..pi].
    pub half_angle: f64,
    /// `tau U / |b - tau v|` before clamping (|ratio| <= 1 for a plane wave).
    pub ratio: f64,
}

impl PairSolution {
    /// Whether the lag exceeded what a plane wave can give (clamped to the axis).
    pub fn clamped(&self) -> bool {
        self.ratio.abs() > 1.0
    }

    /// The candidates `(axis + half_angle, axis - half_angle)` [rad].
    pub fn candidates(&self) -> (f64, f64) {
        (self.axis + self.half_angle, self.axis - self.half_angle)
    }
}

/// Inverts [`pair_lag`]; `None` when `b - tau v` vanishes or an input is not finite.
pub fn solve_pair(baseline: &Vec2, lag: f64, speed: f64, velocity: &Vec2) -> Option<PairSolution> {
    let g = baseline - velocity * lag;
    let norm = g.norm();
    if norm.is_nan() || norm <= 1e-12 || !lag.is_finite() || !speed.is_finite() {
        return None;
    }
    let ratio = lag * speed / norm;
    Some(PairSolution { axis: angle(&g), half_angle: ratio.clamp(-1.0, 1.0).acos(), ratio })
}

/// One row of the N-sensor fit: `lag = offset . s`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LagRow {
    /// `p_b - p_a` [m], base_link.
    pub offset: Vec2,
    /// Measured `t_b - t_a` [s].
    pub lag: f64,
    /// Weight [1/s^2] (> 0), e.g. inlier count / lag variance.
    pub weight: f64,
}

/// The least-squares plane wave.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PlaneFit {
    /// Slowness `n / c` [s/m], base_link.
    pub slowness: Vec2,
    /// Direction the front comes from [rad], angle of `-s`.
    pub bearing: f64,
    /// Apparent front speed relative to the sensors `1 / |s|` [m/s].
    pub speed: f64,
    /// Weighted rms residual of the lags [s].
    pub residual: f64,
    /// Degrees of freedom of the residual (rows - 2).
    pub dof: usize,
}

/// Why the N-sensor fit gave nothing.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum FitFailure {
    /// Fewer than two rows.
    TooFewRows { rows: usize },
    /// The rows' offsets do not span the plane (aspect below [`MIN_ASPECT`]).
    Singular { aspect: f64 },
    /// The predicted lags are all below `min_delay`: the direction is undefined.
    NoDelay,
}

/// Weighted least squares for `s` from `rows`; `min_delay` [s] is the smallest largest
/// predicted lag for which the direction is meaningful (e.g. half a correlogram bin).
pub fn fit_plane(rows: &[LagRow], min_delay: f64) -> Result<PlaneFit, FitFailure> {
    if rows.len() < 2 {
        return Err(FitFailure::TooFewRows { rows: rows.len() });
    }
    let (mut geo, mut m, mut y) = (Matrix2::zeros(), Matrix2::zeros(), Vec2::zeros());
    let mut sum_w = 0.0;
    for r in rows {
        let outer = r.offset * r.offset.transpose();
        geo += outer;
        m += outer * r.weight;
        y += r.offset * (r.weight * r.lag);
        sum_w += r.weight;
    }
    let eig = geo.symmetric_eigenvalues();
    let (lo, hi) = (eig.min().max(0.0), eig.max());
    let aspect = if hi > 0.0 { (lo / hi).sqrt() } else { 0.0 };
    if aspect.is_nan() || aspect < MIN_ASPECT || sum_w.is_nan() || sum_w <= 0.0 {
        return Err(FitFailure::Singular { aspect });
    }
    let s = m.cholesky().map(|c| c.solve(&y)).ok_or(FitFailure::Singular { aspect })?;
    let largest = rows.iter().map(|r| r.offset.dot(&s).abs()).fold(0.0, f64::max);
    if largest.is_nan() || largest < min_delay {
        return Err(FitFailure::NoDelay);
    }
    let sse: f64 = rows.iter().map(|r| r.weight * (r.offset.dot(&s) - r.lag).powi(2)).sum();
    Ok(PlaneFit {
        slowness: s,
        bearing: angle(&(-s)),
        speed: 1.0 / s.norm(),
        residual: (sse / sum_w).sqrt(),
        dof: rows.len() - 2,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    const DEG: f64 = std::f64::consts::PI / 180.0;

    /// Default pair: left at y = +d/2, right at y = -d/2, lag = t_right - t_left.
    fn bl(d: f64) -> Vec2 {
        Vec2::new(0.0, d)
    }

    #[test]
    fn textbook_check_values() {
        // docs/references.md "Bilateral direction" (plane-wave relation lag = d sin(theta)/U):
        // d = 0.2 m, U = 0.5 m/s, theta = 30 deg gives lag = 0.200 s.
        let v0 = Vec2::zeros();
        assert!((pair_lag(&bl(0.2), 30.0 * DEG, 0.5, &v0) - 0.200).abs() < 1e-12);
        let sol = solve_pair(&bl(0.2), 0.200, 0.5, &v0).expect("solvable");
        let (a, b) = sol.candidates();
        // The two mirror candidates: 30 deg (front) and 150 deg (back).
        assert!((b - 30.0 * DEG).abs() < 1e-9 && (a - 150.0 * DEG).abs() < 1e-9, "{a} {b}");
        // Sensitivity d theta = U d lag / (d cos theta): 10 ms at theta = 0, d = 0.2 m,
        // U = 0.5 m/s gives 1.43 deg (same source).
        let (_, t10) = solve_pair(&bl(0.2), 0.010, 0.5, &v0).expect("solvable").candidates();
        let (_, t0) = solve_pair(&bl(0.2), 0.0, 0.5, &v0).expect("solvable").candidates();
        assert!(((t10 - t0) / DEG - 1.43).abs() < 0.005, "{}", (t10 - t0) / DEG);
        assert!(t0.abs() < 1e-12);
    }

    #[test]
    fn lags_beyond_the_plane_wave_clamp_to_the_axis() {
        // |U lag / d| = 0.5 * 0.5 / 0.2 = 1.25 > 1: clamped to theta = 90 deg (left).
        let sol = solve_pair(&bl(0.2), 0.5, 0.5, &Vec2::zeros()).expect("solvable");
        assert!(sol.clamped());
        assert!((sol.ratio - 1.25).abs() < 1e-12);
        let (a, b) = sol.candidates();
        assert!((a - 90.0 * DEG).abs() < 1e-12 && (b - 90.0 * DEG).abs() < 1e-12);
        let (a, _) = solve_pair(&bl(0.2), -0.5, 0.5, &Vec2::zeros()).expect("solvable").candidates();
        assert!((a - 270.0 * DEG).abs() < 1e-12, "right side: {a}");
        assert!(solve_pair(&bl(0.2), f64::NAN, 0.5, &Vec2::zeros()).is_none());
    }

    #[test]
    fn robot_motion_is_compensated() {
        // Driving forward at 0.3 m/s into a 0.5 m/s headwind from 20 deg: the front sweeps the
        // sensors at c = U + v.u, and the inversion with v gives 20 deg back (the stationary
        // formula would be wrong by several degrees).
        let v = Vec2::new(0.3, 0.0);
        let lag = pair_lag(&bl(0.2), 20.0 * DEG, 0.5, &v);
        let (_, b) = solve_pair(&bl(0.2), lag, 0.5, &v).expect("solvable").candidates();
        assert!((b - 20.0 * DEG).abs() < 1e-9, "{}", b / DEG);
        let (_, naive) = solve_pair(&bl(0.2), lag, 0.5, &Vec2::zeros()).expect("solvable").candidates();
        assert!((naive - 20.0 * DEG).abs() > 5.0 * DEG, "{}", naive / DEG);
    }

    fn triangle() -> Vec<Vec2> {
        vec![Vec2::new(0.0, 0.1), Vec2::new(0.0, -0.1), Vec2::new(0.15, 0.0)]
    }

    fn rows_for(p: &[Vec2], s: Vec2) -> Vec<LagRow> {
        let mut rows = Vec::new();
        for a in 0..p.len() {
            for b in a + 1..p.len() {
                let offset = p[b] - p[a];
                rows.push(LagRow { offset, lag: offset.dot(&s), weight: 1.0 });
            }
        }
        rows
    }

    #[test]
    fn plane_fit_recovers_direction_speed_and_flags_bad_rows() {
        let s = -unit(-120.0 * DEG) / 0.7;
        let f = fit_plane(&rows_for(&triangle(), s), 1e-4).expect("fits");
        assert!((f.bearing - (-120.0 * DEG)).abs() < 1e-12 && (f.speed - 0.7).abs() < 1e-12);
        assert!(f.residual < 1e-15 && f.dof == 1);
        let line = [Vec2::new(0.0, 0.1), Vec2::new(0.0, 0.0), Vec2::new(0.0, -0.1)];
        assert!(matches!(fit_plane(&rows_for(&line, s), 1e-4), Err(FitFailure::Singular { .. })));
        assert_eq!(fit_plane(&rows_for(&triangle(), Vec2::zeros()), 1e-4), Err(FitFailure::NoDelay));
        assert_eq!(fit_plane(&[], 1e-4), Err(FitFailure::TooFewRows { rows: 0 }));
    }

    proptest! {
        #[test]
        fn pair_inversion_contains_the_truth(
            theta in -3.1f64..3.1, d in 0.05f64..1.0, speed in 0.1f64..5.0,
            vx in -0.05f64..0.05, vy in -0.05f64..0.05,
        ) {
            let v = Vec2::new(vx, vy);
            let lag = pair_lag(&bl(d), theta, speed, &v);
            let sol = solve_pair(&bl(d), lag, speed, &v).expect("solvable");
            let (a, b) = sol.candidates();
            let err = |c: f64| crate::geometry::angle_diff(c, theta).abs();
            prop_assert!(err(a).min(err(b)) < 1e-6, "theta {theta}: {a} {b}");
            prop_assert!(!sol.clamped() || (sol.ratio.abs() - 1.0) < 1e-9);
        }

        #[test]
        fn plane_fit_is_exact_on_noise_free_lags(theta in -3.1f64..3.1, c in 0.1f64..5.0) {
            let s = -unit(theta) / c;
            let f = fit_plane(&rows_for(&triangle(), s), 1e-6).expect("fits");
            prop_assert!(crate::geometry::angle_diff(f.bearing, theta).abs() < 1e-9);
            prop_assert!((f.speed - c).abs() < 1e-9 * c);
        }
    }
}
