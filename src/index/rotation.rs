//! Rotation onto principal axes.
//!
//! A k-d tree splits on its first axes only (a tree of a million points is ~20 levels deep),
//! so it prunes well when those axes carry most of the spread. Rotating every point onto the
//! principal axes of the set — an orthogonal map, which preserves distances and inner
//! products — puts the high-variance directions first. Fitted factor vectors have falling
//! variance across directions, which is where this pays.

use nalgebra::{DMatrix, SymmetricEigen};

/// Most rows used to estimate the axes (an evenly spaced sample of larger sets).
const SAMPLE_ROWS: usize = 100_000;

/// An orthogonal `width × width` matrix `R` (row-major); `rotate` computes `R x`, whose
/// coordinates run from the direction of largest variance to the smallest.
#[derive(Debug, Clone)]
pub struct Rotation {
    width: usize,
    matrix: Vec<f64>,
}

impl Rotation {
    /// The principal axes of `points` (row-major, `width` per row).
    pub fn principal_axes(points: &[f64], width: usize) -> Self {
        let rows = points.len() / width;
        let step = rows.div_ceil(SAMPLE_ROWS).max(1);
        let sample: Vec<&[f64]> = points.chunks_exact(width).step_by(step).collect();
        let count = sample.len().max(1) as f64;
        let mut mean = vec![0.0; width];
        for row in &sample {
            for (m, v) in mean.iter_mut().zip(*row) {
                *m += v / count;
            }
        }
        let mut covariance = DMatrix::<f64>::zeros(width, width);
        for row in &sample {
            for a in 0..width {
                let da = row[a] - mean[a];
                for b in a..width {
                    covariance[(a, b)] += da * (row[b] - mean[b]);
                }
            }
        }
        for a in 0..width {
            for b in 0..a {
                covariance[(a, b)] = covariance[(b, a)];
            }
        }
        let eigen = SymmetricEigen::new(covariance);
        let mut order: Vec<usize> = (0..width).collect();
        order.sort_by(|&x, &y| {
            eigen.eigenvalues[y]
                .total_cmp(&eigen.eigenvalues[x])
                .then(x.cmp(&y))
        });
        let mut matrix = Vec::with_capacity(width * width);
        for &axis in &order {
            matrix.extend(eigen.eigenvectors.column(axis).iter().copied());
        }
        Self { width, matrix }
    }

    /// `R x` for one point.
    pub fn rotate(&self, x: &[f64], out: &mut [f64]) {
        for (o, axis) in out.iter_mut().zip(self.matrix.chunks_exact(self.width)) {
            *o = axis.iter().zip(x).map(|(a, b)| a * b).sum();
        }
    }

    /// `R x` for every row of `points`.
    pub fn rotate_all(&self, points: &[f64]) -> Vec<f64> {
        let mut out = vec![0.0; points.len()];
        for (x, o) in points
            .chunks_exact(self.width)
            .zip(out.chunks_exact_mut(self.width))
        {
            self.rotate(x, o);
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rotation_is_orthogonal_and_sorts_variance() {
        let mut rng = crate::rng::Rng::new(4);
        // Variance 9 on the third axis, 1 on the first, 0.01 on the second.
        let points: Vec<f64> = (0..3000)
            .flat_map(|_| [rng.normal(), 0.1 * rng.normal(), 3.0 * rng.normal()])
            .collect();
        let r = Rotation::principal_axes(&points, 3);
        for a in 0..3 {
            for b in 0..3 {
                let dot: f64 = (0..3)
                    .map(|k| r.matrix[a * 3 + k] * r.matrix[b * 3 + k])
                    .sum();
                assert!((dot - f64::from(u8::from(a == b))).abs() < 1e-12);
            }
        }
        assert!(
            r.matrix[2].abs() > 0.99,
            "first axis is the third coordinate: {:?}",
            r.matrix
        );
        let rotated = r.rotate_all(&points);
        let norm = |p: &[f64]| p.iter().map(|v| v * v).sum::<f64>();
        assert!((norm(&rotated[..3]) - norm(&points[..3])).abs() < 1e-12);
    }
}
