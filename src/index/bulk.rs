//! Neighbours of every item at once, by blocked matrix products.
//!
//! One query at a time reads the whole catalogue per query; here a block of 64 queries
//! meets each cache-sized tile of the catalogue in a blocked matrix product (`X Qᵀ`, a
//! register-tiled kernel: 8 catalogue rows × 16 queries per step), so every vector read from
//! memory serves the whole block. The products give
//! distances by the expansion `‖q − x‖² = ‖q‖² + ‖x‖² − 2 q·x`, which rounds differently
//! from a direct sum; so they only *propose* candidates — everything within the k-th
//! proposed distance plus a bound on that rounding — and the candidates are then scored by
//! the same exact function the single queries use and ranked by (distance, row). The lists
//! are therefore identical to [`super::NeighbourIndex::nearest_to_row`] for every row.

use rayon::prelude::*;

use super::{Metric, Neighbour, squared_distance};
use crate::model::dot;

/// Queries handled side by side by the kernel (one SIMD-friendly lane each).
const LANES: usize = 16;
/// Lane groups per query block: a block of 64 queries shares every catalogue tile.
const GROUPS: usize = 4;
/// Catalogue rows per tile (kept in cache while every lane group of the block meets it).
const TILE: usize = 256;
/// Catalogue rows per kernel call.
const ROWS: usize = 8;

/// The products are proposals only, so they are computed in single precision (twice the
/// numbers per vector instruction); exact double-precision scores decide the lists.
type Lanes = [f32; LANES];

/// The `k` nearest neighbours of every row of `vectors` (row-major, `width` per row) under
/// `metric`, each leaving its own row out. Under cosine, rows of length zero have no
/// direction: their list is empty and they are nobody's neighbour.
pub fn all_neighbours(
    vectors: &[f64],
    width: usize,
    metric: Metric,
    k: usize,
) -> Vec<Vec<Neighbour>> {
    let count = vectors.len() / width.max(1);
    // More neighbours than other rows is every other row: memory follows the catalogue,
    // never the request.
    let k = k.min(count.saturating_sub(1));
    if count == 0 || width == 0 || k == 0 {
        return vec![Vec::new(); count];
    }
    // The searched points, exactly as the single-query index builds them.
    let (points, usable): (Vec<f64>, Vec<bool>) = match metric {
        Metric::Euclidean => (vectors.to_vec(), vec![true; count]),
        Metric::Cosine => {
            let mut points = Vec::with_capacity(vectors.len());
            let mut usable = Vec::with_capacity(count);
            for v in vectors.chunks_exact(width) {
                let norm = dot(v, v).sqrt();
                usable.push(norm > 0.0);
                if norm > 0.0 {
                    points.extend(v.iter().map(|x| x / norm));
                } else {
                    points.extend(std::iter::repeat_n(0.0, width));
                }
            }
            (points, usable)
        }
    };
    // Single-precision copies scaled so the longest vector has length 1: no overflow, and
    // what underflows is too small to move any comparison beyond the slack.
    let norms: Vec<f64> = points.chunks_exact(width).map(|p| dot(p, p)).collect();
    let longest = norms.iter().copied().fold(0.0f64, f64::max);
    let scale = if longest > 0.0 {
        1.0 / longest.sqrt()
    } else {
        1.0
    };
    let single: Vec<f32> = points.iter().map(|&v| (v * scale) as f32).collect();
    let norms: Vec<f64> = norms.iter().map(|n| n * scale * scale).collect();
    let largest = norms.iter().copied().fold(0.0f64, f64::max);
    let block_queries = LANES * GROUPS;
    let blocks: Vec<Vec<Vec<Neighbour>>> = (0..count.div_ceil(block_queries))
        .into_par_iter()
        .map(|b| {
            let first = b * block_queries;
            let last = (first + block_queries).min(count);
            let data = Data {
                points: &points,
                single: &single,
                norms: &norms,
                usable: &usable,
                d: width,
                largest,
            };
            block(&data, first..last, k)
        })
        .collect();
    blocks.into_iter().flatten().collect()
}

/// Every row's `k` nearest neighbours by the fastest exact path: where a k-d tree beats a
/// scan for single queries (low ranks, see [`super::NeighbourIndex`]) one tree query per row, in
/// parallel, since a tree visits a few hundred rows per query and a product visits all;
/// otherwise the blocked products of [`all_neighbours`]. The lists are the same either way.
pub fn all_neighbours_auto(
    vectors: &[f64],
    width: usize,
    metric: Metric,
    k: usize,
) -> Vec<Vec<Neighbour>> {
    let count = vectors.len() / width.max(1);
    let k = k.min(count.saturating_sub(1));
    let index = super::NeighbourIndex::build(vectors, width, metric, super::Path::Auto);
    if !index.uses_tree() {
        return all_neighbours(vectors, width, metric, k);
    }
    (0..count as u32)
        .into_par_iter()
        .map(|row| index.nearest_to_row(row, k).unwrap_or_default())
        .collect()
}

/// Dot products of `ROWS` consecutive rows (`x`, row-major, width `d`) with the `LANES`
/// queries packed in `qt` (`qt[k][l]` = coordinate k of query l).
#[inline]
fn dots(x: &[f32], qt: &[Lanes], d: usize) -> [Lanes; ROWS] {
    let mut acc = [[0.0f32; LANES]; ROWS];
    for (k, q) in qt.iter().enumerate().take(d) {
        for (r, a) in acc.iter_mut().enumerate() {
            let xv = x[r * d + k];
            for l in 0..LANES {
                a[l] = xv.mul_add(q[l], a[l]);
            }
        }
    }
    acc
}

/// The searched points in both precisions, with their squared norms.
struct Data<'a> {
    points: &'a [f64],
    single: &'a [f32],
    norms: &'a [f64],
    usable: &'a [bool],
    d: usize,
    largest: f64,
}

/// Neighbour lists of the queries `queries` (rows of `points`).
fn block(data: &Data<'_>, queries: std::ops::Range<usize>, k: usize) -> Vec<Vec<Neighbour>> {
    let Data {
        points,
        single,
        norms,
        usable,
        d,
        largest,
    } = *data;
    let count = norms.len();
    // Pack the block's queries lane by lane; missing lanes stay zero and are never read.
    let groups = queries.len().div_ceil(LANES);
    let mut packed = vec![[0.0f32; LANES]; groups * d];
    for (j, query) in queries.clone().enumerate() {
        let (g, l) = (j / LANES, j % LANES);
        for k in 0..d {
            packed[g * d + k][l] = single[query * d + k];
        }
    }
    let mut found: Vec<Candidates> = queries
        .clone()
        .map(|r| Candidates::new(k, norms[r], largest, d))
        .collect();
    // Rows past the last multiple of ROWS are padded with zeros through a small copy.
    let full = count - count % ROWS;
    let mut tail = vec![0.0f32; ROWS * d];
    tail[..(count - full) * d].copy_from_slice(&single[full * d..]);
    for tile_start in (0..count).step_by(TILE) {
        let tile_end = (tile_start + TILE).min(count);
        for g in 0..groups {
            let qt = &packed[g * d..(g + 1) * d];
            let lanes = (queries.len() - g * LANES).min(LANES);
            // Each lane's ‖q‖² and cut-off side by side, so the test below is one vector
            // comparison per catalogue row; missing lanes can never pass.
            let mut query_norms = [0.0f64; LANES];
            let mut bounds = [f64::NEG_INFINITY; LANES];
            for l in 0..lanes {
                query_norms[l] = found[g * LANES + l].query_norm;
                bounds[l] = found[g * LANES + l].bound;
            }
            for row0 in (tile_start..tile_end).step_by(ROWS) {
                let x = if row0 < full {
                    &single[row0 * d..(row0 + ROWS) * d]
                } else {
                    &tail[..]
                };
                let acc = dots(x, qt, d);
                for (r, a) in acc.iter().enumerate() {
                    let row = row0 + r;
                    if row >= tile_end {
                        break;
                    }
                    let rn = norms[row];
                    let mut hit = false;
                    for l in 0..LANES {
                        hit |= query_norms[l] + rn - 2.0 * f64::from(a[l]) <= bounds[l];
                    }
                    if !hit || !usable[row] {
                        continue;
                    }
                    for l in 0..lanes {
                        let approx = query_norms[l] + rn - 2.0 * f64::from(a[l]);
                        let query = queries.start + g * LANES + l;
                        if approx <= bounds[l] && row != query && usable[query] {
                            let c = &mut found[g * LANES + l];
                            c.push(row as u32, approx);
                            bounds[l] = c.bound;
                        }
                    }
                }
            }
        }
    }
    queries
        .zip(found)
        .map(|(query, c)| {
            if !usable[query] {
                return Vec::new();
            }
            let qp = &points[query * d..(query + 1) * d];
            let mut exact: Vec<(f64, u32)> = c
                .finish()
                .into_iter()
                .map(|row| {
                    let r = row as usize;
                    (squared_distance(qp, &points[r * d..(r + 1) * d]), row)
                })
                .collect();
            exact.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
            exact.truncate(k);
            exact
                .into_iter()
                .map(|(dist, row)| Neighbour {
                    row,
                    distance: dist.sqrt(),
                })
                .collect()
        })
        .collect()
}

/// Rows proposed for one query: every row whose proposed distance is within the k-th
/// smallest proposed distance plus a bound on the rounding of the expansion.
struct Candidates {
    k: usize,
    /// ‖q‖² of the query.
    query_norm: f64,
    /// Absolute slack covering the expansion's rounding for this query.
    slack: f64,
    /// Current cut-off (the k-th smallest proposed distance plus the slack).
    bound: f64,
    rows: Vec<(f64, u32)>,
}

impl Candidates {
    fn new(k: usize, query_norm: f64, largest: f64, d: usize) -> Self {
        Self {
            k,
            query_norm,
            // The single-precision dot product errs by at most about (d + 2) units of
            // 2⁻²⁴ times ‖q‖‖x‖ ≤ (‖q‖² + ‖x‖²)/2 (rounding of the inputs and of each
            // multiply-add); twice that bound, on both sides of the comparison, is safe.
            slack: 4.0 * (d as f64 + 2.0) * f64::from(f32::EPSILON) * (query_norm + largest)
                + f64::MIN_POSITIVE,
            bound: f64::INFINITY,
            rows: Vec::with_capacity(4 * k + 8),
        }
    }

    fn push(&mut self, row: u32, approx: f64) {
        self.rows.push((approx, row));
        if self.rows.len() >= 4 * self.k + 8 {
            self.prune();
        }
    }

    fn prune(&mut self) {
        if self.rows.len() <= self.k {
            return;
        }
        let kth = self.k - 1;
        self.rows
            .select_nth_unstable_by(kth, |a, b| a.0.total_cmp(&b.0));
        self.bound = self.rows[kth].0 + self.slack;
        let bound = self.bound;
        self.rows.retain(|&(d, _)| d <= bound);
    }

    fn finish(mut self) -> Vec<u32> {
        self.prune();
        self.rows.into_iter().map(|(_, r)| r).collect()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::index::{NeighbourIndex, Path};
    use crate::rng::Rng;

    #[test]
    fn tiny_and_huge_vectors_give_the_same_lists_too() {
        let mut rng = Rng::new(3);
        for magnitude in [1e-150, 1e-20, 1e20, 1e150] {
            let vectors: Vec<f64> = (0..400 * 6)
                .map(|i| {
                    rng.normal()
                        * if i % 37 == 0 {
                            magnitude * 1e-3
                        } else {
                            magnitude
                        }
                })
                .collect();
            for metric in [Metric::Euclidean, Metric::Cosine] {
                let index = NeighbourIndex::build(&vectors, 6, metric, Path::Scan);
                let bulk = all_neighbours(&vectors, 6, metric, 5);
                for (row, list) in bulk.iter().enumerate() {
                    assert_eq!(
                        list,
                        &index.nearest_to_row(row as u32, 5).unwrap(),
                        "{magnitude} {metric:?} {row}"
                    );
                }
            }
        }
    }

    #[test]
    fn bulk_lists_equal_single_queries_exactly() {
        let mut rng = Rng::new(11);
        for (count, width) in [(300usize, 3usize), (2500, 16), (700, 40)] {
            let mut vectors: Vec<f64> = (0..count * width).map(|_| rng.normal()).collect();
            // Duplicates and a zero vector: ties and the cosine exclusion.
            let copy: Vec<f64> = vectors[..width].to_vec();
            vectors[width..2 * width].copy_from_slice(&copy);
            vectors[5 * width..6 * width].fill(0.0);
            for metric in [Metric::Euclidean, Metric::Cosine] {
                let index = NeighbourIndex::build(&vectors, width, metric, Path::Scan);
                let bulk = all_neighbours(&vectors, width, metric, 7);
                for (row, list) in bulk.iter().enumerate() {
                    match index.nearest_to_row(row as u32, 7) {
                        Ok(single) => {
                            assert_eq!(list, &single, "{count}×{width} {metric:?} row {row}");
                        }
                        Err(_) => assert!(list.is_empty()),
                    }
                }
            }
        }
    }
}
