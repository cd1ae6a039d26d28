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

use wide::f64x8;

#[cfg(all(
    target_arch = "x86_64",
    target_feature = "avx512f",
    target_feature = "fma"
))]
mod avx512;

/// Whether this build has the 512-bit kernels of the `avx512` module.
pub const WIDE_KERNELS: bool = cfg!(all(
    target_arch = "x86_64",
    target_feature = "avx512f",
    target_feature = "fma"
));

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

/// Tiles of the right-hand side one pass keeps in registers.
const RHS_BLOCK: usize = 8;

/// Most tiles one panel pass keeps in registers: 4 × 2 tiles are 8 vector accumulators,
/// which with the row's two right tiles and a broadcast fit the 16 vector registers of a
/// 256-bit build. Wider panels spill accumulators to the stack on every row: 6 tiles ran
/// the rank-32 fit at half the speed (`cargo bench --bench fit -- --ranks=32`).
const PANEL: usize = 2;

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
/// multiple of [`TILE`], columns past the rank zero). Writes `gram[r * s + c]` for every
/// tile on or above the diagonal, and `rhs[0..s]`; every entry is one chain of fused
/// multiply-adds over the rows in order.
pub fn gram_and_rhs(x: &[f64], s: usize, y: &[f64], gram: &mut [f64], rhs: &mut [f64]) {
    debug_assert!(s.is_multiple_of(TILE) && x.len() == y.len() * s);
    gram_panels(x, s, gram);
    rhs_and_sums::<RHS_BLOCK, false>(x, s, y, rhs, &mut []);
}

/// [`gram_and_rhs`], and the rows' sum `sums[..d] = Σ_k x_k` (`d ≤ s` the width of
/// `sums`), each entry one chain of additions over the rows in order.
#[cfg(not(all(
    target_arch = "x86_64",
    target_feature = "avx512f",
    target_feature = "fma"
)))]
fn gram_rhs_and_sums(
    x: &[f64],
    s: usize,
    y: &[f64],
    gram: &mut [f64],
    rhs: &mut [f64],
    sums: &mut [f64],
) {
    debug_assert!(s.is_multiple_of(TILE) && x.len() == y.len() * s);
    gram_panels(x, s, gram);
    // Half the blocks' width, so the sums' accumulators stay in registers too.
    rhs_and_sums::<{ RHS_BLOCK / 2 }, true>(x, s, y, rhs, sums);
}

/// The upper triangle of `XᵀX` by panels.
fn gram_panels(x: &[f64], s: usize, gram: &mut [f64]) {
    // Panels of 4 rows × up to 8 columns, all their accumulators in registers.
    for rb in (0..s).step_by(TILE) {
        for cb in (rb..s).step_by(PANEL * TILE) {
            match ((s - cb) / TILE).min(PANEL) {
                1 => panel::<1>(x, s, rb, cb, gram),
                _ => panel::<PANEL>(x, s, rb, cb, gram),
            }
        }
    }
}

/// `Xᵀy` into `rhs[..s]` and, when `SUMS`, `Xᵀ1` into `sums` (as much of it as `sums`
/// holds), in blocks of `BLOCK` tiles held in registers (a running sum in memory would
/// chain every row's update through a store and a reload); one chain per entry.
fn rhs_and_sums<const BLOCK: usize, const SUMS: bool>(
    x: &[f64],
    s: usize,
    y: &[f64],
    rhs: &mut [f64],
    sums: &mut [f64],
) {
    let n = y.len();
    let row = |k: usize| &x[k * s..(k + 1) * s];
    for cb in (0..s).step_by(BLOCK * TILE) {
        let count = ((s - cb) / TILE).min(BLOCK);
        let mut acc = [[0.0f64; TILE]; BLOCK];
        let mut total = [[0.0f64; TILE]; BLOCK];
        for k in 0..n {
            let x = row(k);
            for v in 0..count {
                let t = tile(x, cb + v * TILE);
                for c in 0..TILE {
                    acc[v][c] = y[k].mul_add(t[c], acc[v][c]);
                    if SUMS {
                        total[v][c] += t[c];
                    }
                }
            }
        }
        for v in 0..count {
            rhs[cb + v * TILE..cb + (v + 1) * TILE].copy_from_slice(&acc[v]);
            if SUMS {
                for (c, &value) in total[v].iter().enumerate() {
                    if let Some(sum) = sums.get_mut(cb + v * TILE + c) {
                        *sum = value;
                    }
                }
            }
        }
    }
}

/// Reusable buffers of [`normal_equations`]: the gathered rows of the wider ranks.
#[derive(Debug, Clone, Default)]
pub struct Scratch {
    #[cfg(all(
        target_arch = "x86_64",
        target_feature = "avx512f",
        target_feature = "fma"
    ))]
    panel: Vec<f64x8>,
    #[cfg(not(all(
        target_arch = "x86_64",
        target_feature = "avx512f",
        target_feature = "fma"
    )))]
    gathered: Vec<f64>,
}

/// [`normal_equations`] of the rows scaled by `scale` (row `k` of `X` is `scale[k]` times
/// row `rows[k]` of `table`), for weighted problems: `XᵀX = Σ scale² x xᵀ`. The portable
/// kernels scale each row as they read it (in registers up to rank 12, in the gather's
/// copy above); the 512-bit ones likewise, in registers up to rank 16 and in the copy
/// into the panel above it.
#[allow(clippy::too_many_arguments)]
pub fn scaled_normal_equations(
    table: &[f64],
    d: usize,
    rows: &[u32],
    scale: &[f64],
    y: &[f64],
    scratch: &mut Scratch,
    gram: &mut [f64],
    rhs: &mut [f64],
) {
    #[cfg(not(all(
        target_arch = "x86_64",
        target_feature = "avx512f",
        target_feature = "fma"
    )))]
    {
        // The rows are scaled as they are read: in registers by the direct kernels, in the
        // copy the wider ranks' gather makes anyway.
        if !scaled_direct(table, d, (rows, y, scale), gram, rhs) {
            let (n, s) = (y.len(), round_up(d, TILE));
            gather_scaled(table, d, rows, Some(scale), n, &mut scratch.gathered);
            gram_and_rhs(&scratch.gathered[..n * s], s, y, gram, rhs);
        }
    }
    #[cfg(all(
        target_arch = "x86_64",
        target_feature = "avx512f",
        target_feature = "fma"
    ))]
    if wide_direct::<false, true>(table, d, (rows, y, scale), gram, rhs, &mut []).is_none() {
        avx512::gram_and_rhs(
            table,
            (rows, y),
            avx512::Extra::Scales(scale),
            &mut scratch.panel,
            avx512::Out {
                gram,
                s: round_up(d, TILE),
                d,
            },
            rhs,
        );
    }
}

/// Upper triangle of `XᵀX` and `Xᵀy`, where row `k` of `X` is row `rows[k]` of the
/// row-major `table` (width `d`): the normal equations of one ridge problem, without the
/// ridge term. The problem has `y.len()` rows; `rows` may run on past them (into the rows
/// of the problem solved next), and those are only announced to the cache ahead of time. `gram` has row stride `round_up(d, TILE)`, `rhs` at least that many values;
/// entries `(i, j)`, `i ≤ j < d`, and `rhs[0..d]` are written. Every entry is one chain of
/// fused multiply-adds over the rows in order, whichever kernel runs.
pub fn normal_equations(
    table: &[f64],
    d: usize,
    rows: &[u32],
    y: &[f64],
    scratch: &mut Scratch,
    gram: &mut [f64],
    rhs: &mut [f64],
) {
    if gram_and_rhs_direct(table, d, rows, y, gram, rhs) {
        return;
    }
    let s = round_up(d, TILE);
    #[cfg(all(
        target_arch = "x86_64",
        target_feature = "avx512f",
        target_feature = "fma"
    ))]
    avx512::gram_and_rhs(
        table,
        (rows, y),
        avx512::Extra::Plain,
        &mut scratch.panel,
        avx512::Out { gram, s, d },
        rhs,
    );
    #[cfg(not(all(
        target_arch = "x86_64",
        target_feature = "avx512f",
        target_feature = "fma"
    )))]
    {
        gather(table, d, rows, y.len(), &mut scratch.gathered);
        gram_and_rhs(&scratch.gathered[..y.len() * s], s, y, gram, rhs);
    }
}

/// Copies the vectors of `rows[..n]` into zero-padded rows of a tile-multiple width `s`: one
/// pass over scattered memory, then every pass of the Gram kernel reads from cache. Every
/// value is written, so the buffer only grows and is never cleared.
pub fn gather(table: &[f64], d: usize, rows: &[u32], n: usize, gathered: &mut Vec<f64>) {
    gather_scaled(table, d, rows, None, n, gathered);
}

/// [`gather`], each row multiplied by its `scale` as it is copied (when given).
pub fn gather_scaled(
    table: &[f64],
    d: usize,
    rows: &[u32],
    scale: Option<&[f64]>,
    n: usize,
    gathered: &mut Vec<f64>,
) {
    let s = round_up(d, TILE);
    if gathered.len() < n * s {
        gathered.resize(n * s, 0.0);
    }
    let gathered = &mut gathered[..n * s];
    let whole = d - d % TILE;
    for (k, (slot, &r)) in gathered.chunks_exact_mut(s).zip(rows).enumerate() {
        prefetch_ahead(table, d, rows, k);
        let source = &table[r as usize * d..(r as usize + 1) * d];
        if let Some(scale) = scale {
            let c = scale[k];
            for (to, &from) in slot[..d].iter_mut().zip(source) {
                *to = from * c;
            }
            slot[d..].fill(0.0);
            continue;
        }
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

/// [`gram_and_rhs`] for ranks up to 16 with the 512-bit kernels (two registers per row),
/// 12 otherwise, reading the rows straight from the row-major `table` (width `d`) through
/// `rows`: no copy. Every accumulator of the upper triangle and of the right-hand side stays
/// in a register through a single pass. `gram` and `rhs` have the stride
/// `round_up(d, TILE)`. Returns false for larger ranks.
pub fn gram_and_rhs_direct(
    table: &[f64],
    d: usize,
    rows: &[u32],
    y: &[f64],
    gram: &mut [f64],
    rhs: &mut [f64],
) -> bool {
    #[cfg(all(
        target_arch = "x86_64",
        target_feature = "avx512f",
        target_feature = "fma"
    ))]
    {
        wide_direct::<false, false>(table, d, (rows, y, &[]), gram, rhs, &mut []).is_some()
    }
    #[cfg(not(all(
        target_arch = "x86_64",
        target_feature = "avx512f",
        target_feature = "fma"
    )))]
    {
        portable_direct(table, d, rows, y, gram, rhs)
    }
}

/// The 512-bit direct kernels by rank (up to 16, two registers per row above 8): plain, with
/// a free offset (`SUMS`) or with scaled rows (`SCALED`); see [`avx512::direct_and_sums`].
/// `None`, writing nothing, above rank 16.
#[cfg(all(
    target_arch = "x86_64",
    target_feature = "avx512f",
    target_feature = "fma"
))]
fn wide_direct<const SUMS: bool, const SCALED: bool>(
    table: &[f64],
    d: usize,
    problem: (&[u32], &[f64], &[f64]),
    gram: &mut [f64],
    rhs: &mut [f64],
    sums: &mut [f64],
) -> Option<f64> {
    let (t, p, h, u) = (table, problem, rhs, sums);
    let g = avx512::Out {
        gram,
        s: round_up(d, TILE),
        d,
    };
    Some(match d {
        1 => avx512::direct_and_sums::<1, 1, SUMS, SCALED>(t, p, g, h, u),
        2 => avx512::direct_and_sums::<2, 1, SUMS, SCALED>(t, p, g, h, u),
        3 => avx512::direct_and_sums::<3, 1, SUMS, SCALED>(t, p, g, h, u),
        4 => avx512::direct_and_sums::<4, 1, SUMS, SCALED>(t, p, g, h, u),
        5 => avx512::direct_and_sums::<5, 1, SUMS, SCALED>(t, p, g, h, u),
        6 => avx512::direct_and_sums::<6, 1, SUMS, SCALED>(t, p, g, h, u),
        7 => avx512::direct_and_sums::<7, 1, SUMS, SCALED>(t, p, g, h, u),
        8 => avx512::direct_and_sums::<8, 1, SUMS, SCALED>(t, p, g, h, u),
        9 => avx512::direct_and_sums::<9, 2, SUMS, SCALED>(t, p, g, h, u),
        10 => avx512::direct_and_sums::<10, 2, SUMS, SCALED>(t, p, g, h, u),
        11 => avx512::direct_and_sums::<11, 2, SUMS, SCALED>(t, p, g, h, u),
        12 => avx512::direct_and_sums::<12, 2, SUMS, SCALED>(t, p, g, h, u),
        13 => avx512::direct_and_sums::<13, 2, SUMS, SCALED>(t, p, g, h, u),
        14 => avx512::direct_and_sums::<14, 2, SUMS, SCALED>(t, p, g, h, u),
        15 => avx512::direct_and_sums::<15, 2, SUMS, SCALED>(t, p, g, h, u),
        16 => avx512::direct_and_sums::<16, 2, SUMS, SCALED>(t, p, g, h, u),
        _ => return None,
    })
}

/// The portable form of [`gram_and_rhs_direct`] (ranks up to 12), also used by the tests
/// to check the 512-bit kernels bit for bit.
pub fn portable_direct(
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

/// How many rows ahead the kernels ask for the next vectors: callers that solve problems
/// one after another pass this many rows of the next problem after each problem's own.
pub const LOOKAHEAD: usize = 16;

/// Rows are scattered over a table larger than the caches: starts loading the row that
/// comes [`LOOKAHEAD`] places after `k` in `rows` (width `d`), so its cache misses overlap
/// with the work on the rows before it.
#[inline]
pub(crate) fn prefetch_ahead(table: &[f64], d: usize, rows: &[u32], k: usize) {
    if let Some(&ahead) = rows.get(k + LOOKAHEAD) {
        let at = ahead as usize * d;
        if let Some(row) = table.get(at..at + d) {
            prefetch(row);
        }
    }
}

/// Row `k`'s target in a problem `(rows, y, known)`: `y[k]`, or with `SUMS` (a problem with
/// a free offset) `y[k] − known[rows[k]]`. The offsets are scattered like the rows and are
/// asked for [`LOOKAHEAD`] rows ahead too (that took a fifth off the cost of biases at rank
/// 10 on the 512-bit kernels).
#[inline]
pub(crate) fn row_target<const SUMS: bool>(
    (rows, y, known): (&[u32], &[f64], &[f64]),
    k: usize,
) -> f64 {
    if SUMS {
        prefetch_ahead(known, 1, rows, k);
        y[k] - known[rows[k] as usize]
    } else {
        y[k]
    }
}

/// Asks the CPU to start loading the cache lines of `row`, so a row read a few steps later
/// is already on its way. Only a hint: it cannot change any result, and it retires at once
/// (a plain read would hold up every instruction behind it until its cache miss is served).
#[inline]
fn prefetch(row: &[f64]) {
    #[cfg(target_arch = "x86_64")]
    {
        // One hint per 64-byte cache line (8 values), plus the last value: rows need not
        // start on a line, so the last one may sit on a line of its own.
        let mut at = 0;
        while at < row.len() {
            safe_arch::prefetch_t0(&row[at]);
            at += 8;
        }
        if let Some(last) = row.last() {
            safe_arch::prefetch_t0(last);
        }
    }
    #[cfg(not(target_arch = "x86_64"))]
    let _ = row;
}

/// One pass over rows of width `D`, padded in registers to the tile-multiple `S`.
fn direct<const D: usize, const S: usize>(
    table: &[f64],
    rows: &[u32],
    y: &[f64],
    gram: &mut [f64],
    rhs: &mut [f64],
) {
    direct_and_sums::<D, S, false, false>(table, (rows, y, &[]), gram, rhs, &mut []);
}

/// [`gram_and_rhs_direct`] of rows scaled by `scale` (row `k` times `scale[k]`, multiplied
/// in registers as it is read). False, writing nothing, above the direct ranks.
#[cfg(not(all(
    target_arch = "x86_64",
    target_feature = "avx512f",
    target_feature = "fma"
)))]
fn scaled_direct(
    table: &[f64],
    d: usize,
    (rows, y, scale): (&[u32], &[f64], &[f64]),
    gram: &mut [f64],
    rhs: &mut [f64],
) -> bool {
    let (t, p, g, h) = (table, (rows, y, scale), gram, rhs);
    match d {
        1 => direct_and_sums::<1, 4, false, true>(t, p, g, h, &mut []),
        2 => direct_and_sums::<2, 4, false, true>(t, p, g, h, &mut []),
        3 => direct_and_sums::<3, 4, false, true>(t, p, g, h, &mut []),
        4 => direct_and_sums::<4, 4, false, true>(t, p, g, h, &mut []),
        5 => direct_and_sums::<5, 8, false, true>(t, p, g, h, &mut []),
        6 => direct_and_sums::<6, 8, false, true>(t, p, g, h, &mut []),
        7 => direct_and_sums::<7, 8, false, true>(t, p, g, h, &mut []),
        8 => direct_and_sums::<8, 8, false, true>(t, p, g, h, &mut []),
        9 => direct_and_sums::<9, 12, false, true>(t, p, g, h, &mut []),
        10 => direct_and_sums::<10, 12, false, true>(t, p, g, h, &mut []),
        11 => direct_and_sums::<11, 12, false, true>(t, p, g, h, &mut []),
        12 => direct_and_sums::<12, 12, false, true>(t, p, g, h, &mut []),
        _ => return false,
    };
    true
}

/// [`gram_and_rhs_direct`] for a problem with a free offset, in the same pass: the targets
/// are `y_k − known[rows[k]]` (the rows' known offsets taken off as each row is read), and
/// it writes `sums[..d] = Σ_k x_k` and returns `Σ_k (y_k − known[rows[k]])`, every sum in
/// row order. `None`, writing nothing, above the direct ranks (12; 16 in the 512-bit
/// builds).
fn gram_rhs_and_sums_direct(
    table: &[f64],
    d: usize,
    (rows, y, known): (&[u32], &[f64], &[f64]),
    gram: &mut [f64],
    rhs: &mut [f64],
    sums: &mut [f64],
) -> Option<f64> {
    #[cfg(all(
        target_arch = "x86_64",
        target_feature = "avx512f",
        target_feature = "fma"
    ))]
    {
        wide_direct::<true, false>(table, d, (rows, y, known), gram, rhs, sums)
    }
    #[cfg(not(all(
        target_arch = "x86_64",
        target_feature = "avx512f",
        target_feature = "fma"
    )))]
    {
        let (t, p, g, h, s) = (table, (rows, y, known), gram, rhs, sums);
        Some(match d {
            1 => direct_and_sums::<1, 4, true, false>(t, p, g, h, s),
            2 => direct_and_sums::<2, 4, true, false>(t, p, g, h, s),
            3 => direct_and_sums::<3, 4, true, false>(t, p, g, h, s),
            4 => direct_and_sums::<4, 4, true, false>(t, p, g, h, s),
            5 => direct_and_sums::<5, 8, true, false>(t, p, g, h, s),
            6 => direct_and_sums::<6, 8, true, false>(t, p, g, h, s),
            7 => direct_and_sums::<7, 8, true, false>(t, p, g, h, s),
            8 => direct_and_sums::<8, 8, true, false>(t, p, g, h, s),
            9 => direct_and_sums::<9, 12, true, false>(t, p, g, h, s),
            10 => direct_and_sums::<10, 12, true, false>(t, p, g, h, s),
            11 => direct_and_sums::<11, 12, true, false>(t, p, g, h, s),
            12 => direct_and_sums::<12, 12, true, false>(t, p, g, h, s),
            _ => return None,
        })
    }
}

/// The normal equations of a problem with a free offset (see
/// [`super::solve::RidgeWorkspace::solve_batch_with_offsets`]): the upper triangle of `XᵀX`
/// and `Xᵀy'` for the targets `y'_k = y_k − known[rows[k]]`, the rows' sum
/// `sums[..d] = Σ_k x_k`, and the return value `Σ_k y'_k`. One pass over the rows where a
/// kernel allows (the direct kernels, or the gather of the wider ranks); every sum is in
/// row order, so the bits do not depend on which path ran.
#[allow(clippy::too_many_arguments)]
pub fn normal_equations_with_offsets(
    table: &[f64],
    d: usize,
    (rows, y, known): (&[u32], &[f64], &[f64]),
    scratch: &mut Scratch,
    adjusted: &mut Vec<f64>,
    gram: &mut [f64],
    rhs: &mut [f64],
    sums: &mut [f64],
) -> f64 {
    if let Some(total) = gram_rhs_and_sums_direct(table, d, (rows, y, known), gram, rhs, sums) {
        return total;
    }
    #[cfg(not(all(
        target_arch = "x86_64",
        target_feature = "avx512f",
        target_feature = "fma"
    )))]
    {
        let (n, s) = (y.len(), round_up(d, TILE));
        let total = adjusted_targets((rows, y, known), adjusted);
        gather(table, d, rows, n, &mut scratch.gathered);
        // The rows' sums in registers beside the right-hand side: summed in the gather's
        // copy instead, every row's update went through memory (+8% on a rank-32 fit).
        gram_rhs_and_sums(
            &scratch.gathered[..n * s],
            s,
            adjusted,
            gram,
            rhs,
            &mut sums[..d],
        );
        total
    }
    #[cfg(all(
        target_arch = "x86_64",
        target_feature = "avx512f",
        target_feature = "fma"
    ))]
    {
        // The first pass over the rows adjusts the targets as it goes: no buffer.
        let _ = adjusted;
        avx512::gram_and_rhs(
            table,
            (rows, y),
            avx512::Extra::Offsets {
                known,
                sums: &mut sums[..d],
            },
            &mut scratch.panel,
            avx512::Out {
                gram,
                s: round_up(d, TILE),
                d,
            },
            rhs,
        )
    }
}

/// The targets of a problem with a free offset less the rows' known offsets, into
/// `adjusted`; returns their sum (in row order).
#[cfg(not(all(
    target_arch = "x86_64",
    target_feature = "avx512f",
    target_feature = "fma"
)))]
fn adjusted_targets((rows, y, known): (&[u32], &[f64], &[f64]), adjusted: &mut Vec<f64>) -> f64 {
    adjusted.clear();
    adjusted.extend(y.iter().zip(rows).map(|(&t, &r)| t - known[r as usize]));
    adjusted.iter().fold(-0.0, |a, &b| a + b)
}

/// `sum = Σ_k table[rows[k]]` (rows of width `d`), each column one chain of additions in
/// row order — the order every kernel uses, so a fit with biases has the same bits
/// whichever kernel built its sums.
#[cfg(test)]
fn row_sums(table: &[f64], d: usize, rows: &[u32], sum: &mut [f64]) {
    let sum = &mut sum[..d];
    sum.fill(0.0);
    for &r in rows {
        for (s, &x) in sum
            .iter_mut()
            .zip(&table[r as usize * d..r as usize * d + d])
        {
            *s += x;
        }
    }
}

/// [`direct`], also (when `SUMS`) taking the rows' known offsets `known[rows[k]]` off the
/// targets, summing the rows into `sums` and returning the adjusted targets' sum, or (when
/// `SCALED`) multiplying row `k` by `extra[k]` as it is read (the Gram and right-hand side
/// are the same operations in the same order either way).
fn direct_and_sums<const D: usize, const S: usize, const SUMS: bool, const SCALED: bool>(
    table: &[f64],
    problem: (&[u32], &[f64], &[f64]),
    gram: &mut [f64],
    rhs: &mut [f64],
    sums: &mut [f64],
) -> f64 {
    if S <= 8 {
        return direct_pass::<D, S, 0, D, true, SUMS, SCALED>(table, problem, gram, rhs, sums);
    }
    // Three tiles a row: the whole triangle's 22 vector accumulators and the right-hand
    // side's 3 do not fit 16 registers, and spilled ones go through memory on every row.
    // So three passes, each with its accumulators in registers: the first tile-row of the
    // triangle (reading the scattered rows, which then sit in the first-level cache), the
    // rest of it, and the right-hand side with the sums. A rank-10 fit: 0.0295 → 0.0236 s
    // on a 256-bit AMD machine, unchanged on an Intel one (`cargo bench --bench fit`).
    direct_pass::<D, S, 0, TILE, false, false, SCALED>(table, problem, gram, rhs, sums);
    direct_pass::<D, S, TILE, D, false, false, SCALED>(table, problem, gram, rhs, sums);
    direct_pass::<D, S, D, D, true, SUMS, SCALED>(table, problem, gram, rhs, sums)
}

/// One pass of [`direct_and_sums`] over the rows: the Gram rows `A0..A1` (from the start of
/// each one's tile to `S`), and when `RIGHT` the right-hand side (and the sums, when `SUMS`).
/// The first pass of a problem asks for its rows ahead; later ones find them in cache.
fn direct_pass<
    const D: usize,
    const S: usize,
    const A0: usize,
    const A1: usize,
    const RIGHT: bool,
    const SUMS: bool,
    const SCALED: bool,
>(
    table: &[f64],
    (rows, y, extra): (&[u32], &[f64], &[f64]),
    gram: &mut [f64],
    rhs: &mut [f64],
    sums: &mut [f64],
) -> f64 {
    // The rows' sums and the targets' sum are kept beside the Gram accumulators, each one
    // chain of additions in row order. (Summing through a padding column set to 1 was tried:
    // the compiler then splits the last tile and spills more, +30% on the rank-10 pass.)
    let mut acc = [[0.0f64; S]; D];
    let mut right = [0.0f64; S];
    let mut total = [0.0f64; S];
    let mut target_total = -0.0;
    for (k, &r) in rows.iter().take(y.len()).enumerate() {
        if A0 == 0 {
            prefetch_ahead(table, D, rows, k);
        }
        let target = row_target::<SUMS>((rows, y, extra), k);
        if SUMS {
            target_total += target;
        }
        let start = r as usize * D;
        let vector: &[f64; D] = table[start..start + D]
            .try_into()
            .expect("row inside the table");
        let mut row = [0.0f64; S];
        if SCALED {
            let c = extra[k];
            for (to, &from) in row[..D].iter_mut().zip(vector) {
                *to = from * c;
            }
        } else {
            row[..D].copy_from_slice(vector);
        }
        for a in A0..A1 {
            // Only tiles on or above the diagonal: columns from the start of a's tile. Rows
            // past D are padding and need no accumulators.
            for c in (a - a % TILE)..S {
                acc[a][c] = row[a].mul_add(row[c], acc[a][c]);
            }
        }
        if RIGHT {
            for c in 0..S {
                right[c] = target.mul_add(row[c], right[c]);
            }
        }
        if SUMS {
            for c in 0..D {
                total[c] += row[c];
            }
        }
    }
    for a in A0..A1 {
        let start = a - a % TILE;
        gram[a * S + start..(a + 1) * S].copy_from_slice(&acc[a][start..]);
    }
    if RIGHT {
        rhs[..S].copy_from_slice(&right);
    }
    if SUMS {
        sums[..D].copy_from_slice(&total[..D]);
    }
    target_total
}

/// Number of independent systems factored side by side, one per SIMD lane.
pub const BATCH: usize = 8;

/// One value per system of a batch.
pub type Lanes = [f64; BATCH];

/// Width of the column blocks of [`cholesky_solve_batch`]; the lane matrices have a row
/// stride rounded up to a multiple of it.
pub const COLUMN_BLOCK: usize = 4;

/// One value per system of a batch in a 64-byte aligned vector: the storage of the lane
/// matrices ([`interleave`], [`cholesky_solve`]).
pub type LaneVector = f64x8;

/// Lays the Gram matrices and right-hand sides of a batch (row stride `s`, one per lane)
/// side by side for [`cholesky_solve`]: `lanes[i * ls + j]` gets entry `(i, j)`, `j ≥ i`,
/// of every system (`ls = round_up(d, COLUMN_BLOCK)`), `lane_rhs[i]` entry `i` of every
/// right-hand side.
pub fn interleave(
    gram: &[Vec<f64>; BATCH],
    rhs: &[Vec<f64>; BATCH],
    d: usize,
    s: usize,
    lanes: &mut [LaneVector],
    lane_rhs: &mut [LaneVector],
) {
    let ls = round_up(d, COLUMN_BLOCK);
    #[cfg(all(
        target_arch = "x86_64",
        target_feature = "avx512f",
        target_feature = "fma"
    ))]
    avx512::interleave(gram, rhs, d, s, lanes, ls, lane_rhs);
    #[cfg(not(all(
        target_arch = "x86_64",
        target_feature = "avx512f",
        target_feature = "fma"
    )))]
    {
        for i in 0..d {
            for j in i..d {
                let at = i * s + j;
                lanes[i * ls + j] = f64x8::new(std::array::from_fn(|l| gram[l][at]));
            }
            lane_rhs[i] = f64x8::new(std::array::from_fn(|l| rhs[l][i]));
        }
    }
}

/// [`cholesky_solve_batch`] on aligned lane vectors, by the 512-bit kernel where the build
/// has it (the same bits either way).
pub fn cholesky_solve(
    a: &mut [LaneVector],
    b: &mut [LaneVector],
    d: usize,
    original_diagonal: Option<&[LaneVector]>,
) -> [bool; BATCH] {
    #[cfg(all(
        target_arch = "x86_64",
        target_feature = "avx512f",
        target_feature = "fma"
    ))]
    {
        avx512::cholesky_solve_batch(a, b, d, round_up(d, COLUMN_BLOCK), original_diagonal)
    }
    #[cfg(not(all(
        target_arch = "x86_64",
        target_feature = "avx512f",
        target_feature = "fma"
    )))]
    {
        cholesky_solve_batch(
            bytemuck::cast_slice_mut(a),
            bytemuck::cast_slice_mut(b),
            d,
            original_diagonal.map(bytemuck::cast_slice),
        )
    }
}

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

    #[test]
    fn rows_scaled_as_they_are_read_give_the_bits_of_rows_scaled_first() {
        // Weighted problems: the kernels scale each row in registers or in the gather;
        // the same Gram matrix and right-hand side as the plain kernels on a table of the
        // rows already scaled.
        let mut rng = crate::rng::Rng::new(9);
        // Past rank 64 the 512-bit gather scales the rows as it copies them.
        for d in (1..=40).chain([64, 65, 72, 81]) {
            let table: Vec<f64> = (0..30 * d).map(|_| rng.normal()).collect();
            let rows: Vec<u32> = (0..19).map(|_| rng.below(30) as u32).collect();
            let scale: Vec<f64> = (0..17).map(|_| 1.0 + 5.0 * rng.uniform()).collect();
            let y: Vec<f64> = (0..17).map(|_| rng.normal()).collect();
            let s = round_up(d, TILE);
            let (mut gram, mut rhs) = (vec![0.0; s * s], vec![0.0; s]);
            let mut scratch = Scratch::default();
            scaled_normal_equations(
                &table,
                d,
                &rows,
                &scale,
                &y,
                &mut scratch,
                &mut gram,
                &mut rhs,
            );
            let staged: Vec<f64> = rows
                .iter()
                .zip(&scale)
                .flat_map(|(&r, &c)| {
                    table[r as usize * d..(r as usize + 1) * d]
                        .iter()
                        .map(move |v| v * c)
                })
                .collect();
            let sequence: Vec<u32> = (0..17).collect();
            let (mut gram2, mut rhs2) = (vec![0.0; s * s], vec![0.0; s]);
            normal_equations(
                &staged,
                d,
                &sequence,
                &y,
                &mut scratch,
                &mut gram2,
                &mut rhs2,
            );
            for i in 0..d {
                for j in i..d {
                    assert_eq!(
                        gram[i * s + j].to_bits(),
                        gram2[i * s + j].to_bits(),
                        "rank {d}"
                    );
                }
                assert_eq!(rhs[i].to_bits(), rhs2[i].to_bits(), "rank {d}");
            }
        }
    }

    #[test]
    fn offsets_sums_and_targets_have_the_same_bits_on_every_path() {
        // The one-pass kernels (direct up to rank 12, or 16 on 512 bits; the summing Gram
        // pass above) against the
        // plain steps one by one: targets less the known offsets, the normal equations,
        // the rows' sum and the targets' sum, each in row order.
        let mut rng = crate::rng::Rng::new(5);
        // Past rank 64 the 512-bit gather copies the rows first and sums from the copy.
        for d in (1..=40).chain([64, 65, 72, 81]) {
            let table: Vec<f64> = (0..40 * d).map(|_| rng.normal() * 1e3).collect();
            let known: Vec<f64> = (0..40).map(|_| rng.normal()).collect();
            let rows: Vec<u32> = (0..23).map(|_| rng.below(40) as u32).collect();
            let y: Vec<f64> = (0..20).map(|_| rng.normal() * 3.0).collect();
            let s = round_up(d, TILE);
            let (mut gram, mut rhs, mut sums) = (vec![0.0; s * s], vec![0.0; s], vec![0.0; d]);
            let mut adjusted = Vec::new();
            let total = normal_equations_with_offsets(
                &table,
                d,
                (&rows, &y, &known),
                &mut Scratch::default(),
                &mut adjusted,
                &mut gram,
                &mut rhs,
                &mut sums,
            );
            let plain: Vec<f64> = y
                .iter()
                .zip(&rows)
                .map(|(&t, &r)| t - known[r as usize])
                .collect();
            let (mut gram2, mut rhs2, mut sums2) = (vec![0.0; s * s], vec![0.0; s], vec![0.0; d]);
            normal_equations(
                &table,
                d,
                &rows,
                &plain,
                &mut Scratch::default(),
                &mut gram2,
                &mut rhs2,
            );
            row_sums(&table, d, &rows[..y.len()], &mut sums2);
            let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
            let upper = |g: &[f64]| -> Vec<u64> {
                (0..d)
                    .flat_map(|i| (i..d).map(move |j| (i, j)))
                    .map(|(i, j)| g[i * s + j].to_bits())
                    .collect()
            };
            assert_eq!(upper(&gram), upper(&gram2), "rank {d}: gram");
            assert_eq!(bits(&rhs[..d]), bits(&rhs2[..d]), "rank {d}: rhs");
            assert_eq!(bits(&sums), bits(&sums2), "rank {d}: sums");
            let expected: f64 = plain.iter().sum();
            assert_eq!(total.to_bits(), expected.to_bits(), "rank {d}: total");
        }
    }

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
    fn every_kernel_gives_the_same_bits() {
        // The kernel chosen for a rank (direct or gathered, 512-bit or portable) must not
        // change a single bit: each is checked against the portable gathered kernel, and
        // all against a plain sum. Ranks cover every direct size, both sides of the switch
        // to gathering, and widths that are not whole vectors; row counts include 0 and 1.
        let mut rng = crate::rng::Rng::new(8);
        let mut scratch = Scratch::default();
        for d in (1..=40).chain([47, 64, 72, 129]) {
            for n in [0, 1, 17, 70] {
                let s = round_up(d, TILE);
                let table: Vec<f64> = (0..30 * d).map(|_| rng.normal()).collect();
                // The last row of the table is always used: no kernel may read past it.
                let rows: Vec<u32> = (0..n)
                    .map(|k| if k == 0 { 29 } else { rng.below(30) as u32 })
                    .collect();
                let y: Vec<f64> = rows.iter().map(|_| rng.normal()).collect();
                let (mut g1, mut h1) = (vec![f64::NAN; s * s], vec![f64::NAN; s]);
                normal_equations(&table, d, &rows, &y, &mut scratch, &mut g1, &mut h1);
                // Rows running on past the targets (the next problem's) change nothing.
                let mut longer = rows.clone();
                longer.extend([3, 29, 0]);
                let (mut g4, mut h4) = (vec![f64::NAN; s * s], vec![f64::NAN; s]);
                normal_equations(&table, d, &longer, &y, &mut scratch, &mut g4, &mut h4);
                let mut packed = Vec::new();
                gather(&table, d, &rows, n, &mut packed);
                let (mut g2, mut h2) = (vec![0.0; s * s], vec![0.0; s]);
                gram_and_rhs(&packed[..n * s], s, &y, &mut g2, &mut h2);
                let (mut g3, mut h3) = (vec![0.0; s * s], vec![0.0; s]);
                let direct = portable_direct(&table, d, &rows, &y, &mut g3, &mut h3);
                for a in 0..d {
                    assert_eq!(h1[a].to_bits(), h2[a].to_bits(), "d {d} n {n} rhs {a}");
                    assert_eq!(h1[a].to_bits(), h4[a].to_bits(), "d {d} n {n} rhs {a}");
                    assert!(!direct || h3[a].to_bits() == h2[a].to_bits(), "d {d} n {n}");
                    let naive_rhs: f64 = (0..n).map(|k| packed[k * s + a] * y[k]).sum();
                    assert!((h1[a] - naive_rhs).abs() < 1e-12, "d {d}");
                    for b in a..d {
                        let at = a * s + b;
                        assert_eq!(g1[at].to_bits(), g2[at].to_bits(), "d {d} n {n} ({a},{b})");
                        assert_eq!(g1[at].to_bits(), g4[at].to_bits(), "d {d} n {n} ({a},{b})");
                        assert!(
                            !direct || g3[at].to_bits() == g2[at].to_bits(),
                            "d {d} n {n}"
                        );
                        let naive: f64 =
                            (0..n).map(|k| packed[k * s + a] * packed[k * s + b]).sum();
                        assert!((g1[at] - naive).abs() < 1e-12, "d {d} ({a},{b})");
                    }
                }
            }
        }
        assert!(!portable_direct(
            &[0.0; 13],
            13,
            &[0],
            &[1.0],
            &mut [0.0; 256],
            &mut [0.0; 16]
        ));
    }

    #[test]
    fn interleaved_cholesky_gives_the_same_bits_by_either_kernel() {
        // Random ridge systems of many sizes, with lanes that must fail (a NaN, a negative
        // pivot, a singular matrix under the noise check): the kernel this build uses and
        // the portable one must agree to the bit, and the solutions must solve the systems.
        let mut rng = crate::rng::Rng::new(21);
        for d in (1..=20).chain([31, 32, 33, 40, 64]) {
            for noise_check in [false, true] {
                let s = round_up(d, TILE);
                let ls = round_up(d, COLUMN_BLOCK);
                let mut gram: [Vec<f64>; BATCH] = std::array::from_fn(|_| vec![0.0; s * s]);
                let mut rhs: [Vec<f64>; BATCH] = std::array::from_fn(|_| vec![0.0; s]);
                for l in 0..BATCH {
                    let x: Vec<f64> = (0..(d + 3) * d).map(|_| rng.normal()).collect();
                    for i in 0..d {
                        for j in i..d {
                            let dot: f64 = (0..d + 3).map(|k| x[k * d + i] * x[k * d + j]).sum();
                            gram[l][i * s + j] = dot + if i == j { 0.5 } else { 0.0 };
                        }
                        rhs[l][i] = rng.normal();
                    }
                }
                gram[1][0] = f64::NAN;
                gram[2][0] = -1.0;
                if d > 1 {
                    // Lane 3: the second column nearly repeats the first: a pivot of rounding
                    // size, refused only by the noise check.
                    gram[3][1] = gram[3][0];
                    gram[3][s + 1] = gram[3][0] * (1.0 + 1e-14);
                }
                let mut lanes = vec![LaneVector::ZERO; d * ls];
                let mut lane_rhs = vec![LaneVector::ZERO; d];
                interleave(&gram, &rhs, d, s, &mut lanes, &mut lane_rhs);
                let mut portable: Vec<Lanes> = vec![[0.0; BATCH]; d * ls];
                let mut portable_rhs: Vec<Lanes> = vec![[0.0; BATCH]; d];
                for i in 0..d {
                    for j in i..d {
                        portable[i * ls + j] = std::array::from_fn(|l| gram[l][i * s + j]);
                        let bits = |v: [f64; BATCH]| v.map(f64::to_bits);
                        assert_eq!(
                            bits(portable[i * ls + j]),
                            bits(lanes[i * ls + j].to_array())
                        );
                    }
                    portable_rhs[i] = std::array::from_fn(|l| rhs[l][i]);
                    assert_eq!(portable_rhs[i], lane_rhs[i].to_array());
                }
                let diagonal: Vec<LaneVector> = (0..d).map(|k| lanes[k * ls + k]).collect();
                let portable_diagonal: Vec<Lanes> = diagonal.iter().map(|v| v.to_array()).collect();
                let ok = cholesky_solve(
                    &mut lanes,
                    &mut lane_rhs,
                    d,
                    noise_check.then_some(diagonal.as_slice()),
                );
                let portable_ok = cholesky_solve_batch(
                    &mut portable,
                    &mut portable_rhs,
                    d,
                    noise_check.then_some(portable_diagonal.as_slice()),
                );
                assert_eq!(ok, portable_ok, "d {d}");
                assert!(!ok[1] && !ok[2], "d {d}");
                assert!(!(noise_check && d > 1 && ok[3]), "d {d}");
                for l in (0..BATCH).filter(|&l| ok[l]) {
                    for i in 0..d {
                        let got = lane_rhs[i].to_array()[l];
                        assert_eq!(
                            got.to_bits(),
                            portable_rhs[i][l].to_bits(),
                            "d {d} lane {l}"
                        );
                    }
                    if l == 3 {
                        continue;
                    }
                    for i in 0..d {
                        let entry = |i: usize, j: usize| gram[l][i.min(j) * s + i.max(j)];
                        let row: f64 = (0..d)
                            .map(|j| entry(i, j) * lane_rhs[j].to_array()[l])
                            .sum();
                        assert!((row - rhs[l][i]).abs() < 1e-8, "d {d} lane {l}");
                    }
                }
            }
        }
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
