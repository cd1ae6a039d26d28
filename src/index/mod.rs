//! Exact nearest-neighbour search over user or item vectors.
//!
//! [`SpatialIndex`] answers exact Euclidean queries over a set of points either from a k-d
//! tree (kiddo; the points rotated onto their principal axes, one monomorphised tree per
//! width up to [`tree::MAX_TREE_WIDTH`]) or from a parallel scan. Both paths return
//! identical answers: the tree only proposes candidates — its k nearest plus everything
//! within a hair of the k-th distance — and every candidate is then scored by the same
//! exact function the scan uses and ranked by (score, row), so rounding in the tree and
//! ties at the k-th place cannot make the two disagree. Which path serves a set is chosen
//! by timing both on a sample of queries when the index is built ([`Path::Auto`]).
//!
//! [`NeighbourIndex`] adds the metric (Euclidean on raw vectors, or cosine as Euclidean on
//! unit-normalised copies) and [`InnerProductIndex`] exact top-N by inner product through
//! the Euclidean transform of Bachrach et al. (RecSys 2014).

pub mod bulk;
pub mod rotation;
pub mod tree;

use std::time::Instant;

use rayon::prelude::*;

use crate::model::dot;
use rotation::Rotation;
use tree::{KnnTree, MAX_TREE_WIDTH, build_tree};

/// Which search path an index uses.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Path {
    /// Time both on a sample of queries at build time and keep the faster.
    Auto,
    /// Always the k-d tree (where the width allows one).
    Tree,
    /// Always the parallel scan.
    Scan,
}

/// A scored row: lower scores rank first; ties go to the lower row number.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Scored {
    /// Row number in the indexed set.
    pub row: u32,
    /// The score (squared distance, or minus an inner product).
    pub score: f64,
}

fn ranks_before(a: &Scored, b: &Scored) -> std::cmp::Ordering {
    a.score.total_cmp(&b.score).then(a.row.cmp(&b.row))
}

/// The `k` best of `scored` by (score, row), best first.
fn best_k(mut scored: Vec<Scored>, k: usize) -> Vec<Scored> {
    if scored.len() > k {
        scored.select_nth_unstable_by(k, ranks_before);
        scored.truncate(k);
    }
    scored.sort_by(ranks_before);
    scored
}

/// The `k` best rows seen so far, kept sorted (small k: insertion beats a heap).
struct TopK {
    k: usize,
    best: Vec<Scored>,
}

impl TopK {
    fn new(k: usize) -> Self {
        Self {
            k,
            // Grows as needed: a huge k must not reserve memory the rows cannot fill.
            best: Vec::with_capacity(k.min(4096) + 1),
        }
    }

    #[inline]
    fn offer(&mut self, candidate: Scored) {
        if self.best.len() == self.k {
            match self.best.last() {
                Some(worst) if ranks_before(&candidate, worst).is_lt() => {}
                _ => return,
            }
            self.best.pop();
        }
        let at = self
            .best
            .partition_point(|b| ranks_before(b, &candidate).is_lt());
        self.best.insert(at, candidate);
    }
}

/// The `k` best rows among `rows` (all rows `0..total` when `None`) that `keep` accepts, by
/// (score, row). Large sets are scored in parallel chunks, each keeping only its own `k`
/// best, then merged.
pub fn rank_rows<F, K>(
    rows: Option<&[u32]>,
    total: usize,
    k: usize,
    keep: K,
    score: F,
) -> Vec<Scored>
where
    F: Fn(u32) -> f64 + Sync,
    K: Fn(u32) -> bool + Sync,
{
    const CHUNK: usize = 16_384;
    if k == 0 {
        return Vec::new();
    }
    let count = rows.map_or(total, <[u32]>::len);
    let row_at = |i: usize| rows.map_or(i as u32, |r| r[i]);
    let best_in = |range: std::ops::Range<usize>| {
        let mut top = TopK::new(k);
        for r in range.map(row_at).filter(|&r| keep(r)) {
            top.offer(Scored {
                row: r,
                score: score(r),
            });
        }
        top.best
    };
    if count <= CHUNK {
        return best_in(0..count);
    }
    let partial: Vec<Vec<Scored>> = (0..count.div_ceil(CHUNK))
        .into_par_iter()
        .map(|c| best_in(c * CHUNK..((c + 1) * CHUNK).min(count)))
        .collect();
    best_k(partial.into_iter().flatten().collect(), k)
}

/// Squared Euclidean distance, summed in a fixed order (four interleaved partial sums, so
/// the compiler can vectorise it; every path of the index uses this one function).
pub fn squared_distance(a: &[f64], b: &[f64]) -> f64 {
    let mut acc = [0.0f64; 4];
    let (head_a, tail_a) = a.split_at(a.len() - a.len() % 4);
    let (head_b, tail_b) = b.split_at(head_a.len());
    for (x, y) in head_a.chunks_exact(4).zip(head_b.chunks_exact(4)) {
        for l in 0..4 {
            let t = x[l] - y[l];
            acc[l] = t.mul_add(t, acc[l]);
        }
    }
    let tail: f64 = tail_a
        .iter()
        .zip(tail_b)
        .map(|(x, y)| (x - y) * (x - y))
        .sum();
    ((acc[0] + acc[1]) + (acc[2] + acc[3])) + tail
}

/// Exact Euclidean candidate search over a fixed set of points: a k-d tree where it is
/// faster, a scan otherwise.
pub struct SpatialIndex {
    width: usize,
    rows: usize,
    rotation: Option<Rotation>,
    tree: Option<Box<dyn KnnTree>>,
    /// Absolute slack added to the candidate radius: rounding in the rotated coordinates.
    slack: f64,
}

impl std::fmt::Debug for SpatialIndex {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("SpatialIndex")
            .field("width", &self.width)
            .field("rows", &self.rows)
            .field("tree", &self.tree.is_some())
            .finish_non_exhaustive()
    }
}

/// Candidates fetched beyond k, so that ties and rounding at the k-th place rarely need a
/// second (radius) query.
const EXTRA_CANDIDATES: usize = 8;

/// Queries timed per path when [`Path::Auto`] chooses.
const CALIBRATION_QUERIES: usize = 16;
/// How much faster than the scan the tree must be (median query time) to be chosen.
const TREE_MARGIN: f64 = 0.75;

/// Below this many points a scan is always fast enough (and trees are not worth building).
const SMALL_SET: usize = 2_048;

impl SpatialIndex {
    /// Indexes `points` (row-major, `width` per row). [`Path::Auto`] times both paths on
    /// a sample of the points themselves as queries.
    pub fn build(points: &[f64], width: usize, path: Path) -> Self {
        Self::build_for_queries(points, width, path, None)
    }

    /// As [`Self::build`], timing [`Path::Auto`] on `sample_queries` (row-major) instead,
    /// for sets whose queries do not look like their points.
    pub fn build_for_queries(
        points: &[f64],
        width: usize,
        path: Path,
        sample_queries: Option<&[f64]>,
    ) -> Self {
        let rows = points.len() / width.max(1);
        let mut index = Self {
            width,
            rows,
            rotation: None,
            tree: None,
            slack: 0.0,
        };
        let wants_tree = match path {
            Path::Scan => false,
            Path::Tree => true,
            Path::Auto => rows > SMALL_SET,
        };
        if !wants_tree || width > MAX_TREE_WIDTH || rows == 0 {
            return index;
        }
        let rotation = Rotation::principal_axes(points, width);
        let rotated = rotation.rotate_all(points);
        let largest = points
            .chunks_exact(width)
            .map(|p| dot(p, p))
            .fold(0.0, f64::max);
        index.slack = 1e-12 * largest.max(f64::MIN_POSITIVE);
        index.tree = build_tree(&rotated, width);
        index.rotation = Some(rotation);
        if path == Path::Auto
            && index.tree.is_some()
            && !index.tree_is_faster(points, sample_queries)
        {
            index.tree = None;
            index.rotation = None;
        }
        index
    }

    /// True when this index answers from a k-d tree.
    pub fn uses_tree(&self) -> bool {
        self.tree.is_some()
    }

    /// Number of points.
    pub fn len(&self) -> usize {
        self.rows
    }

    /// True when there are no points.
    pub fn is_empty(&self) -> bool {
        self.rows == 0
    }

    /// Rows that may be among the `k` nearest to `query`: `None` means every row (scan).
    /// The set always contains every row whose exact distance is at most the k-th smallest.
    pub fn candidates(&self, query: &[f64], k: usize) -> Option<Vec<u32>> {
        let (Some(tree), Some(rotation)) = (&self.tree, &self.rotation) else {
            return None;
        };
        if k == 0 || k >= self.rows {
            return None;
        }
        let mut rotated = vec![0.0; self.width];
        rotation.rotate(query, &mut rotated);
        // Ask for a few more than k: if the last of them lies beyond the k-th distance plus
        // the rounding allowance, every row that could tie with or undercut the k-th is
        // already among them. Otherwise (many ties) collect everything within the allowance.
        let extra = (k + EXTRA_CANDIDATES).min(self.rows);
        let nearest = tree.nearest(&rotated, extra);
        let kth = nearest.get(k - 1).map_or(0.0, |&(_, d)| d);
        let radius = kth * (1.0 + 1e-9) + self.slack;
        if nearest.len() == self.rows {
            return None;
        }
        if nearest.last().is_some_and(|&(_, d)| d > radius) {
            return Some(nearest.into_iter().map(|(r, _)| r).collect());
        }
        Some(tree.within(&rotated, radius))
    }

    /// Times tree and scan on a sample of queries (by default the points themselves) and
    /// compares the median query times, after one warm-up query each. The scan stops early
    /// once it is clearly slower, so choosing costs little.
    fn tree_is_faster(&self, points: &[f64], sample_queries: Option<&[f64]>) -> bool {
        let w = self.width;
        let source = sample_queries.unwrap_or(points);
        let step = (source.len() / w / CALIBRATION_QUERIES).max(1);
        let queries: Vec<&[f64]> = source
            .chunks_exact(w)
            .step_by(step)
            .take(CALIBRATION_QUERIES)
            .collect();
        let answer = |q: &[f64], use_tree: bool| {
            let start = Instant::now();
            let candidates = if use_tree {
                self.candidates(q, 10)
            } else {
                None
            };
            let best = rank_rows(
                candidates.as_deref(),
                self.rows,
                10,
                |_| true,
                |r| squared_distance(q, &points[r as usize * w..(r as usize + 1) * w]),
            );
            std::hint::black_box(best);
            start.elapsed()
        };
        let median = |mut times: Vec<std::time::Duration>| {
            times.sort();
            times[times.len() / 2]
        };
        let Some(first) = queries.first() else {
            return false;
        };
        answer(first, true);
        let tree = median(queries.iter().map(|q| answer(q, true)).collect());
        // The tree must win clearly: its cost varies from query to query, the scan's does not.
        let tree = tree.mul_f64(1.0 / TREE_MARGIN);
        answer(first, false);
        let mut scan = Vec::with_capacity(queries.len());
        for q in &queries {
            scan.push(answer(q, false));
            // Half the sample already slower than the tree's median: the scan has lost.
            if scan.iter().filter(|&&t| t > tree).count() > queries.len() / 2 {
                return true;
            }
        }
        tree < median(scan)
    }
}

/// How neighbours are ranked.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Metric {
    /// Euclidean distance between the raw vectors.
    #[default]
    Euclidean,
    /// Cosine similarity, ranked as Euclidean distance between unit-normalised copies.
    Cosine,
}

/// The query vector has length zero, so it has no direction and no cosine neighbours.
#[derive(Debug, Clone, Copy, PartialEq, Eq, thiserror::Error)]
#[error("the vector is zero, so it has no direction and no cosine neighbours")]
pub struct ZeroVector;

/// Exact k nearest neighbours among a set of vectors under one [`Metric`].
///
/// Defined behaviour: `k` larger than the set returns every other vector; a vector's own
/// row can be left out ([`Self::nearest_to_row`]); identical vectors are neighbours at
/// distance 0, ordered by row; under cosine, zero vectors are never returned and cannot be
/// queried ([`ZeroVector`]).
#[derive(Debug)]
pub struct NeighbourIndex {
    metric: Metric,
    width: usize,
    /// The searched points (raw, or unit-normalised for cosine), usable rows only.
    points: Vec<f64>,
    /// Original row of each searched point, when some rows are left out (zero vectors under
    /// cosine); `None` when every row is searched.
    rows: Option<Vec<u32>>,
    /// Searched point of each original row, `u32::MAX` for rows left out.
    slot: Vec<u32>,
    spatial: SpatialIndex,
}

/// A neighbour: its row and its distance under the index's metric (for cosine, the
/// Euclidean distance between unit vectors, `√(2 − 2 cos)`).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Neighbour {
    /// Row in the indexed set.
    pub row: u32,
    /// Distance under the metric.
    pub distance: f64,
}

impl NeighbourIndex {
    /// Indexes `vectors` (row-major, `width` per row).
    pub fn build(vectors: &[f64], width: usize, metric: Metric, path: Path) -> Self {
        let count = vectors.len() / width.max(1);
        let (points, rows) = match metric {
            Metric::Euclidean => (vectors.to_vec(), None),
            Metric::Cosine => {
                let mut points = Vec::with_capacity(vectors.len());
                let mut rows = Vec::with_capacity(count);
                for (r, v) in vectors.chunks_exact(width).enumerate() {
                    let norm = dot(v, v).sqrt();
                    if norm > 0.0 {
                        points.extend(v.iter().map(|x| x / norm));
                        rows.push(r as u32);
                    }
                }
                let all = rows.len() == count;
                (points, (!all).then_some(rows))
            }
        };
        let mut slot = vec![u32::MAX; count];
        match &rows {
            Some(rows) => rows
                .iter()
                .enumerate()
                .for_each(|(s, &r)| slot[r as usize] = s as u32),
            None => slot.iter_mut().enumerate().for_each(|(s, v)| *v = s as u32),
        }
        let spatial = SpatialIndex::build(&points, width, path);
        Self {
            metric,
            width,
            points,
            rows,
            slot,
            spatial,
        }
    }

    /// True when queries go through a k-d tree rather than a scan.
    pub fn uses_tree(&self) -> bool {
        self.spatial.uses_tree()
    }

    /// The `k` nearest neighbours of row `row`, leaving the row itself out.
    pub fn nearest_to_row(&self, row: u32, k: usize) -> Result<Vec<Neighbour>, ZeroVector> {
        let s = self.slot[row as usize];
        if s == u32::MAX {
            return Err(ZeroVector);
        }
        let start = s as usize * self.width;
        let query = self.points[start..start + self.width].to_vec();
        Ok(self.search(&query, k, Some(s)))
    }

    /// The `k` nearest neighbours of any vector (raw; normalised here for cosine).
    pub fn nearest_to(&self, vector: &[f64], k: usize) -> Result<Vec<Neighbour>, ZeroVector> {
        let query = match self.metric {
            Metric::Euclidean => vector.to_vec(),
            Metric::Cosine => {
                let norm = dot(vector, vector).sqrt();
                if norm == 0.0 {
                    return Err(ZeroVector);
                }
                vector.iter().map(|x| x / norm).collect()
            }
        };
        Ok(self.search(&query, k, None))
    }

    /// Search over searched-point numbers; `exclude` is a searched-point number.
    fn search(&self, query: &[f64], k: usize, exclude: Option<u32>) -> Vec<Neighbour> {
        let w = self.width;
        let k = k.min(self.spatial.len());
        let wanted = k + usize::from(exclude.is_some());
        let candidates = self.spatial.candidates(query, wanted);
        let keep = |s: u32| Some(s) != exclude;
        let score =
            |s: u32| squared_distance(query, &self.points[s as usize * w..(s as usize + 1) * w]);
        // Searched points keep the order of their original rows, so ties still go to the
        // lower original row.
        rank_rows(candidates.as_deref(), self.spatial.len(), k, keep, score)
            .into_iter()
            .map(|s| Neighbour {
                row: self
                    .rows
                    .as_ref()
                    .map_or(s.row, |rows| rows[s.row as usize]),
                distance: s.score.sqrt(),
            })
            .collect()
    }
}

/// Exact top-N rows by inner product with a query, through a Euclidean index.
///
/// Bachrach et al., "Speeding Up the Xbox Recommender System Using a Euclidean
/// Transformation for Inner-Product Spaces", RecSys 2014: each vector `v` becomes
/// `(v, √(Φ² − ‖v‖²))` with `Φ` the largest norm, a query `u` becomes `(u, 0)`, and then
/// `‖ũ − ṽ‖² = ‖u‖² + Φ² − 2 u·v`: the nearest are exactly the largest inner products.
/// `Φ² − ‖v‖²` is clamped at 0 before the root, and candidates are re-ranked by the exact
/// inner product (the constant `‖u‖² + Φ²` swamps tiny gaps in the distances).
#[derive(Debug)]
pub struct InnerProductIndex {
    width: usize,
    vectors: Vec<f64>,
    spatial: SpatialIndex,
}

impl InnerProductIndex {
    /// Indexes `vectors` (row-major, `width` per row).
    pub fn build(vectors: &[f64], width: usize, path: Path) -> Self {
        let largest = vectors
            .chunks_exact(width)
            .map(|v| dot(v, v))
            .fold(0.0, f64::max);
        let mut lifted = Vec::with_capacity(vectors.len() / width.max(1) * (width + 1));
        for v in vectors.chunks_exact(width) {
            lifted.extend_from_slice(v);
            lifted.push((largest - dot(v, v)).max(0.0).sqrt());
        }
        // Queries look like (u, 0) with u drawn like the vectors but unrelated to any one of
        // them (an item queried for itself is found unrealistically fast): each sample
        // coordinate comes from one of two items with a random sign, which keeps every
        // coordinate's spread and breaks the link to both.
        let rows = vectors.len() / width.max(1);
        let mut rng = crate::rng::Rng::new(0x5A3F);
        let mut sample = Vec::with_capacity(CALIBRATION_QUERIES * (width + 1));
        for _ in 0..if rows == 0 { 0 } else { CALIBRATION_QUERIES } {
            let (a, b) = (
                rng.below(rows as u64) as usize,
                rng.below(rows as u64) as usize,
            );
            for i in 0..width {
                let source = if rng.below(2) == 0 { a } else { b };
                let sign = if rng.below(2) == 0 { 1.0 } else { -1.0 };
                sample.push(sign * vectors[source * width + i]);
            }
            sample.push(0.0);
        }
        let spatial = SpatialIndex::build_for_queries(&lifted, width + 1, path, Some(&sample));
        Self {
            width,
            vectors: vectors.to_vec(),
            spatial,
        }
    }

    /// True when queries go through a k-d tree rather than a scan.
    pub fn uses_tree(&self) -> bool {
        self.spatial.uses_tree()
    }

    /// The `n` rows with the largest inner product with `query` among those `keep`
    /// accepts; `rejected` is an upper bound on how many rows `keep` refuses. Scores are
    /// minus the inner products, best first.
    pub fn top<K>(&self, query: &[f64], n: usize, keep: K, rejected: usize) -> Vec<Scored>
    where
        K: Fn(u32) -> bool + Sync,
    {
        let w = self.width;
        let n = n.min(self.spatial.len());
        let rejected = rejected.min(self.spatial.len());
        let mut lifted = query.to_vec();
        lifted.push(0.0);
        let candidates = self.spatial.candidates(&lifted, n + rejected);
        let score = |r: u32| -dot(query, &self.vectors[r as usize * w..(r as usize + 1) * w]);
        rank_rows(candidates.as_deref(), self.spatial.len(), n, keep, score)
    }
}
