//! The grid posterior over the source position.
//!
//! Contract:
//! - the grid is `width` x `height` square cells of `resolution` [m] whose corner with the
//!   smallest x and y is `origin` (odom); cell (i, j) is at index `j * width + i` (x fastest,
//!   as in nav_msgs/OccupancyGrid) and stands for a source at its centre;
//! - the prior is uniform over the cells;
//! - [`Posterior::update`] multiplies by the Poisson likelihood of `hits` odor hits during the
//!   update at the robot's position, mean mu = dt R(r | r0) from [`crate::model::Kernel`]:
//!   P(k | r0) = mu^k e^-mu / k!, so a non-detection (k = 0) multiplies by e^-mu. The
//!   posterior is kept as a log (shifted so that its maximum is 0), so that no cell ever
//!   underflows to zero and later evidence can always move it (the probabilities of cells
//!   below e^-700 of the MAP cell are 0, see [`EXP_FLOOR`]);
//! - after each update, [`Posterior::probabilities`] sums to one and every value is >= 0, and
//!   [`Posterior::summary`] holds the mean, covariance, entropy and MAP cell;
//! - an update allocates nothing; its per-cell work is one square root, one table lookup
//!   ([`LnK0Table`]) and two exponentials ([`exp_or_zero`]).

use crate::k0::LnK0Table;
use crate::model::Kernel;

/// Placement and size of the grid.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GridGeometry {
    /// Corner of cell (0, 0) with the smallest x and y [m, odom].
    pub origin: [f64; 2],
    /// Cell side [m].
    pub resolution: f64,
    /// Cells along x.
    pub width: usize,
    /// Cells along y.
    pub height: usize,
}

impl GridGeometry {
    /// Centre of cell (i, j) [m, odom].
    pub fn cell_center(&self, i: usize, j: usize) -> [f64; 2] {
        [self.origin[0] + (i as f64 + 0.5) * self.resolution, self.origin[1] + (j as f64 + 0.5) * self.resolution]
    }

    /// Centre of the grid [m, odom].
    pub fn center(&self) -> [f64; 2] {
        [
            self.origin[0] + 0.5 * self.width as f64 * self.resolution,
            self.origin[1] + 0.5 * self.height as f64 * self.resolution,
        ]
    }

    /// Number of cells.
    pub fn cells(&self) -> usize {
        self.width * self.height
    }
}

/// What the posterior says after the last update.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Summary {
    /// Posterior mean of the source position [m, odom].
    pub mean: [f64; 2],
    /// Posterior covariance about the mean, row-major [[xx, xy], [yx, yy]] [m^2].
    pub covariance: [[f64; 2]; 2],
    /// Shannon entropy of the cell probabilities [nats] (ln of the cell count when uniform).
    pub entropy: f64,
    /// Index of the most probable cell (the first one on ties).
    pub map_index: usize,
    /// Centre of the most probable cell [m, odom].
    pub map: [f64; 2],
    /// Probability of the most probable cell.
    pub map_probability: f64,
}

/// The posterior over the grid.
#[derive(Debug, Clone)]
pub struct Posterior {
    geometry: GridGeometry,
    /// Log posterior up to a constant, maximum 0.
    log_p: Vec<f64>,
    /// Normalised probabilities.
    p: Vec<f64>,
    /// Cell centre x [m, odom] per column, and offset from the grid centre.
    xs: Vec<f64>,
    dxs: Vec<f64>,
    /// Cell centre y [m, odom] per row, and offset from the grid centre.
    ys: Vec<f64>,
    dys: Vec<f64>,
    summary: Summary,
    updates: u64,
}

impl Posterior {
    /// A uniform posterior over `geometry` (which must have at least one cell).
    pub fn new(geometry: GridGeometry) -> Posterior {
        let n = geometry.cells();
        let c = geometry.center();
        let xs: Vec<f64> = (0..geometry.width).map(|i| geometry.cell_center(i, 0)[0]).collect();
        let ys: Vec<f64> = (0..geometry.height).map(|j| geometry.cell_center(0, j)[1]).collect();
        let dxs = (0..geometry.width).map(|i| (i as f64 + 0.5 - 0.5 * geometry.width as f64) * geometry.resolution).collect();
        let dys = (0..geometry.height).map(|j| (j as f64 + 0.5 - 0.5 * geometry.height as f64) * geometry.resolution).collect();
        let mut post = Posterior {
            geometry,
            log_p: vec![0.0; n],
            p: vec![0.0; n],
            xs,
            dxs,
            ys,
            dys,
            summary: Summary { mean: c, covariance: [[0.0; 2]; 2], entropy: 0.0, map_index: 0, map: c, map_probability: 0.0 },
            updates: 0,
        };
        post.normalise(0.0, 0);
        post
    }

    /// The grid.
    pub fn geometry(&self) -> &GridGeometry {
        &self.geometry
    }

    /// Cell probabilities (index `j * width + i`), summing to one.
    pub fn probabilities(&self) -> &[f64] {
        &self.p
    }

    /// Log posterior per cell up to a constant (maximum 0).
    pub fn log_posterior(&self) -> &[f64] {
        &self.log_p
    }

    /// Mean, covariance, entropy and MAP after the last update.
    pub fn summary(&self) -> &Summary {
        &self.summary
    }

    /// Updates applied since the uniform prior.
    pub fn updates(&self) -> u64 {
        self.updates
    }

    /// Posterior mass of the cells whose centres lie within `radius` [m] of the MAP cell's
    /// centre.
    pub fn mass_within_map(&self, radius: f64) -> f64 {
        let g = &self.geometry;
        let (mi, mj) = (self.summary.map_index % g.width, self.summary.map_index / g.width);
        let reach = (radius / g.resolution).floor().max(0.0) as usize;
        let (i0, i1) = (mi.saturating_sub(reach), (mi + reach).min(g.width - 1));
        let (j0, j1) = (mj.saturating_sub(reach), (mj + reach).min(g.height - 1));
        let r2 = radius * radius;
        let mut mass = 0.0;
        for j in j0..=j1 {
            let dy = (j as f64 - mj as f64) * g.resolution;
            for i in i0..=i1 {
                let dx = (i as f64 - mi as f64) * g.resolution;
                if dx * dx + dy * dy <= r2 {
                    mass += self.p[j * g.width + i];
                }
            }
        }
        mass
    }

    /// One update: `hits` odor hits during the update with the robot at `robot` [m, odom]
    /// under `kernel`, ln K0 from `table`.
    pub fn update(&mut self, robot: [f64; 2], kernel: &Kernel, hits: u32, table: &LnK0Table) {
        self.update_with(robot, kernel, hits, |z| table.ln_k0(z));
    }

    /// [`Posterior::update`] with ln K0 from `ln_k0` (e.g. the exact [`crate::k0::ln_k0`]).
    pub fn update_with(&mut self, robot: [f64; 2], kernel: &Kernel, hits: u32, ln_k0: impl Fn(f64) -> f64) {
        let k = f64::from(hits);
        let w = self.geometry.width;
        let mut best = f64::NEG_INFINITY;
        let mut best_index = 0;
        for (j, &y) in self.ys.iter().enumerate() {
            let dy = robot[1] - y;
            let row = &mut self.log_p[j * w..(j + 1) * w];
            for (i, (l, &x)) in row.iter_mut().zip(&self.xs).enumerate() {
                let ln_mu = kernel.ln_mean_hits(robot[0] - x, dy, &ln_k0);
                *l += k * ln_mu - exp_or_zero(ln_mu);
                if *l > best {
                    best = *l;
                    best_index = j * w + i;
                }
            }
        }
        self.updates += 1;
        if best.is_finite() {
            self.normalise(best, best_index);
        }
    }

    /// Shifts the log posterior by `-max` (its maximum, at `map_index`) and recomputes the
    /// probabilities and the summary.
    fn normalise(&mut self, max: f64, map_index: usize) {
        let w = self.geometry.width;
        let (mut z, mut zl) = (0.0, 0.0);
        let (mut sx, mut sy, mut sxx, mut syy, mut sxy) = (0.0, 0.0, 0.0, 0.0, 0.0);
        for (j, &dy) in self.dys.iter().enumerate() {
            let (mut rz, mut rl, mut rx, mut rxx) = (0.0, 0.0, 0.0, 0.0);
            let lrow = &mut self.log_p[j * w..(j + 1) * w];
            let prow = &mut self.p[j * w..(j + 1) * w];
            for ((p, l), &dx) in prow.iter_mut().zip(lrow.iter_mut()).zip(&self.dxs) {
                *l -= max;
                let l = *l;
                let e = exp_or_zero(l);
                *p = e;
                rz += e;
                rl += e * l;
                rx += e * dx;
                rxx += e * dx * dx;
            }
            z += rz;
            zl += rl;
            sx += rx;
            sxx += rxx;
            sy += rz * dy;
            syy += rz * dy * dy;
            sxy += rx * dy;
        }
        let inv = 1.0 / z;
        for p in &mut self.p {
            *p *= inv;
        }
        let (mx, my) = (sx * inv, sy * inv);
        let cxx = (sxx * inv - mx * mx).max(0.0);
        let cyy = (syy * inv - my * my).max(0.0);
        let cxy = sxy * inv - mx * my;
        let c = self.geometry.center();
        let g = &self.geometry;
        self.summary = Summary {
            mean: [c[0] + mx, c[1] + my],
            covariance: [[cxx, cxy], [cxy, cyy]],
            entropy: z.ln() - zl * inv,
            map_index,
            map: g.cell_center(map_index % g.width, map_index / g.width),
            map_probability: self.p[map_index],
        };
    }
}

/// Below this, an exponential counts as 0 (the subnormal range, slow on most CPUs): a cell
/// e^-700 times less likely than the MAP cell has probability 0, and a mean hit count below
/// e^-700 is no hit at all.
pub const EXP_FLOOR: f64 = -700.0;

/// e^x, or 0 below [`EXP_FLOOR`].
#[inline]
pub fn exp_or_zero(x: f64) -> f64 {
    if x > EXP_FLOOR {
        x.exp()
    } else {
        0.0
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::params::ModelParams;

    fn geometry() -> GridGeometry {
        GridGeometry { origin: [-5.0, -4.0], resolution: 0.5, width: 20, height: 16 }
    }

    #[test]
    fn the_prior_is_uniform_with_the_largest_entropy() {
        let post = Posterior::new(geometry());
        let n = geometry().cells() as f64;
        assert!(post.probabilities().iter().all(|&p| (p - 1.0 / n).abs() < 1e-15));
        assert!((post.summary().entropy - n.ln()).abs() < 1e-12);
        // Uniform over a 10 m x 8 m rectangle of cell centres: variance (n^2 - 1) h^2 / 12.
        let s = post.summary();
        assert!((s.covariance[0][0] - (400.0 - 1.0) * 0.25 / 12.0).abs() < 1e-12);
        assert!((s.covariance[1][1] - (256.0 - 1.0) * 0.25 / 12.0).abs() < 1e-12);
        assert!(s.covariance[0][1].abs() < 1e-12);
        assert_eq!(s.mean, [0.0, 0.0]);
    }

    #[test]
    fn hits_pull_the_posterior_upwind_of_the_robot_and_lower_the_entropy() {
        let m = ModelParams { diffusivity: 0.1, lifetime: 20.0, emission_rate: 5.0, detector_radius: 0.05 };
        let kernel = Kernel::new(&m, [0.5, 0.0], 0.5);
        let mut post = Posterior::new(geometry());
        let h0 = post.summary().entropy;
        for _ in 0..5 {
            post.update([2.0, 0.0], &kernel, 1, LnK0Table::shared());
        }
        let s = *post.summary();
        assert!(s.entropy < h0 - 1.0, "{} vs {h0}", s.entropy);
        assert!(s.mean[0] < 2.0, "the source is upwind (-x) of the robot: {:?}", s.mean);
        assert!(s.map[0] < 2.0 && s.map[1].abs() <= 0.5, "{:?}", s.map);
        let sum: f64 = post.probabilities().iter().sum();
        assert!((sum - 1.0).abs() < 1e-12);
        assert!(post.mass_within_map(100.0) > 1.0 - 1e-12);
        assert!((post.mass_within_map(0.0) - s.map_probability).abs() < 1e-15);
    }

    #[test]
    fn non_detections_clear_the_cells_just_upwind() {
        let m = ModelParams { diffusivity: 0.1, lifetime: 20.0, emission_rate: 5.0, detector_radius: 0.05 };
        let kernel = Kernel::new(&m, [0.5, 0.0], 0.5);
        let mut post = Posterior::new(geometry());
        for _ in 0..10 {
            post.update([0.0, 0.0], &kernel, 0, LnK0Table::shared());
        }
        let g = geometry();
        let at = |x: f64, y: f64| {
            let i = ((x - g.origin[0]) / g.resolution) as usize;
            let j = ((y - g.origin[1]) / g.resolution) as usize;
            post.probabilities()[j * g.width + i]
        };
        assert!(at(-1.1, 0.1) < 0.1 * at(3.9, 3.9), "{} vs {}", at(-1.1, 0.1), at(3.9, 3.9));
    }
}
