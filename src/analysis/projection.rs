//! A 2-D map of vectors by principal component analysis: centre, find the directions of
//! largest variance (the right singular vectors of the centred data, here as eigenvectors
//! of its covariance), project on the first two.
//!
//! Sign convention (scikit-learn ≥ 1.5): each component is flipped so that its
//! largest-magnitude loading is positive, so the map never mirrors between runs.

use nalgebra::DMatrix;

/// Items projected onto the first two principal components.
#[derive(Debug, Clone, PartialEq)]
pub struct Projection {
    /// (x, y) per row.
    pub points: Vec<[f64; 2]>,
    /// The two components (each of the vectors' width).
    pub components: [Vec<f64>; 2],
    /// Variance along each component, `S²/(n − 1)`.
    pub explained_variance: [f64; 2],
    /// Share of the total variance each component carries.
    pub explained_ratio: [f64; 2],
}

/// The PCA map of `vectors` (row-major, `width` per row; at least two rows).
pub fn pca_2d(vectors: &[f64], width: usize) -> Projection {
    let n = vectors.len() / width.max(1);
    let mut mean = vec![0.0; width];
    for row in vectors.chunks_exact(width) {
        for (m, v) in mean.iter_mut().zip(row) {
            *m += v;
        }
    }
    for m in &mut mean {
        *m /= n.max(1) as f64;
    }
    // Components from the covariance matrix (width × width): one pass over the rows, so a
    // million items take a fraction of a second; the eigenvectors of XᵀX/(n − 1) are the
    // right singular vectors of the centred X and the eigenvalues S²/(n − 1).
    let denominator = (n.max(2) - 1) as f64;
    let mut covariance = DMatrix::<f64>::zeros(width, width);
    for row in vectors.chunks_exact(width) {
        for a in 0..width {
            let da = row[a] - mean[a];
            for b in a..width {
                covariance[(a, b)] += da * (row[b] - mean[b]);
            }
        }
    }
    for a in 0..width {
        for b in a..width {
            covariance[(a, b)] /= denominator;
            covariance[(b, a)] = covariance[(a, b)];
        }
    }
    let eigen = nalgebra::SymmetricEigen::new(covariance);
    let mut order: Vec<usize> = (0..width).collect();
    order.sort_by(|&a, &b| {
        eigen.eigenvalues[b]
            .total_cmp(&eigen.eigenvalues[a])
            .then(a.cmp(&b))
    });
    let total: f64 = eigen.eigenvalues.iter().map(|v| v.max(0.0)).sum();
    let component = |k: usize| -> (Vec<f64>, f64) {
        let Some(&axis) = order.get(k) else {
            return (vec![0.0; width], 0.0);
        };
        let mut c: Vec<f64> = eigen.eigenvectors.column(axis).iter().copied().collect();
        let largest = c
            .iter()
            .copied()
            .fold(0.0f64, |m, v| if v.abs() > m.abs() { v } else { m });
        if largest < 0.0 {
            for v in &mut c {
                *v = -*v;
            }
        }
        (c, eigen.eigenvalues[axis].max(0.0))
    };
    let (c1, e1) = component(0);
    let (c2, e2) = component(1);
    let points = vectors
        .chunks_exact(width)
        .map(|row| {
            let dot = |c: &[f64]| {
                row.iter()
                    .zip(&mean)
                    .zip(c)
                    .map(|((v, m), w)| (v - m) * w)
                    .sum::<f64>()
            };
            [dot(&c1), dot(&c2)]
        })
        .collect();
    let ratio = |e: f64| if total > 0.0 { e / total } else { 0.0 };
    Projection {
        points,
        components: [c1, c2],
        explained_variance: [e1, e2],
        explained_ratio: [ratio(e1), ratio(e2)],
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn worked_example_matches_scikit_learn() {
        // REFERENCES.md worked example, checked with scikit-learn 1.9.1 PCA: components
        // [[0.677873398528012, 0.735178655544408], [0.735178655544408, -0.677873398528012]],
        // explained variance [1.284027712172784, 0.049083398938327].
        let x = [2.5, 0.5, 2.2, 1.9, 3.1, 2.3, 2.0, 1.0, 1.5, 1.1];
        let y = [2.4, 0.7, 2.9, 2.2, 3.0, 2.7, 1.6, 1.1, 1.6, 0.9];
        let data: Vec<f64> = x.iter().zip(&y).flat_map(|(a, b)| [*a, *b]).collect();
        let p = pca_2d(&data, 2);
        let close = |a: f64, b: f64| (a - b).abs() < 1e-12;
        assert!(
            close(p.components[0][0], 0.677_873_398_528_012)
                && close(p.components[0][1], 0.735_178_655_544_408)
        );
        assert!(
            close(p.components[1][0], 0.735_178_655_544_408)
                && close(p.components[1][1], -0.677_873_398_528_012)
        );
        assert!(close(p.explained_variance[0], 1.284_027_712_172_784));
        assert!(close(p.explained_variance[1], 0.049_083_398_938_327));
        assert!(close(p.explained_ratio[0] + p.explained_ratio[1], 1.0));
    }
}
