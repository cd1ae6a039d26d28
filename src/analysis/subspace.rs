//! Principal angles between subspaces (Björck & Golub, Math. Comp. 27(123), 1973): how far
//! apart two fitted factor spaces are, independent of the basis each fit happened to pick.

use nalgebra::DMatrix;

/// Principal angles in radians between the column spaces of `a` and `b` (same row count),
/// largest first, one per column of the narrower matrix.
///
/// Cosines come from the singular values of `QaᵀQb`; small angles are taken from the sines
/// (singular values of `Qb − Qa QaᵀQb`) instead, where arccos loses precision.
pub fn principal_angles(a: &DMatrix<f64>, b: &DMatrix<f64>) -> Vec<f64> {
    assert_eq!(
        a.nrows(),
        b.nrows(),
        "subspaces must live in the same space"
    );
    let (a, b) = if a.ncols() >= b.ncols() {
        (a, b)
    } else {
        (b, a)
    };
    let qa = a.clone().qr().q();
    let qb = b.clone().qr().q();
    let cross = qa.transpose() * &qb;
    let mut cosines: Vec<f64> = cross.singular_values().iter().copied().collect();
    cosines.sort_by(|x, y| y.total_cmp(x)); // largest cosine = smallest angle first
    let residual = &qb - &qa * &cross;
    let mut sines: Vec<f64> = residual.singular_values().iter().copied().collect();
    sines.sort_by(f64::total_cmp); // smallest sine = smallest angle first
    let mut angles: Vec<f64> = cosines
        .iter()
        .enumerate()
        .map(|(k, &c)| {
            if c * c >= 0.5 {
                sines.get(k).copied().unwrap_or(0.0).clamp(-1.0, 1.0).asin()
            } else {
                c.clamp(-1.0, 1.0).acos()
            }
        })
        .collect();
    angles.reverse();
    angles
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn exact_case_from_references() {
        // REFERENCES.md: span(e1,e2) vs span(e1, cos 0.3·e2 + sin 0.3·e3) → [0.3, 0.0].
        let a = DMatrix::from_row_slice(3, 2, &[1.0, 0.0, 0.0, 1.0, 0.0, 0.0]);
        let b = DMatrix::from_row_slice(3, 2, &[1.0, 0.0, 0.0, 0.3f64.cos(), 0.0, 0.3f64.sin()]);
        let angles = principal_angles(&a, &b);
        assert!((angles[0] - 0.3).abs() < 1e-15, "{angles:?}");
        assert!(angles[1].abs() < 1e-15, "{angles:?}");
    }
}
