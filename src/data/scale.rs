//! The rating scale: which values a rating may take, and how predictions round onto it.

use serde::{Deserialize, Serialize};

/// Most distinct values for which an inferred scale is treated as a set of levels.
pub const MAX_LEVELS: usize = 20;

/// The values a rating can take.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub enum RatingScale {
    /// A finite, sorted set of values (e.g. 1, 2, 3, 4, 5 stars). Predictions round to the
    /// nearest level, ties going up.
    Levels(Vec<f64>),
    /// Any value in `[min, max]`; rounded predictions are only clamped.
    Continuous {
        /// Smallest allowed value.
        min: f64,
        /// Largest allowed value.
        max: f64,
    },
}

impl RatingScale {
    /// Infers the scale from observed values: the sorted distinct values when there are at
    /// most [`MAX_LEVELS`] of them, otherwise a continuous range. `values` must be non-empty.
    pub fn infer(values: impl IntoIterator<Item = f64>) -> Self {
        let mut distinct: Vec<f64> = Vec::new();
        let (mut min, mut max) = (f64::INFINITY, f64::NEG_INFINITY);
        for v in values {
            min = min.min(v);
            max = max.max(v);
            if distinct.len() <= MAX_LEVELS && !distinct.contains(&v) {
                distinct.push(v);
            }
        }
        if distinct.len() <= MAX_LEVELS {
            distinct.sort_by(f64::total_cmp);
            // -0.0 and 0.0 compare equal but are distinct bit patterns; keep one.
            distinct.dedup();
            Self::Levels(distinct)
        } else {
            Self::Continuous { min, max }
        }
    }

    /// The scale `MIN:MAX:STEP` as given on the command line.
    pub fn parse(text: &str) -> Result<Self, String> {
        let parts: Vec<&str> = text.split(':').collect();
        let [min, max, step] = parts.as_slice() else {
            return Err(format!(
                "scale '{text}' must look like MIN:MAX:STEP, e.g. 1:5:1"
            ));
        };
        let number = |s: &str, what: &str| -> Result<f64, String> {
            match s.trim().parse::<f64>() {
                Ok(v) if v.is_finite() => Ok(v),
                _ => Err(format!(
                    "scale '{text}': {what} '{s}' is not a finite number"
                )),
            }
        };
        let (min, max, step) = (
            number(min, "MIN")?,
            number(max, "MAX")?,
            number(step, "STEP")?,
        );
        if max < min {
            return Err(format!("scale '{text}': MAX is smaller than MIN"));
        }
        if step < 0.0 {
            return Err(format!("scale '{text}': STEP must not be negative"));
        }
        if step == 0.0 {
            return Ok(Self::Continuous { min, max });
        }
        let count = ((max - min) / step + 1e-9).floor() as u64 + 1;
        if count > 10_000 {
            return Err(format!(
                "scale '{text}' has {count} levels; use STEP 0 for a continuous scale"
            ));
        }
        if ((max - min) / step - (count - 1) as f64).abs() > 1e-9 {
            return Err(format!(
                "scale '{text}': MAX is not MIN plus a whole number of steps"
            ));
        }
        let levels = (0..count)
            .map(|k| round_clean(min + k as f64 * step))
            .collect();
        Ok(Self::Levels(levels))
    }

    /// Smallest value on the scale.
    pub fn min(&self) -> f64 {
        match self {
            Self::Levels(levels) => levels[0],
            Self::Continuous { min, .. } => *min,
        }
    }

    /// Largest value on the scale.
    pub fn max(&self) -> f64 {
        match self {
            Self::Levels(levels) => levels[levels.len() - 1],
            Self::Continuous { max, .. } => *max,
        }
    }

    /// Whether `value` is allowed: one of the levels (within 1e-9) or inside the range.
    pub fn contains(&self, value: f64) -> bool {
        match self {
            Self::Levels(levels) => levels.iter().any(|l| (l - value).abs() <= 1e-9),
            Self::Continuous { min, max } => (*min..=*max).contains(&value),
        }
    }

    /// The nearest value on the scale to a prediction: ties go up, results are clamped.
    pub fn round(&self, prediction: f64) -> f64 {
        match self {
            Self::Continuous { min, max } => prediction.clamp(*min, *max),
            Self::Levels(levels) => {
                // First level >= prediction; compare it with the one below.
                let above = levels.partition_point(|&l| l < prediction);
                if above == 0 {
                    return levels[0];
                }
                if above == levels.len() {
                    return levels[levels.len() - 1];
                }
                let (low, high) = (levels[above - 1], levels[above]);
                if high - prediction <= prediction - low {
                    high
                } else {
                    low
                }
            }
        }
    }

    /// A short human description, e.g. `1, 2, 3, 4, 5` or `0 to 100 (continuous)`.
    pub fn describe(&self) -> String {
        match self {
            Self::Levels(levels) => levels
                .iter()
                .map(f64::to_string)
                .collect::<Vec<_>>()
                .join(", "),
            Self::Continuous { min, max } => format!("{min} to {max} (continuous)"),
        }
    }
}

/// Removes the floating-point fuzz of `min + k·step` (e.g. 0.30000000000000004 → 0.3).
fn round_clean(x: f64) -> f64 {
    let rounded = (x * 1e9).round() / 1e9;
    if (rounded - x).abs() < 1e-12 * x.abs().max(1.0) {
        rounded
    } else {
        x
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn stars() -> RatingScale {
        RatingScale::Levels(vec![1.0, 2.0, 3.0, 4.0, 5.0])
    }

    #[test]
    fn rounding_is_nearest_with_ties_up_and_clamped() {
        // Common practice: predictions are shown rounded to the nearest scale value.
        let s = stars();
        assert_eq!(s.round(3.49), 3.0);
        assert_eq!(s.round(3.5), 4.0);
        assert_eq!(s.round(3.51), 4.0);
        assert_eq!(s.round(-2.0), 1.0);
        assert_eq!(s.round(7.3), 5.0);
        assert_eq!(s.round(1.0), 1.0);
    }

    #[test]
    fn infer_levels_or_continuous() {
        assert_eq!(
            RatingScale::infer([3.0, 1.0, 5.0, 1.0]),
            RatingScale::Levels(vec![1.0, 3.0, 5.0])
        );
        let many = (0..50).map(f64::from);
        assert_eq!(
            RatingScale::infer(many),
            RatingScale::Continuous {
                min: 0.0,
                max: 49.0
            }
        );
    }

    #[test]
    fn parse_half_stars() {
        let s = RatingScale::parse("0.5:5:0.5").unwrap();
        let RatingScale::Levels(levels) = &s else {
            panic!("levels expected")
        };
        assert_eq!(levels.len(), 10);
        assert_eq!(levels[5], 3.0);
        assert!(s.contains(2.5) && !s.contains(2.4) && !s.contains(5.5));
        assert!(RatingScale::parse("1:5").is_err());
        assert!(RatingScale::parse("5:1:1").is_err());
        assert!(RatingScale::parse("1:5:3").is_err());
        assert_eq!(
            RatingScale::parse("0:100:0").unwrap(),
            RatingScale::Continuous {
                min: 0.0,
                max: 100.0
            }
        );
    }
}
