//! Filament plume: puffs ("filaments") released at a fixed rate from each source,
//! advected by the wind plus a zero-mean random walk for relative dispersion, growing as
//! R^2 = R0^2 + gamma * age (after Farrell et al., "Filament-based atmospheric dispersion
//! model to achieve short time-scale structure of odor plumes", Environmental Fluid
//! Mechanics 2:143-169, 2002).
//!
//! Contract:
//! - each filament carries the mass M = Q / f [g] (Q source rate [g/s], f release rate
//!   [Hz]) and contributes the mass-conserving 3-D Gaussian
//!   C = M / ((2 pi)^(3/2) R^3) exp(-d^2 / (2 R^2)) [g/m^3] plus its mirror image below
//!   the ground (z = 0 reflects), so the field above ground integrates to M per filament.
//!   (The paper's printed form, exp(-d^2/R^2) with the same prefactor, integrates to
//!   M / (2 sqrt 2); we keep mass, so R here is the Gaussian standard deviation.)
//! - centre motion per step dt: p += u(p, t + dt/2) dt + sqrt(2 K dt) n, n ~ N(0, I3), with
//!   u the wind at the filament's own position (explicit Euler with the mid-step time) and
//!   K the relative diffusivity [m^2/s]; centres reflect at z = 0.
//! - obstacles (given with [`FilamentPlume::with_walls`]) and solid arena edges reflect the
//!   centres specularly: a centre that ends a step inside a box is mirrored back across the
//!   face it crossed (the face of least penetration); past a solid edge it is mirrored back
//!   inside. The gas cannot pass through them.
//! - filaments older than `max_age` or leaving the arena through an open edge are dropped;
//!   above `max_filaments` the oldest go first. The mass of those dropped inside the arena
//!   is handed on ([`FilamentPlume::take_retired_mass`]) to the room background.
//! - a filament is summed only within `CUTOFF_SIGMAS` R of the query point horizontally
//!   (the neglected tail is below exp(-CUTOFF_SIGMAS^2 / 2) of its peak). A single query
//!   scans the live filaments (a cheap squared-distance test each; the few sensors of a
//!   robot query once per step, so no index is kept up to date); a batch of queries
//!   ([`FilamentPlume::concentrations`], e.g. a map) builds a uniform grid of cells once.

use crate::arena::Aabb;
use crate::wind::WindField;
use crate::wind_grid::Edge;
use rand::Rng;
use rand_chacha::ChaCha8Rng;
use rand_distr::StandardNormal;
use std::f64::consts::PI;

/// Horizontal cut-off radius of a filament, in units of its radius R.
pub const CUTOFF_SIGMAS: f64 = 4.0;

/// Upper bound on the number of cells of the query grid.
const MAX_CELLS: f64 = 250_000.0;

/// Filament parameters of one source (scenario key `sources[i].filaments`; defaults in
/// brackets).
#[derive(Debug, Clone, PartialEq, serde::Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct FilamentParams {
    /// Filaments released per second [Hz], > 0 [default 10] (key `per_second`).
    #[serde(rename = "per_second")]
    pub release_rate: f64,
    /// Radius (Gaussian standard deviation) at release, R0 [m], > 0 [default 0.03].
    pub initial_radius: f64,
    /// Growth of R^2 per second, gamma [m^2/s], >= 0 [default 0.004].
    pub growth_rate: f64,
    /// Diffusivity of the centre random walk (relative dispersion) K [m^2/s], >= 0
    /// [default 0.01].
    pub relative_diffusivity: f64,
    /// Age after which a filament is dropped [s], > 0 [default 60].
    pub max_age: f64,
}

impl Default for FilamentParams {
    fn default() -> Self {
        Self {
            release_rate: 10.0,
            initial_radius: 0.03,
            growth_rate: 0.004,
            relative_diffusivity: 0.01,
            max_age: 60.0,
        }
    }
}

/// A point source of the filament model.
#[derive(Debug, Clone, PartialEq)]
pub struct FilamentSource {
    /// Release point [m], world frame (z = height above ground).
    pub position: [f64; 3],
    /// Release rate Q [g/s].
    pub rate: f64,
    /// Filament parameters.
    pub params: FilamentParams,
}

impl FilamentSource {
    fn mass_per_filament(&self) -> f64 {
        self.rate / self.params.release_rate
    }

    fn radius_sq(&self, age: f64) -> f64 {
        let r0 = self.params.initial_radius;
        r0 * r0 + self.params.growth_rate * age.max(0.0)
    }
}

#[derive(Debug, Clone, Copy)]
struct Filament {
    pos: [f64; 3],
    birth: f64,
    source: usize,
}

/// A filament prepared for queries: centre, 1/(2R^2), peak amplitude, cut-off radius^2.
#[derive(Debug, Clone, Copy, Default)]
struct Packed {
    x: f64,
    y: f64,
    z: f64,
    inv_2r2: f64,
    amp: f64,
    cut2: f64,
}

/// Uniform-grid bucket index of the filaments (counting sort), built for a batch of queries.
#[derive(Debug, Clone)]
struct CellIndex {
    x0: f64,
    y0: f64,
    cell: f64,
    nx: usize,
    ny: usize,
    starts: Vec<u32>,
    items: Vec<Packed>,
    cell_of: Vec<u32>,
    fill: Vec<u32>,
    max_cut: f64,
}

impl CellIndex {
    fn new(bounds: &Aabb, cell: f64) -> Self {
        let area = bounds.width().max(1e-9) * bounds.height().max(1e-9);
        let cell = cell.max((area / MAX_CELLS).sqrt());
        let nx = ((bounds.width() / cell).ceil() as usize).max(1);
        let ny = ((bounds.height() / cell).ceil() as usize).max(1);
        Self {
            x0: bounds.x_min,
            y0: bounds.y_min,
            cell,
            nx,
            ny,
            starts: vec![0; nx * ny + 1],
            items: Vec::new(),
            cell_of: Vec::new(),
            fill: Vec::new(),
            max_cut: 0.0,
        }
    }

    fn cell_xy(&self, x: f64, y: f64) -> (usize, usize) {
        // Truncation equals floor for the non-negative values kept by max(0) (NaN maps to 0),
        // and avoids a libm call per filament.
        let cx = (((x - self.x0) / self.cell).max(0.0) as usize).min(self.nx - 1);
        let cy = (((y - self.y0) / self.cell).max(0.0) as usize).min(self.ny - 1);
        (cx, cy)
    }

    fn rebuild(&mut self, filaments: &[Filament], sources: &[FilamentSource], now: f64) {
        let norm = (2.0 * PI).powf(1.5);
        self.starts.iter_mut().for_each(|s| *s = 0);
        self.cell_of.clear();
        for f in filaments {
            let (cx, cy) = self.cell_xy(f.pos[0], f.pos[1]);
            let c = cy * self.nx + cx;
            self.cell_of.push(c as u32);
            self.starts[c + 1] += 1;
        }
        for i in 1..self.starts.len() {
            self.starts[i] += self.starts[i - 1];
        }
        self.items.clear();
        self.items.resize(filaments.len(), Packed::default());
        self.fill.clear();
        self.fill.extend_from_slice(&self.starts);
        self.max_cut = 0.0;
        for (f, &c) in filaments.iter().zip(&self.cell_of) {
            let src = &sources[f.source];
            let r2 = src.radius_sq(now - f.birth);
            let cut2 = CUTOFF_SIGMAS * CUTOFF_SIGMAS * r2;
            self.max_cut = self.max_cut.max(cut2.sqrt());
            let slot = &mut self.fill[c as usize];
            self.items[*slot as usize] = Packed {
                x: f.pos[0],
                y: f.pos[1],
                z: f.pos[2],
                inv_2r2: 0.5 / r2,
                amp: src.mass_per_filament() / (norm * r2 * r2.sqrt()),
                cut2,
            };
            *slot += 1;
        }
    }

    fn query(&self, p: [f64; 3]) -> f64 {
        if self.items.is_empty() {
            return 0.0;
        }
        let (cx0, cy0) = self.cell_xy(p[0] - self.max_cut, p[1] - self.max_cut);
        let (cx1, cy1) = self.cell_xy(p[0] + self.max_cut, p[1] + self.max_cut);
        let mut sum = 0.0;
        for cy in cy0..=cy1 {
            let row = cy * self.nx;
            let lo = self.starts[row + cx0] as usize;
            let hi = self.starts[row + cx1 + 1] as usize;
            for f in &self.items[lo..hi] {
                let (dx, dy) = (p[0] - f.x, p[1] - f.y);
                let h2 = dx * dx + dy * dy;
                if h2 >= f.cut2 {
                    continue;
                }
                let (d1, d2) = (p[2] - f.z, p[2] + f.z);
                let direct = (-(h2 + d1 * d1) * f.inv_2r2).exp();
                let image = (-(h2 + d2 * d2) * f.inv_2r2).exp();
                sum += f.amp * (direct + image);
            }
        }
        sum
    }
}

/// The filament plume state: live filaments of every source.
#[derive(Debug, Clone)]
pub struct FilamentPlume {
    sources: Vec<FilamentSource>,
    next_release: Vec<u64>,
    bounds: Aabb,
    max_filaments: usize,
    rng: ChaCha8Rng,
    filaments: Vec<Filament>,
    index: CellIndex,
    time: f64,
    obstacles: Vec<Aabb>,
    solid: Vec<Edge>,
    retired: f64,
}

impl FilamentPlume {
    /// Creates an empty plume (nothing released yet) at time 0 inside `bounds`; at most
    /// `max_filaments` filaments are kept.
    pub fn new(
        sources: Vec<FilamentSource>,
        bounds: Aabb,
        max_filaments: usize,
        rng: ChaCha8Rng,
    ) -> Self {
        let largest = sources
            .iter()
            .map(|s| CUTOFF_SIGMAS * s.radius_sq(s.params.max_age).sqrt())
            .fold(0.05f64, f64::max);
        let next_release = vec![0; sources.len()];
        Self {
            index: CellIndex::new(&bounds, 0.5 * largest),
            sources,
            next_release,
            bounds,
            max_filaments,
            rng,
            filaments: Vec::new(),
            time: 0.0,
            obstacles: Vec::new(),
            solid: Vec::new(),
            retired: 0.0,
        }
    }

    /// Makes the boxes `obstacles` and the arena edges `solid` reflect the filaments.
    pub fn with_walls(mut self, obstacles: Vec<Aabb>, solid: Vec<Edge>) -> Self {
        self.obstacles = obstacles;
        self.solid = solid;
        self
    }

    /// Mass [g] of the filaments dropped inside the arena (aged out or over the cap) since
    /// the last call: gas still in the room that the plume no longer resolves.
    pub fn take_retired_mass(&mut self) -> f64 {
        std::mem::take(&mut self.retired)
    }

    /// Simulation time of the plume [s].
    pub fn time(&self) -> f64 {
        self.time
    }

    /// Number of live filaments.
    pub fn filament_count(&self) -> usize {
        self.filaments.len()
    }

    /// Sources of the plume.
    pub fn sources(&self) -> &[FilamentSource] {
        &self.sources
    }

    /// Advances the plume from its time t to `t_end` [s]: moves live filaments with the
    /// wind at mid-step, releases the filaments due in (t, t_end] (each moved for its own
    /// part of the step), drops old or escaped ones. `wind`
    /// must already be advanced to `t_end`. Absolute times keep ages free of round-off
    /// accumulated over many steps.
    pub fn step_to(&mut self, wind: &WindField, t_end: f64) {
        let dt = t_end - self.time;
        if dt <= 0.0 {
            return;
        }
        let t_mid = self.time + 0.5 * dt;
        let walls = Walls {
            bounds: &self.bounds,
            obstacles: &self.obstacles,
            solid: &self.solid,
        };
        for f in self.filaments.iter_mut() {
            let k = self.sources[f.source].params.relative_diffusivity;
            let u = wind.velocity(f.pos, t_mid);
            let before = f.pos;
            random_walk(&mut f.pos, u, dt, k, &mut self.rng);
            walls.reflect(before, &mut f.pos);
        }
        for (s, src) in self.sources.iter().enumerate() {
            let f = src.params.release_rate;
            loop {
                let tr = self.next_release[s] as f64 / f;
                if tr > t_end {
                    break;
                }
                self.next_release[s] += 1;
                let mut pos = src.position;
                let travel = t_end - tr;
                let u_rel = wind.velocity(pos, 0.5 * (tr + t_end));
                random_walk(
                    &mut pos,
                    u_rel,
                    travel,
                    src.params.relative_diffusivity,
                    &mut self.rng,
                );
                walls.reflect(src.position, &mut pos);
                self.filaments.push(Filament {
                    pos,
                    birth: tr,
                    source: s,
                });
            }
        }
        let (bounds, sources) = (&self.bounds, &self.sources);
        let mut retired = 0.0;
        self.filaments.retain(|f| {
            let inside = bounds.contains([f.pos[0], f.pos[1]]);
            let young = t_end - f.birth <= sources[f.source].params.max_age;
            if inside && !young {
                retired += sources[f.source].mass_per_filament();
            }
            inside && young
        });
        if self.filaments.len() > self.max_filaments {
            let excess = self.filaments.len() - self.max_filaments;
            retired += self
                .filaments
                .drain(..excess)
                .map(|f| sources[f.source].mass_per_filament())
                .sum::<f64>();
        }
        self.retired += retired;
        self.time = t_end;
    }

    /// Instantaneous concentration [g/m^3] at world point `p` [m] (z = height).
    pub fn concentration(&self, p: [f64; 3]) -> f64 {
        let norm = (2.0 * PI).powf(1.5);
        let mut sum = 0.0;
        for f in &self.filaments {
            let (dx, dy) = (p[0] - f.pos[0], p[1] - f.pos[1]);
            let h2 = dx * dx + dy * dy;
            let src = &self.sources[f.source];
            let r2 = src.radius_sq(self.time - f.birth);
            if h2 >= CUTOFF_SIGMAS * CUTOFF_SIGMAS * r2 {
                continue;
            }
            let inv_2r2 = 0.5 / r2;
            let (d1, d2) = (p[2] - f.pos[2], p[2] + f.pos[2]);
            let direct = (-(h2 + d1 * d1) * inv_2r2).exp();
            let image = (-(h2 + d2 * d2) * inv_2r2).exp();
            sum += src.mass_per_filament() / (norm * r2 * r2.sqrt()) * (direct + image);
        }
        sum
    }

    /// Concentrations [g/m^3] at many points, appended to `out` in order (same values as
    /// [`FilamentPlume::concentration`] up to summation order), through a cell index built
    /// once for the batch.
    pub fn concentrations(&self, points: impl Iterator<Item = [f64; 3]>, out: &mut Vec<f64>) {
        let mut index = self.index.clone();
        index.rebuild(&self.filaments, &self.sources, self.time);
        out.extend(points.map(|p| index.query(p)));
    }

    /// Same as [`FilamentPlume::concentration`] by summing every filament (no culling);
    /// for tests and checks of the index.
    pub fn concentration_brute_force(&self, p: [f64; 3]) -> f64 {
        let norm = (2.0 * PI).powf(1.5);
        self.filaments
            .iter()
            .map(|f| {
                let src = &self.sources[f.source];
                let r2 = src.radius_sq(self.time - f.birth);
                let m = src.mass_per_filament() / (norm * r2 * r2.sqrt());
                let h2 = (p[0] - f.pos[0]).powi(2) + (p[1] - f.pos[1]).powi(2);
                let direct = (-(h2 + (p[2] - f.pos[2]).powi(2)) / (2.0 * r2)).exp();
                let image = (-(h2 + (p[2] + f.pos[2]).powi(2)) / (2.0 * r2)).exp();
                m * (direct + image)
            })
            .sum()
    }

    /// Total mass of the live filaments [g].
    pub fn total_mass(&self) -> f64 {
        self.filaments
            .iter()
            .map(|f| self.sources[f.source].mass_per_filament())
            .sum()
    }
}

/// The surfaces that reflect filaments.
struct Walls<'a> {
    bounds: &'a Aabb,
    obstacles: &'a [Aabb],
    solid: &'a [Edge],
}

impl Walls<'_> {
    /// Mirrors `pos` (moved from `before`) back out of any obstacle and inside solid edges.
    fn reflect(&self, before: [f64; 3], pos: &mut [f64; 3]) {
        let b = self.bounds;
        for e in self.solid {
            match e {
                Edge::West if pos[0] < b.x_min => pos[0] = 2.0 * b.x_min - pos[0],
                Edge::East if pos[0] > b.x_max => pos[0] = 2.0 * b.x_max - pos[0],
                Edge::South if pos[1] < b.y_min => pos[1] = 2.0 * b.y_min - pos[1],
                Edge::North if pos[1] > b.y_max => pos[1] = 2.0 * b.y_max - pos[1],
                _ => {}
            }
        }
        // A few passes: a mirrored point may land in a neighbouring box.
        for _ in 0..3 {
            let mut moved = false;
            for o in self.obstacles {
                if !o.contains([pos[0], pos[1]]) {
                    continue;
                }
                // Penetration depth past each face the centre crossed (or could have).
                let cands = [
                    (before[0] <= o.x_min, pos[0] - o.x_min, 0usize),
                    (before[0] >= o.x_max, o.x_max - pos[0], 1),
                    (before[1] <= o.y_min, pos[1] - o.y_min, 2),
                    (before[1] >= o.y_max, o.y_max - pos[1], 3),
                ];
                let crossed = cands
                    .iter()
                    .filter(|c| c.0)
                    .min_by(|a, b| a.1.total_cmp(&b.1));
                let face = match crossed {
                    Some(c) => c.2,
                    // Started inside (released or pushed there): leave by the nearest face.
                    None => cands
                        .iter()
                        .min_by(|a, b| a.1.total_cmp(&b.1))
                        .map_or(0, |c| c.2),
                };
                match face {
                    0 => pos[0] = 2.0 * o.x_min - pos[0] - 1e-9,
                    1 => pos[0] = 2.0 * o.x_max - pos[0] + 1e-9,
                    2 => pos[1] = 2.0 * o.y_min - pos[1] - 1e-9,
                    _ => pos[1] = 2.0 * o.y_max - pos[1] + 1e-9,
                }
                moved = true;
            }
            if !moved {
                break;
            }
        }
    }
}

/// Moves `pos` by u dt plus an isotropic random walk of diffusivity `k`, reflecting at z = 0.
fn random_walk(pos: &mut [f64; 3], u: [f64; 2], dt: f64, k: f64, rng: &mut ChaCha8Rng) {
    let s = (2.0 * k * dt).sqrt();
    let (nx, ny, nz): (f64, f64, f64) = if s > 0.0 {
        (
            rng.sample(StandardNormal),
            rng.sample(StandardNormal),
            rng.sample(StandardNormal),
        )
    } else {
        (0.0, 0.0, 0.0)
    };
    pos[0] += u[0] * dt + s * nx;
    pos[1] += u[1] * dt + s * ny;
    pos[2] = (pos[2] + s * nz).abs();
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::wind::WindParams;
    use rand::SeedableRng;

    fn params() -> FilamentParams {
        FilamentParams {
            release_rate: 10.0,
            initial_radius: 0.05,
            growth_rate: 0.004,
            relative_diffusivity: 0.01,
            max_age: 30.0,
        }
    }

    fn wind(speed: f64, std: f64, seed: u64) -> WindField {
        WindField::new(
            WindParams {
                speed,
                direction: 0.0,
                direction_std: std,
                speed_std: 0.0,
                correlation_time: 4.0,
            },
            ChaCha8Rng::seed_from_u64(seed),
        )
    }

    fn plume(max: usize) -> FilamentPlume {
        let src = FilamentSource {
            position: [1.0, 5.0, 0.3],
            rate: 1e-3,
            params: params(),
        };
        FilamentPlume::new(
            vec![src],
            Aabb::new(0.0, 0.0, 20.0, 10.0),
            max,
            ChaCha8Rng::seed_from_u64(5),
        )
    }

    fn run(p: &mut FilamentPlume, w: &mut WindField, seconds: f64, dt: f64) {
        let (t0, steps) = (p.time(), (seconds / dt).round() as usize);
        for k in 1..=steps {
            let t = t0 + k as f64 * dt;
            w.advance_to(t);
            p.step_to(w, t);
        }
    }

    /// One filament's kernel integrates to its mass above ground (mass conservation of the
    /// normalisation chosen in the module docs); midpoint rule over z >= 0.
    #[test]
    fn kernel_conserves_mass() {
        let mut p = plume(10_000);
        let mut w = wind(0.0, 0.0, 1);
        run(&mut p, &mut w, 0.1, 0.1); // releases the filaments at t = 0 and t = 0.1
        assert_eq!(p.filament_count(), 2);
        let (h, n) = (0.01, 120);
        let mut total = 0.0;
        for i in 0..n {
            for j in 0..n {
                for k in 0..(n / 2) {
                    let q = [
                        1.0 - 0.6 + (i as f64 + 0.5) * h,
                        5.0 - 0.6 + (j as f64 + 0.5) * h,
                        (k as f64 + 0.5) * h,
                    ];
                    total += p.concentration_brute_force(q) * h * h * h;
                }
            }
        }
        // Both filaments sit (nearly) at the source, radius <= 0.05 m: the 1.2 m box holds them.
        approx::assert_relative_eq!(total, p.total_mass(), max_relative = 2e-3);
    }

    #[test]
    fn index_matches_brute_force() {
        let mut p = plume(10_000);
        let mut w = wind(0.7, 0.3, 2);
        run(&mut p, &mut w, 25.0, 0.05);
        assert!(p.filament_count() > 150);
        let mut checked = 0;
        for i in 0..60 {
            for j in 0..20 {
                let q = [0.3 * i as f64, 0.5 * j as f64, 0.3];
                let fast = p.concentration(q);
                let slow = p.concentration_brute_force(q);
                let peak = 1e-3 / 10.0 / (2.0 * PI).powf(1.5) / 0.05f64.powi(3);
                // Culling only drops tails below exp(-8) of a filament's peak (x2 for the image).
                assert!(fast <= slow * (1.0 + 1e-12), "{q:?}: {fast} > {slow}");
                assert!(
                    slow - fast <= 1e-2 * slow + 7e-4 * peak,
                    "{q:?}: {fast} vs {slow}"
                );
                if slow > 0.0 {
                    checked += 1;
                }
                // The batch path (cell index) applies the same cut-off: equal up to round-off.
                let mut batch = Vec::new();
                p.concentrations(std::iter::once(q), &mut batch);
                assert!(
                    (batch[0] - fast).abs() <= 1e-12 * fast.abs(),
                    "{q:?}: {} vs {fast}",
                    batch[0]
                );
            }
        }
        assert!(checked > 50, "only {checked} points saw the plume");
    }

    #[test]
    fn release_count_age_and_cap() {
        let mut p = plume(10_000);
        let mut w = wind(0.1, 0.0, 3);
        run(&mut p, &mut w, 10.0, 0.05);
        // Releases at k / 10 s for k = 0..=100 (t = 10 included); none can have left yet.
        assert_eq!(p.filament_count(), 101);
        run(&mut p, &mut w, 30.0, 0.05);
        // Max age 30 s: releases in [10, 40] survive (0.1 m/s x 30 s = 3 m stays inside).
        assert_eq!(p.filament_count(), 301);
        let mut capped = plume(50);
        run(&mut capped, &mut w, 20.0, 0.05);
        assert_eq!(capped.filament_count(), 50);
    }

    #[test]
    fn filaments_leave_the_arena() {
        let mut p = plume(10_000);
        let mut w = wind(2.0, 0.0, 4);
        run(&mut p, &mut w, 29.0, 0.05);
        // 19 m to the downwind wall at 2 m/s: only filaments younger than ~9.5 s remain.
        let n = p.filament_count();
        assert!((90..=100).contains(&n), "count {n}");
    }

    /// A box across the plume's path: no filament centre ends inside it, and the gas shows
    /// up beside it but far less right behind it than without the box.
    #[test]
    fn obstacles_reflect_filaments() {
        let wall = Aabb::new(4.0, 3.5, 4.5, 6.5);
        let mut with = plume(10_000).with_walls(vec![wall], vec![Edge::South, Edge::North]);
        let mut without = plume(10_000);
        let (mut wa, mut wb) = (wind(0.6, 0.0, 6), wind(0.6, 0.0, 6));
        let (mut behind_with, mut behind_without) = (0.0, 0.0);
        for k in 1..=600 {
            let t = k as f64 * 0.05;
            wa.advance_to(t);
            wb.advance_to(t);
            with.step_to(&wa, t);
            without.step_to(&wb, t);
            assert!(with
                .filaments
                .iter()
                .all(|f| !wall.contains([f.pos[0], f.pos[1]])));
            if k > 300 {
                behind_with += with.concentration([4.8, 5.0, 0.3]);
                behind_without += without.concentration([4.8, 5.0, 0.3]);
            }
        }
        assert!(
            behind_with < 0.2 * behind_without,
            "{behind_with} vs {behind_without}"
        );
        // Mass is kept: the filaments pile up upstream instead of vanishing.
        assert!(with.filament_count() >= without.filament_count());
    }

    #[test]
    fn seeded_runs_repeat() {
        let (mut a, mut b) = (plume(10_000), plume(10_000));
        let (mut wa, mut wb) = (wind(0.5, 0.3, 8), wind(0.5, 0.3, 8));
        run(&mut a, &mut wa, 12.0, 0.05);
        run(&mut b, &mut wb, 12.0, 0.05);
        let q = [4.0, 5.0, 0.3];
        assert_eq!(a.concentration(q).to_bits(), b.concentration(q).to_bits());
    }
}
