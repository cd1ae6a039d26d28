//! One ridge-regression solve: the building block of every half-step.
//!
//! For a user `i` with rated items `Ω_i`, the update is
//! `u_i = (λσ² I + Σ_j v_j v_jᵀ)⁻¹ Σ_j y_ij v_j` with `y_ij = M_ij − μ`. The rated vectors
//! are gathered into one contiguous buffer so the Gram matrix is a single matrix product
//! (a blocked SIMD kernel), and the system is solved by Cholesky, never by an inverse.
//! Buffers are reused across solves; one workspace per thread.

use nalgebra::{Cholesky, DMatrix, DMatrixView, DVector, DVectorView};

/// Reusable buffers for ridge solves of a fixed rank.
#[derive(Debug, Clone)]
pub struct RidgeWorkspace {
    rank: usize,
    gathered: Vec<f64>,
    gram: DMatrix<f64>,
    rhs: DVector<f64>,
}

/// The normal equations were not positive definite (only possible with no ridge term or
/// non-finite input).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct NotPositiveDefinite;

impl RidgeWorkspace {
    /// A workspace for vectors of width `rank`.
    pub fn new(rank: usize) -> Self {
        Self {
            rank,
            gathered: Vec::new(),
            gram: DMatrix::zeros(rank, rank),
            rhs: DVector::zeros(rank),
        }
    }

    /// Solves `(ridge·I + Σ_k x_k x_kᵀ) w = Σ_k y_k x_k` where `x_k` is row `rows[k]` of the
    /// row-major table `table` (width `rank`), writing `w` into `out`.
    ///
    /// This is exactly the minimiser of `‖y − Xw‖² + ridge·‖w‖²` (Hoerl & Kennard 1970).
    pub fn solve(
        &mut self,
        table: &[f64],
        rows: &[u32],
        targets: &[f64],
        ridge: f64,
        out: &mut [f64],
    ) -> Result<(), NotPositiveDefinite> {
        let d = self.rank;
        let n = rows.len();
        debug_assert_eq!(n, targets.len());
        if n == 0 {
            // The objective is ridge·‖w‖²: w = 0 when ridge > 0, undetermined otherwise.
            out.fill(0.0);
            return if ridge > 0.0 {
                Ok(())
            } else {
                Err(NotPositiveDefinite)
            };
        }
        self.gathered.clear();
        for &r in rows {
            let start = r as usize * d;
            self.gathered.extend_from_slice(&table[start..start + d]);
        }
        // Columns of `x_t` are the gathered vectors (d × n); `x` is its n × d transpose view.
        let x_t = DMatrixView::from_slice(&self.gathered, d, n);
        let x = DMatrixView::from_slice_with_strides(&self.gathered, n, d, d, 1);
        self.gram.gemm(1.0, &x_t, &x, 0.0);
        for k in 0..d {
            self.gram[(k, k)] += ridge;
        }
        self.rhs
            .gemv(1.0, &x_t, &DVectorView::from_slice(targets, n), 0.0);
        let diagonal: Vec<f64> = if ridge == 0.0 {
            (0..d).map(|k| self.gram[(k, k)]).collect()
        } else {
            Vec::new()
        };
        let gram = std::mem::replace(&mut self.gram, DMatrix::zeros(0, 0));
        let Some(factor) = Cholesky::new(gram) else {
            self.gram = DMatrix::zeros(d, d);
            return Err(NotPositiveDefinite);
        };
        if ridge == 0.0 {
            // Without a ridge term, a rank-deficient Gram matrix can survive factorisation
            // with a pivot that is only rounding noise. L_kk² / G_kk is the share of column
            // k not explained by the columns before it (scale-free); below 64 ε it is noise.
            let l = factor.l_dirty();
            if (0..d).any(|k| l[(k, k)] * l[(k, k)] <= 64.0 * f64::EPSILON * diagonal[k]) {
                self.gram = factor.unpack_dirty();
                return Err(NotPositiveDefinite);
            }
        }
        factor.solve_mut(&mut self.rhs);
        self.gram = factor.unpack_dirty();
        if self.rhs.iter().any(|v| !v.is_finite()) {
            return Err(NotPositiveDefinite);
        }
        out.copy_from_slice(self.rhs.as_slice());
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn hand_example_matches_closed_form() {
        // REFERENCES.md hand example, checked with scikit-learn Ridge(alpha=0.5,
        // fit_intercept=False): X = [[1,0],[1,1],[1,2]], y = [1,2,2] → w = (38/41, 24/41).
        let table = [1.0, 0.0, 1.0, 1.0, 1.0, 2.0];
        let mut ws = RidgeWorkspace::new(2);
        let mut w = [0.0; 2];
        ws.solve(&table, &[0, 1, 2], &[1.0, 2.0, 2.0], 0.5, &mut w)
            .unwrap();
        assert!((w[0] - 38.0 / 41.0).abs() < 1e-14);
        assert!((w[1] - 24.0 / 41.0).abs() < 1e-14);
    }

    #[test]
    fn no_rows_gives_zero_or_refuses_without_ridge() {
        let mut ws = RidgeWorkspace::new(3);
        let mut w = [1.0; 3];
        ws.solve(&[], &[], &[], 1.0, &mut w).unwrap();
        assert_eq!(w, [0.0; 3]);
        assert!(ws.solve(&[], &[], &[], 0.0, &mut w).is_err());
    }

    #[test]
    fn rank_deficient_without_ridge_is_refused() {
        // Two identical rows in 2-D: X'X is singular.
        let table = [1.0, 1.0, 1.0, 1.0];
        let mut ws = RidgeWorkspace::new(2);
        let mut w = [0.0; 2];
        assert!(ws.solve(&table, &[0, 1], &[1.0, 1.0], 0.0, &mut w).is_err());
    }
}
