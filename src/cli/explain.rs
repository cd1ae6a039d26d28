//! `sextant explain`: why the model predicts what it does for one member and one item.

use std::fmt::Write as _;

use clap::Args;
use serde::Serialize;
use sextant::analysis::explain::{explain, item_support};
use sextant::model::notes::load_with_notes;

use super::args::{ModelArg, OutputArgs};
use super::lookup::{csv_number, item_label, item_title, resolve, resolve_item};
use super::output::{self, Format};

/// Arguments of `explain` (help text on the subcommand, in `cli/mod.rs`).
#[derive(Debug, Args)]
pub struct ExplainArgs {
    #[command(flatten)]
    model: ModelArg,
    /// The member.
    #[arg(value_name = "USER")]
    user: String,
    /// The item.
    #[arg(value_name = "ITEM")]
    item: String,
    /// How many of the member's rated items to show as evidence.
    #[arg(long, default_value_t = 5)]
    evidence: usize,
    #[command(flatten)]
    output: OutputArgs,
    /// A few plain sentences for the member, built only from their own ratings.
    #[arg(long, conflicts_with = "format")]
    plain: bool,
}

#[derive(Serialize)]
struct ContributionRow {
    factor: usize,
    /// The curators' label of the factor (`annotations.ron`), null when it has none.
    label: Option<String>,
    value: f64,
}

#[derive(Serialize)]
struct EvidenceRow<'a> {
    item: &'a str,
    /// The item's title, null when the model has none.
    title: Option<&'a str>,
    actual: f64,
    predicted: f64,
    distance: f64,
}

#[derive(Serialize)]
struct ShareRow<'a> {
    item: &'a str,
    /// The item's title, null when the model has none.
    title: Option<&'a str>,
    /// The member's rating (null in an implicit-feedback model).
    rating: Option<f64>,
    weight: f64,
    share: f64,
    /// Implicit feedback: the member's count and its confidence (null for ratings).
    count: Option<f64>,
    confidence: Option<f64>,
}

/// The member the `by_rating` shares are of: re-solved against the current item vectors.
#[derive(Serialize)]
struct RefreshedRow {
    /// Its prediction: μ + user_bias + item_bias + Σ shares.
    predicted: f64,
    /// Its offset, null in a model without biases.
    user_bias: Option<f64>,
    /// `predicted` minus the prediction from the stored vector (0 for the exact optimum).
    difference: f64,
}

#[derive(Serialize)]
struct SupportRow {
    user_ratings: usize,
    /// The member's ratings held out of the fit (not counted in `user_ratings`).
    user_held_out: usize,
    item_ratings: usize,
    user_low_support: bool,
    item_low_support: bool,
}

#[derive(Serialize)]
struct Report<'a> {
    user: &'a str,
    item: &'a str,
    /// The item's title, null when the model has none.
    title: Option<&'a str>,
    mu: f64,
    /// The member's offset, null in a model without biases.
    user_bias: Option<f64>,
    /// The item's offset, null in a model without biases.
    item_bias: Option<f64>,
    /// The predicted rating (null in an implicit-feedback model: see `score`).
    predicted: Option<f64>,
    rounded: Option<f64>,
    predictive_sd: Option<f64>,
    /// The member's rating (implicit feedback: their count), null when there is none.
    actual: Option<f64>,
    /// Implicit feedback: the score `u·v` (null for ratings).
    score: Option<f64>,
    contributions: Vec<ContributionRow>,
    evidence: Vec<EvidenceRow<'a>>,
    support: SupportRow,
    /// The prediction by the member's own training ratings, largest |share| first; null
    /// when the member's regression is not determined (λ = 0 and too few ratings).
    by_rating: Option<Vec<ShareRow<'a>>>,
    /// What `by_rating` adds up to.
    by_rating_refreshed: Option<RefreshedRow>,
}

pub fn run(args: &ExplainArgs) -> anyhow::Result<()> {
    let (model, notes) = load_with_notes(&args.model.model)?;
    let labels = &notes.current;
    let user = resolve(&model.ratings.users, &args.user, "member")?;
    let item = resolve_item(&model, &args.item)?;
    let e = explain(&model, user, item, args.evidence, &item_support(&model));
    if args.plain {
        let text = sextant::analysis::plain::plain_explanation(&model, &e, labels);
        return output::print(&(text + "\n"), Format::Table);
    }
    let items = &model.ratings.items;
    let confidence = model.implicit();
    let report = Report {
        user: &args.user,
        item: items.name(item),
        title: item_title(&model, item).0,
        mu: e.mu,
        user_bias: e.user_bias,
        item_bias: e.item_bias,
        predicted: confidence.is_none().then_some(e.predicted),
        rounded: e.rounded,
        predictive_sd: e.predictive_sd,
        actual: e.actual,
        score: confidence.is_some().then_some(e.predicted),
        contributions: e
            .contributions
            .iter()
            .map(|c| ContributionRow {
                factor: c.factor,
                label: labels.factor_label(c.factor).map(str::to_owned),
                value: c.value,
            })
            .collect(),
        evidence: e
            .evidence
            .iter()
            .map(|x| EvidenceRow {
                item: items.name(x.item),
                title: item_title(&model, x.item).0,
                actual: x.actual,
                predicted: x.predicted,
                distance: x.distance,
            })
            .collect(),
        support: SupportRow {
            user_ratings: e.support.user_ratings,
            user_held_out: e.support.user_held_out,
            item_ratings: e.support.item_ratings,
            user_low_support: e.support.user_low_support,
            item_low_support: e.support.item_low_support,
        },
        by_rating: e.by_rating.as_ref().map(|b| {
            b.shares
                .iter()
                .map(|s| ShareRow {
                    item: items.name(s.item),
                    title: item_title(&model, s.item).0,
                    rating: confidence.is_none().then_some(s.rating),
                    weight: s.weight,
                    share: s.share,
                    count: confidence.is_some().then_some(s.rating),
                    confidence: confidence.map(|c| c.of(s.rating)),
                })
                .collect()
        }),
        by_rating_refreshed: e.by_rating.as_ref().map(|b| RefreshedRow {
            predicted: b.predicted,
            user_bias: b.user_bias,
            difference: b.difference,
        }),
    };
    let text = match args.output.format {
        Format::Json => serde_json::to_string_pretty(&report)? + "\n",
        Format::Csv => {
            let mut out = String::from(
                "factor,value,label,mu,predicted,rounded,predictive_sd,actual,user_bias,item_bias,score\n",
            );
            let (mu, predicted, rounded, score) = (
                csv_number(Some(report.mu)),
                csv_number(report.predicted),
                csv_number(report.rounded),
                csv_number(report.score),
            );
            let (user_bias, item_bias) =
                (csv_number(report.user_bias), csv_number(report.item_bias));
            let (sd, actual) = (csv_number(report.predictive_sd), csv_number(report.actual));
            for c in &report.contributions {
                output::csv_row(
                    &mut out,
                    &[
                        &c.factor.to_string(),
                        &csv_number(Some(c.value)),
                        c.label.as_deref().unwrap_or(""),
                        &mu,
                        &predicted,
                        &rounded,
                        &sd,
                        &actual,
                        &user_bias,
                        &item_bias,
                        &score,
                    ],
                );
            }
            out
        }
        Format::Table => table(&model, &report, &e),
    };
    output::print(&text, args.output.format)
}

fn table(
    model: &sextant::model::Model,
    r: &Report<'_>,
    e: &sextant::analysis::Explanation,
) -> String {
    let mut out = String::new();
    let _ = writeln!(
        out,
        "member {} and item {}",
        r.user,
        item_label(model, e.item)
    );
    let implicit = model.implicit().is_some();
    let (rating, rated) = if implicit {
        ("interactions", "chosen")
    } else {
        ("ratings", "rated")
    };
    if implicit {
        let actual = r.actual.filter(|&a| a > 0.0).map_or_else(
            || "not chosen".to_owned(),
            |a| format!("chosen {a} time(s)"),
        );
        let _ = writeln!(
            out,
            "score {:.3} (a preference: near 1 a likely interest, near 0 none); {actual}\n",
            e.predicted
        );
    } else {
        let sd = r
            .predictive_sd
            .map_or_else(|| "undetermined".to_owned(), |v| format!("± {v:.2}"));
        let actual = r
            .actual
            .map_or_else(|| "not rated".to_owned(), |a| format!("rated {a}"));
        let _ = writeln!(
            out,
            "predicted {:.3} → {} on the scale ({sd}); {actual}",
            e.predicted,
            r.rounded.map_or_else(String::new, |v| v.to_string())
        );
        let _ = writeln!(
            out,
            "\n  {:>10}  {}",
            format!("{:+.3}", r.mu),
            model.manifest.center.mu_label()
        );
    }
    if let (Some(b), Some(c)) = (r.user_bias, r.item_bias) {
        let _ = writeln!(out, "  {:>10}  the member's offset", format!("{b:+.3}"));
        let _ = writeln!(out, "  {:>10}  the item's offset", format!("{c:+.3}"));
    }
    for c in &r.contributions {
        let label = c
            .label
            .as_deref()
            .map_or_else(String::new, |l| format!(" ({l})"));
        let _ = writeln!(
            out,
            "  {:>10}  factor {}{label}",
            format!("{:+.3}", c.value),
            c.factor
        );
    }
    let _ = writeln!(
        out,
        "  {:>10}  = {}",
        format!("{:.3}", e.predicted),
        if implicit { "score" } else { "prediction" }
    );
    if !r.evidence.is_empty() {
        let _ = writeln!(out, "\nthe member's own {rated} items nearest to this one:");
        let _ = writeln!(
            out,
            "  {:>8}  {:>6}  {:>9}  item",
            "distance",
            if implicit { "count" } else { "rated" },
            if implicit { "score" } else { "predicted" }
        );
        for (row, x) in r.evidence.iter().zip(&e.evidence) {
            let _ = writeln!(
                out,
                "  {:>8.3}  {:>6}  {:>9.3}  {}",
                row.distance,
                row.actual,
                row.predicted,
                item_label(model, x.item)
            );
        }
    }
    if let Some(b) = &e.by_rating {
        by_rating_table(&mut out, model, b, r.mu);
    }
    let s = &r.support;
    let flag = |low: bool| {
        if low {
            " — fewer than the rank: placed mostly by the prior"
        } else {
            ""
        }
    };
    let held = if s.user_held_out > 0 {
        format!(" (and {} held out of the fit)", s.user_held_out)
    } else {
        String::new()
    };
    let _ = writeln!(
        out,
        "\nsupport: the member has {} training {rating}{held}{}",
        s.user_ratings,
        flag(s.user_low_support)
    );
    let _ = writeln!(
        out,
        "         the item has {} training {rating}{}",
        s.item_ratings,
        flag(s.item_low_support)
    );
    if implicit {
        let _ = writeln!(
            out,
            "\nThis describes the model's arithmetic, not the member's motives or traits."
        );
    } else {
        let _ = writeln!(
            out,
            "\nThe ± figure is the predictive standard deviation given the item vectors; the item"
        );
        let _ = writeln!(
            out,
            "vectors' own uncertainty is not included. This describes the model's arithmetic, not the"
        );
        let _ = writeln!(out, "member's motives or traits.");
    }
    out
}

/// How many of the member's ratings the table lists by share.
const SHARES_SHOWN: usize = 5;

/// The prediction by the member's own ratings, and which member it is of.
fn by_rating_table(
    out: &mut String,
    model: &sextant::model::Model,
    b: &sextant::analysis::explain::ByRating,
    mu: f64,
) {
    let implicit = model.implicit();
    if let Some(confidence) = implicit {
        let _ = writeln!(
            out,
            "\nthe member's own choices that produced it (share = weight × confidence, confidence = {}):",
            confidence.describe()
        );
    } else {
        let _ = writeln!(
            out,
            "\nthe member's own ratings that produced it (share = weight × (rating − μ{})):",
            if b.user_bias.is_some() {
                " − item offset"
            } else {
                ""
            }
        );
    }
    let _ = writeln!(
        out,
        "  {:>8}  {:>7}  {:>6}  item",
        "share",
        "weight",
        if implicit.is_some() { "count" } else { "rated" }
    );
    for s in b.shares.iter().take(SHARES_SHOWN) {
        let _ = writeln!(
            out,
            "  {:>+8.3}  {:>7.3}  {:>6}  {}",
            s.share,
            s.weight,
            s.rating,
            item_label(model, s.item)
        );
    }
    let rest = b.shares.len().saturating_sub(SHARES_SHOWN);
    let shown: f64 = b.shares.iter().take(SHARES_SHOWN).map(|s| s.share).sum();
    let total: f64 = b.shares.iter().map(|s| s.share).sum();
    if rest > 0 {
        let _ = writeln!(
            out,
            "  {:>+8.3}  the other {rest} {}(s) together",
            total - shown,
            if implicit.is_some() {
                "choice"
            } else {
                "rating"
            }
        );
    }
    if implicit.is_some() {
        let _ = writeln!(out, "  {total:>+8.3}  in all: the score");
    }
    let offsets = b.predicted - mu - total;
    if implicit.is_none() {
        let _ = writeln!(
            out,
            "  {:>+8.3}  in all; with μ{} that is {:.3}",
            total,
            if b.user_bias.is_some() {
                format!(" and the offsets ({offsets:+.3})")
            } else {
                String::new()
            },
            b.predicted
        );
    }
    if b.difference.abs() > 1e-9 * b.predicted.abs().max(1.0) {
        let _ = writeln!(
            out,
            "  The stored member vector is not exactly the best fit to the current item vectors (a\n  fit's last item step comes after its last member step): re-solved, it predicts {:.3},\n  {:+.4} from the {:.3} above. The shares are those of the re-solved vector.",
            b.predicted,
            b.difference,
            b.predicted - b.difference
        );
    }
}
