//! One ridge-regression solve: the building block of every half-step.
//!
//! For a user `i` with rated items `Ω_i`, the update is
//! `u_i = (λσ² I + Σ_j v_j v_jᵀ)⁻¹ Σ_j y_ij v_j` with `y_ij = M_ij − μ`. The rated vectors
//! are gathered into one contiguous buffer so the Gram matrix is a single matrix product
//! (a blocked SIMD kernel), and the system is solved by Cholesky, never by an inverse.
//! Buffers are reused across solves; one workspace per thread.

use super::kernels::{
    BATCH, COLUMN_BLOCK, LaneVector, Scratch, TILE, cholesky_solve, interleave, normal_equations,
    round_up,
};

/// Reusable buffers for ridge solves of a fixed rank.
#[derive(Debug, Clone)]
pub struct RidgeWorkspace {
    rank: usize,
    /// Row stride of the Gram matrix (rank rounded up to a tile).
    stride: usize,
    scratch: Scratch,
    /// One Gram matrix (stride `stride`) and right-hand side per lane.
    gram: [Vec<f64>; BATCH],
    rhs: [Vec<f64>; BATCH],
    lanes: Vec<LaneVector>,
    lane_rhs: Vec<LaneVector>,
    diagonal: Vec<LaneVector>,
}

/// The ridge term added to the diagonal of the normal equations: the same for every
/// coordinate, or a different one for the last coordinate (a bias fitted beside the
/// factors, whose prior precision λ_b may differ from the factors' λ).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Ridge {
    /// `ridge·I`.
    Uniform(f64),
    /// `diag(rest, …, rest, last)`.
    LastDiffers {
        /// Added to every coordinate but the last.
        rest: f64,
        /// Added to the last coordinate.
        last: f64,
    },
}

impl Ridge {
    /// The term added to coordinate `k` of a system of width `d`.
    fn at(self, k: usize, d: usize) -> f64 {
        match self {
            Self::Uniform(r) => r,
            Self::LastDiffers { rest, last } => {
                if k + 1 == d {
                    last
                } else {
                    rest
                }
            }
        }
    }

    /// Whether some coordinate has no ridge (then the solve checks pivots against the
    /// original diagonal to detect rank deficiency).
    fn has_zero(self) -> bool {
        match self {
            Self::Uniform(r) => r == 0.0,
            Self::LastDiffers { rest, last } => rest == 0.0 || last == 0.0,
        }
    }
}

impl From<f64> for Ridge {
    fn from(r: f64) -> Self {
        Self::Uniform(r)
    }
}

/// The normal equations were not positive definite (only possible with no ridge term or
/// non-finite input).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct NotPositiveDefinite;

/// One ridge problem: the rows of the table it uses and their targets. The rows may run on
/// past the targets into those of the next problem, which are only prefetched (see
/// [`super::kernels::normal_equations`]).
pub type Problem<'a> = (&'a [u32], &'a [f64]);

impl RidgeWorkspace {
    /// A workspace for vectors of width `rank`.
    pub fn new(rank: usize) -> Self {
        let stride = round_up(rank, TILE);
        Self {
            rank,
            stride,
            scratch: Scratch::default(),
            gram: std::array::from_fn(|_| vec![0.0; stride * stride]),
            rhs: std::array::from_fn(|_| vec![0.0; stride]),
            lanes: vec![LaneVector::ZERO; rank * round_up(rank, COLUMN_BLOCK)],
            lane_rhs: vec![LaneVector::ZERO; rank],
            diagonal: vec![LaneVector::ZERO; rank],
        }
    }

    /// Solves `(ridge·I + Σ_k x_k x_kᵀ) w = Σ_k y_k x_k` where `x_k` is row `rows[k]` of the
    /// row-major table `table` (width `rank`), writing `w` into `out`.
    ///
    /// This is exactly the minimiser of `‖y − Xw‖² + ridge·‖w‖²` (Hoerl & Kennard 1970).
    /// With no rows the solution is 0 when `ridge > 0` and undetermined otherwise.
    pub fn solve(
        &mut self,
        table: &[f64],
        rows: &[u32],
        targets: &[f64],
        ridge: impl Into<Ridge>,
        out: &mut [f64],
    ) -> Result<(), NotPositiveDefinite> {
        if self.solve_batch(table, &[(rows, targets)], ridge, out)[0] {
            Ok(())
        } else {
            Err(NotPositiveDefinite)
        }
    }

    /// Solves up to [`BATCH`] independent problems side by side (see [`Self::solve`]),
    /// writing solution `p` to `out[p * rank..]`. Returns which ones succeeded. Each
    /// solution is bit-identical to what [`Self::solve`] gives for that problem alone.
    pub fn solve_batch(
        &mut self,
        table: &[f64],
        problems: &[Problem<'_>],
        ridge: impl Into<Ridge>,
        out: &mut [f64],
    ) -> [bool; BATCH] {
        let ridge = ridge.into();
        assert!(
            problems.len() <= BATCH,
            "at most {BATCH} problems per batch"
        );
        let (d, s) = (self.rank, self.stride);
        for lane in 0..BATCH {
            match problems.get(lane) {
                Some(&(rows, targets)) => self.load_lane(lane, table, rows, targets, ridge),
                None => self.load_identity(lane),
            }
        }
        // Interleave the systems, one per lane.
        interleave(
            &self.gram,
            &self.rhs,
            d,
            s,
            &mut self.lanes,
            &mut self.lane_rhs,
        );
        let diagonal = ridge.has_zero().then(|| {
            self.diagonal.clear();
            let ls = round_up(d, COLUMN_BLOCK);
            self.diagonal.extend((0..d).map(|k| self.lanes[k * ls + k]));
            self.diagonal.as_slice()
        });
        let mut ok = cholesky_solve(&mut self.lanes, &mut self.lane_rhs, d, diagonal);
        for (lane, solution) in out.chunks_exact_mut(d).enumerate().take(problems.len()) {
            for (k, value) in solution.iter_mut().enumerate() {
                *value = self.lane_rhs[k].as_array()[lane];
            }
            if solution.iter().any(|v| !v.is_finite()) {
                ok[lane] = false;
            }
        }
        ok
    }

    /// Builds the normal equations of one problem in the buffers of lane `lane`.
    fn load_lane(
        &mut self,
        lane: usize,
        table: &[f64],
        rows: &[u32],
        targets: &[f64],
        ridge: Ridge,
    ) {
        let (d, s) = (self.rank, self.stride);
        debug_assert!(rows.len() >= targets.len());
        let (gram, rhs) = (&mut self.gram[lane], &mut self.rhs[lane]);
        normal_equations(table, d, rows, targets, &mut self.scratch, gram, rhs);
        for k in 0..d {
            self.gram[lane][k * s + k] += ridge.at(k, d);
        }
    }

    /// Fills an unused lane with the identity system, which stays finite.
    fn load_identity(&mut self, lane: usize) {
        let (d, s) = (self.rank, self.stride);
        let (gram, rhs) = (&mut self.gram[lane], &mut self.rhs[lane]);
        for i in 0..d {
            for j in i..d {
                gram[i * s + j] = if i == j { 1.0 } else { 0.0 };
            }
            rhs[i] = 0.0;
        }
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
