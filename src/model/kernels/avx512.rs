//! The Gram kernels written with explicit 512-bit vectors (eight `f64` per register), for
//! CPUs with AVX-512 and fused multiply-add. The compiler's own vectoriser keeps to 256-bit
//! registers on these CPUs, which halves the arithmetic per instruction and runs short of
//! registers for the accumulators of a whole Gram matrix.
//!
//! Every entry is the same chain of fused multiply-adds, in the same order, as in the
//! portable kernels of the parent module, so both give the same bits (tested below).

// Inlining is what lets each constant size unroll into straight register code.
#![allow(clippy::inline_always)]

use wide::f64x8;

use super::{prefetch_ahead, row_target};

/// Values per vector register.
const LANES: usize = 8;

/// First column of vector `t` of a row of width `D`: vectors hold columns `8t..8t + 8`,
/// except that the last one of a width that is not a multiple of 8 ends at the last column
/// (`D - 8..D`) instead of running past it. Columns in two vectors are computed twice, as
/// the same chain of operations, so both copies agree to the bit.
#[inline(always)]
const fn first_column<const D: usize>(t: usize) -> usize {
    if D < LANES {
        0
    } else if t * LANES + LANES > D {
        D - LANES
    } else {
        t * LANES
    }
}

/// Row `at..at + D` of `table` as `T` vectors (see [`first_column`]); never reads outside
/// the row. A row narrower than a vector is padded with zeros.
#[inline(always)]
fn load_row<const D: usize, const T: usize>(table: &[f64], at: usize) -> [f64x8; T] {
    let row: &[f64; D] = table[at..at + D].try_into().expect("row inside the table");
    std::array::from_fn(|t| {
        if D < LANES {
            let mut padded = [0.0; LANES];
            padded[..D].copy_from_slice(row);
            f64x8::new(padded)
        } else {
            let start = first_column::<D>(t);
            let values: &[f64; LANES] = row[start..start + LANES]
                .try_into()
                .expect("one register's worth");
            f64x8::new(*values)
        }
    })
}

/// [`super::gram_and_rhs_direct`] for ranks up to 16, and when `SUMS` the work of a problem
/// with a free offset in the same pass. One pass over the rows, reading them straight from
/// the row-major `table` (width `D`); the upper triangle in `T` vectors per row (from the
/// vector holding the diagonal on) and the right-hand side stay in registers (at most 26 of
/// the 32). With `SUMS` the targets are `y_k − known[rows[k]]`, `sums[..D]` gets `Σ_k x_k`
/// (two more vectors: at most 30 registers at rank 16 with the row and a broadcast), and it
/// returns the adjusted targets' sum; every sum runs in row order, as in the portable
/// kernels. With `SCALED` instead, row `k` is multiplied by `extra[k]` as it is read (the
/// weighted problems of implicit feedback). `out.gram` has row stride `out.s`; `rhs` holds `s` values.
pub(super) fn direct_and_sums<
    const D: usize,
    const T: usize,
    const SUMS: bool,
    const SCALED: bool,
>(
    table: &[f64],
    (rows, y, extra): (&[u32], &[f64], &[f64]),
    out: Out<'_>,
    rhs: &mut [f64],
    sums: &mut [f64],
) -> f64 {
    let mut acc = [[f64x8::ZERO; T]; D];
    let mut right = [f64x8::ZERO; T];
    let mut total = [f64x8::ZERO; T];
    let mut target_total = -0.0;
    for (k, &r) in rows.iter().take(y.len()).enumerate() {
        prefetch_ahead(table, D, rows, k);
        let target = row_target::<SUMS>((rows, y, extra), k);
        if SUMS {
            target_total += target;
        }
        let at = r as usize * D;
        let mut x = load_row::<D, T>(table, at);
        let mut values: [f64; D] = table[at..at + D].try_into().expect("row inside the table");
        if SCALED {
            // The same products as a row scaled before the kernel reads it.
            let scale = extra[k];
            for value in &mut values {
                *value *= scale;
            }
            for vector in &mut x {
                *vector *= f64x8::splat(scale);
            }
        }
        for a in 0..D {
            let left = f64x8::splat(values[a]);
            for t in a / LANES..T {
                acc[a][t] = left.mul_add(x[t], acc[a][t]);
            }
        }
        let target = f64x8::splat(target);
        for t in 0..T {
            right[t] = target.mul_add(x[t], right[t]);
            if SUMS {
                total[t] += x[t];
            }
        }
    }
    let Out { gram, s, .. } = out;
    for a in 0..D {
        for t in a / LANES..T {
            store(acc[a][t], &mut gram[a * s..a * s + D], first_column::<D>(t));
        }
    }
    for t in 0..T {
        store(right[t], &mut rhs[..D], first_column::<D>(t));
        if SUMS {
            store(total[t], &mut sums[..D], first_column::<D>(t));
        }
    }
    target_total
}

/// Writes the lanes of `v` to `out[from..]`, as many as fit.
#[inline(always)]
fn store(v: f64x8, out: &mut [f64], from: usize) {
    let values = v.to_array();
    if let Some(whole) = out.get_mut(from..from + LANES) {
        // A fixed-size copy: one vector store, no library call.
        let whole: &mut [f64; LANES] = whole.try_into().expect("eight values");
        *whole = values;
    } else {
        for (slot, value) in out.iter_mut().skip(from).zip(values) {
            *slot = value;
        }
    }
}

/// Accumulator registers one pass of [`gram_and_rhs`] may use.
const PASS_REGISTERS: usize = 24;

/// [`super::gram_and_rhs`] for ranks above 16, reading the rows of `table` (width `d`)
/// through `rows`. The rows are first copied into `panel` (zero-padded to whole vectors;
/// the first pass also forms the right-hand side), then the upper triangle is built in
/// passes over the panel, each holding up to 24 vectors of the Gram matrix in registers: a
/// block of 8 rows against up to 3 vectors of columns. `gram` has row stride `s`; `rhs`
/// holds `s` values; both get columns `0..d` of every row (and nothing past `d`).
///
/// With [`Extra::Offsets`] it is a problem with a free offset, as in [`direct_and_sums`]:
/// the first pass takes `known[rows[k]]` off the targets and sums the rows into
/// `sums[..d]`, and the adjusted targets' sum is returned (−0.0 otherwise). With
/// [`Extra::Scales`] row `k` is multiplied by `scale[k]` as it is copied.
pub(super) fn gram_and_rhs(
    table: &[f64],
    (rows, y): (&[u32], &[f64]),
    extra: Extra<'_>,
    panel: &mut Vec<f64x8>,
    out: Out<'_>,
    rhs: &mut [f64],
) -> f64 {
    let Out { gram, s, d } = out;
    let t = d.div_ceil(LANES);
    let n = y.len();
    if panel.len() < n * t {
        panel.resize(n * t, f64x8::ZERO);
    }
    let first = &mut panel[..n * t];
    let rhs = &mut rhs[..d];
    let total = match extra {
        Extra::Plain => gather::<false, false>(table, d, t, (rows, y, &[]), first, rhs, &mut []),
        Extra::Offsets { known, sums } => {
            gather::<true, false>(table, d, t, (rows, y, known), first, rhs, sums)
        }
        Extra::Scales(scale) => {
            gather::<false, true>(table, d, t, (rows, y, scale), first, rhs, &mut [])
        }
    };
    let panel = &panel[..n * t];
    for block in 0..t {
        let mut first = block;
        while first < t {
            let count = (t - first).min(PASS_REGISTERS / LANES);
            let out = Out { gram, s, d };
            match count {
                1 => pass::<1>(panel, t, block * LANES, first, out),
                2 => pass::<2>(panel, t, block * LANES, first, out),
                _ => pass::<3>(panel, t, block * LANES, first, out),
            }
            first += count;
        }
    }
    total
}

/// What [`gram_and_rhs`] does besides the plain normal equations.
pub(super) enum Extra<'a> {
    Plain,
    /// A free offset: the rows' known offsets, and where the rows' sum goes.
    Offsets {
        known: &'a [f64],
        sums: &'a mut [f64],
    },
    /// Weighted rows: row `k` times `scale[k]`.
    Scales(&'a [f64]),
}

/// Where the Gram kernels write: the matrix, its row stride and the rank.
pub(super) struct Out<'a> {
    pub gram: &'a mut [f64],
    pub s: usize,
    pub d: usize,
}

/// Copies the rows into `panel` (`t` vectors each, zero-padded) and sums `Σ_k y_k x_k`
/// into `rhs`, one sequential chain per entry; with `SUMS`, the targets less
/// `known[rows[k]]`, the rows' sum into `sums` and the targets' sum returned; with
/// `SCALED`, row `k` times `extra[k]`.
fn gather<const SUMS: bool, const SCALED: bool>(
    table: &[f64],
    d: usize,
    t: usize,
    problem: (&[u32], &[f64], &[f64]),
    panel: &mut [f64x8],
    rhs: &mut [f64],
    sums: &mut [f64],
) -> f64 {
    // A constant width keeps the right-hand side in registers and the copy inline.
    match t {
        3 => gather_fixed::<3, SUMS, SCALED>(table, d, problem, panel, rhs, sums),
        4 => gather_fixed::<4, SUMS, SCALED>(table, d, problem, panel, rhs, sums),
        5 => gather_fixed::<5, SUMS, SCALED>(table, d, problem, panel, rhs, sums),
        6 => gather_fixed::<6, SUMS, SCALED>(table, d, problem, panel, rhs, sums),
        7 => gather_fixed::<7, SUMS, SCALED>(table, d, problem, panel, rhs, sums),
        8 => gather_fixed::<8, SUMS, SCALED>(table, d, problem, panel, rhs, sums),
        _ => gather_wide::<SUMS, SCALED>(table, d, t, problem, panel, rhs, sums),
    }
}

/// Row `r` of `table` (width `d`) as `T` vectors, the last one zero-padded.
#[inline(always)]
fn row_vectors<const T: usize>(table: &[f64], d: usize, r: usize) -> [f64x8; T] {
    let row = &table[r * d..(r + 1) * d];
    std::array::from_fn(|v| match row.get(v * LANES..(v + 1) * LANES) {
        Some(values) => f64x8::new(values.try_into().expect("one register's worth")),
        None => f64x8::new(std::array::from_fn(|c| {
            row.get(v * LANES + c).copied().unwrap_or(0.0)
        })),
    })
}

/// [`gather`] for rows of exactly `T` vectors.
fn gather_fixed<const T: usize, const SUMS: bool, const SCALED: bool>(
    table: &[f64],
    d: usize,
    problem: (&[u32], &[f64], &[f64]),
    panel: &mut [f64x8],
    rhs: &mut [f64],
    sums: &mut [f64],
) -> f64 {
    let (rows, y, _) = problem;
    let mut right = [f64x8::ZERO; T];
    let mut total = [f64x8::ZERO; T];
    let mut target_total = -0.0;
    for (k, (&r, slots)) in rows
        .iter()
        .zip(panel.chunks_exact_mut(T))
        .take(y.len())
        .enumerate()
    {
        prefetch_ahead(table, d, rows, k);
        let value = row_target::<SUMS>(problem, k);
        if SUMS {
            target_total += value;
        }
        let mut x = row_vectors::<T>(table, d, r as usize);
        if SCALED {
            let scale = f64x8::splat(problem.2[k]);
            for vector in &mut x {
                *vector *= scale;
            }
        }
        let value = f64x8::splat(value);
        for v in 0..T {
            slots[v] = x[v];
            right[v] = value.mul_add(x[v], right[v]);
            if SUMS {
                total[v] += x[v];
            }
        }
    }
    for v in 0..T {
        store(right[v], rhs, v * LANES);
        if SUMS {
            store(total[v], sums, v * LANES);
        }
    }
    target_total
}

/// [`gather`] for rows wider than 64 values: a copy, then the right-hand side (and the
/// sums) in blocks of 8 vectors from the panel (the same chains).
fn gather_wide<const SUMS: bool, const SCALED: bool>(
    table: &[f64],
    d: usize,
    t: usize,
    problem: (&[u32], &[f64], &[f64]),
    panel: &mut [f64x8],
    rhs: &mut [f64],
    sums: &mut [f64],
) -> f64 {
    const BLOCK: usize = 8;
    let (rows, y, extra) = problem;
    for (k, (&r, slots)) in rows.iter().zip(panel.chunks_exact_mut(t)).enumerate() {
        prefetch_ahead(table, d, rows, k);
        let row = &table[r as usize * d..(r as usize + 1) * d];
        for (v, slot) in slots.iter_mut().enumerate() {
            *slot = f64x8::new(std::array::from_fn(|c| {
                row.get(v * LANES + c).copied().unwrap_or(0.0)
            }));
            if SCALED {
                *slot *= f64x8::splat(extra[k]);
            }
        }
    }
    let mut target_total = -0.0;
    for first in (0..t).step_by(BLOCK) {
        let count = (t - first).min(BLOCK);
        let mut right = [f64x8::ZERO; BLOCK];
        let mut total = [f64x8::ZERO; BLOCK];
        for k in 0..y.len() {
            // Recomputed for each block: the same value every time.
            let value = row_target::<SUMS>(problem, k);
            if SUMS && first == 0 {
                target_total += value;
            }
            let value = f64x8::splat(value);
            for v in 0..count {
                let x = panel[k * t + first + v];
                right[v] = value.mul_add(x, right[v]);
                if SUMS {
                    total[v] += x;
                }
            }
        }
        for v in 0..count {
            store(right[v], rhs, (first + v) * LANES);
            if SUMS {
                store(total[v], sums, (first + v) * LANES);
            }
        }
    }
    target_total
}

/// Rows `r0..r0 + 8` of the Gram matrix, columns of vectors `first..first + N`, in one
/// pass over the panel (`t` vectors per row). Rows past the rank are skipped.
fn pass<const N: usize>(panel: &[f64x8], t: usize, r0: usize, first: usize, out: Out<'_>) {
    let mut acc = [[f64x8::ZERO; N]; LANES];
    for row in panel.chunks_exact(t) {
        let x: [f64x8; N] = std::array::from_fn(|v| row[first + v]);
        let left = row[r0 / LANES].as_array();
        for a in 0..LANES {
            let l = f64x8::splat(left[a]);
            for v in 0..N {
                acc[a][v] = l.mul_add(x[v], acc[a][v]);
            }
        }
    }
    let Out { gram, s, d } = out;
    for a in 0..LANES.min(d - r0) {
        let line = &mut gram[(r0 + a) * s..(r0 + a) * s + d];
        for v in 0..N {
            store(acc[a][v], line, (first + v) * LANES);
        }
    }
}

/// Most entries of a row one step of [`cholesky_solve_batch`] updates in registers.
const ROW_CHUNK: usize = 16;

/// [`super::cholesky_solve_batch`] on 512-bit lanes: the same operations in the same order,
/// lane by lane, so the same bits. Row `k` of the factor is computed from column `k` on
/// (the portable kernel also computes a few entries left of the diagonal, which nothing
/// reads), in chunks of up to 16 entries whose sums run side by side.
pub(super) fn cholesky_solve_batch(
    a: &mut [f64x8],
    b: &mut [f64x8],
    d: usize,
    ls: usize,
    original_diagonal: Option<&[f64x8]>,
) -> [bool; LANES] {
    let (zero, one) = (f64x8::ZERO, f64x8::splat(1.0));
    let noise_factor = f64x8::splat(64.0 * f64::EPSILON);
    let mut failed = zero;
    for k in 0..d {
        let mut start = k;
        while start < d {
            let count = (d - start).min(ROW_CHUNK);
            match count {
                1 => update_row::<1>(a, ls, k, start),
                2 => update_row::<2>(a, ls, k, start),
                3 => update_row::<3>(a, ls, k, start),
                4 => update_row::<4>(a, ls, k, start),
                5 => update_row::<5>(a, ls, k, start),
                6 => update_row::<6>(a, ls, k, start),
                7 => update_row::<7>(a, ls, k, start),
                8 => update_row::<8>(a, ls, k, start),
                9 => update_row::<9>(a, ls, k, start),
                10 => update_row::<10>(a, ls, k, start),
                11 => update_row::<11>(a, ls, k, start),
                12 => update_row::<12>(a, ls, k, start),
                13 => update_row::<13>(a, ls, k, start),
                14 => update_row::<14>(a, ls, k, start),
                15 => update_row::<15>(a, ls, k, start),
                _ => update_row::<ROW_CHUNK>(a, ls, k, start),
            }
            start += count;
        }
        let row = &mut a[k * ls..k * ls + d];
        let pivot = row[k];
        let mut bad = pivot.is_nan() | pivot.simd_le(zero);
        if let Some(diagonal) = original_diagonal {
            bad |= pivot.simd_le(noise_factor * diagonal[k]);
        }
        failed |= bad;
        // Failed lanes carry on with a pivot of 1 to stay finite; their results are dropped.
        let root = failed.select(one, pivot).sqrt();
        row[k] = root;
        let inverse = one / root;
        for v in &mut row[k + 1..] {
            *v *= inverse;
        }
    }
    // Forward substitution Uᵀz = b, then back substitution Uw = z, as in the portable kernel.
    for k in 0..d {
        let row = &a[k * ls..k * ls + d];
        let z = b[k] / row[k];
        b[k] = z;
        let minus_z = -z;
        for (t, &u) in b[k + 1..d].iter_mut().zip(&row[k + 1..]) {
            *t = minus_z.mul_add(u, *t);
        }
    }
    for i in (0..d).rev() {
        let w = b[i] / a[i * ls + i];
        b[i] = w;
        for r in 0..i {
            b[r] = (-a[r * ls + i]).mul_add(w, b[r]);
        }
    }
    let failed = failed.to_bitmask();
    std::array::from_fn(|l| failed & (1 << l) == 0)
}

/// Entries `start..start + N` of row `k`: `A[k][c] − Σ_{i<k} U[i][k] U[i][c]`, summed in
/// order `i = 0, 1, …`, each sum in its own register.
#[inline(always)]
fn update_row<const N: usize>(a: &mut [f64x8], ls: usize, k: usize, start: usize) {
    let (above, here) = a.split_at_mut(k * ls);
    let slots: &mut [f64x8; N] = (&mut here[start..start + N])
        .try_into()
        .expect("inside the row");
    let mut acc = *slots;
    for upper in above.chunks_exact(ls) {
        let f = -upper[k];
        let upper: &[f64x8; N] = upper[start..start + N].try_into().expect("inside the row");
        for q in 0..N {
            acc[q] = f.mul_add(upper[q], acc[q]);
        }
    }
    *slots = acc;
}

/// Lays the Gram matrices and right-hand sides of a batch (row stride `s`, one per lane)
/// side by side: `lanes[i * ls + j]` gets entry `(i, j)`, `j ≥ i`, of every system, and
/// `lane_rhs[i]` entry `i` of every right-hand side. Four columns of four systems at a time
/// go through a 4 × 4 transpose in registers; the padding columns up to `s` (= `ls`) are
/// copied too, and nothing reads them.
pub(super) fn interleave(
    gram: &[Vec<f64>; LANES],
    rhs: &[Vec<f64>; LANES],
    d: usize,
    s: usize,
    lanes: &mut [f64x8],
    ls: usize,
    lane_rhs: &mut [f64x8],
) {
    debug_assert_eq!(s, ls);
    let halves: &mut [[f64; 4]] = bytemuck::cast_slice_mut(lanes);
    for i in 0..d {
        for j in (i - i % 4..s).step_by(4) {
            let (low, high) = (
                transpose4(gram, 0, i * s + j),
                transpose4(gram, 4, i * s + j),
            );
            for c in 0..4 {
                let at = 2 * (i * ls + j + c);
                safe_arch::store_unaligned_m256d(&mut halves[at], low[c]);
                safe_arch::store_unaligned_m256d(&mut halves[at + 1], high[c]);
            }
        }
    }
    let halves: &mut [[f64; 4]] = bytemuck::cast_slice_mut(lane_rhs);
    let mut i = 0;
    while i + 4 <= d {
        let (low, high) = (transpose4(rhs, 0, i), transpose4(rhs, 4, i));
        for c in 0..4 {
            safe_arch::store_unaligned_m256d(&mut halves[2 * (i + c)], low[c]);
            safe_arch::store_unaligned_m256d(&mut halves[2 * (i + c) + 1], high[c]);
        }
        i += 4;
    }
    for c in i..d {
        lane_rhs[c] = f64x8::new(std::array::from_fn(|l| rhs[l][c]));
    }
}

/// Values `at..at + 4` of systems `first..first + 4` as four vectors, one per column, each
/// holding that column of the four systems: two 128-bit loads per register and one unpack
/// per column.
#[inline(always)]
fn transpose4(source: &[Vec<f64>; LANES], first: usize, at: usize) -> [safe_arch::m256d; 4] {
    let pair = |l: usize, c: usize| -> &[f64; 2] {
        source[first + l][at + c..at + c + 2]
            .try_into()
            .expect("two values")
    };
    // Low half from systems 0 and 1, high half from systems 2 and 3.
    let t0 = safe_arch::load_unaligned_hi_lo_m256d(pair(2, 0), pair(0, 0));
    let t1 = safe_arch::load_unaligned_hi_lo_m256d(pair(3, 0), pair(1, 0));
    let t2 = safe_arch::load_unaligned_hi_lo_m256d(pair(2, 2), pair(0, 2));
    let t3 = safe_arch::load_unaligned_hi_lo_m256d(pair(3, 2), pair(1, 2));
    [
        safe_arch::unpack_lo_m256d(t0, t1),
        safe_arch::unpack_hi_m256d(t0, t1),
        safe_arch::unpack_lo_m256d(t2, t3),
        safe_arch::unpack_hi_m256d(t2, t3),
    ]
}
