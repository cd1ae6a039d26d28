//! Small dense kernels for the ridge solves: Gram matrix, right-hand side, Cholesky.
//!
//! Written as plain loops over small fixed-size arrays so the compiler turns them into SIMD
//! code for the CPU it targets, while every sum keeps one fixed order: results are the same
//! bit for bit whatever the vector width or thread count. `mul_add` is a fused multiply-add
//! with a single rounding, exactly specified, so it too is identical everywhere.
//!
//! Matrices are row-major with a row stride `s` that is a multiple of [`TILE`]; only the
//! upper triangle of a symmetric matrix is kept (row `i` holds entries `i..d`).

// Index loops over small fixed arrays are the clearest way to write lane-wise kernels and
// are what the vectoriser handles best.
#![allow(clippy::needless_range_loop)]

/// Tile edge of the Gram kernel: a 4 × 4 block of accumulators lives in registers.
pub const TILE: usize = 4;

/// Rounds `n` up to a multiple of `m`.
pub fn round_up(n: usize, m: usize) -> usize {
    n.div_ceil(m) * m
}

#[inline]
fn tile(row: &[f64], at: usize) -> &[f64; TILE] {
    row[at..at + TILE].try_into().expect("tile inside the row")
}

/// Most tiles one panel pass keeps in registers.
const PANEL: usize = 6;

/// Rows `rb..rb+4`, columns `cb..cb+4T` of `XᵀX` in one pass over the rows of `X`.
fn panel<const T: usize>(x: &[f64], s: usize, rb: usize, cb: usize, gram: &mut [f64]) {
    let mut acc = [[[0.0f64; TILE]; T]; TILE];
    for row in x.chunks_exact(s) {
        let left = tile(row, rb);
        for (t, right) in (0..T).map(|t| (t, tile(row, cb + t * TILE))) {
            for a in 0..TILE {
                for c in 0..TILE {
                    acc[a][t][c] = left[a].mul_add(right[c], acc[a][t][c]);
                }
            }
        }
    }
    for a in 0..TILE {
        for t in 0..T {
            let at = (rb + a) * s + cb + t * TILE;
            gram[at..at + TILE].copy_from_slice(&acc[a][t]);
        }
    }
}

/// Upper triangle of `XᵀX` and `Xᵀy` for `X` given as `n` rows of `s` values (`s` a
/// multiple of [`TILE`], columns past the rank zero). Writes `gram[r * s + c]` for every tile on or above the
/// diagonal, and `rhs[0..s]`. Even and odd rows go to separate accumulators (so the
/// floating-point pipelines stay busy) that are added once at the end: a fixed order.
pub fn gram_and_rhs(x: &[f64], s: usize, y: &[f64], gram: &mut [f64], rhs: &mut [f64]) {
    debug_assert!(s.is_multiple_of(TILE) && x.len() == y.len() * s);
    let n = y.len();
    let row = |k: usize| &x[k * s..(k + 1) * s];
    // Panels of 4 rows × up to 24 columns: up to 24 vector accumulators in registers.
    for rb in (0..s).step_by(TILE) {
        for cb in (rb..s).step_by(PANEL * TILE) {
            match ((s - cb) / TILE).min(PANEL) {
                1 => panel::<1>(x, s, rb, cb, gram),
                2 => panel::<2>(x, s, rb, cb, gram),
                3 => panel::<3>(x, s, rb, cb, gram),
                4 => panel::<4>(x, s, rb, cb, gram),
                5 => panel::<5>(x, s, rb, cb, gram),
                _ => panel::<PANEL>(x, s, rb, cb, gram),
            }
        }
    }
    // Right-hand side by tiles too, in registers (a running sum in memory would chain every
    // row's update through a store and a reload).
    for cb in (0..s).step_by(TILE) {
        let (mut even, mut odd) = ([0.0f64; TILE], [0.0f64; TILE]);
        let mut k = 0;
        while k + 1 < n {
            let (t0, t1) = (tile(row(k), cb), tile(row(k + 1), cb));
            for c in 0..TILE {
                even[c] = y[k].mul_add(t0[c], even[c]);
                odd[c] = y[k + 1].mul_add(t1[c], odd[c]);
            }
            k += 2;
        }
        if k < n {
            let t0 = tile(row(k), cb);
            for c in 0..TILE {
                even[c] = y[k].mul_add(t0[c], even[c]);
            }
        }
        for c in 0..TILE {
            rhs[cb + c] = even[c] + odd[c];
        }
    }
}

/// Largest rank handled by [`gram_and_rhs_direct`].
pub const DIRECT_MAX_RANK: usize = 12;

/// [`gram_and_rhs`] for ranks up to [`DIRECT_MAX_RANK`], reading the rows straight from the
/// row-major `table` (width `d`) through `rows`: no copy. Every accumulator of the upper
/// triangle and of the right-hand side stays in a register through a single pass (at most
/// 27 vector accumulators, for a stride of 12). Returns false for larger ranks.
pub fn gram_and_rhs_direct(
    table: &[f64],
    d: usize,
    rows: &[u32],
    y: &[f64],
    gram: &mut [f64],
    rhs: &mut [f64],
) -> bool {
    let (t, r, g, h) = (table, rows, gram, rhs);
    match d {
        1 => direct::<1, 4>(t, r, y, g, h),
        2 => direct::<2, 4>(t, r, y, g, h),
        3 => direct::<3, 4>(t, r, y, g, h),
        4 => direct::<4, 4>(t, r, y, g, h),
        5 => direct::<5, 8>(t, r, y, g, h),
        6 => direct::<6, 8>(t, r, y, g, h),
        7 => direct::<7, 8>(t, r, y, g, h),
        8 => direct::<8, 8>(t, r, y, g, h),
        9 => direct::<9, 12>(t, r, y, g, h),
        10 => direct::<10, 12>(t, r, y, g, h),
        11 => direct::<11, 12>(t, r, y, g, h),
        12 => direct::<12, 12>(t, r, y, g, h),
        _ => return false,
    }
    true
}

/// How many rows ahead [`direct`] reads to start cache misses early.
const LOOKAHEAD: usize = 8;

/// One pass over rows of width `D`, padded in registers to the tile-multiple `S`.
fn direct<const D: usize, const S: usize>(
    table: &[f64],
    rows: &[u32],
    y: &[f64],
    gram: &mut [f64],
    rhs: &mut [f64],
) {
    let mut acc = [[0.0f64; S]; D];
    let mut right = [0.0f64; S];
    // Rows are scattered over a table larger than the caches: reading a row a few iterations
    // ahead starts its cache miss early. The values only feed a checksum that is handed to
    // `black_box` once, so nothing waits on them.
    let mut touched = 0u64;
    for (k, (&r, &target)) in rows.iter().zip(y).enumerate() {
        if let Some(&ahead) = rows.get(k + LOOKAHEAD) {
            touched ^= table[ahead as usize * D].to_bits();
        }
        let start = r as usize * D;
        let vector: &[f64; D] = table[start..start + D]
            .try_into()
            .expect("row inside the table");
        let mut row = [0.0f64; S];
        row[..D].copy_from_slice(vector);
        for a in 0..D {
            // Only tiles on or above the diagonal: columns from the start of a's tile. Rows
            // past D are padding and need no accumulators.
            for c in (a - a % TILE)..S {
                acc[a][c] = row[a].mul_add(row[c], acc[a][c]);
            }
        }
        for c in 0..S {
            right[c] = target.mul_add(row[c], right[c]);
        }
    }
    for a in 0..D {
        let start = a - a % TILE;
        gram[a * S + start..(a + 1) * S].copy_from_slice(&acc[a][start..]);
    }
    rhs[..S].copy_from_slice(&right);
    std::hint::black_box(touched);
}

/// Number of independent systems factored side by side, one per SIMD lane.
pub const BATCH: usize = 8;

/// One value per system of a batch.
pub type Lanes = [f64; BATCH];

/// Width of the column blocks of [`cholesky_solve_batch`]; the lane matrices have a row
/// stride rounded up to a multiple of it.
pub const COLUMN_BLOCK: usize = 4;

/// Cholesky factorisation and solve of up to [`BATCH`] independent `d × d` systems at once.
///
/// `a[i * s + j]` holds entry (i, j), `j ≥ i`, of every system (lane `l` = system `l`), with
/// row stride `s = round_up(d, COLUMN_BLOCK)` and zero padding columns; `b[i]` the
/// right-hand sides. On return `b` holds the solutions of the lanes marked true. Every lane
/// goes through exactly the same operations as it would alone, so a system's solution does
/// not depend on which batch or lane it was solved in; the lanes only let the long chains of
/// dependent square roots and divisions of one factorisation overlap with the others'.
///
/// The factorisation is left-looking by rows: row k of `U` is `A[k][c] − Σ_{i<k} U[i][k]
/// U[i][c]`, summed in order i = 0, 1, …, in blocks of columns held in registers.
///
/// A lane fails (false) when a pivot is not positive, or, when `original_diagonal` is given
/// (no ridge term), when a pivot is rounding noise: `U_kk² ≤ 64 ε A_kk`, i.e. column k is
/// numerically a combination of the columns before it.
pub fn cholesky_solve_batch(
    a: &mut [Lanes],
    b: &mut [Lanes],
    d: usize,
    original_diagonal: Option<&[Lanes]>,
) -> [bool; BATCH] {
    // Small ranks get a copy compiled for their exact size: constant loop bounds let the
    // compiler unroll and drop index checks. The arithmetic is the same.
    let (x, y, g) = (a, b, original_diagonal);
    match d {
        1 => batch_fixed::<1>(x, y, g),
        2 => batch_fixed::<2>(x, y, g),
        3 => batch_fixed::<3>(x, y, g),
        4 => batch_fixed::<4>(x, y, g),
        5 => batch_fixed::<5>(x, y, g),
        6 => batch_fixed::<6>(x, y, g),
        7 => batch_fixed::<7>(x, y, g),
        8 => batch_fixed::<8>(x, y, g),
        9 => batch_fixed::<9>(x, y, g),
        10 => batch_fixed::<10>(x, y, g),
        11 => batch_fixed::<11>(x, y, g),
        12 => batch_fixed::<12>(x, y, g),
        _ => batch_any(x, y, d, g),
    }
}

fn batch_fixed<const D: usize>(
    a: &mut [Lanes],
    b: &mut [Lanes],
    original_diagonal: Option<&[Lanes]>,
) -> [bool; BATCH] {
    batch_any(a, b, D, original_diagonal)
}

// Always inlined so that each fixed-size copy is specialised for its constant rank.
#[allow(clippy::inline_always)]
#[inline(always)]
fn batch_any(
    a: &mut [Lanes],
    b: &mut [Lanes],
    d: usize,
    original_diagonal: Option<&[Lanes]>,
) -> [bool; BATCH] {
    let s = round_up(d, COLUMN_BLOCK);
    debug_assert!(a.len() >= d * s);
    let mut ok = [true; BATCH];
    for k in 0..d {
        let mut start = k - k % COLUMN_BLOCK;
        while start < d {
            let (above, here) = a.split_at_mut(k * s);
            let block: &mut [Lanes; COLUMN_BLOCK] = (&mut here[start..start + COLUMN_BLOCK])
                .try_into()
                .expect("padded row");
            let mut acc = *block;
            for i in 0..k {
                let f = above[i * s + k];
                let upper: &[Lanes; COLUMN_BLOCK] = above
                    [i * s + start..i * s + start + COLUMN_BLOCK]
                    .try_into()
                    .expect("padded row");
                for q in 0..COLUMN_BLOCK {
                    for l in 0..BATCH {
                        acc[q][l] = (-f[l]).mul_add(upper[q][l], acc[q][l]);
                    }
                }
            }
            *block = acc;
            start += COLUMN_BLOCK;
        }
        let row_k = &mut a[k * s..k * s + d];
        let mut pivot = row_k[k];
        for l in 0..BATCH {
            let noise = original_diagonal
                .is_some_and(|diagonal| pivot[l] <= 64.0 * f64::EPSILON * diagonal[k][l]);
            if pivot[l].is_nan() || pivot[l] <= 0.0 || noise {
                ok[l] = false;
            }
            if !ok[l] {
                // Keep failed lanes finite; their results are discarded.
                pivot[l] = 1.0;
            }
        }
        let mut inverse = [0.0; BATCH];
        for l in 0..BATCH {
            row_k[k][l] = pivot[l].sqrt();
            inverse[l] = 1.0 / row_k[k][l];
        }
        for v in &mut row_k[k + 1..] {
            for l in 0..BATCH {
                v[l] *= inverse[l];
            }
        }
    }
    // Forward substitution Uᵀz = b, then back substitution Uw = z.
    for k in 0..d {
        let row = &a[k * s..k * s + d];
        let mut z = b[k];
        for l in 0..BATCH {
            z[l] /= row[k][l];
        }
        b[k] = z;
        for (t, u) in b[k + 1..d].iter_mut().zip(&row[k + 1..]) {
            for l in 0..BATCH {
                t[l] = (-z[l]).mul_add(u[l], t[l]);
            }
        }
    }
    // Back substitution by columns: each solved w_i is removed from every earlier right-hand
    // side at once (independent updates, no long chain of dependent additions).
    for i in (0..d).rev() {
        let mut w = b[i];
        let u_ii = a[i * s + i];
        for l in 0..BATCH {
            w[l] /= u_ii[l];
        }
        b[i] = w;
        for r in 0..i {
            let u = a[r * s + i];
            for l in 0..BATCH {
                b[r][l] = (-u[l]).mul_add(w[l], b[r][l]);
            }
        }
    }
    ok
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Loads one upper-triangular system into lane `l`.
    fn load(a: &mut [Lanes], b: &mut [Lanes], l: usize, full: &[&[f64]], rhs: &[f64]) {
        let d = rhs.len();
        for i in 0..d {
            for j in i..d {
                a[i * COLUMN_BLOCK + j][l] = full[i][j];
            }
            b[i][l] = rhs[i];
        }
    }

    #[test]
    fn cholesky_of_a_known_matrix_in_every_lane() {
        // A classic worked example (common practice): [[4,12,-16],[12,37,-43],[-16,-43,98]]
        // = UᵀU with U = [[2,6,-8],[0,1,5],[0,0,3]].
        let full: [&[f64]; 3] = [
            &[4.0, 12.0, -16.0],
            &[12.0, 37.0, -43.0],
            &[-16.0, -43.0, 98.0],
        ];
        let mut a = vec![[0.0; BATCH]; 3 * COLUMN_BLOCK];
        let mut b = vec![[0.0; BATCH]; 3];
        for l in 0..BATCH {
            load(&mut a, &mut b, l, &full, &[1.0, 2.0, 3.0]);
        }
        assert_eq!(cholesky_solve_batch(&mut a, &mut b, 3, None), [true; BATCH]);
        let u = |i: usize, j: usize| a[i * COLUMN_BLOCK + j][2];
        assert_eq!(
            [u(0, 0), u(0, 1), u(0, 2), u(1, 1), u(1, 2), u(2, 2)],
            [2.0, 6.0, -8.0, 1.0, 5.0, 3.0]
        );
        for l in 0..BATCH {
            for (row, expected) in full.iter().zip([1.0, 2.0, 3.0]) {
                let got: f64 = row.iter().zip(&b).map(|(x, w)| x * w[l]).sum();
                assert!((got - expected).abs() < 1e-10);
            }
        }
    }

    #[test]
    fn a_failing_lane_leaves_the_others_alone() {
        let good: [&[f64]; 2] = [&[2.0, 1.0], &[1.0, 3.0]];
        let singular: [&[f64]; 2] = [&[1.0, 1.0], &[1.0, 1.0]];
        let mut a = vec![[0.0; BATCH]; 2 * COLUMN_BLOCK];
        let mut b = vec![[0.0; BATCH]; 2];
        for l in 0..BATCH {
            load(
                &mut a,
                &mut b,
                l,
                if l == 1 { &singular } else { &good },
                &[1.0, 1.0],
            );
        }
        let mut diagonal = vec![[2.0; BATCH], [3.0; BATCH]];
        (diagonal[0][1], diagonal[1][1]) = (1.0, 1.0);
        let ok = cholesky_solve_batch(&mut a, &mut b, 2, Some(&diagonal));
        assert_eq!(ok, std::array::from_fn(|l| l != 1));
        // (2 1; 1 3) w = (1, 1) → w = (0.4, 0.2).
        assert!((b[0][0] - 0.4).abs() < 1e-15 && (b[1][3] - 0.2).abs() < 1e-15);
    }
    #[test]
    fn direct_gram_equals_packed_gram_bit_for_bit() {
        let mut rng = crate::rng::Rng::new(8);
        for d in 1..=DIRECT_MAX_RANK {
            let s = round_up(d, TILE);
            let table: Vec<f64> = (0..30 * d).map(|_| rng.normal()).collect();
            let rows: Vec<u32> = (0..17).map(|_| rng.below(30) as u32).collect();
            let y: Vec<f64> = rows.iter().map(|_| rng.normal()).collect();
            let (mut g1, mut h1) = (vec![0.0; s * s], vec![0.0; s]);
            assert!(gram_and_rhs_direct(&table, d, &rows, &y, &mut g1, &mut h1));
            let mut packed = vec![0.0; rows.len() * s];
            for (k, &r) in rows.iter().enumerate() {
                packed[k * s..k * s + d]
                    .copy_from_slice(&table[r as usize * d..(r as usize + 1) * d]);
            }
            let (mut g2, mut h2) = (vec![0.0; s * s], vec![0.0; s]);
            gram_and_rhs(&packed, s, &y, &mut g2, &mut h2);
            for a in 0..d {
                let naive_rhs: f64 = (0..rows.len()).map(|k| packed[k * s + a] * y[k]).sum();
                assert!((h1[a] - naive_rhs).abs() < 1e-12, "d {d}");
                for b in a..d {
                    let naive: f64 = (0..rows.len())
                        .map(|k| packed[k * s + a] * packed[k * s + b])
                        .sum();
                    assert!((g1[a * s + b] - naive).abs() < 1e-12, "d {d} ({a},{b})");
                    assert!((g2[a * s + b] - naive).abs() < 1e-12, "d {d} ({a},{b})");
                }
            }
        }
        assert!(!gram_and_rhs_direct(
            &[0.0; 13],
            13,
            &[0],
            &[1.0],
            &mut [0.0; 256],
            &mut [0.0; 16]
        ));
    }

    #[test]
    fn gram_matches_naive_for_odd_sizes() {
        let mut rng = crate::rng::Rng::new(5);
        for (d, n) in [(1, 1), (3, 7), (10, 40), (17, 9), (32, 50)] {
            let s = round_up(d, TILE);
            let mut x = vec![0.0; n * s];
            for k in 0..n {
                for a in 0..d {
                    x[k * s + a] = rng.normal();
                }
            }
            let y: Vec<f64> = (0..n).map(|_| rng.normal()).collect();
            let mut gram = vec![0.0; s * s];
            let mut rhs = vec![0.0; s];
            gram_and_rhs(&x, s, &y, &mut gram, &mut rhs);
            for a in 0..d {
                let naive_rhs: f64 = (0..n).map(|k| x[k * s + a] * y[k]).sum();
                assert!((rhs[a] - naive_rhs).abs() < 1e-12);
                for b in a..d {
                    let naive: f64 = (0..n).map(|k| x[k * s + a] * x[k * s + b]).sum();
                    assert!(
                        (gram[a * s + b] - naive).abs() < 1e-12,
                        "d {d} n {n} ({a},{b})"
                    );
                }
            }
        }
    }
}
