//! Fitting by coordinate ascent (MAP), with a per-iteration trace.
//!
//! Each iteration updates every user vector, then every item vector, each by an exact ridge
//! solve ([`RidgeWorkspace`]). Users (and items) are independent given the other side, so a
//! half-step runs in parallel; every solve writes only its own row and every sum is reduced
//! in a fixed order, so the result is bit-identical whatever the number of threads.

use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use super::extrapolate::{Extrapolation, Method};
use super::kernels::{BATCH, LOOKAHEAD};
use super::solve::RidgeWorkspace;
use super::{Biases, FactorModel, dot, squared_norm};
use crate::data::ids::first_few;
use crate::data::{FactorTable, Ratings};
use crate::error::{DataError, FitError};
use crate::rng::Rng;

/// How the global offset μ is chosen.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
pub enum Center {
    /// μ = mean of the training ratings (default).
    #[default]
    Global,
    /// μ = 0.
    None,
    /// μ given by the user (`import --mu`): the offset the vectors were fitted around
    /// elsewhere. Not a fitting option.
    Given,
}

impl Center {
    /// The name used on the command line and in JSON (`global`, `none`).
    pub fn name(self) -> &'static str {
        match self {
            Self::Global => "global",
            Self::None => "none",
            Self::Given => "given",
        }
    }

    /// What μ is, in words, wherever it is shown beside its value.
    pub fn mu_label(self) -> &'static str {
        match self {
            Self::Global => "global mean μ",
            Self::None => "μ (no centring)",
            Self::Given => "μ (given on import)",
        }
    }
}

/// Options of a fit. Defaults: rank 10, λ = 1, σ² = 1, centring on, at most 100 iterations,
/// tolerance 1e-6 (relative change of L), seed 0.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FitOptions {
    /// Rank D of the factorization.
    pub rank: usize,
    /// Prior precision λ of every vector coordinate.
    pub lambda: f64,
    /// Noise variance σ² of a rating.
    pub sigma2: f64,
    /// Whether to subtract the global mean.
    pub center: Center,
    /// Largest number of iterations.
    pub max_iters: usize,
    /// Stop when `|ΔL| ≤ tol·|L|`.
    pub tol: f64,
    /// Seed for the initial item vectors.
    pub seed: u64,
    /// Fit member and item offsets beside the vectors, with this prior precision λ_b
    /// (`None`: a model without biases).
    #[serde(default)]
    pub lambda_bias: Option<f64>,
    /// How iterations are accelerated (see [`Accel`]).
    #[serde(default, skip_serializing_if = "Accel::is_none")]
    pub accel: Accel,
}

/// How a fit moves from one iteration to the next.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Accel {
    /// Plain coordinate ascent: one exact solve per member, then per item.
    #[default]
    None,
    /// After each plain iteration, a longer step along its change, kept only when it
    /// raises L further (see [`super::extrapolate`]).
    Line,
    /// After each plain iteration, Anderson mixing of the last few, kept only when it
    /// raises L further.
    Anderson,
}

impl Accel {
    // A reference, as serde's `skip_serializing_if` passes one.
    #[allow(clippy::trivially_copy_pass_by_ref)]
    fn is_none(&self) -> bool {
        *self == Self::None
    }
}

impl Default for FitOptions {
    fn default() -> Self {
        Self {
            rank: 10,
            lambda: 1.0,
            sigma2: 1.0,
            center: Center::Global,
            max_iters: 100,
            tol: 1e-6,
            seed: 0,
            lambda_bias: None,
            accel: Accel::None,
        }
    }
}

impl FitOptions {
    /// Checks that the options can work at all.
    pub fn validate(&self) -> Result<(), FitError> {
        let bad = |m: String| Err(FitError::Option(m));
        check_run(self.rank, self.lambda, self.tol, self.max_iters)?;
        if self.center == Center::Given {
            return bad("a fit computes μ itself: --center is global or none".into());
        }
        if !(self.sigma2.is_finite() && self.sigma2 > 0.0) {
            return bad(format!(
                "--sigma2 must be a finite number > 0, not {}",
                self.sigma2
            ));
        }
        if let Some(lambda_bias) = self.lambda_bias
            && !(lambda_bias.is_finite() && lambda_bias >= 0.0)
        {
            return bad(format!(
                "--lambda-bias must be a finite number ≥ 0, not {lambda_bias}"
            ));
        }
        Ok(())
    }
}

/// The checks every fit's options share: rank, λ, tolerance and iteration limit.
pub(super) fn check_run(
    rank: usize,
    lambda: f64,
    tol: f64,
    max_iters: usize,
) -> Result<(), FitError> {
    let bad = |m: String| Err(FitError::Option(m));
    if let Err(why) = crate::limits::check_rank(rank) {
        return bad(format!("--rank {why}"));
    }
    if !(lambda.is_finite() && lambda >= 0.0) {
        return bad(format!(
            "--lambda must be a finite number ≥ 0, not {lambda}"
        ));
    }
    if !(tol.is_finite() && tol >= 0.0) {
        return bad(format!("--tol must be a finite number ≥ 0, not {tol}"));
    }
    if max_iters == 0 {
        return bad("--max-iters must be at least 1".into());
    }
    Ok(())
}

/// The state after one iteration.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct IterationRecord {
    /// Iteration number, from 1.
    pub iter: usize,
    /// Log joint likelihood L (up to a constant).
    pub log_joint: f64,
    /// Root mean squared error on the training ratings (raw predictions).
    pub train_rmse: f64,
    /// Root mean squared error on the held-out ratings, when there are any.
    pub holdout_rmse: Option<f64>,
    /// Whether this iteration ended on an extrapolated point (see [`Accel::Line`]).
    #[serde(default, skip_serializing_if = "std::ops::Not::not")]
    pub extrapolated: bool,
}

/// What a fit produces.
#[derive(Debug, Clone, PartialEq)]
pub struct FitResult {
    /// The fitted vectors (and offsets, for a fit with biases).
    pub factors: FactorModel,
    /// One record per iteration.
    pub trace: Vec<IterationRecord>,
    /// True when the tolerance was reached before the iteration limit.
    pub converged: bool,
}

/// Compressed rows: for each row, its column indices and target values.
#[derive(Debug, Clone, Default)]
pub(super) struct Compressed {
    start: Vec<usize>,
    pub(super) columns: Vec<u32>,
    pub(super) targets: Vec<f64>,
}

impl Compressed {
    pub(super) fn build(rows: usize, pairs: impl Iterator<Item = (u32, u32, f64)> + Clone) -> Self {
        let mut start = vec![0usize; rows + 1];
        for (r, _, _) in pairs.clone() {
            start[r as usize + 1] += 1;
        }
        for k in 0..rows {
            start[k + 1] += start[k];
        }
        let total = start[rows];
        let mut fill = start.clone();
        let mut columns = vec![0u32; total];
        let mut targets = vec![0f64; total];
        for (r, c, y) in pairs {
            let at = &mut fill[r as usize];
            columns[*at] = c;
            targets[*at] = y;
            *at += 1;
        }
        Self {
            start,
            columns,
            targets,
        }
    }

    pub(super) fn row(&self, r: usize) -> (&[u32], &[f64]) {
        let range = self.start[r]..self.start[r + 1];
        (&self.columns[range.clone()], &self.targets[range])
    }

    /// [`Self::row`], with the columns running on into the rows after it for up to
    /// [`LOOKAHEAD`] more entries: the solver only announces those to the cache, so that the
    /// first vectors of the next problem are on their way while this one is built.
    fn row_and_ahead(&self, r: usize) -> (&[u32], &[f64]) {
        let range = self.start[r]..self.start[r + 1];
        let ahead = (range.end + LOOKAHEAD).min(self.columns.len());
        (&self.columns[range.start..ahead], &self.targets[range])
    }

    pub(super) fn rows(&self) -> usize {
        self.start.len() - 1
    }

    /// Where row `r`'s entries sit in `columns` and `targets` (and in arrays laid out
    /// like them).
    pub(super) fn span(&self, r: usize) -> std::ops::Range<usize> {
        self.start[r]..self.start[r + 1]
    }
}

/// A fit in progress: exposes the half-steps so callers (and tests) can watch L.
///
/// With biases (`FitOptions::lambda_bias`), a member's `(u_i, b_i)` is one ridge regression
/// on features `[v_j, 1]` with target `M_ij − μ − c_j` and penalty
/// `diag(λσ², …, λσ², λ_bσ²)`, solved exactly by
/// [`RidgeWorkspace::solve_batch_with_offsets`], which takes the item offsets `c_j` off the
/// stored targets `M_ij − μ` as each problem is loaded; an item's `(v_j, c_j)` likewise.
pub struct Fitter<'a> {
    options: FitOptions,
    ratings: &'a Ratings,
    by_user: Compressed,
    by_item: Compressed,
    holdout: Vec<(u32, u32, f64)>,
    model: FactorModel,
    /// The state of [`Accel::Line`], when the fit uses it.
    extrapolation: Option<Extrapolation>,
}

impl<'a> Fitter<'a> {
    /// Prepares a fit: validates options, applies the λ = 0 guard, computes μ and draws
    /// (or copies from `init_items`) the starting item vectors.
    pub fn new(
        ratings: &'a Ratings,
        options: &FitOptions,
        init_items: Option<(&FactorTable, &std::path::Path)>,
    ) -> Result<Self, FitError> {
        options.validate()?;
        let d = options.rank;
        let train = || ratings.entries.iter().filter(|r| !r.holdout);
        let train_count = train().count();
        if train_count == 0 {
            return Err(FitError::Option(
                "there are no training ratings to fit".into(),
            ));
        }
        let mu = match options.center {
            Center::Global => train().map(|r| r.value).sum::<f64>() / train_count as f64,
            Center::None | Center::Given => 0.0,
        };
        if options.lambda == 0.0 {
            // With a free, unpenalised offset a member needs one rating more than the rank.
            let free_offset = options.lambda_bias == Some(0.0);
            guard_underdetermined(ratings, d, free_offset)?;
        }
        let by_user = Compressed::build(
            ratings.users.len(),
            train().map(|r| (r.user, r.item, r.value - mu)),
        );
        let by_item = Compressed::build(
            ratings.items.len(),
            train().map(|r| (r.item, r.user, r.value - mu)),
        );
        let holdout = ratings
            .entries
            .iter()
            .filter(|r| r.holdout)
            .map(|r| (r.user, r.item, r.value))
            .collect();
        let items = match init_items {
            Some((table, path)) => items_from_table(ratings, table, path, d)?,
            None => random_items(ratings.items.len(), d, options.lambda, options.seed),
        };
        let model = FactorModel {
            rank: d,
            mu,
            users: vec![0.0; ratings.users.len() * d],
            items,
            biases: None,
        };
        Ok(Self {
            options: options.clone(),
            ratings,
            by_user,
            by_item,
            holdout,
            model,
            extrapolation: match options.accel {
                Accel::None => None,
                Accel::Line => Some(Extrapolation::new(Method::Line)),
                Accel::Anderson => Some(Extrapolation::new(Method::Anderson)),
            },
        }
        .with_optional_biases(options.lambda_bias))
    }

    fn with_optional_biases(self, lambda_bias: Option<f64>) -> Self {
        match lambda_bias {
            Some(lambda_bias) => self.biased_with(lambda_bias),
            None => self,
        }
    }

    /// Fits a member offset `b_i` and an item offset `c_j` beside the vectors, with prior
    /// precision `lambda_bias` (offsets start at 0). Coordinate ascent stays exact and
    /// monotone: each half-step solves every `(u_i, b_i)` (or `(v_j, c_j)`) jointly.
    pub fn with_biases(self, lambda_bias: f64) -> Result<Self, FitError> {
        FitOptions {
            lambda_bias: Some(lambda_bias),
            ..self.options.clone()
        }
        .validate()?;
        if self.options.lambda == 0.0 && lambda_bias == 0.0 {
            guard_underdetermined(self.ratings, self.model.rank, true)?;
        }
        Ok(self.biased_with(lambda_bias))
    }

    fn biased_with(mut self, lambda_bias: f64) -> Self {
        self.options.lambda_bias = Some(lambda_bias);
        self.model.biases = Some(Biases {
            user: vec![0.0; self.by_user.rows()],
            item: vec![0.0; self.by_item.rows()],
            lambda: lambda_bias,
        });
        self
    }

    /// The fitted offsets so far, for a fit with biases.
    pub fn biases(&self) -> Option<&Biases> {
        self.model.biases.as_ref()
    }

    /// The current vectors.
    pub fn model(&self) -> &FactorModel {
        &self.model
    }

    /// Updates every user vector (one ridge solve each) for the current item vectors.
    pub fn update_users(&mut self) -> Result<(), FitError> {
        let ridge = self.options.lambda * self.options.sigma2;
        if let Some(biases) = &mut self.model.biases {
            let failed = solve_rows(
                &mut self.model.users,
                Some(&mut biases.user),
                &self.by_user,
                self.model.rank,
                |ws, (_, problems), vectors, offsets| {
                    ws.solve_batch_with_offsets(
                        &self.model.items,
                        &biases.item,
                        problems,
                        ridge,
                        biases.lambda * self.options.sigma2,
                        vectors,
                        offsets,
                    )
                },
            );
            return failed.map_or(Ok(()), |i| {
                Err(self.not_positive_definite("user", self.ratings.users.name(i)))
            });
        }
        let failed = solve_side(
            &mut self.model.users,
            &self.model.items,
            &self.by_user,
            self.model.rank,
            ridge,
        );
        failed.map_or(Ok(()), |i| {
            Err(self.not_positive_definite("user", self.ratings.users.name(i)))
        })
    }

    /// Updates every item vector for the current user vectors.
    pub fn update_items(&mut self) -> Result<(), FitError> {
        let ridge = self.options.lambda * self.options.sigma2;
        if let Some(biases) = &mut self.model.biases {
            let failed = solve_rows(
                &mut self.model.items,
                Some(&mut biases.item),
                &self.by_item,
                self.model.rank,
                |ws, (_, problems), vectors, offsets| {
                    ws.solve_batch_with_offsets(
                        &self.model.users,
                        &biases.user,
                        problems,
                        ridge,
                        biases.lambda * self.options.sigma2,
                        vectors,
                        offsets,
                    )
                },
            );
            return failed.map_or(Ok(()), |j| {
                Err(self.not_positive_definite("item", self.ratings.items.name(j)))
            });
        }
        let failed = solve_side(
            &mut self.model.items,
            &self.model.users,
            &self.by_item,
            self.model.rank,
            ridge,
        );
        failed.map_or(Ok(()), |j| {
            Err(self.not_positive_definite("item", self.ratings.items.name(j)))
        })
    }

    fn not_positive_definite(&self, kind: &'static str, id: &str) -> FitError {
        let hint = if self.options.lambda > 0.0 {
            "; the ridge term λσ² is too small to make it solvable in floating point, or the input holds extreme values: raise --lambda or --sigma2"
        } else {
            "; its rated vectors are linearly dependent: use --lambda > 0"
        };
        FitError::NotPositiveDefinite {
            kind,
            id: id.to_owned(),
            hint,
        }
    }

    /// Sum of squared training residuals, reduced in user order.
    fn training_sse(&self) -> f64 {
        let m = &self.model;
        let per_user: Vec<f64> = (0..self.by_user.rows())
            .into_par_iter()
            .with_min_len(256)
            .map(|i| {
                let (items, targets) = self.by_user.row(i);
                let u = m.user(i as u32);
                items
                    .iter()
                    .zip(targets)
                    .map(|(&j, &y)| (y - m.offset(i as u32, j) - dot(u, m.item(j))).powi(2))
                    .sum::<f64>()
            })
            .collect();
        per_user.iter().sum()
    }

    fn holdout_rmse(&self) -> Option<f64> {
        if self.holdout.is_empty() {
            return None;
        }
        let m = &self.model;
        let squares: Vec<f64> = self
            .holdout
            .par_iter()
            .with_min_len(1024)
            .map(|&(i, j, y)| (y - m.predict(i, j)).powi(2))
            .collect();
        Some((squares.iter().sum::<f64>() / squares.len() as f64).sqrt())
    }

    /// The log joint likelihood L of the current vectors (up to a constant).
    pub fn log_joint(&self) -> f64 {
        self.log_joint_with(self.training_sse())
    }

    fn log_joint_with(&self, sse: f64) -> f64 {
        let m = &self.model;
        let norms: f64 = m.users.chunks_exact(m.rank).map(squared_norm).sum::<f64>()
            + m.items.chunks_exact(m.rank).map(squared_norm).sum::<f64>();
        let offsets = m.biases.as_ref().map_or(0.0, |b| {
            b.lambda / 2.0
                * (b.user.iter().map(|x| x * x).sum::<f64>()
                    + b.item.iter().map(|x| x * x).sum::<f64>())
        });
        -sse / (2.0 * self.options.sigma2) - self.options.lambda / 2.0 * norms - offsets
    }

    /// One full iteration (users, then items) and its record.
    pub fn iterate(&mut self, iter: usize) -> Result<IterationRecord, FitError> {
        if let Some(extrapolation) = &mut self.extrapolation {
            extrapolation.remember_start(&self.model);
        }
        self.update_users()?;
        self.update_items()?;
        let mut sse = self.training_sse();
        let mut extrapolated = false;
        // The first iteration starts from member vectors of zero, not from a solve: its
        // change is no direction to follow.
        if let Some(mut extrapolation) = self.extrapolation.take() {
            if iter > 1 {
                let plain = self.log_joint_with(sse);
                if extrapolation.propose(&mut self.model) {
                    let further = self.training_sse();
                    // Also refuses a proposal whose L is not a number.
                    if self.log_joint_with(further) > plain {
                        extrapolation.accept();
                        (sse, extrapolated) = (further, true);
                    } else {
                        extrapolation.reject(&mut self.model);
                    }
                }
            }
            self.extrapolation = Some(extrapolation);
        }
        let n = self.by_user.columns.len() as f64;
        Ok(IterationRecord {
            iter,
            log_joint: self.log_joint_with(sse),
            train_rmse: (sse / n).sqrt(),
            holdout_rmse: self.holdout_rmse(),
            extrapolated,
        })
    }

    /// Iterates until `|ΔL| ≤ tol·|L|` or the iteration limit, reporting each iteration.
    pub fn run(
        mut self,
        mut progress: impl FnMut(&IterationRecord),
    ) -> Result<FitResult, FitError> {
        let (max_iters, tol) = (self.options.max_iters, self.options.tol);
        let (trace, converged) = iterate_until(
            (max_iters, tol),
            |iter| self.iterate(iter),
            |r| r.log_joint,
            &mut progress,
        )?;
        Ok(FitResult {
            factors: self.model,
            trace,
            converged,
        })
    }
}

/// Runs `iterate` for iterations 1, 2, … until the objective `value` of a record changes
/// by at most `tol` times its size from the iteration before, or `max_iters` iterations;
/// reports each record to `progress`. Returns the trace and whether the tolerance was met.
pub(super) fn iterate_until<R>(
    (max_iters, tol): (usize, f64),
    mut iterate: impl FnMut(usize) -> Result<R, FitError>,
    value: impl Fn(&R) -> f64,
    progress: &mut impl FnMut(&R),
) -> Result<(Vec<R>, bool), FitError> {
    let mut trace: Vec<R> = Vec::new();
    for iter in 1..=max_iters {
        let record = iterate(iter)?;
        progress(&record);
        let now = value(&record);
        let previous = trace.last().map(&value);
        trace.push(record);
        if previous.is_some_and(|p| (now - p).abs() <= tol * now.abs()) {
            return Ok((trace, true));
        }
    }
    Ok((trace, false))
}

/// Fits the model to the training ratings (see the module docs of [`crate::model`]).
///
/// ```
/// use sextant::data::{read_ratings, RatingsOptions};
/// use sextant::model::{fit, FitOptions};
///
/// let csv = "user,item,rating\na,x,5\na,y,1\nb,x,4\nb,y,2\nc,x,5\n";
/// let ratings = read_ratings(csv.as_bytes(), "demo.csv".as_ref(), &RatingsOptions::default()).unwrap();
/// let options = FitOptions { rank: 2, ..FitOptions::default() };
/// let result = fit(&ratings, &options, None, |_| {}).unwrap();
/// assert!(result.trace.windows(2).all(|w| w[1].log_joint >= w[0].log_joint));
/// ```
pub fn fit(
    ratings: &Ratings,
    options: &FitOptions,
    init_items: Option<(&FactorTable, &std::path::Path)>,
    progress: impl FnMut(&IterationRecord),
) -> Result<FitResult, FitError> {
    Fitter::new(ratings, options, init_items)?.run(progress)
}

/// Solves every row of one side, [`BATCH`] rows at a time; returns the first row (in index
/// order) that failed.
fn solve_side(
    out: &mut [f64],
    other: &[f64],
    rows: &Compressed,
    d: usize,
    ridge: f64,
) -> Option<u32> {
    solve_rows(out, None, rows, d, |ws, (_, problems), vectors, _| {
        ws.solve_batch(other, problems, ridge, vectors)
    })
}

/// Solves every row of `rows` with `solve` (a batch of up to [`BATCH`] problems — the index
/// of its first row, and each problem's columns and targets — into their vectors and, when
/// `offsets` is given, their offsets),
/// in parallel; returns the first row (in index order) that failed.
pub(super) fn solve_rows(
    out: &mut [f64],
    offsets: Option<&mut [f64]>,
    rows: &Compressed,
    d: usize,
    solve: impl Fn(
        &mut RidgeWorkspace,
        (usize, &[super::solve::Problem<'_>]),
        &mut [f64],
        &mut [f64],
    ) -> [bool; BATCH]
    + Sync,
) -> Option<u32> {
    let mut unused = Vec::new();
    let offsets = offsets.unwrap_or_else(|| {
        unused = vec![0.0; rows.rows()];
        &mut unused
    });
    let failures: Vec<u32> = out
        .par_chunks_mut(d * BATCH)
        .zip(offsets.par_chunks_mut(BATCH))
        .enumerate()
        .with_min_len(16)
        .map_init(
            || RidgeWorkspace::new(d),
            |ws, (batch, (vectors, offsets))| {
                let first = batch * BATCH;
                let count = vectors.len() / d;
                let empty: (&[u32], &[f64]) = (&[], &[]);
                let mut problems = [empty; BATCH];
                for (k, problem) in problems.iter_mut().enumerate().take(count) {
                    *problem = rows.row_and_ahead(first + k);
                }
                let ok = solve(ws, (first, &problems[..count]), vectors, offsets);
                (0..count).find(|&k| !ok[k]).map(|k| (first + k) as u32)
            },
        )
        .flatten()
        .collect();
    failures.first().copied()
}

/// Refuses a fit with λ = 0 where some member or item has fewer training ratings than the
/// unknowns of its solve: the rank, plus one with an unpenalised offset.
fn guard_underdetermined(
    ratings: &Ratings,
    rank: usize,
    free_offset: bool,
) -> Result<(), FitError> {
    let d = rank + usize::from(free_offset);
    let (users, items) = ratings.train_support();
    let short_users: Vec<u32> = (0..users.len() as u32)
        .filter(|&i| (users[i as usize] as usize) < d)
        .collect();
    let short_items: Vec<u32> = (0..items.len() as u32)
        .filter(|&j| (items[j as usize] as usize) < d)
        .collect();
    if short_users.is_empty() && short_items.is_empty() {
        return Ok(());
    }
    Err(FitError::Underdetermined {
        rank,
        free_offset,
        short_users: short_users.len(),
        short_items: short_items.len(),
        user_list: first_few(short_users.iter().map(|&i| ratings.users.name(i)), 5),
        item_list: first_few(short_items.iter().map(|&j| ratings.items.name(j)), 5),
    })
}

/// Initial item vectors drawn i.i.d. `N(0, 1/λ)` (or `N(0, 1)` when λ = 0).
pub(super) fn random_items(count: usize, d: usize, lambda: f64, seed: u64) -> Vec<f64> {
    let scale = if lambda > 0.0 {
        1.0 / lambda.sqrt()
    } else {
        1.0
    };
    let mut rng = Rng::new(seed);
    (0..count * d).map(|_| scale * rng.normal()).collect()
}

pub(super) fn items_from_table(
    ratings: &Ratings,
    table: &FactorTable,
    path: &std::path::Path,
    d: usize,
) -> Result<Vec<f64>, FitError> {
    if table.rank != d {
        return Err(DataError::in_file(
            path,
            format!(
                "the initial item table has {} factor columns but --rank is {d}",
                table.rank
            ),
        )
        .into());
    }
    let missing: Vec<&str> = ratings
        .items
        .names()
        .iter()
        .filter(|id| table.ids.get(id).is_none())
        .map(String::as_str)
        .collect();
    if !missing.is_empty() {
        return Err(DataError::in_file(
            path,
            format!(
                "{} rated item(s) have no initial vector{}",
                missing.len(),
                first_few(missing.iter().copied(), 5)
            ),
        )
        .into());
    }
    let mut items = Vec::with_capacity(ratings.items.len() * d);
    for id in ratings.items.names() {
        let row = table.ids.get(id).expect("checked above") as usize;
        items.extend_from_slice(table.row(row));
    }
    Ok(items)
}
