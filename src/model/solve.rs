//! One ridge-regression solve: the building block of every half-step.
//!
//! For a user `i` with rated items `Ω_i`, the update is
//! `u_i = (λσ² I + Σ_j v_j v_jᵀ)⁻¹ Σ_j y_ij v_j` with `y_ij = M_ij − μ`. The rated vectors
//! are gathered into one contiguous buffer so the Gram matrix is a single matrix product
//! (a blocked SIMD kernel), and the system is solved by Cholesky, never by an inverse.
//! Buffers are reused across solves; one workspace per thread.

use super::kernels::{
    BATCH, COLUMN_BLOCK, Lanes, TILE, cholesky_solve_batch, gram_and_rhs, gram_and_rhs_direct,
    round_up,
};

/// Reusable buffers for ridge solves of a fixed rank.
#[derive(Debug, Clone)]
pub struct RidgeWorkspace {
    rank: usize,
    /// Row stride of the gathered vectors and of the Gram matrix (rank rounded up to a tile).
    stride: usize,
    gathered: Vec<f64>,
    /// One Gram matrix (stride `stride`) and right-hand side per lane.
    gram: [Vec<f64>; BATCH],
    rhs: [Vec<f64>; BATCH],
    lanes: Vec<Lanes>,
    lane_rhs: Vec<Lanes>,
    diagonal: Vec<Lanes>,
}

/// The normal equations were not positive definite (only possible with no ridge term or
/// non-finite input).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct NotPositiveDefinite;

/// One ridge problem: the rows of the table it uses and their targets.
pub type Problem<'a> = (&'a [u32], &'a [f64]);

impl RidgeWorkspace {
    /// A workspace for vectors of width `rank`.
    pub fn new(rank: usize) -> Self {
        let stride = round_up(rank, TILE);
        Self {
            rank,
            stride,
            gathered: Vec::new(),
            gram: std::array::from_fn(|_| vec![0.0; stride * stride]),
            rhs: std::array::from_fn(|_| vec![0.0; stride]),
            lanes: vec![[0.0; BATCH]; rank * round_up(rank, COLUMN_BLOCK)],
            lane_rhs: vec![[0.0; BATCH]; rank],
            diagonal: vec![[0.0; BATCH]; rank],
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
        ridge: f64,
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
        ridge: f64,
        out: &mut [f64],
    ) -> [bool; BATCH] {
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
        let ls = round_up(d, COLUMN_BLOCK);
        let gram = &self.gram;
        for i in 0..d {
            for j in i..d {
                let at = i * s + j;
                self.lanes[i * ls + j] = std::array::from_fn(|l| gram[l][at]);
            }
            self.lane_rhs[i] = std::array::from_fn(|l| self.rhs[l][i]);
        }
        let diagonal = (ridge == 0.0).then(|| {
            self.diagonal.clear();
            let ls = round_up(d, COLUMN_BLOCK);
            self.diagonal.extend((0..d).map(|k| self.lanes[k * ls + k]));
            self.diagonal.as_slice()
        });
        let mut ok = cholesky_solve_batch(&mut self.lanes, &mut self.lane_rhs, d, diagonal);
        for (lane, solution) in out.chunks_exact_mut(d).enumerate().take(problems.len()) {
            for (k, value) in solution.iter_mut().enumerate() {
                *value = self.lane_rhs[k][lane];
            }
            if solution.iter().any(|v| !v.is_finite()) {
                ok[lane] = false;
            }
        }
        ok
    }

    /// Builds the normal equations of one problem in the buffers of lane `lane`.
    fn load_lane(&mut self, lane: usize, table: &[f64], rows: &[u32], targets: &[f64], ridge: f64) {
        let (d, s) = (self.rank, self.stride);
        debug_assert_eq!(rows.len(), targets.len());
        let (gram, rhs) = (&mut self.gram[lane], &mut self.rhs[lane]);
        if !gram_and_rhs_direct(table, d, rows, targets, gram, rhs) {
            self.gather(table, rows);
            let (gram, rhs) = (&mut self.gram[lane], &mut self.rhs[lane]);
            gram_and_rhs(&self.gathered[..rows.len() * s], s, targets, gram, rhs);
        }
        for k in 0..d {
            self.gram[lane][k * s + k] += ridge;
        }
    }

    /// Copies the vectors of `rows` into zero-padded rows of a tile-multiple width: one pass
    /// over scattered memory, then every pass of the Gram kernel reads from cache. Every
    /// value is written, so the buffer only grows and is never cleared.
    fn gather(&mut self, table: &[f64], rows: &[u32]) {
        let (d, s) = (self.rank, self.stride);
        if self.gathered.len() < rows.len() * s {
            self.gathered.resize(rows.len() * s, 0.0);
        }
        let gathered = &mut self.gathered[..rows.len() * s];
        let whole = d - d % TILE;
        for (slot, &r) in gathered.chunks_exact_mut(s).zip(rows) {
            let source = &table[r as usize * d..(r as usize + 1) * d];
            // Fixed-size chunks compile to plain vector moves (no library call per row).
            for (to, from) in slot[..whole]
                .chunks_exact_mut(TILE)
                .zip(source.chunks_exact(TILE))
            {
                let from: &[f64; TILE] = from.try_into().expect("exact chunk");
                let to: &mut [f64; TILE] = to.try_into().expect("exact chunk");
                *to = *from;
            }
            for (to, from) in slot[whole..d].iter_mut().zip(&source[whole..]) {
                *to = *from;
            }
            slot[d..].fill(0.0);
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
