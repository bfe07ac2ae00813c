//! Meandering wind: a mean wind whose direction and speed wander as coloured noise (white
//! noise through a first-order low-pass), either uniform in space or, on a grid, the
//! potential flow of [`crate::wind_grid`] driven by four corner winds that meander on
//! their own.
//!
//! Contract: `velocity(p, t)` gives the air velocity [m/s] at world point `p` in the world
//! (ENU `odom`) frame, pointing where the air goes to.
//! - uniform field: one meander, the same everywhere; generated on a fixed internal time
//!   grid (`MEANDER_DT`) and linearly interpolated, so a seeded field is the same whatever
//!   step size the caller uses.
//! - grid field: corner k's direction is mean + sqrt(c) m_common + sqrt(1 - c) m_k (and the
//!   same for the speed), with m_common and m_k independent coloured noises of the scenario's
//!   std and correlation time, so each corner meanders with exactly those statistics and c
//!   (`coherence`, 0..1) is the correlation between corners. The flow is rebuilt from the
//!   eight basis flows every `GRID_KNOT_DT` and linearly interpolated in time between knots.

use crate::arena::Arena;
use crate::noise::ColouredNoise;
use crate::wind_grid::{Edge, FaceField, FlowGrid};
use rand_chacha::ChaCha8Rng;

/// Time step of the internal meander grid of the uniform field [s].
pub const MEANDER_DT: f64 = 0.05;

/// Time step between two flows of the grid field [s] (the meander correlation times of the
/// scenarios are seconds, so linear interpolation over this step is smooth).
pub const GRID_KNOT_DT: f64 = 0.25;

/// Parameters of the wind: mean vector plus meander.
#[derive(Debug, Clone, PartialEq)]
pub struct WindParams {
    /// Mean wind speed [m/s], >= 0.
    pub speed: f64,
    /// Mean direction the air moves to [rad], counter-clockwise from world +x.
    pub direction: f64,
    /// Stationary standard deviation of the direction meander [rad].
    pub direction_std: f64,
    /// Stationary standard deviation of the speed fluctuation [m/s].
    pub speed_std: f64,
    /// Correlation time of both meander processes [s] (0 disables the meander).
    pub correlation_time: f64,
}

/// Grid options of the spatially varying field (scenario key `wind.grid`; defaults in
/// brackets).
#[derive(Debug, Clone, PartialEq, serde::Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct WindGridParams {
    /// Cell size of the flow grid [m] (> 0; rounded so cells fit the arena) [0.5].
    pub resolution: f64,
    /// Correlation between the four corner meanders, 0..=1 (1: the corners move together)
    /// [0.5].
    pub coherence: f64,
    /// Arena edges the air cannot cross (`south`, `east`, `north`, `west`); the others are
    /// openings (inlets and outlets) [none].
    pub solid_walls: Vec<Edge>,
}

impl Default for WindGridParams {
    fn default() -> Self {
        Self {
            resolution: 0.5,
            coherence: 0.5,
            solid_walls: Vec::new(),
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq)]
struct Knot {
    t: f64,
    direction: f64,
    speed: f64,
}

#[derive(Debug, Clone)]
struct UniformState {
    dir_noise: ColouredNoise,
    speed_noise: ColouredNoise,
    prev: Knot,
    next: Knot,
}

#[derive(Debug, Clone)]
struct GridState {
    flow: FlowGrid,
    coherence: f64,
    /// (direction, speed) noises: the common pair then one pair per corner.
    noises: Vec<[ColouredNoise; 2]>,
    t_prev: f64,
    t_next: f64,
    prev: FaceField,
    next: FaceField,
}

#[derive(Debug, Clone)]
enum Kind {
    Uniform(UniformState),
    Grid(Box<GridState>),
}

/// The wind field state (seeded, advanced in time by [`WindField::advance_to`]).
#[derive(Debug, Clone)]
pub struct WindField {
    params: WindParams,
    rng: ChaCha8Rng,
    kind: Kind,
}

impl WindField {
    /// Creates the uniform field at time 0 with its meander drawn from `rng`.
    pub fn new(params: WindParams, mut rng: ChaCha8Rng) -> Self {
        let dir_noise = ColouredNoise::new(params.direction_std, params.correlation_time, &mut rng);
        let speed_noise = ColouredNoise::new(params.speed_std, params.correlation_time, &mut rng);
        let mean = Knot {
            t: 0.0,
            direction: params.direction,
            speed: params.speed,
        };
        let mut state = UniformState {
            dir_noise,
            speed_noise,
            prev: mean,
            next: mean,
        };
        state.prev = uniform_knot(&params, &state, 0.0);
        state.next = state.prev;
        let mut field = Self {
            params,
            rng,
            kind: Kind::Uniform(state),
        };
        field.advance_to(MEANDER_DT);
        field
    }

    /// Creates the grid field over `arena` at time 0 (solving its basis flows once), with
    /// the corner meanders drawn from `rng`.
    pub fn with_grid(
        params: WindParams,
        grid: &WindGridParams,
        arena: &Arena,
        mut rng: ChaCha8Rng,
    ) -> Self {
        let flow = FlowGrid::new(arena, grid.resolution, &grid.solid_walls);
        let noises: Vec<[ColouredNoise; 2]> = (0..5)
            .map(|_| {
                [
                    ColouredNoise::new(params.direction_std, params.correlation_time, &mut rng),
                    ColouredNoise::new(params.speed_std, params.correlation_time, &mut rng),
                ]
            })
            .collect();
        let mut state = GridState {
            prev: flow.field(&[[0.0; 2]; 4]),
            next: flow.field(&[[0.0; 2]; 4]),
            flow,
            coherence: grid.coherence.clamp(0.0, 1.0),
            noises,
            t_prev: 0.0,
            t_next: 0.0,
        };
        let corners = grid_corners(&params, &state);
        state.flow.update(&corners, &mut state.prev);
        state.next = state.prev.clone();
        let mut field = Self {
            params,
            rng,
            kind: Kind::Grid(Box::new(state)),
        };
        field.advance_to(GRID_KNOT_DT);
        field
    }

    /// Parameters the field was built with.
    pub fn params(&self) -> &WindParams {
        &self.params
    }

    /// True for the grid (spatially varying) field.
    pub fn is_grid(&self) -> bool {
        matches!(self.kind, Kind::Grid(_))
    }

    /// Mean wind vector [m/s] in the world frame (no meander; the far-field wind of the grid).
    pub fn mean_velocity(&self) -> [f64; 2] {
        let (s, c) = self.params.direction.sin_cos();
        [self.params.speed * c, self.params.speed * s]
    }

    /// The current face flow of the grid field (the later knot), `None` for the uniform one.
    pub fn grid_flow(&self) -> Option<&FaceField> {
        match &self.kind {
            Kind::Grid(g) => Some(&g.next),
            Kind::Uniform(_) => None,
        }
    }

    /// Generates the meander up to at least time `t` [s]. Times before the previous call's
    /// window are no longer available (queries clamp to the window).
    pub fn advance_to(&mut self, t: f64) {
        let params = &self.params;
        match &mut self.kind {
            Kind::Uniform(u) => {
                while u.next.t < t {
                    u.dir_noise.advance(MEANDER_DT, &mut self.rng);
                    u.speed_noise.advance(MEANDER_DT, &mut self.rng);
                    u.prev = u.next;
                    let t_next = u.prev.t + MEANDER_DT;
                    u.next = uniform_knot(params, u, t_next);
                }
            }
            Kind::Grid(g) => {
                while g.t_next < t {
                    for pair in g.noises.iter_mut() {
                        for n in pair.iter_mut() {
                            n.advance(GRID_KNOT_DT, &mut self.rng);
                        }
                    }
                    std::mem::swap(&mut g.prev, &mut g.next);
                    g.t_prev = g.t_next;
                    g.t_next += GRID_KNOT_DT;
                    let corners = grid_corners(params, g);
                    g.flow.update(&corners, &mut g.next);
                }
            }
        }
    }

    /// Air velocity [m/s] at world point `p` [m] and time `t` [s], world frame, pointing
    /// where the air goes to. `t` is clamped to the window generated so far (call
    /// [`WindField::advance_to`] first); the uniform field ignores `p`.
    pub fn velocity(&self, p: [f64; 3], t: f64) -> [f64; 2] {
        match &self.kind {
            Kind::Uniform(u) => {
                let span = u.next.t - u.prev.t;
                let w = if span > 0.0 {
                    ((t - u.prev.t) / span).clamp(0.0, 1.0)
                } else {
                    1.0
                };
                let dir = u.prev.direction + w * (u.next.direction - u.prev.direction);
                let speed = u.prev.speed + w * (u.next.speed - u.prev.speed);
                let (s, c) = dir.sin_cos();
                [speed * c, speed * s]
            }
            Kind::Grid(g) => {
                let span = g.t_next - g.t_prev;
                let w = if span > 0.0 {
                    ((t - g.t_prev) / span).clamp(0.0, 1.0)
                } else {
                    1.0
                };
                let a = g.prev.velocity(p[0], p[1]);
                let b = g.next.velocity(p[0], p[1]);
                [a[0] + w * (b[0] - a[0]), a[1] + w * (b[1] - a[1])]
            }
        }
    }
}

fn uniform_knot(params: &WindParams, u: &UniformState, t: f64) -> Knot {
    Knot {
        t,
        direction: params.direction + u.dir_noise.value(),
        speed: (params.speed + u.speed_noise.value()).max(0.0),
    }
}

/// Corner winds (SW, SE, NE, NW) [m/s] from the current noises.
fn grid_corners(params: &WindParams, g: &GridState) -> [[f64; 2]; 4] {
    let (a, b) = (g.coherence.sqrt(), (1.0 - g.coherence).sqrt());
    let mut out = [[0.0; 2]; 4];
    for (k, o) in out.iter_mut().enumerate() {
        let own = &g.noises[k + 1];
        let common = &g.noises[0];
        let dir = params.direction + a * common[0].value() + b * own[0].value();
        let speed = (params.speed + a * common[1].value() + b * own[1].value()).max(0.0);
        let (s, c) = dir.sin_cos();
        *o = [speed * c, speed * s];
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;
    use rand::SeedableRng;

    fn params(std: f64) -> WindParams {
        WindParams {
            speed: 1.0,
            direction: 0.5,
            direction_std: std,
            speed_std: 0.1 * std,
            correlation_time: 3.0,
        }
    }

    #[test]
    fn no_meander_gives_mean_wind() {
        let mut w = WindField::new(params(0.0), ChaCha8Rng::seed_from_u64(1));
        w.advance_to(10.0);
        let v = w.velocity([0.0; 3], 10.0);
        assert_abs_diff_eq!(v[0], 0.5f64.cos(), epsilon = 1e-12);
        assert_abs_diff_eq!(v[1], 0.5f64.sin(), epsilon = 1e-12);
    }

    #[test]
    fn same_seed_same_wind_whatever_the_step() {
        let mut a = WindField::new(params(0.3), ChaCha8Rng::seed_from_u64(9));
        let mut b = WindField::new(params(0.3), ChaCha8Rng::seed_from_u64(9));
        let mut t = 0.0;
        while t < 20.0 {
            t += 0.01;
            a.advance_to(t);
        }
        b.advance_to(t);
        assert_eq!(a.velocity([0.0; 3], t), b.velocity([0.0; 3], t));
    }

    #[test]
    fn grid_field_varies_in_space_and_repeats() {
        use crate::arena::Aabb;
        let arena = Arena {
            bounds: Aabb::new(0.0, 0.0, 20.0, 12.0),
            obstacles: vec![Aabb::new(9.0, 5.0, 11.0, 7.0)],
        };
        let grid = WindGridParams::default();
        let mut a = WindField::with_grid(params(0.3), &grid, &arena, ChaCha8Rng::seed_from_u64(4));
        let mut b = WindField::with_grid(params(0.3), &grid, &arena, ChaCha8Rng::seed_from_u64(4));
        a.advance_to(30.0);
        for k in 1..=300 {
            b.advance_to(k as f64 * 0.1);
        }
        let (p, q) = ([2.0, 2.0, 0.3], [18.0, 10.0, 0.3]);
        assert_eq!(a.velocity(p, 30.0), b.velocity(p, 30.0));
        let (vp, vq) = (a.velocity(p, 30.0), a.velocity(q, 30.0));
        assert!(
            (vp[0] - vq[0]).abs() + (vp[1] - vq[1]).abs() > 1e-3,
            "{vp:?} {vq:?}"
        );
        // Upstream of the box centre (wind towards +x): the air slows down in front of it.
        let front = a.velocity([8.9, 6.0, 0.3], 30.0);
        let side = a.velocity([10.0, 8.0, 0.3], 30.0);
        assert!(
            front[0].hypot(front[1]) < side[0].hypot(side[1]),
            "{front:?} {side:?}"
        );
    }

    #[test]
    fn meander_has_requested_spread() {
        let mut w = WindField::new(params(0.3), ChaCha8Rng::seed_from_u64(3));
        let mut dirs = Vec::new();
        for k in 1..40_000 {
            let t = k as f64 * 0.5;
            w.advance_to(t);
            let v = w.velocity([0.0; 3], t);
            dirs.push(v[1].atan2(v[0]) - 0.5);
        }
        let n = dirs.len() as f64;
        let mean = dirs.iter().sum::<f64>() / n;
        let std = (dirs.iter().map(|d| (d - mean).powi(2)).sum::<f64>() / n).sqrt();
        assert!((std - 0.3).abs() < 0.03, "direction std {std}");
    }
}
