//! The linearized problem the search works on.
//!
//! Around the base fit's reference trajectory, an extra acceleration Σ c_k g_k changes the
//! observed state by δx(t_i) = Φ(t_i) ∫_{t0}^{t_i} Φ(τ)⁻¹ B Σ c_k g_k(τ) dτ, B = [0; I].
//! The integral is a cumulative trapezoid on a fine grid through every observation time,
//! so a candidate costs one pass of its own formulas over the grid and a small
//! least-squares solve: no new integration. The directions the base fit already
//! estimated (initial state, classical parameters) are projected out once.
//! Coefficients: sequentially thresholded least squares on significance |c|/σ on
//! column-scaled matrices; nonlinear constants by variable projection.

use crate::expr::{Context, Node, Terminals, Value};
use nalgebra::{DMatrix, DVector, Matrix6};
use std::collections::HashMap;
use std::sync::{Arc, Mutex};

/// A formula's values at every grid point.
type Track = Vec<Value<f64>>;

/// One used observation's place in the linearized problem.
#[derive(Clone, Debug)]
pub struct ObsRow {
    /// Index in the grid.
    pub grid_index: usize,
    /// First row in the stacked residual.
    pub row: usize,
    /// Each of its rows' partials with respect to the initial state, (∂computed/∂x)·Φ(t_i,
    /// t0) — a position component's Φ row, a measurement's partials through its model —
    /// and the row's σ.
    pub h_phi: Vec<([f64; 6], f64)>,
}

/// The precomputed linearized problem.
pub struct Problem {
    /// Grid times, s from the arc's start.
    pub grid_t: Vec<f64>,
    /// Terminals along the reference trajectory at the grid times.
    pub terminals: Vec<Terminals<f64>>,
    /// Φ(τ)⁻¹ B at the grid times (6×3 column-major).
    pub phi_inv_b: Vec<[f64; 18]>,
    /// The used observations.
    pub obs: Vec<ObsRow>,
    /// Orthonormal basis of the base fit's directions (m × p).
    pub basis: DMatrix<f64>,
    /// Weighted residual of the base fit (m), projected.
    pub z: DVector<f64>,
    /// Terminal constants.
    pub context: Context,
    cache: Mutex<HashMap<String, DVector<f64>>>,
    /// Tracks of constant-free subtrees (`rho * norm(vrel)^2` …), shared by every
    /// candidate and every trial of the constants around them.
    tracks: Mutex<HashMap<String, Arc<Track>>>,
}

/// A solved candidate.
#[derive(Clone, Debug, PartialEq)]
pub struct Solution {
    /// The kept terms (formulas simplified), with their σ.
    pub terms: crate::terms::Terms,
    /// Weighted sum of squared residuals left.
    pub cost: f64,
    /// Complexity: nodes of the kept formulas plus one per coefficient.
    pub complexity: usize,
}

const CACHE_LIMIT: usize = 3000;
/// Variable projection stops when a step lowers the cost by less than this fraction: the
/// search only ranks candidates, and refinement refits the chosen ones exactly, so a
/// χ² digit beyond a thousandth of a unit buys nothing.
const VARPRO_RTOL: f64 = 1e-7;
/// Most cached subtree tracks (about 100 kB each on a day's 20-s grid).
const TRACK_LIMIT: usize = 400;

impl Problem {
    /// Assembles the problem. `phi_grid[k]` is Φ at `grid_t[k]`; `states[k]` the reference
    /// state there; `jac` the base fit's weighted Jacobian and `z` its weighted residual.
    #[allow(clippy::too_many_arguments)]
    pub fn new(
        grid_t: Vec<f64>,
        states: &[propagator::StateVector],
        phi_grid: &[Matrix6<f64>],
        obs: Vec<ObsRow>,
        jac: &DMatrix<f64>,
        z: DVector<f64>,
        context: Context,
    ) -> Option<Problem> {
        let terminals = grid_t
            .iter()
            .zip(states)
            .map(|(t, x)| Terminals::of_state(*t, x, &context))
            .collect();
        let mut phi_inv_b = Vec::with_capacity(phi_grid.len());
        for p in phi_grid {
            let inv = p.try_inverse()?;
            let mut m = [0.0; 18];
            for j in 0..3 {
                for i in 0..6 {
                    m[j * 6 + i] = inv[(i, 3 + j)];
                }
            }
            phi_inv_b.push(m);
        }
        let basis = jac.clone().qr().q();
        let mut problem = Problem {
            grid_t,
            terminals,
            phi_inv_b,
            obs,
            basis,
            z,
            context,
            cache: Mutex::new(HashMap::new()),
            tracks: Mutex::new(HashMap::new()),
        };
        let z = problem.project(problem.z.clone());
        problem.z = z;
        Some(problem)
    }

    /// Rows of the stacked residual.
    pub fn rows(&self) -> usize {
        self.z.len()
    }

    fn project(&self, mut a: DVector<f64>) -> DVector<f64> {
        let c = self.basis.transpose() * &a;
        a -= &self.basis * c;
        a
    }

    /// Cumulative trapezoid of Φ(τ)⁻¹ B g(τ) along the grid; `None` if `g` is not
    /// finite somewhere.
    fn cumulative(&self, g: impl Fn(usize) -> Option<[f64; 3]>) -> Option<Vec<[f64; 6]>> {
        let n = self.grid_t.len();
        let mut cum = vec![[0.0f64; 6]; n];
        let (mut prev, mut acc) = ([0.0f64; 6], [0.0f64; 6]);
        for k in 0..n {
            let v = g(k)?;
            let m = &self.phi_inv_b[k];
            let mut f = [0.0f64; 6];
            for (i, fi) in f.iter_mut().enumerate() {
                *fi = m[i] * v[0] + m[6 + i] * v[1] + m[12 + i] * v[2];
            }
            if k > 0 {
                let h = 0.5 * (self.grid_t[k] - self.grid_t[k - 1]);
                for i in 0..6 {
                    acc[i] += h * (prev[i] + f[i]);
                }
            }
            cum[k] = acc;
            prev = f;
        }
        Some(cum)
    }

    /// The values of `node` along the grid with constants `k`, one operator at a time
    /// over the whole grid (the operator tables' own arithmetic, so the same numbers as
    /// a point-by-point evaluation); subtrees without constants are cached.
    fn track(&self, node: &Node, k: &[f64]) -> Arc<Track> {
        let n = self.terminals.len();
        let cacheable = matches!(node, Node::Unary(..) | Node::Binary(..)) && node.n_params() == 0;
        let key = cacheable.then(|| node.to_string());
        if let Some(key) = &key {
            if let Some(t) = self.tracks.lock().ok().and_then(|c| c.get(key).cloned()) {
                return t;
            }
        }
        let track: Track = match node {
            Node::Term(t) => self.terminals.iter().map(|p| t.value(p)).collect(),
            Node::Const(c) => vec![Value::S(*c); n],
            Node::Param(i) => vec![Value::S(k.get(*i).copied().unwrap_or(0.0)); n],
            Node::Unary(op, a) => self.track(a, k).iter().map(|x| op.apply(x)).collect(),
            Node::Binary(op, a, b) => {
                let (a, b) = (self.track(a, k), self.track(b, k));
                a.iter()
                    .zip(b.iter())
                    .map(|(x, y)| op.apply(x, y))
                    .collect()
            }
        };
        let track = Arc::new(track);
        if let Some(key) = key {
            if let Ok(mut c) = self.tracks.lock() {
                if c.len() < TRACK_LIMIT {
                    c.insert(key, track.clone());
                }
            }
        }
        track
    }

    /// The unprojected, weighted column of a formula with constants `k`; `None` if the
    /// formula is not finite along the trajectory.
    fn raw_column(&self, node: &Node, k: &[f64]) -> Option<DVector<f64>> {
        let values = self.track(node, k);
        let cum = self.cumulative(|g| {
            let v = values[g].vector();
            (v[0].is_finite() && v[1].is_finite() && v[2].is_finite()).then_some(v)
        })?;
        Some(self.map_to_obs(|gi| cum[gi]))
    }

    /// The projected column of an acceleration given at each grid point (ECI, km/s²).
    pub fn column_of(&self, g: impl Fn(usize) -> [f64; 3]) -> Option<DVector<f64>> {
        let cum = self.cumulative(|k| Some(g(k)))?;
        Some(self.project(self.map_to_obs(|gi| cum[gi])))
    }

    /// The projected column of a velocity change `dv` (ECI, km/s) at grid point `m`.
    pub fn impulse_column(&self, m: usize, dv: [f64; 3]) -> DVector<f64> {
        let b = &self.phi_inv_b[m];
        let mut f = [0.0f64; 6];
        for (i, fi) in f.iter_mut().enumerate() {
            *fi = b[i] * dv[0] + b[6 + i] * dv[1] + b[12 + i] * dv[2];
        }
        self.project(self.map_to_obs(|gi| if gi >= m { f } else { [0.0; 6] }))
    }

    /// Stacks Φ(t_i)·F(t_i) over the observations (weighted).
    fn map_to_obs(&self, f_at: impl Fn(usize) -> [f64; 6]) -> DVector<f64> {
        let mut col = DVector::zeros(self.rows());
        for o in &self.obs {
            let f = f_at(o.grid_index);
            for (c, (h, sigma)) in o.h_phi.iter().enumerate() {
                let mut s = 0.0;
                for (hj, fj) in h.iter().zip(&f) {
                    s += hj * fj;
                }
                col[o.row + c] = s / sigma;
            }
        }
        col
    }

    /// Least squares of the residual on `cols`: coefficients, their 1σ, cost left.
    pub fn fit_columns(&self, cols: &[DVector<f64>]) -> Option<(Vec<f64>, Vec<f64>, f64)> {
        self.linear(cols)
    }

    /// The weighted base-fit cost (no extra columns).
    pub fn base_cost(&self) -> f64 {
        self.z.norm_squared()
    }

    /// The projected column (cached for formulas without constants).
    pub fn column(&self, node: &Node, k: &[f64]) -> Option<DVector<f64>> {
        if node.n_params() > 0 {
            return Some(self.project(self.raw_column(node, k)?));
        }
        let key = node.to_string();
        if let Ok(c) = self.cache.lock() {
            if let Some(v) = c.get(&key) {
                return Some(v.clone());
            }
        }
        let col = self.project(self.raw_column(node, k)?);
        {
            if let Ok(mut c) = self.cache.lock() {
                if c.len() < CACHE_LIMIT {
                    c.insert(key, col.clone());
                }
            }
        }
        Some(col)
    }

    /// Fraction of a formula's signature absorbed by the base fit's directions.
    pub fn absorbed_fraction(&self, node: &Node, k: &[f64]) -> f64 {
        match self.raw_column(node, k) {
            Some(raw) => {
                let n0 = raw.norm();
                if n0 == 0.0 {
                    return 1.0;
                }
                1.0 - (self.project(raw).norm() / n0).powi(2)
            }
            None => 1.0,
        }
    }

    /// Least squares for fixed constants: coefficients, their covariance diagonal, cost.
    ///
    /// Through the Gram matrix of the scaled columns (a handful of columns against
    /// thousands of rows): O(m n²), and the cost from ‖z‖² − 2cᵀb + cᵀGc without forming
    /// the residual.
    fn linear(&self, cols: &[DVector<f64>]) -> Option<(Vec<f64>, Vec<f64>, f64)> {
        let m = self.rows();
        let n = cols.len();
        let zz = self.z.norm_squared();
        if n == 0 {
            return Some((vec![], vec![], zz));
        }
        let scale: Vec<f64> = cols.iter().map(|c| c.norm()).collect();
        // Columns of absurd size come from constants far outside the arc (e.g. a bump
        // centred years away); they only carry rounding.
        if scale
            .iter()
            .any(|s| !(s.is_finite() && *s > 1e-150 && *s < 1e150))
        {
            return None;
        }
        let mut g = DMatrix::zeros(n, n);
        let mut b = DVector::zeros(n);
        for i in 0..n {
            b[i] = cols[i].dot(&self.z) / scale[i];
            for j in 0..=i {
                let v = cols[i].dot(&cols[j]) / (scale[i] * scale[j]);
                g[(i, j)] = v;
                g[(j, i)] = v;
            }
        }
        let eig = g.clone().symmetric_eigen();
        let emax = eig.eigenvalues.max();
        if eig.eigenvalues.iter().any(|e| *e < 1e-14 * emax) {
            return None; // columns (nearly) dependent: a duplicate term
        }
        let ginv = &eig.eigenvectors
            * DMatrix::from_diagonal(&eig.eigenvalues.map(|e| 1.0 / e))
            * eig.eigenvectors.transpose();
        let y = &ginv * &b;
        let mut cost = zz - 2.0 * y.dot(&b) + (y.transpose() * &g * &y)[(0, 0)];
        if cost < 1e-3 * zz {
            // Near-exact fits lose digits in the Gram form: form the residual.
            let mut r = self.z.clone();
            for (j, c) in cols.iter().enumerate() {
                r -= c * (y[j] / scale[j]);
            }
            cost = r.norm_squared();
        }
        let dof = (m as f64 - n as f64).max(1.0);
        let inflate = (cost / dof).max(1.0);
        let c: Vec<f64> = (0..n).map(|j| y[j] / scale[j]).collect();
        let sig: Vec<f64> = (0..n)
            .map(|j| (ginv[(j, j)] * inflate).sqrt() / scale[j])
            .collect();
        Some((c, sig, cost))
    }

    fn columns(&self, nodes: &[Node], k: &[f64]) -> Option<Vec<DVector<f64>>> {
        nodes.iter().map(|n| self.column(n, k)).collect()
    }

    /// Variable projection: optimizes the constants on the reduced residual (LM with
    /// finite-difference Jacobian, relative steps); returns constants, their σ, cost.
    fn varpro(&self, nodes: &[Node], k0: &[f64]) -> Option<(Vec<f64>, Vec<f64>, f64)> {
        let np = k0.len();
        let reduced = |k: &[f64]| -> Option<(DVector<f64>, f64)> {
            let cols = self.columns(nodes, k)?;
            let (c, _, cost) = self.linear(&cols)?;
            let mut r = self.z.clone();
            for (col, ci) in cols.iter().zip(&c) {
                r -= col * *ci;
            }
            Some((r, cost))
        };
        let mut k = k0.to_vec();
        let (mut r, mut cost) = reduced(&k)?;
        if np == 0 {
            return Some((k, vec![], cost));
        }
        let mut lambda = 1e-3;
        let mut jac = DMatrix::zeros(r.len(), np);
        for _ in 0..30 {
            for j in 0..np {
                let h = 1e-5 * k[j].abs().max(1e-9);
                let mut kp = k.clone();
                kp[j] += h;
                let (rp, _) = reduced(&kp)?;
                jac.set_column(j, &((&rp - &r) / h));
            }
            let jtj = jac.transpose() * &jac;
            let g = jac.transpose() * &r;
            let mut improved = false;
            for _ in 0..8 {
                let mut a = jtj.clone();
                for d in 0..np {
                    a[(d, d)] += lambda * jtj[(d, d)].max(1e-300);
                }
                let Some(step) = a.lu().solve(&(-&g)) else {
                    lambda *= 10.0;
                    continue;
                };
                let kt: Vec<f64> = k.iter().zip(step.iter()).map(|(a, b)| a + b).collect();
                match reduced(&kt) {
                    Some((rt, ct)) if ct < cost => {
                        let rel = (cost - ct) / cost.max(1e-300);
                        k = kt;
                        r = rt;
                        cost = ct;
                        lambda = (lambda / 10.0).max(1e-12);
                        improved = rel > VARPRO_RTOL;
                        break;
                    }
                    _ => lambda *= 10.0,
                }
            }
            if !improved {
                break;
            }
        }
        // σ of the constants from the reduced Jacobian (Golub–Pereyra), inflated by the
        // misfit like the coefficients.
        let dof = (r.len() as f64 - np as f64).max(1.0);
        let inflate = (cost / dof).max(1.0);
        let sig = (jac.transpose() * &jac)
            .try_inverse()
            .map(|inv| (0..np).map(|j| (inv[(j, j)] * inflate).sqrt()).collect())
            .unwrap_or_else(|| vec![f64::INFINITY; np]);
        Some((k, sig, cost))
    }

    /// Solves a candidate: variable projection for its constants, then sequentially
    /// thresholded least squares on significance, re-running variable projection after
    /// every change of the term set.
    pub fn solve(&self, candidate: &[Node], k0: &[f64], threshold: f64) -> Option<Solution> {
        let mut nodes: Vec<Node> = Vec::new();
        for n in candidate {
            if bare_angle(n, false) {
                // `u` jumps by 2π once a revolution: only sin(u) and cos(u) are physical.
                return None;
            }
            let s = n.simplify();
            if s.ty() == Ok(crate::expr::Ty::Vector) && !nodes.contains(&s) {
                nodes.push(s);
            }
        }
        if nodes.is_empty() {
            return None;
        }
        // Constants renumbered k0, k1, … (a tree from the library keeps its own).
        let (mut nodes, mut k) = crate::terms::compact_constants(&nodes, k0);
        loop {
            let used = nodes.iter().map(|n| n.n_params()).max().unwrap_or(0);
            k.resize(used.max(k.len()), 1.0);
            let (kk, ksig, cost, c, sig) = if used == 0 {
                let cols = self.columns(&nodes, &[])?;
                let (c, sig, cost) = self.linear(&cols)?;
                (vec![], vec![], cost, c, sig)
            } else {
                let (kk, ksig, cost) = self.varpro(&nodes, &k[..used])?;
                // The library's constants are times (decay constants, bump centres and
                // widths): far outside the arc they only fit rounding.
                let span = self.grid_t.last().copied().unwrap_or(1.0).max(1.0);
                if kk.iter().any(|k| k.abs() > 20.0 * span) {
                    return None;
                }
                let cols = self.columns(&nodes, &kk)?;
                let (c, sig, _) = self.linear(&cols)?;
                (kk, ksig, cost, c, sig)
            };
            let signif: Vec<f64> = c.iter().zip(&sig).map(|(a, s)| a.abs() / s).collect();
            let (worst, &wv) = signif
                .iter()
                .enumerate()
                .min_by(|a, b| a.1.total_cmp(b.1))?;
            if wv >= threshold {
                let complexity = nodes.iter().map(|n| n.complexity() + 1).sum();
                return Some(Solution {
                    terms: crate::terms::Terms {
                        nodes,
                        coefficients: c,
                        sigmas: sig,
                        constants: kk,
                        constant_sigmas: ksig,
                    },
                    cost,
                    complexity,
                });
            }
            nodes.remove(worst);
            if nodes.is_empty() {
                return None;
            }
            (nodes, k) = crate::terms::compact_constants(&nodes, &kk);
        }
    }
}

/// Whether the argument of latitude appears other than as the argument of sin or cos.
fn bare_angle(n: &Node, inside_trig: bool) -> bool {
    use crate::expr::{Op1, Terminal};
    let u = Node::Term(Terminal::ArgLat);
    match n {
        Node::Term(Terminal::ArgLat) => !inside_trig,
        Node::Unary(Op1::Sin | Op1::Cos, a) => bare_angle(a, **a == u),
        other => other.children().into_iter().any(|c| bare_angle(c, false)),
    }
}
