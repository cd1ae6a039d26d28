//! One ridge-regression solve: the building block of every half-step.
//!
//! For a user `i` with rated items `Ω_i`, the update is
//! `u_i = (λσ² I + Σ_j v_j v_jᵀ)⁻¹ Σ_j y_ij v_j` with `y_ij = M_ij − μ`. The rated vectors
//! are gathered into one contiguous buffer so the Gram matrix is a single matrix product
//! (a blocked SIMD kernel), and the system is solved by Cholesky, never by an inverse.
//! Buffers are reused across solves; one workspace per thread.

use super::kernels::{
    BATCH, COLUMN_BLOCK, LaneVector, Scratch, TILE, cholesky_solve, interleave, normal_equations,
    normal_equations_with_offsets, round_up, scaled_normal_equations,
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
    /// Per lane, for a problem with an offset: the sum of its rows `s`, the sum of its
    /// targets `t` and `n + ρ_b` (see [`RidgeWorkspace::solve_batch_with_offsets`]).
    sums: [Vec<f64>; BATCH],
    totals: [f64; BATCH],
    denominators: [f64; BATCH],
    /// The lanes' `s`, interleaved: entry `i` of every lane's sum.
    lane_sums: Vec<LaneVector>,
    /// For problems with an offset (wider ranks): the targets less the rows' known offsets.
    adjusted: Vec<f64>,
}

/// The normal equations were not positive definite (only possible with no ridge term or
/// non-finite input).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct NotPositiveDefinite;

/// One ridge problem: the rows of the table it uses and their targets. The rows may run on
/// past the targets into those of the next problem, which are only prefetched (see
/// [`super::kernels::normal_equations`]).
pub type Problem<'a> = (&'a [u32], &'a [f64]);

/// One weighted problem: its rows (which may run on, as in [`Problem`]), their confidences
/// `c`, and the scales `√(c − 1)` and scaled targets `c/√(c − 1)` that
/// [`confidence_weights`] derives from them once.
pub type WeightedProblem<'a> = (&'a [u32], &'a [f64], (&'a [f64], &'a [f64]));

/// The scales `√(c − 1)` and scaled targets `c/√(c − 1)` of confidences `c`: what
/// [`RidgeWorkspace::solve_batch_weighted`] builds its normal equations from. They do not
/// change while a fit runs, so a fit computes them once.
pub fn confidence_weights(confidences: &[f64]) -> (Vec<f64>, Vec<f64>) {
    let scales: Vec<f64> = confidences.iter().map(|&c| (c - 1.0).sqrt()).collect();
    let targets = confidences
        .iter()
        .zip(&scales)
        .map(|(&c, &r)| c / r)
        .collect();
    (scales, targets)
}

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
            sums: std::array::from_fn(|_| vec![0.0; rank]),
            totals: [0.0; BATCH],
            denominators: [0.0; BATCH],
            lane_sums: Vec::with_capacity(rank),
            adjusted: Vec::new(),
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
        self.solve_lanes(table, problems, ridge, None, out)
    }

    /// Like [`Self::solve_batch`], with a free offset fitted beside each vector: solves
    /// `min ‖y − o − Xw − b·1‖² + ridge·‖w‖² + offset_ridge·b²` for `(w, b)`, writing `w` to
    /// `out[p * rank..]` and `b` to `offsets[p]`. `o_k = known[rows[k]]` are fixed offsets
    /// of the rows (the other side's, in a fit with biases), subtracted from the targets
    /// as each problem is loaded: the targets themselves stay `M − μ`, so no pass over all
    /// of them is needed when the other side's offsets change.
    ///
    /// The joint system `[[XᵀX + ridge·I, s], [sᵀ, n + ρ_b]] [w; b] = [Xᵀy; t]` (with
    /// `s = Xᵀ1`, `t = Σy`, `n` rows, `ρ_b = offset_ridge`) is solved by eliminating `b`:
    /// `(XᵀX + ridge·I − s sᵀ/(n + ρ_b)) w = Xᵀy − s·t/(n + ρ_b)`, the Schur complement,
    /// which is positive definite when the joint system is; then `b = (t − sᵀw)/(n + ρ_b)`.
    /// So the Cholesky factorization keeps the width of the vectors (no padding for the
    /// offset), and `s` comes from one pass over rows the Gram kernel has just brought into
    /// cache.
    #[allow(clippy::too_many_arguments)]
    pub fn solve_batch_with_offsets(
        &mut self,
        table: &[f64],
        known: &[f64],
        problems: &[Problem<'_>],
        ridge: f64,
        offset_ridge: f64,
        out: &mut [f64],
        offsets: &mut [f64],
    ) -> [bool; BATCH] {
        let ok = self.solve_lanes(table, problems, ridge, Some((offset_ridge, known)), out);
        // b = (t − sᵀw)/(n + ρ_b) in every lane at once, from the solutions still in the
        // lanes; the dot product in order from −0.0, as a sum of the products would be.
        let zero = LaneVector::ZERO;
        let mut fitted = LaneVector::splat(-0.0);
        for (&s, &w) in self.lane_sums.iter().zip(&self.lane_rhs) {
            fitted += s * w;
        }
        let den = LaneVector::new(self.denominators);
        let b = den
            .simd_gt(zero)
            .select((LaneVector::new(self.totals) - fitted) / den, zero);
        for (offset, &b) in offsets.iter_mut().zip(b.as_array()).take(problems.len()) {
            *offset = b;
        }
        ok
    }

    /// Solves up to [`BATCH`] weighted problems side by side: for problem `p` with rows
    /// `x_k` (rows `rows[k]` of `table`) and weights `c_k`, solves
    /// `(base + Σ_k (c_k − 1) x_k x_kᵀ) w = Σ_k c_k x_k`, writing `w` to `out[p * rank..]`.
    /// `base` is a symmetric `rank × rank` matrix (row-major) shared by every problem.
    ///
    /// This is the implicit-feedback step of Hu, Koren & Volinsky (ICDM 2008, eq. 4):
    /// with `base = YᵀY + λI` and `c_k` the confidences of one member's interactions
    /// (preference 1), `w` minimises `Σ_all c (p − x·w)² + λ‖w‖²` over the whole catalogue
    /// at the cost of the member's own interactions. `exact_zero_ridge` says the base has no
    /// ridge term, so a pivot is judged against the matrix's own diagonal.
    pub fn solve_batch_weighted(
        &mut self,
        table: &[f64],
        problems: &[WeightedProblem<'_>],
        base: &[f64],
        exact_zero_ridge: bool,
        out: &mut [f64],
    ) -> [bool; BATCH] {
        assert!(
            problems.len() <= BATCH,
            "at most {BATCH} problems per batch"
        );
        let d = self.rank;
        for lane in 0..BATCH {
            let Some(&(rows, weights, (scales, scaled_targets))) = problems.get(lane) else {
                self.load_identity(lane);
                continue;
            };
            // Σ (c − 1) x xᵀ is the Gram matrix of the rows scaled by √(c − 1), so the
            // register-tiled kernels build it; the target c/√(c − 1) of a scaled row gives
            // Σ c x as its right-hand side.
            let unscalable = scales.iter().any(|&r| r.is_nan() || r == 0.0);
            let (gram, rhs) = (&mut self.gram[lane], &mut self.rhs[lane]);
            scaled_normal_equations(
                table,
                d,
                rows,
                scales,
                scaled_targets,
                &mut self.scratch,
                gram,
                rhs,
            );
            if unscalable {
                // A confidence of 1 adds nothing to the matrix but still to Σ c x.
                rhs[..d].fill(0.0);
                for (&r, &c) in rows.iter().zip(weights) {
                    let x = &table[r as usize * d..r as usize * d + d];
                    for (acc, &v) in rhs.iter_mut().zip(x) {
                        *acc = c.mul_add(v, *acc);
                    }
                }
            }
        }
        self.interleave_lanes();
        // The shared base goes onto the eight interleaved systems at once (the same sum in
        // every entry as lane by lane, and 3–5% faster).
        let ls = round_up(d, COLUMN_BLOCK);
        for i in 0..d {
            let row = &mut self.lanes[i * ls + i..i * ls + d];
            for (g, &b) in row.iter_mut().zip(&base[i * d + i..(i + 1) * d]) {
                *g += LaneVector::splat(b);
            }
        }
        self.finish_lanes(problems.len(), exact_zero_ridge, out)
    }

    fn solve_lanes(
        &mut self,
        table: &[f64],
        problems: &[Problem<'_>],
        ridge: f64,
        offset: Option<(f64, &[f64])>,
        out: &mut [f64],
    ) -> [bool; BATCH] {
        assert!(
            problems.len() <= BATCH,
            "at most {BATCH} problems per batch"
        );
        for lane in 0..BATCH {
            if let Some(&(rows, targets)) = problems.get(lane) {
                self.load_lane(lane, table, rows, targets, ridge, offset);
            } else {
                self.load_identity(lane);
                self.denominators[lane] = 0.0;
            }
        }
        self.interleave_lanes();
        if offset.is_some() {
            self.eliminate_offsets(ridge);
        }
        self.finish_lanes(problems.len(), ridge == 0.0, out)
    }

    /// Lays the systems of the lanes side by side, one per lane, for the batched solve.
    fn interleave_lanes(&mut self) {
        interleave(
            &self.gram,
            &self.rhs,
            self.rank,
            self.stride,
            &mut self.lanes,
            &mut self.lane_rhs,
        );
    }

    /// The Schur complement of the offsets (see [`Self::solve_batch_with_offsets`]) in every
    /// lane at once, then the ridge term: `A − s sᵀ/(n + ρ_b) + ridge·I` and
    /// `Xᵀy − s·t/(n + ρ_b)`. Each entry is the same operations as one lane alone (a
    /// quotient, a product, a difference, then the ridge), so the bits do not depend on the
    /// batch; done lane by lane it cost 8% of a rank-10 fit with biases. Lanes with
    /// `n + ρ_b = 0` (no rows, no offset ridge) and unused lanes keep their matrix.
    fn eliminate_offsets(&mut self, ridge: f64) {
        let (d, ls) = (self.rank, round_up(self.rank, COLUMN_BLOCK));
        let zero = LaneVector::ZERO;
        let den = LaneVector::new(self.denominators);
        let active = den.simd_gt(zero);
        let total = LaneVector::new(self.totals);
        let ridge = LaneVector::splat(ridge);
        self.lane_sums.clear();
        let sums = &self.sums;
        self.lane_sums
            .extend((0..d).map(|i| LaneVector::new(std::array::from_fn(|l| sums[l][i]))));
        for i in 0..d {
            let scaled = self.lane_sums[i] / den;
            // Slices, not indices, so the row update is one loop of vector operations.
            let row = &mut self.lanes[i * ls + i..i * ls + d];
            for (g, &sj) in row.iter_mut().zip(&self.lane_sums[i..d]) {
                *g = active.select(*g - scaled * sj, *g);
            }
            let b = self.lane_rhs[i];
            self.lane_rhs[i] = active.select(b - scaled * total, b);
            row[0] += ridge;
        }
    }

    /// Solves the systems interleaved in the lanes (the first `count` are problems) by the
    /// batched Cholesky factorization, writing the solutions to `out`.
    fn finish_lanes(&mut self, count: usize, zero_ridge: bool, out: &mut [f64]) -> [bool; BATCH] {
        let d = self.rank;
        let diagonal = zero_ridge.then(|| {
            self.diagonal.clear();
            let ls = round_up(d, COLUMN_BLOCK);
            self.diagonal.extend((0..d).map(|k| self.lanes[k * ls + k]));
            self.diagonal.as_slice()
        });
        let mut ok = cholesky_solve(&mut self.lanes, &mut self.lane_rhs, d, diagonal);
        for (lane, solution) in out.chunks_exact_mut(d).enumerate().take(count) {
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
        ridge: f64,
        offset: Option<(f64, &[f64])>,
    ) {
        let (d, s) = (self.rank, self.stride);
        debug_assert!(rows.len() >= targets.len());
        let (gram, rhs) = (&mut self.gram[lane], &mut self.rhs[lane]);
        let Some((offset_ridge, known)) = offset else {
            normal_equations(table, d, rows, targets, &mut self.scratch, gram, rhs);
            for k in 0..d {
                gram[k * s + k] += ridge;
            }
            return;
        };
        // The rows' known offsets come off the targets, and the rows and targets are summed,
        // in the pass that builds the normal equations.
        let sum = &mut self.sums[lane];
        let total = normal_equations_with_offsets(
            table,
            d,
            (rows, targets, known),
            &mut self.scratch,
            &mut self.adjusted,
            gram,
            rhs,
            sum,
        );
        // The offset is eliminated, and the ridge added, once the lanes are interleaved.
        self.totals[lane] = total;
        self.denominators[lane] = targets.len() as f64 + offset_ridge;
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
    fn an_offset_is_solved_jointly_with_the_vector() {
        // X = [1, 2, 3]ᵀ, y = [2, 3, 5], ridge 0.5, offset ridge 0.25: the joint system
        // [[14.5, 6], [6, 3.25]] [w; b] = [23; 10], solved by Cramer's rule (common
        // practice): det = 11.125, w = 14.75/11.125, b = 7/11.125.
        let table = [1.0, 2.0, 3.0];
        let mut ws = RidgeWorkspace::new(1);
        let (mut w, mut b) = ([0.0; 1], [0.0; 1]);
        let ok = ws.solve_batch_with_offsets(
            &table,
            &[0.0; 3],
            &[(&[0, 1, 2], &[2.0, 3.0, 5.0])],
            0.5,
            0.25,
            &mut w,
            &mut b,
        );
        assert!(ok[0]);
        assert!((w[0] - 14.75 / 11.125).abs() < 1e-14, "{w:?}");
        assert!((b[0] - 7.0 / 11.125).abs() < 1e-14, "{b:?}");
        // No rows: both are 0.
        let ok = ws.solve_batch_with_offsets(&table, &[], &[(&[], &[])], 0.5, 0.25, &mut w, &mut b);
        assert!(ok[0]);
        assert_eq!((w[0], b[0]), (0.0, 0.0));
        // A constant feature and a free offset without any ridge cannot be told apart.
        let flat = [1.0, 1.0];
        let ok = ws.solve_batch_with_offsets(
            &flat,
            &[0.0; 2],
            &[(&[0, 1], &[1.0, 2.0])],
            0.0,
            0.0,
            &mut w,
            &mut b,
        );
        assert!(!ok[0], "{w:?} {b:?}");
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
