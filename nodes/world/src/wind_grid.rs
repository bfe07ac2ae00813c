//! Spatially varying wind on a grid: incompressible, irrotational (potential) flow around
//! the arena's obstacles, driven at the arena edges by four corner winds.
//!
//! Contract:
//! - boundary forcing after the filament plume model of Farrell et al. (Environmental Fluid
//!   Mechanics 2:143-169, 2002; cited from memory): the wind is given at the four arena
//!   corners (each a mean wind plus its own coloured-noise meander) and bilinearly
//!   interpolated along the edges. Their interior is an advection-diffusion solution for
//!   the velocity; ours is the potential flow of the textbook (e.g. Batchelor, An
//!   Introduction to Fluid Dynamics, 1967, ch. 2 and 6) for the same boundary flux, so that
//!   the flow has zero divergence and does not cross walls or obstacles.
//! - discretisation: a streamfunction psi on the nodes of a regular grid over the arena
//!   (cell sizes hx = width / nx, hy = height / ny, about `resolution`); velocities on the
//!   cell faces (staggered grid): u = (psi[i][j+1] - psi[i][j]) / hy on vertical faces,
//!   v = -(psi[i+1][j] - psi[i][j]) / hx on horizontal faces. Every cell's discrete
//!   divergence (u_e - u_w) / hx + (v_n - v_s) / hy telescopes to zero (round-off only).
//! - boundary psi: walking the perimeter counter-clockwise, psi grows by the outward normal
//!   flux of the interpolated corner wind over each boundary segment; solid edges (and
//!   segments inside an obstacle) carry no flux; the net flux is removed evenly over the open
//!   segments, so what comes in goes out.
//! - obstacles: nodes within half a cell of a box are solid; each connected obstacle holds one
//!   constant psi (a streamline: no flow through it), fixed by the discrete zero-circulation
//!   condition (sum of the links to its fluid neighbours vanishes) unless it touches the
//!   arena edge, where it takes the edge value. Interior nodes satisfy the 5-point Laplace
//!   equation, solved by successive over-relaxation to a relative change of 1e-11.
//! - the problem is linear in the eight corner components, so eight basis solutions are
//!   solved once; a field for given corner winds is their weighted sum.
//! - queries: u and v are bilinearly interpolated from their face positions, clamped to the
//!   grid (a point outside the arena reads the nearest edge value).

use crate::arena::Arena;

/// An arena edge.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Deserialize, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Edge {
    /// y = y_min.
    South,
    /// x = x_max.
    East,
    /// y = y_max.
    North,
    /// x = x_min.
    West,
}

/// Corner order of the forcing: south-west, south-east, north-east, north-west.
pub const CORNERS: [&str; 4] = ["south_west", "south_east", "north_east", "north_west"];

/// Grid geometry and face velocities of one flow.
#[derive(Debug, Clone, PartialEq)]
pub struct FaceField {
    /// Lower-left corner of the grid (arena min) [m].
    pub origin: [f64; 2],
    /// Cells along x.
    pub nx: usize,
    /// Cells along y.
    pub ny: usize,
    /// Cell width [m].
    pub hx: f64,
    /// Cell height [m].
    pub hy: f64,
    /// u on vertical faces, index j * (nx + 1) + i, at (x0 + i hx, y0 + (j + 1/2) hy) [m/s].
    pub u: Vec<f64>,
    /// v on horizontal faces, index j * nx + i, at (x0 + (i + 1/2) hx, y0 + j hy) [m/s].
    pub v: Vec<f64>,
}

fn lerp_grid(values: &[f64], stride: usize, n_i: usize, n_j: usize, fi: f64, fj: f64) -> f64 {
    let fi = fi.clamp(0.0, (n_i - 1) as f64);
    let fj = fj.clamp(0.0, (n_j - 1) as f64);
    let (i0, j0) = (
        (fi as usize).min(n_i.saturating_sub(2)),
        (fj as usize).min(n_j.saturating_sub(2)),
    );
    let (i1, j1) = ((i0 + 1).min(n_i - 1), (j0 + 1).min(n_j - 1));
    let (a, b) = (fi - i0 as f64, fj - j0 as f64);
    let at = |i: usize, j: usize| values[j * stride + i];
    (1.0 - b) * ((1.0 - a) * at(i0, j0) + a * at(i1, j0))
        + b * ((1.0 - a) * at(i0, j1) + a * at(i1, j1))
}

impl FaceField {
    fn zeros(origin: [f64; 2], nx: usize, ny: usize, hx: f64, hy: f64) -> Self {
        Self {
            origin,
            nx,
            ny,
            hx,
            hy,
            u: vec![0.0; (nx + 1) * ny],
            v: vec![0.0; nx * (ny + 1)],
        }
    }

    /// u on the vertical face left of cell (i, j) (i in 0..=nx) [m/s].
    pub fn u_face(&self, i: usize, j: usize) -> f64 {
        self.u[j * (self.nx + 1) + i]
    }

    /// v on the horizontal face below cell (i, j) (j in 0..=ny) [m/s].
    pub fn v_face(&self, i: usize, j: usize) -> f64 {
        self.v[j * self.nx + i]
    }

    /// Discrete divergence of cell (i, j) [1/s].
    pub fn divergence(&self, i: usize, j: usize) -> f64 {
        (self.u_face(i + 1, j) - self.u_face(i, j)) / self.hx
            + (self.v_face(i, j + 1) - self.v_face(i, j)) / self.hy
    }

    /// Interpolated air velocity [m/s] at world point (x, y) [m].
    pub fn velocity(&self, x: f64, y: f64) -> [f64; 2] {
        let fx = (x - self.origin[0]) / self.hx;
        let fy = (y - self.origin[1]) / self.hy;
        let u = lerp_grid(&self.u, self.nx + 1, self.nx + 1, self.ny, fx, fy - 0.5);
        let v = lerp_grid(&self.v, self.nx, self.nx, self.ny + 1, fx - 0.5, fy);
        [u, v]
    }

    /// self = sum_k w_k fields_k (same grid).
    fn combine(&mut self, fields: &[FaceField], weights: &[f64]) {
        self.u.iter_mut().for_each(|x| *x = 0.0);
        self.v.iter_mut().for_each(|x| *x = 0.0);
        for (f, &w) in fields.iter().zip(weights) {
            if w == 0.0 {
                continue;
            }
            for (a, b) in self.u.iter_mut().zip(&f.u) {
                *a += w * b;
            }
            for (a, b) in self.v.iter_mut().zip(&f.v) {
                *a += w * b;
            }
        }
    }

    /// self = (1 - w) a + w b.
    fn blend(&mut self, a: &FaceField, b: &FaceField, w: f64) {
        for ((o, x), y) in self.u.iter_mut().zip(&a.u).zip(&b.u) {
            *o = (1.0 - w) * x + w * y;
        }
        for ((o, x), y) in self.v.iter_mut().zip(&a.v).zip(&b.v) {
            *o = (1.0 - w) * x + w * y;
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq)]
enum Node {
    Fluid,
    Edge,
    /// Solid node of obstacle group g.
    Solid(usize),
}

/// The potential-flow solver for one arena: node classes and the eight basis flows.
#[derive(Debug, Clone)]
pub struct FlowGrid {
    empty: FaceField,
    bases: Vec<FaceField>,
}

/// Union-find root.
fn root(parent: &mut [usize], mut a: usize) -> usize {
    while parent[a] != a {
        parent[a] = parent[parent[a]];
        a = parent[a];
    }
    a
}

struct Layout {
    nx: usize,
    ny: usize,
    hx: f64,
    hy: f64,
    origin: [f64; 2],
    nodes: Vec<Node>,
    groups: usize,
    solid_edges: Vec<Edge>,
}

impl Layout {
    fn new(arena: &Arena, resolution: f64, solid_edges: &[Edge]) -> Self {
        let b = arena.bounds;
        let nx = ((b.width() / resolution).round() as usize).max(2);
        let ny = ((b.height() / resolution).round() as usize).max(2);
        let (hx, hy) = (b.width() / nx as f64, b.height() / ny as f64);
        let origin = [b.x_min, b.y_min];
        let (sx, sy) = (nx + 1, ny + 1);
        let mut nodes = vec![Node::Fluid; sx * sy];
        let mut parent: Vec<usize> = (0..arena.obstacles.len()).collect();
        let mut owner: Vec<Option<usize>> = vec![None; sx * sy];
        for (k, o) in arena.obstacles.iter().enumerate() {
            for j in 0..sy {
                for i in 0..sx {
                    let (x, y) = (origin[0] + i as f64 * hx, origin[1] + j as f64 * hy);
                    let inside = x >= o.x_min - 0.5 * hx
                        && x <= o.x_max + 0.5 * hx
                        && y >= o.y_min - 0.5 * hy
                        && y <= o.y_max + 0.5 * hy;
                    if inside {
                        match owner[j * sx + i] {
                            Some(other) => {
                                let (ra, rb) = (root(&mut parent, other), root(&mut parent, k));
                                parent[ra] = rb;
                            }
                            None => owner[j * sx + i] = Some(k),
                        }
                    }
                }
            }
        }
        let mut group_of = vec![usize::MAX; arena.obstacles.len()];
        let mut groups = 0;
        for k in 0..arena.obstacles.len() {
            let r = root(&mut parent, k);
            if group_of[r] == usize::MAX {
                group_of[r] = groups;
                groups += 1;
            }
            group_of[k] = group_of[r];
        }
        for j in 0..sy {
            for i in 0..sx {
                let idx = j * sx + i;
                if let Some(k) = owner[idx] {
                    nodes[idx] = Node::Solid(group_of[root(&mut parent, k)]);
                } else if i == 0 || j == 0 || i == nx || j == ny {
                    nodes[idx] = Node::Edge;
                }
            }
        }
        Self {
            nx,
            ny,
            hx,
            hy,
            origin,
            nodes,
            groups,
            solid_edges: solid_edges.to_vec(),
        }
    }

    fn on_edge(&self, i: usize, j: usize) -> bool {
        i == 0 || j == 0 || i == self.nx || j == self.ny
    }

    /// Perimeter nodes counter-clockwise from the south-west corner, with the edge each
    /// segment leaving the node lies on.
    fn perimeter(&self) -> Vec<(usize, usize, Edge)> {
        let (nx, ny) = (self.nx, self.ny);
        let mut p = Vec::with_capacity(2 * (nx + ny));
        p.extend((0..nx).map(|i| (i, 0, Edge::South)));
        p.extend((0..ny).map(|j| (nx, j, Edge::East)));
        p.extend((1..=nx).rev().map(|i| (i, ny, Edge::North)));
        p.extend((1..=ny).rev().map(|j| (0, j, Edge::West)));
        p
    }

    /// Boundary psi [m^2/s] on the perimeter nodes for corner winds `corners` (SW, SE, NE, NW).
    fn boundary_psi(&self, corners: &[[f64; 2]; 4]) -> Vec<((usize, usize), f64)> {
        let (w, h) = (self.nx as f64 * self.hx, self.ny as f64 * self.hy);
        let wind = |x: f64, y: f64| -> [f64; 2] {
            let (a, b) = ((x - self.origin[0]) / w, (y - self.origin[1]) / h);
            let wts = [(1.0 - a) * (1.0 - b), a * (1.0 - b), a * b, (1.0 - a) * b];
            let mut out = [0.0; 2];
            for (c, wt) in corners.iter().zip(wts) {
                out[0] += wt * c[0];
                out[1] += wt * c[1];
            }
            out
        };
        let per = self.perimeter();
        let n = per.len();
        let mut flux = Vec::with_capacity(n);
        let mut open_len = 0.0;
        for (k, &(i, j, edge)) in per.iter().enumerate() {
            let (i2, j2, _) = per[(k + 1) % n];
            let (x1, y1) = (
                self.origin[0] + i as f64 * self.hx,
                self.origin[1] + j as f64 * self.hy,
            );
            let (x2, y2) = (
                self.origin[0] + i2 as f64 * self.hx,
                self.origin[1] + j2 as f64 * self.hy,
            );
            let blocked = matches!(self.nodes[j * (self.nx + 1) + i], Node::Solid(_))
                && matches!(self.nodes[j2 * (self.nx + 1) + i2], Node::Solid(_));
            if self.solid_edges.contains(&edge) || blocked {
                flux.push(None);
                continue;
            }
            let (tx, ty) = (x2 - x1, y2 - y1);
            let m = wind(0.5 * (x1 + x2), 0.5 * (y1 + y2));
            // Outward normal times length: (ty, -tx) for a counter-clockwise walk.
            flux.push(Some(m[0] * ty - m[1] * tx));
            open_len += tx.hypot(ty);
        }
        let net: f64 = flux.iter().flatten().sum();
        let mut psi = 0.0;
        let mut out = Vec::with_capacity(n);
        for (k, &(i, j, _)) in per.iter().enumerate() {
            out.push(((i, j), psi));
            if let Some(q) = flux[k] {
                let (i2, j2, _) = per[(k + 1) % n];
                let len =
                    ((i2 as f64 - i as f64) * self.hx).hypot((j2 as f64 - j as f64) * self.hy);
                psi += q - net * len / open_len.max(f64::MIN_POSITIVE);
            }
        }
        out
    }

    /// Solves the streamfunction for the given corner winds and returns the face field.
    fn solve(&self, corners: &[[f64; 2]; 4]) -> FaceField {
        let (nx, ny, sx) = (self.nx, self.ny, self.nx + 1);
        let mut psi = vec![0.0; sx * (ny + 1)];
        // Dirichlet values: the perimeter; groups touching it take its value.
        let mut group_fixed: Vec<Option<f64>> = vec![None; self.groups];
        let mut scale = 0.0f64;
        for ((i, j), v) in self.boundary_psi(corners) {
            psi[j * sx + i] = v;
            scale = scale.max(v.abs());
            if let Node::Solid(g) = self.nodes[j * sx + i] {
                group_fixed[g].get_or_insert(v);
            }
        }
        let mut group_val: Vec<f64> = group_fixed.iter().map(|v| v.unwrap_or(0.0)).collect();
        let (wx, wy) = (1.0 / (self.hx * self.hx), 1.0 / (self.hy * self.hy));
        let diag = 2.0 * (wx + wy);
        let n = nx.max(ny) as f64;
        let omega = 2.0 / (1.0 + (std::f64::consts::PI / n).sin());
        let tol = 1e-11 * scale.max(1e-12);
        let value = |psi: &[f64], gv: &[f64], idx: usize| match self.nodes[idx] {
            Node::Solid(g) if !self.on_edge(idx % sx, idx / sx) => gv[g],
            _ => psi[idx],
        };
        for _ in 0..50_000 {
            let mut change = 0.0f64;
            for j in 1..ny {
                for i in 1..nx {
                    let idx = j * sx + i;
                    if self.nodes[idx] != Node::Fluid {
                        continue;
                    }
                    let s = wx
                        * (value(&psi, &group_val, idx - 1) + value(&psi, &group_val, idx + 1))
                        + wy * (value(&psi, &group_val, idx - sx)
                            + value(&psi, &group_val, idx + sx));
                    let d = omega * (s / diag - psi[idx]);
                    psi[idx] += d;
                    change = change.max(d.abs());
                }
            }
            // Floating obstacles: zero circulation, sum of w (psi_nbr - psi_g) = 0.
            let mut num = vec![0.0; self.groups];
            let mut den = vec![0.0; self.groups];
            for j in 1..ny {
                for i in 1..nx {
                    let idx = j * sx + i;
                    let Node::Solid(g) = self.nodes[idx] else {
                        continue;
                    };
                    if group_fixed[g].is_some() {
                        continue;
                    }
                    for (nb, w) in [(idx - 1, wx), (idx + 1, wx), (idx - sx, wy), (idx + sx, wy)] {
                        if !matches!(self.nodes[nb], Node::Solid(_)) {
                            num[g] += w * psi[nb];
                            den[g] += w;
                        }
                    }
                }
            }
            for g in 0..self.groups {
                if group_fixed[g].is_none() && den[g] > 0.0 {
                    let v = num[g] / den[g];
                    change = change.max((v - group_val[g]).abs());
                    group_val[g] = v;
                }
            }
            if change <= tol {
                break;
            }
        }
        for j in 0..=ny {
            for i in 0..=nx {
                let idx = j * sx + i;
                psi[idx] = value(&psi, &group_val, idx);
            }
        }
        let mut f = FaceField::zeros(self.origin, nx, ny, self.hx, self.hy);
        for j in 0..ny {
            for i in 0..=nx {
                f.u[j * (nx + 1) + i] = (psi[(j + 1) * sx + i] - psi[j * sx + i]) / self.hy;
            }
        }
        for j in 0..=ny {
            for i in 0..nx {
                f.v[j * nx + i] = -(psi[j * sx + i + 1] - psi[j * sx + i]) / self.hx;
            }
        }
        f
    }
}

impl FlowGrid {
    /// Builds the grid over `arena` with cells of about `resolution` [m] (at least 2 x 2)
    /// and solves the eight basis flows; `solid_edges` carry no flow.
    pub fn new(arena: &Arena, resolution: f64, solid_edges: &[Edge]) -> Self {
        let layout = Layout::new(arena, resolution, solid_edges);
        let mut bases = Vec::with_capacity(8);
        for k in 0..8 {
            let mut corners = [[0.0; 2]; 4];
            corners[k / 2][k % 2] = 1.0;
            bases.push(layout.solve(&corners));
        }
        Self {
            empty: FaceField::zeros(layout.origin, layout.nx, layout.ny, layout.hx, layout.hy),
            bases,
        }
    }

    /// The flow for corner winds (SW, SE, NE, NW) [m/s], as a sum of the basis flows.
    pub fn field(&self, corners: &[[f64; 2]; 4]) -> FaceField {
        let mut f = self.empty.clone();
        self.field_into(corners, &mut f);
        f
    }

    fn field_into(&self, corners: &[[f64; 2]; 4], out: &mut FaceField) {
        let w: Vec<f64> = corners.iter().flat_map(|c| c.iter().copied()).collect();
        out.combine(&self.bases, &w);
    }

    /// Writes the flow of the corner winds into `out` (a field of this grid).
    pub fn update(&self, corners: &[[f64; 2]; 4], out: &mut FaceField) {
        self.field_into(corners, out);
    }

    /// Writes (1 - w) a + w b into `out`.
    pub fn blend(a: &FaceField, b: &FaceField, w: f64, out: &mut FaceField) {
        out.blend(a, b, w);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::arena::Aabb;

    fn open_room(obstacles: Vec<Aabb>) -> Arena {
        Arena {
            bounds: Aabb::new(0.0, 0.0, 10.0, 6.0),
            obstacles,
        }
    }

    #[test]
    fn uniform_corners_without_obstacles_give_uniform_flow() {
        let g = FlowGrid::new(&open_room(vec![]), 0.5, &[]);
        let f = g.field(&[[0.8, 0.3]; 4]);
        for (x, y) in [(1.0, 1.0), (5.2, 3.3), (9.9, 0.1)] {
            let v = f.velocity(x, y);
            assert!(
                (v[0] - 0.8).abs() < 1e-9 && (v[1] - 0.3).abs() < 1e-9,
                "{v:?}"
            );
        }
    }

    #[test]
    fn divergence_free_and_no_flow_into_obstacles_or_solid_walls() {
        let arena = open_room(vec![
            Aabb::new(4.0, 2.0, 5.0, 4.0),
            Aabb::new(7.0, 0.0, 8.0, 1.0),
        ]);
        let g = FlowGrid::new(&arena, 0.5, &[Edge::North]);
        let f = g.field(&[[1.0, 0.2], [0.6, -0.4], [0.9, 0.5], [1.2, 0.0]]);
        let scale = 1.0 / 0.5;
        for j in 0..f.ny {
            for i in 0..f.nx {
                assert!(f.divergence(i, j).abs() < 1e-12 * scale, "cell ({i}, {j})");
            }
        }
        // North wall: no normal flow.
        for i in 0..f.nx {
            assert!(f.v_face(i, f.ny).abs() < 1e-12);
        }
        // Faces inside the obstacle box [4, 5] x [2, 4] carry nothing.
        assert!(f.u_face(9, 5).abs() < 1e-12 && f.v_face(8, 6).abs() < 1e-12);
        // The flow goes around: faster beside the box than far from it is not required, but
        // it must still carry the inflow past the box.
        let v = f.velocity(4.5, 1.0);
        assert!(v[0] > 0.3, "{v:?}");
    }
}
