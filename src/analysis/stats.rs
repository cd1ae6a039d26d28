//! Small exact distributions used by the audit: the hypergeometric distribution, which is
//! what "k neighbours drawn at random" or "the k items at one end of a factor drawn at
//! random" would give for the number that share a category.

/// `ln k!` for every `k` up to a bound, by cumulative sums of `ln k`.
#[derive(Debug, Clone)]
pub struct LnFactorial(Vec<f64>);

impl LnFactorial {
    /// A table covering `0..=n`.
    pub fn new(n: usize) -> Self {
        let mut table = Vec::with_capacity(n + 1);
        let mut sum = 0.0f64;
        table.push(0.0);
        for k in 1..=n {
            sum += (k as f64).ln();
            table.push(sum);
        }
        Self(table)
    }

    /// `ln C(n, k)`; `-inf` when `k > n`. Beyond the table it is summed term by term.
    pub fn ln_choose(&self, n: usize, k: usize) -> f64 {
        if k > n {
            return f64::NEG_INFINITY;
        }
        // Differences of large table entries lose digits (ln 1,000,000! ≈ 1.3e7), so short
        // products are summed term by term: ln C(n, k) = Σ ln((n − i)/(k − i)).
        let short = k.min(n - k);
        if short <= 64 || n >= self.0.len() {
            return (0..short)
                .map(|i| ((n - i) as f64 / (short - i) as f64).ln())
                .sum();
        }
        self.0[n] - self.0[k] - self.0[n - k]
    }
}

/// The hypergeometric distribution: `draws` taken without replacement from `population`
/// items of which `successes` are marked; the law of the number of marked items drawn.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Hypergeometric {
    /// Items to draw from.
    pub population: usize,
    /// Marked items among them.
    pub successes: usize,
    /// Items drawn (clamped to the population).
    pub draws: usize,
}

impl Hypergeometric {
    /// The distribution; `draws` and `successes` are clamped to `population`.
    pub fn new(population: usize, successes: usize, draws: usize) -> Self {
        Self {
            population,
            successes: successes.min(population),
            draws: draws.min(population),
        }
    }

    /// Expected number of marked items drawn.
    pub fn mean(&self) -> f64 {
        if self.population == 0 {
            return 0.0;
        }
        self.draws as f64 * self.successes as f64 / self.population as f64
    }

    /// `P(X = x)`; `table` must cover the population.
    pub fn pmf(&self, x: usize, table: &LnFactorial) -> f64 {
        let (n, k, d) = (self.population, self.successes, self.draws);
        if x > k || x > d || d - x > n - k {
            return 0.0;
        }
        (table.ln_choose(k, x) + table.ln_choose(n - k, d - x) - table.ln_choose(n, d)).exp()
    }

    /// `P(X ≥ x)`, summed over the shorter tail.
    pub fn at_least(&self, x: usize, table: &LnFactorial) -> f64 {
        let top = self.draws.min(self.successes);
        if x == 0 {
            return 1.0;
        }
        if x > top {
            return 0.0;
        }
        let mean = self.mean();
        if (x as f64) > mean {
            (x..=top).map(|v| self.pmf(v, table)).sum::<f64>().min(1.0)
        } else {
            (1.0 - (0..x).map(|v| self.pmf(v, table)).sum::<f64>()).clamp(0.0, 1.0)
        }
    }

    /// `P(X ≤ x)`.
    pub fn at_most(&self, x: usize, table: &LnFactorial) -> f64 {
        if x >= self.draws.min(self.successes) {
            return 1.0;
        }
        1.0 - self.at_least(x + 1, table)
    }
}

/// Median of a list (the mean of the middle two for an even count); `None` when empty.
pub fn median(values: &[f64]) -> Option<f64> {
    if values.is_empty() {
        return None;
    }
    let mut sorted = values.to_vec();
    sorted.sort_by(f64::total_cmp);
    let n = sorted.len();
    Some(if n % 2 == 1 {
        sorted[n / 2]
    } else {
        0.5 * (sorted[n / 2 - 1] + sorted[n / 2])
    })
}

/// Modified z-scores `0.6745 (x − median) / MAD` (Iglewicz & Hoaglin, "How to Detect and
/// Handle Outliers", ASQC 1993 (citation from memory)); values with `|M| > 3.5` are the
/// ones they recommend treating as outliers. `None` when the MAD is 0 (more than half the
/// values are equal), where the score is undefined.
pub fn modified_z_scores(values: &[f64]) -> Option<Vec<f64>> {
    let centre = median(values)?;
    let deviations: Vec<f64> = values.iter().map(|v| (v - centre).abs()).collect();
    let mad = median(&deviations)?;
    if mad <= 0.0 {
        return None;
    }
    Some(values.iter().map(|v| 0.6745 * (v - centre) / mad).collect())
}

/// The cut-off for [`modified_z_scores`] recommended by Iglewicz & Hoaglin.
pub const OUTLIER_Z: f64 = 3.5;

/// The Benjamini–Hochberg step-up cut for p-values `p` at false-discovery rate `q`
/// (Benjamini & Hochberg, "Controlling the false discovery rate", JRSS B 57, 1995): the
/// largest `p_(k)` with `p_(k) ≤ k q / m`. Every p-value at or below it is a discovery;
/// `None` when there is none.
pub fn false_discovery_cut(p: &[f64], q: f64) -> Option<f64> {
    let mut sorted: Vec<f64> = p.iter().copied().filter(|v| !v.is_nan()).collect();
    sorted.sort_by(f64::total_cmp);
    let m = sorted.len() as f64;
    sorted
        .iter()
        .enumerate()
        .rev()
        .find(|&(k, &v)| v <= (k + 1) as f64 * q / m)
        .map(|(_, &v)| v)
}

/// The false-discovery rate the explorer and the audit report use to call a p-value
/// unusual (common practice).
pub const DISCOVERY_RATE: f64 = 0.05;

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn false_discovery_cut_matches_the_worked_example() {
        // The 15 p-values of the worked example in Benjamini & Hochberg (1995), section
        // 3.2 (values from memory): at q = 0.05 the procedure rejects the four smallest.
        let p = [
            0.0001, 0.0004, 0.0019, 0.0095, 0.0201, 0.0278, 0.0298, 0.0344, 0.0459, 0.3240, 0.4262,
            0.5719, 0.6528, 0.7590, 1.0,
        ];
        assert_eq!(false_discovery_cut(&p, 0.05), Some(0.0095));
        // Step-up: a large p-value under its own line lifts the cut over smaller ones
        // above theirs.
        assert_eq!(false_discovery_cut(&[0.04, 0.04], 0.05), Some(0.04));
        assert_eq!(false_discovery_cut(&[0.2, 0.5], 0.05), None);
        assert_eq!(false_discovery_cut(&[], 0.05), None);
    }

    #[test]
    fn choose_and_pmf_by_hand() {
        let t = LnFactorial::new(60);
        assert!((t.ln_choose(10, 3).exp() - 120.0).abs() < 1e-9);
        // 5 drawn from 20 with 7 marked: P(X = 2) = C(7,2) C(13,3) / C(20,5) = 21·286/15504.
        let h = Hypergeometric::new(20, 7, 5);
        assert!((h.pmf(2, &t) - 21.0 * 286.0 / 15504.0).abs() < 1e-12);
        let total: f64 = (0..=5).map(|x| h.pmf(x, &t)).sum();
        assert!((total - 1.0).abs() < 1e-12);
        assert!((h.at_least(0, &t) - 1.0).abs() < 1e-15);
        assert!((h.at_most(1, &t) + h.at_least(2, &t) - 1.0).abs() < 1e-12);
        assert!((h.mean() - 1.75).abs() < 1e-15);
    }

    #[test]
    fn median_and_scores() {
        assert_eq!(median(&[3.0, 1.0, 2.0]), Some(2.0));
        assert_eq!(median(&[4.0, 1.0, 2.0, 3.0]), Some(2.5));
        assert_eq!(median(&[]), None);
        // median 3, deviations 2,1,0,1,97 → MAD 1.
        let z = modified_z_scores(&[1.0, 2.0, 3.0, 4.0, 100.0]).unwrap();
        assert!((z[4] - 0.6745 * 97.0).abs() < 1e-12);
        assert!(modified_z_scores(&[1.0, 1.0, 1.0, 5.0]).is_none());
    }
}
