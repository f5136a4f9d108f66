//! The linear algebra of a Levenberg–Marquardt step: the scaled Jacobian reduced to its
//! triangular factor, the damped step and the covariance from it.

use nalgebra::{DMatrix, DVector};

/// Most sweeps an n × n SVD may take (it needs a few per singular value; the bound only
/// stops a matrix that would never converge).
const SVD_ITERATIONS: usize = 1000;

/// The column-scaled `jac` reduced to its triangular factor: `jac·diag(1/scale) = Q R`,
/// so that ‖J y − z‖² = ‖R y − Qᵀz‖² + a constant. The decompositions below then work on
/// n × n instead of m × n (thousands of rows): an SVD of the tall matrix spent most of a
/// learn's time rotating its m-row U.
pub(super) struct Reduced {
    /// Column norms of `jac` (the scaling).
    scale: Vec<f64>,
    /// R, n × n.
    r: DMatrix<f64>,
    /// The first n entries of Qᵀz (zero when no `z` was given).
    qtz: DVector<f64>,
}

impl Reduced {
    /// The factor of `jac`, and Qᵀz when the residual `z` is given (a covariance needs
    /// none).
    pub(super) fn new(jac: &DMatrix<f64>, z: Option<&DVector<f64>>) -> Reduced {
        let n = jac.ncols();
        let scale: Vec<f64> = (0..n).map(|j| jac.column(j).norm().max(1e-300)).collect();
        let mut a = jac.clone();
        for j in 0..n {
            a.column_mut(j).scale_mut(1.0 / scale[j]);
        }
        let qr = a.qr();
        let r = qr.r();
        let k = r.nrows().min(n);
        let mut square = DMatrix::zeros(n, n);
        square.rows_mut(0, k).copy_from(&r.rows(0, k));
        let mut qtz_n = DVector::zeros(n);
        if let Some(z) = z {
            let mut qtz = z.clone();
            qr.q_tr_mul(&mut qtz);
            qtz_n.rows_mut(0, k).copy_from(&qtz.rows(0, k));
        }
        Reduced {
            scale,
            r: square,
            qtz: qtz_n,
        }
    }

    /// The damped step: SVD of the column-scaled, augmented system
    /// [R; √λ I] y = [Qᵀz; 0], unscaled.
    pub(super) fn step(&self, lambda: f64) -> Option<DVector<f64>> {
        let n = self.r.ncols();
        let mut a = DMatrix::zeros(2 * n, n);
        a.rows_mut(0, n).copy_from(&self.r);
        for j in 0..n {
            a[(n + j, j)] = lambda.sqrt();
        }
        let mut b = DVector::zeros(2 * n);
        b.rows_mut(0, n).copy_from(&self.qtz);
        let svd = a.try_svd(true, true, f64::EPSILON, SVD_ITERATIONS)?;
        let y = svd.solve(&b, 1e-14).ok()?;
        Some(DVector::from_iterator(
            n,
            (0..n).map(|j| y[j] / self.scale[j]),
        ))
    }

    /// Rank and covariance (JᵀJ)⁻¹, by SVD of R (the same singular values and right
    /// vectors as the column-scaled J).
    pub(super) fn covariance(&self) -> (usize, DMatrix<f64>) {
        let n = self.r.ncols();
        let Some(svd) = self
            .r
            .clone()
            .try_svd(false, true, f64::EPSILON, SVD_ITERATIONS)
        else {
            return (0, DMatrix::zeros(n, n));
        };
        let smax = svd.singular_values.max();
        let rank = svd
            .singular_values
            .iter()
            .filter(|&&s| s > 1e-10 * smax)
            .count();
        let Some(v_t) = svd.v_t else {
            return (0, DMatrix::zeros(n, n));
        };
        let mut cov = DMatrix::zeros(n, n);
        for (k, &s) in svd.singular_values.iter().enumerate() {
            if s > 1e-10 * smax {
                let v = v_t.row(k).transpose();
                cov += (&v * v.transpose()) / (s * s);
            }
        }
        for i in 0..n {
            for j in 0..n {
                cov[(i, j)] /= self.scale[i] * self.scale[j];
            }
        }
        (rank, cov)
    }
}

/// The damped step for `jac` and `z` (see [`Reduced::step`]).
#[cfg(test)]
fn damped_step(jac: &DMatrix<f64>, z: &DVector<f64>, lambda: f64) -> Option<DVector<f64>> {
    Reduced::new(jac, Some(z)).step(lambda)
}

/// Rank and covariance of a weighted Jacobian (see [`Reduced::covariance`]).
pub(super) fn covariance(jac: &DMatrix<f64>) -> (usize, DMatrix<f64>) {
    Reduced::new(jac, None).covariance()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_jacobian_with_a_nan_gives_no_step_and_no_hang() {
        let mut jac = DMatrix::from_fn(40, 3, |i, j| ((i * 3 + j) as f64).sin());
        jac[(7, 1)] = f64::NAN;
        let z = DVector::from_element(40, 1.0);
        let reduced = Reduced::new(&jac, Some(&z));
        assert!(reduced
            .step(1e-3)
            .is_none_or(|s| s.iter().any(|v| !v.is_finite())));
        let (rank, _) = reduced.covariance();
        assert!(rank < 3);
    }

    /// A tall, badly scaled Jacobian (columns spanning 21 orders of magnitude; with
    /// `near`, two nearly dependent) and a residual, from a fixed generator.
    fn tall(near: bool) -> (DMatrix<f64>, DVector<f64>) {
        let (m, n) = (3000, 8);
        let mut seed = 0x9e37_79b9_7f4a_7c15u64;
        let mut next = || {
            seed ^= seed << 13;
            seed ^= seed >> 7;
            seed ^= seed << 17;
            (seed >> 11) as f64 / (1u64 << 53) as f64 - 0.5
        };
        let mut j = DMatrix::from_fn(m, n, |_, _| next());
        for c in 0..n {
            j.column_mut(c).scale_mut(10f64.powi(c as i32 * 3 - 12));
        }
        if near {
            let c = j.column(2) * 1e3 + j.column(3) * 1e-6;
            j.set_column(3, &c);
        }
        let z = DVector::from_fn(m, |_, _| next());
        (j, z)
    }

    /// The step as the fit computed it before reducing to R: SVD of the scaled,
    /// augmented (m + n) × n system.
    fn tall_step(jac: &DMatrix<f64>, z: &DVector<f64>, lambda: f64) -> DVector<f64> {
        let n = jac.ncols();
        let scale: Vec<f64> = (0..n).map(|j| jac.column(j).norm()).collect();
        let mut a = DMatrix::zeros(jac.nrows() + n, n);
        for j in 0..n {
            for i in 0..jac.nrows() {
                a[(i, j)] = jac[(i, j)] / scale[j];
            }
            a[(jac.nrows() + j, j)] = lambda.sqrt();
        }
        let mut b = DVector::zeros(jac.nrows() + n);
        b.rows_mut(0, jac.nrows()).copy_from(z);
        let y = a.svd(true, true).solve(&b, 1e-14).unwrap();
        DVector::from_iterator(n, (0..n).map(|j| y[j] / scale[j]))
    }

    /// The damped objective ‖J y − z‖² + λ ‖D y‖² (D the column norms).
    fn objective(jac: &DMatrix<f64>, z: &DVector<f64>, lambda: f64, y: &DVector<f64>) -> f64 {
        let d: f64 = (0..y.len())
            .map(|j| (jac.column(j).norm() * y[j]).powi(2))
            .sum();
        (jac * y - z).norm_squared() + lambda * d
    }

    #[test]
    fn the_reduced_step_equals_the_tall_svd() {
        for lambda in [1e-12f64, 1e-6, 1e-2, 10.0] {
            // Well conditioned: the same step.
            let (jac, z) = tall(false);
            let (got, want) = (
                damped_step(&jac, &z, lambda).unwrap(),
                tall_step(&jac, &z, lambda),
            );
            for j in 0..jac.ncols() {
                assert!(
                    (got[j] - want[j]).abs() <= 1e-9 * want[j].abs(),
                    "λ {lambda}, y{j}: {} vs {}",
                    got[j],
                    want[j]
                );
            }
            // Nearly dependent columns: the step is only as determined as the problem
            // (κ·ε ~ 1e-7), but both minimise the damped objective equally well.
            let (jac, z) = tall(true);
            let (got, want) = (
                damped_step(&jac, &z, lambda).unwrap(),
                tall_step(&jac, &z, lambda),
            );
            let (fg, fw) = (
                objective(&jac, &z, lambda, &got),
                objective(&jac, &z, lambda, &want),
            );
            assert!((fg / fw - 1.0).abs() < 1e-12, "λ {lambda}: {fg} vs {fw}");
        }
    }

    #[test]
    fn the_reduced_covariance_is_the_inverse_normal_matrix() {
        let (jac, _) = tall(false);
        let n = jac.ncols();
        let (rank, cov) = covariance(&jac);
        assert_eq!(rank, n);
        // (JᵀJ)⁻¹ from the normal equations of the scaled J.
        let scale: Vec<f64> = (0..n).map(|j| jac.column(j).norm()).collect();
        let mut a = jac.clone();
        for j in 0..n {
            a.column_mut(j).scale_mut(1.0 / scale[j]);
        }
        let inv = (a.transpose() * &a).try_inverse().unwrap();
        for i in 0..n {
            let want = inv[(i, i)] / (scale[i] * scale[i]);
            assert!(
                (cov[(i, i)] / want - 1.0).abs() < 1e-10,
                "σ²{i}: {} vs {want}",
                cov[(i, i)]
            );
        }
        // Rank: a column that is another's multiple is not counted.
        let mut dependent = jac.clone();
        let c = jac.column(1) * 2.0;
        dependent.set_column(4, &c);
        assert_eq!(covariance(&dependent).0, n - 1);
    }
}
