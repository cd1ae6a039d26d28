//! Extrapolation along the last iteration's change, checked by the likelihood.
//!
//! Coordinate ascent creeps along flat directions of L: successive iterations move the
//! vectors in nearly the same direction by nearly the same small amount. After each plain
//! iteration from a point `X` to `P`, the fit tries `E = P + α (P − X)` and keeps it only
//! when `L(E) > L(P)`; otherwise it keeps `P`. So L never decreases, the worst case is the
//! plain method plus one evaluation of L per iteration, and every accepted point is a
//! better one for the next plain iteration to start from. The idea and the growing step
//! are from line-search acceleration of alternating least squares (Bro, 1998 thesis, ch.
//! 4; Rajih, Comon & Harshman, SIAM J. Matrix Anal. Appl. 30(3), 2008); the schedule below
//! (double on success, back to 1 on failure) is our own choice, measured in
//! `benches/accel.rs`.

use super::FactorModel;

/// Largest extrapolation step `α`.
const MAX_STEP: f64 = 64.0;

/// Iterations [`Method::Anderson`] mixes.
const DEPTH: usize = 5;

/// How the proposal is formed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Method {
    /// `P + α (P − X)`.
    Line,
    /// Anderson mixing of the last iterations of the map `X ↦ P` (Walker & Ni, SIAM J.
    /// Numer. Anal. 49(4), 2011): with `f = P − X`, the combination of the last
    /// five changes that best cancels `f` (least squares), applied to `P`.
    Anderson,
}

/// What the fit needs between iterations: the start of the current iteration, a buffer
/// for the candidate, and the step (or the history that Anderson mixing uses).
#[derive(Debug, Clone)]
pub struct Extrapolation {
    method: Method,
    start: Vec<f64>,
    candidate: Vec<f64>,
    step: f64,
    /// The previous iteration's start and change, and the differences between successive
    /// starts (`dx`) and changes (`df`), newest last.
    last: Option<(Vec<f64>, Vec<f64>)>,
    dx: Vec<Vec<f64>>,
    df: Vec<Vec<f64>>,
}

/// Every parameter of `model` that coordinate ascent updates, in a fixed order: user
/// vectors, item vectors, then (with biases) member and item offsets.
fn parts(model: &FactorModel) -> [&[f64]; 4] {
    let (user, item) = model
        .biases
        .as_ref()
        .map_or((&[][..], &[][..]), |b| (&b.user[..], &b.item[..]));
    [&model.users, &model.items, user, item]
}

fn parts_mut(model: &mut FactorModel) -> [&mut [f64]; 4] {
    let (user, item) = model
        .biases
        .as_mut()
        .map_or((&mut [][..], &mut [][..]), |b| {
            (&mut b.user[..], &mut b.item[..])
        });
    [&mut model.users, &mut model.items, user, item]
}

impl Extrapolation {
    /// A fit that extrapolates by `method`.
    pub fn new(method: Method) -> Self {
        Self {
            method,
            start: Vec::new(),
            candidate: Vec::new(),
            step: 1.0,
            last: None,
            dx: Vec::new(),
            df: Vec::new(),
        }
    }

    /// Remembers `model` as the start of an iteration.
    pub fn remember_start(&mut self, model: &FactorModel) {
        self.start.clear();
        for part in parts(model) {
            self.start.extend_from_slice(part);
        }
    }

    /// Replaces `model` (the plain iteration's result `P`) by the proposal, keeping `P` to
    /// go back to; false, leaving `model` alone, when there is nothing to propose yet.
    pub fn propose(&mut self, model: &mut FactorModel) -> bool {
        self.candidate.clear();
        for part in parts(model) {
            self.candidate.extend_from_slice(part);
        }
        let proposal = match self.method {
            Method::Line => {
                let alpha = self.step;
                self.candidate
                    .iter()
                    .zip(&self.start)
                    .map(|(&p, &x)| p + alpha * (p - x))
                    .collect()
            }
            Method::Anderson => match self.anderson() {
                Some(proposal) => proposal,
                None => return false,
            },
        };
        let mut at = 0;
        for part in parts_mut(model) {
            part.copy_from_slice(&proposal[at..at + part.len()]);
            at += part.len();
        }
        true
    }

    /// The Anderson proposal `P − Σ γ_i (dx_i + df_i)`, `γ` minimising `‖f − Σ γ_i df_i‖`
    /// for the current change `f = P − X`; updates the history.
    fn anderson(&mut self) -> Option<Vec<f64>> {
        let x = &self.start;
        let f: Vec<f64> = self.candidate.iter().zip(x).map(|(p, x)| p - x).collect();
        if let Some((last_x, last_f)) = &self.last {
            self.dx
                .push(x.iter().zip(last_x).map(|(a, b)| a - b).collect());
            self.df
                .push(f.iter().zip(last_f).map(|(a, b)| a - b).collect());
            if self.dx.len() > DEPTH {
                self.dx.remove(0);
                self.df.remove(0);
            }
        }
        self.last = Some((x.clone(), f.clone()));
        let m = self.df.len();
        if m == 0 {
            return None;
        }
        // Normal equations of the small least-squares problem, lightly regularised.
        let dot = |a: &[f64], b: &[f64]| a.iter().zip(b).map(|(x, y)| x * y).sum::<f64>();
        let mut a = vec![0.0; m * m];
        let mut b = vec![0.0; m];
        for i in 0..m {
            for j in 0..=i {
                let v = dot(&self.df[i], &self.df[j]);
                a[i * m + j] = v;
                a[j * m + i] = v;
            }
            b[i] = dot(&self.df[i], &f);
        }
        let trace: f64 = (0..m).map(|i| a[i * m + i]).sum();
        for i in 0..m {
            a[i * m + i] += 1e-12 * trace;
        }
        let gamma = solve_small(&mut a, &mut b, m)?;
        let mut proposal = self.candidate.clone();
        for (k, &g) in gamma.iter().enumerate() {
            for ((p, dx), df) in proposal.iter_mut().zip(&self.dx[k]).zip(&self.df[k]) {
                *p -= g * (dx + df);
            }
        }
        Some(proposal)
    }

    /// The proposal did better than the plain iteration: keep it, and try a longer step
    /// next time.
    pub fn accept(&mut self) {
        self.step = (self.step * 2.0).min(MAX_STEP);
    }

    /// The proposal did no better: put the plain iteration's result back into `model` and
    /// start again from a step of 1.
    pub fn reject(&mut self, model: &mut FactorModel) {
        let mut at = 0;
        for part in parts_mut(model) {
            part.copy_from_slice(&self.candidate[at..at + part.len()]);
            at += part.len();
        }
        // Anderson mixing keeps its history: restarting it after each refusal took 7×
        // the iterations at rank 32 on the demo (`cargo bench --bench accel`).
        self.step = 1.0;
    }
}

/// Solves the symmetric `m × m` system `a γ = b` by Gaussian elimination with partial
/// pivoting; `None` when it is singular.
fn solve_small(a: &mut [f64], b: &mut [f64], m: usize) -> Option<Vec<f64>> {
    for k in 0..m {
        let pivot = (k..m).max_by(|&i, &j| a[i * m + k].abs().total_cmp(&a[j * m + k].abs()))?;
        if a[pivot * m + k].abs() == 0.0 || !a[pivot * m + k].is_finite() {
            return None;
        }
        for c in 0..m {
            a.swap(k * m + c, pivot * m + c);
        }
        b.swap(k, pivot);
        for i in k + 1..m {
            let factor = a[i * m + k] / a[k * m + k];
            for c in k..m {
                a[i * m + c] -= factor * a[k * m + c];
            }
            b[i] -= factor * b[k];
        }
    }
    let mut x = vec![0.0; m];
    for k in (0..m).rev() {
        let tail: f64 = (k + 1..m).map(|c| a[k * m + c] * x[c]).sum();
        x[k] = (b[k] - tail) / a[k * m + k];
    }
    x.iter().all(|v| v.is_finite()).then_some(x)
}
