//! The audit report: one Markdown document readable without the tool, and the same figures
//! as CSV files for a data team's own analysis.

use std::fmt::Write as _;

use crate::analysis::audit::Audit;
use crate::analysis::diagnostics::{Miss, Side};
use crate::analysis::metrics::ErrorMetrics;
use crate::data::factors::{format_float, quote_field};
use crate::index::Metric;
use crate::model::Model;
use crate::model::notes::Annotations;

/// `id  title (category)` as plain text.
pub fn item_label(model: &Model, j: u32) -> String {
    let id = model.ratings.items.name(j);
    let meta = model.meta.as_ref().and_then(|m| m.get(j));
    let title = meta.and_then(|m| m.title.as_deref());
    let category = meta.and_then(|m| m.category.as_deref());
    match (title, category) {
        (Some(t), Some(c)) => format!("{id} {t} ({c})"),
        (Some(t), None) => format!("{id} {t}"),
        (None, Some(c)) => format!("{id} ({c})"),
        (None, None) => id.to_owned(),
    }
}

/// Escapes text for a Markdown table cell.
fn cell(text: &str) -> String {
    text.replace('\\', "\\\\").replace('|', "\\|")
}

/// A probability: fixed for ordinary values, scientific for tiny ones.
fn probability(p: f64) -> String {
    if p >= 0.001 {
        format!("{p:.3}")
    } else {
        format!("{p:.1e}")
    }
}

fn table(out: &mut String, header: &[&str], rows: &[Vec<String>]) {
    let _ = writeln!(out, "| {} |", header.join(" | "));
    let _ = writeln!(
        out,
        "|{}|",
        header.iter().map(|_| "---").collect::<Vec<_>>().join("|")
    );
    for row in rows {
        let cells: Vec<String> = row.iter().map(|c| cell(c)).collect();
        let _ = writeln!(out, "| {} |", cells.join(" | "));
    }
    out.push('\n');
}

fn metric_name(metric: Metric) -> &'static str {
    match metric {
        Metric::Euclidean => "Euclidean",
        Metric::Cosine => "cosine",
    }
}

fn health_row(name: &str, m: Option<&ErrorMetrics>) -> Vec<String> {
    match m {
        Some(m) => vec![
            name.to_owned(),
            m.count.to_string(),
            format!("{:.4}", m.rmse),
            format!("{:.4}", m.mae),
            format!("{:.4}", m.rmse_rounded),
            format!("{:.4}", m.mae_rounded),
            format!("{:.1}%", 100.0 * m.exact_rate),
        ],
        None => vec![
            name.to_owned(),
            "0".into(),
            "–".into(),
            "–".into(),
            "–".into(),
            "–".into(),
            "–".into(),
        ],
    }
}

fn miss_rows(model: &Model, misses: &[Miss]) -> Vec<Vec<String>> {
    misses
        .iter()
        .map(|m| {
            vec![
                model.ratings.users.name(m.user).to_owned(),
                item_label(model, m.item),
                format_float(m.actual),
                format!("{:.3}", m.predicted),
                format!("{:+.3}", m.residual()),
            ]
        })
        .collect()
}

/// The ranking measures beside a random order's, as a Markdown table.
fn ranking_table(out: &mut String, r: &crate::analysis::ranking::RankingQuality) {
    let k = r.k;
    table(
        out,
        &["metric", "model", "random", "ratio"],
        &[
            ("precision", r.precision, r.random.0),
            ("recall", r.recall, r.random.1),
            ("NDCG", r.ndcg, r.random.2),
        ]
        .iter()
        .map(|(n, v, b)| {
            vec![
                format!("{n}@{k}"),
                format!("{v:.4}"),
                format!("{b:.4}"),
                if *b > 0.0 {
                    format!("{:.1}×", v / b)
                } else {
                    "–".into()
                },
            ]
        })
        .collect::<Vec<_>>(),
    );
}

/// The Markdown report of `audit` on `model` (named `name` in the title), including the
/// curator `notes`.
#[allow(clippy::too_many_lines)]
pub fn markdown(model: &Model, name: &str, audit: &Audit, notes: &Annotations) -> String {
    let m = &model.manifest;
    let mut out = String::new();
    let _ = writeln!(out, "# Audit of model {name}\n");
    let implicit = m.implicit.as_ref();
    let noun = if implicit.is_some() {
        "interactions"
    } else {
        "ratings"
    };
    let iterations = implicit.map_or(m.trace.len(), |i| i.trace.len());
    let fitted = match (m.origin, m.converged) {
        (crate::model::manifest::Origin::Import, _) => {
            "Vectors imported from elsewhere.".to_owned()
        }
        (_, true) => format!("The fit converged after {iterations} iterations."),
        (_, false) => format!("The fit stopped after {iterations} iterations without converging."),
    };
    if let Some(implicit) = implicit {
        let _ = writeln!(
            out,
            "Written by sextant {}. Implicit feedback (Hu, Koren & Volinsky 2008): rank {}, \
             λ = {}, confidence {}; {} members, {} items, {} interactions ({} for training, {} \
             held out); counts {}. Scores are preferences, not ratings. {fitted}\n",
            env!("CARGO_PKG_VERSION"),
            m.rank,
            m.lambda,
            implicit.confidence.describe(),
            m.counts.users,
            m.counts.items,
            m.counts.ratings,
            m.counts.train_ratings,
            m.counts.holdout_ratings,
            m.scale.describe(),
        );
    } else {
        let _ = writeln!(
            out,
            "Written by sextant {}. Rank {}, λ = {}, σ² = {}, μ = {:.4}; {} members, {} items, \
             {} ratings ({} for training, {} held out); rating scale {}. {fitted}\n",
            env!("CARGO_PKG_VERSION"),
            m.rank,
            m.lambda,
            m.sigma2,
            m.mu,
            m.counts.users,
            m.counts.items,
            m.counts.ratings,
            m.counts.train_ratings,
            m.counts.holdout_ratings,
            m.scale.describe(),
        );
    }
    let _ = writeln!(
        out,
        "{} are personal data: keep this report as your data-protection rules require.\n",
        if implicit.is_some() {
            "Interactions"
        } else {
            "Ratings"
        }
    );

    // Health.
    let _ = writeln!(out, "## Fit health\n");
    if let Some(implicit) = implicit {
        if let Some(last) = implicit.trace.last() {
            let _ = writeln!(out, "Final loss {:.6e} (it never increases).\n", last.loss);
        }
        let _ = writeln!(
            out,
            "{}\n",
            audit.percentile_rank.map_or_else(
                || "Expected percentile rank: not measured, no interactions are held out."
                    .to_owned(),
                |p| format!(
                    "Expected percentile rank of the held-out interactions: **{:.2}%** \
                     (each held-out item's position among everything the member had not \
                     chosen in training, weighted by its count; 0% is every one first, 50% a \
                     random order).",
                    100.0 * p
                )
            )
        );
    } else {
        table(
            &mut out,
            &[
                "ratings",
                "count",
                "RMSE",
                "MAE",
                "RMSE rounded",
                "MAE rounded",
                "exact",
            ],
            &m.metrics.as_ref().map_or_else(Vec::new, |metrics| {
                vec![
                    health_row("training", Some(&metrics.train)),
                    health_row("held out", metrics.holdout.as_ref()),
                ]
            }),
        );
        if let Some(last) = m.trace.last() {
            let _ = writeln!(
                out,
                "Final log joint likelihood L = {:.4}. \"Rounded\" predictions are rounded onto the \
                 rating scale; \"exact\" is the share of rounded predictions equal to the rating.\n",
                last.log_joint
            );
        }
    }

    // Ranking.
    let _ = writeln!(out, "## Ranking quality on held-out {noun}\n");
    match &audit.ranking {
        Some(r) if implicit.is_some() => {
            let _ = writeln!(
                out,
                "For each of {} members with a held-out interaction (relevant), every item they \
                 did not choose in training is ranked by score and the top {} are compared with \
                 their held-out items. NDCG uses binary relevance with linear gain \
                 rel/log₂(i+1) (Järvelin & Kekäläinen 2002), normalised by the ideal order. \
                 \"Random\" is the expected value for a random order of the same candidates.\n",
                r.users, r.k
            );
            ranking_table(&mut out, r);
        }
        Some(r) => {
            let _ = writeln!(
                out,
                "For each of {} members with a held-out rating of at least {} (relevant), every \
                 item they did not rate in training is ranked by predicted rating and the top {} \
                 are compared with their relevant held-out items. NDCG uses binary relevance with \
                 linear gain rel/log₂(i+1) (Järvelin & Kekäläinen 2002), normalised by the ideal \
                 order. \"Random\" is the expected value for a random order of the same candidates.\n",
                r.users,
                format_float(r.threshold),
                r.k
            );
            ranking_table(&mut out, r);
        }
        None if implicit.is_some() => {
            let _ = writeln!(
                out,
                "Not measured: no member has a held-out interaction (fit with --holdout to keep \
                 some aside).\n"
            );
        }
        None => {
            let _ = writeln!(
                out,
                "Not measured: no member has a held-out rating of at least {} (fit with --holdout \
                 to keep some ratings aside).\n",
                format_float(audit.threshold)
            );
        }
    }

    // Coherence.
    let _ = writeln!(out, "## Neighbour coherence\n");
    match &audit.coherence {
        Some(c) => {
            let names = &audit.categories.names;
            let categorised = audit.categories.of_item.iter().flatten().count();
            let sampled = if c.items.len() < categorised {
                format!(" (an even sample of the {categorised} with one)")
            } else {
                String::new()
            };
            let _ = writeln!(
                out,
                "For each of {} items with a category{sampled}, the share of its {} nearest \
                 neighbours ({} distance) in the same category. Mean share **{:.3}**; random \
                 neighbours would give {:.3} ({:.1}× that).\n",
                c.items.len(),
                c.k,
                metric_name(c.metric),
                c.mean,
                c.baseline,
                if c.baseline > 0.0 {
                    c.mean / c.baseline
                } else {
                    f64::NAN
                }
            );
            let _ = writeln!(out, "### Distribution\n");
            table(
                &mut out,
                &["same-category neighbours", "items", "expected at random"],
                &c.histogram
                    .iter()
                    .zip(&c.expected_histogram)
                    .enumerate()
                    .map(|(s, (n, e))| vec![s.to_string(), n.to_string(), format!("{e:.1}")])
                    .collect::<Vec<_>>(),
            );
            let _ = writeln!(out, "### By category\n");
            table(
                &mut out,
                &["category", "items", "mean share", "random"],
                &c.categories
                    .iter()
                    .map(|g| {
                        vec![
                            names[g.category as usize].clone(),
                            g.items.to_string(),
                            format!("{:.3}", g.mean),
                            format!("{:.3}", g.baseline),
                        ]
                    })
                    .collect::<Vec<_>>(),
            );
            let _ = writeln!(
                out,
                "### Least coherent items\n\nCandidates for a wrong category or a data problem: \
                 P is the chance that random neighbours would hold this few of the item's \
                 category.\n"
            );
            table(
                &mut out,
                &["item", "same", "share", "random", "P", "neighbours mostly"],
                &c.least_coherent(audit.options.top)
                    .iter()
                    .map(|i| {
                        let mut label = item_label(model, i.item);
                        if let Some(note) = notes.item_note(model.ratings.items.name(i.item)) {
                            let _ = write!(label, " — note: {note}");
                        }
                        vec![
                            label,
                            format!("{}/{}", i.same, i.neighbours),
                            format!("{:.2}", i.share),
                            format!("{:.2}", i.expected),
                            probability(i.p_low),
                            i.neighbour_category
                                .map_or_else(|| "–".into(), |n| names[n as usize].clone()),
                        ]
                    })
                    .collect::<Vec<_>>(),
            );
        }
        None => {
            let _ = writeln!(
                out,
                "Not measured: the items metadata names fewer than two categories.\n"
            );
        }
    }

    // Worst fits.
    let _ = writeln!(out, "## Worst fits\n");
    if implicit.is_some() {
        let _ = writeln!(
            out,
            "The interactions the model scores lowest: the furthest from their preference 1 \
             (a score is not a rating, so there is no residual to list).\n"
        );
        let header = ["member", "item", "count", "score"];
        let rows = |list: &[crate::analysis::diagnostics::Miss]| -> Vec<Vec<String>> {
            list.iter()
                .map(|x| {
                    vec![
                        model.ratings.users.name(x.user).to_owned(),
                        item_label(model, x.item),
                        format_float(x.actual),
                        format!("{:.3}", x.predicted),
                    ]
                })
                .collect()
        };
        let _ = writeln!(out, "### Training interactions\n");
        table(&mut out, &header, &rows(&audit.worst_train));
        let _ = writeln!(out, "### Held-out interactions\n");
        if audit.worst_holdout.is_empty() {
            let _ = writeln!(out, "No interactions are held out.\n");
        } else {
            table(&mut out, &header, &rows(&audit.worst_holdout));
        }
    } else {
        let header = ["member", "item", "actual", "predicted", "residual"];
        let _ = writeln!(out, "### Training ratings\n");
        table(&mut out, &header, &miss_rows(model, &audit.worst_train));
        let _ = writeln!(out, "### Held-out ratings\n");
        if audit.worst_holdout.is_empty() {
            let _ = writeln!(out, "No ratings are held out.\n");
        } else {
            table(&mut out, &header, &miss_rows(model, &audit.worst_holdout));
        }
    }

    // Support.
    let _ = writeln!(out, "## Prior-dominated members and items\n");
    let users = audit
        .low_support
        .iter()
        .filter(|t| t.side == Side::User)
        .count();
    let items = audit.low_support.len() - users;
    let _ = writeln!(
        out,
        "{users} members and {items} items have fewer training {noun} than the rank ({}): \
         the data alone cannot place their vectors, which stay near the prior's centre. The \
         {} with the fewest:\n",
        m.rank,
        audit.options.top.min(audit.low_support.len())
    );
    table(
        &mut out,
        &["kind", "id", &format!("training {noun}")],
        &audit
            .low_support
            .iter()
            .take(audit.options.top)
            .map(|t| {
                let id = match t.side {
                    Side::User => model.ratings.users.name(t.row).to_owned(),
                    Side::Item => item_label(model, t.row),
                };
                vec![t.side.noun().to_owned(), id, t.ratings.to_string()]
            })
            .collect::<Vec<_>>(),
    );

    // Norms.
    let _ = writeln!(out, "## Vector lengths\n");
    let _ = writeln!(
        out,
        "Outliers have a modified z-score 0.6745·(norm − median)/MAD beyond ±3.5 (Iglewicz & \
         Hoaglin 1993). Very short vectors usually belong to members or items with few ratings; \
         very long ones to strong, consistent tastes or to odd data.\n"
    );
    table(
        &mut out,
        &[
            "vectors", "median", "shortest", "longest", "zero", "outliers",
        ],
        &audit
            .norms
            .iter()
            .map(|n| {
                vec![
                    format!("{}s", n.side.noun()),
                    format!("{:.3}", n.median),
                    format!("{:.3}", n.range.0),
                    format!("{:.3}", n.range.1),
                    n.zero.to_string(),
                    n.outliers.len().to_string(),
                ]
            })
            .collect::<Vec<_>>(),
    );
    let outliers: Vec<Vec<String>> = audit
        .norms
        .iter()
        .flat_map(|n| n.outliers.iter().take(audit.options.top))
        .map(|o| {
            let id = match o.side {
                Side::User => model.ratings.users.name(o.row).to_owned(),
                Side::Item => item_label(model, o.row),
            };
            vec![
                o.side.noun().to_owned(),
                id,
                format!("{:.3}", o.norm),
                format!("{:+.1}", o.score),
                o.ratings.to_string(),
            ]
        })
        .collect();
    if !outliers.is_empty() {
        table(
            &mut out,
            &["kind", "id", "norm", "score", &format!("training {noun}")],
            &outliers,
        );
    }

    // Factors.
    let _ = writeln!(out, "## Factor meaning\n");
    let _ = writeln!(
        out,
        "For each factor, the {} items with the most positive and the most negative loadings, \
         and the categories over-represented among them (at least two items, and a random draw \
         would give as many with probability P < 0.05).\n",
        audit.options.ends
    );
    for meaning in &audit.meanings {
        let number = meaning.factor + 1;
        match notes.factor_label(number) {
            Some(label) => {
                let _ = writeln!(out, "### Factor {number}: {label}\n");
            }
            None => {
                let _ = writeln!(out, "### Factor {number}\n");
            }
        }
        for (end, list, enriched) in [
            ("positive", &meaning.positive, &meaning.positive_categories),
            ("negative", &meaning.negative, &meaning.negative_categories),
        ] {
            let favoured: Vec<String> = enriched
                .iter()
                .map(|e| {
                    format!(
                        "{} ({} of {}, {:.1} expected, P = {})",
                        audit.categories.names[e.category as usize],
                        e.count,
                        list.len(),
                        e.expected,
                        probability(e.p_value)
                    )
                })
                .collect();
            let _ = writeln!(
                out,
                "- {end} end: {}",
                if favoured.is_empty() {
                    "no category stands out".to_owned()
                } else {
                    favoured.join("; ")
                }
            );
            let items: Vec<String> = list
                .iter()
                .map(|(j, v)| format!("{} {:+.2}", item_label(model, *j), v))
                .collect();
            let _ = writeln!(out, "  - {}", items.join(", "));
        }
        out.push('\n');
    }

    // Notes.
    let _ = writeln!(out, "## Curator notes\n");
    if notes.is_empty() {
        let _ = writeln!(out, "None yet.\n");
    } else {
        let mut rows: Vec<Vec<String>> = Vec::new();
        for (f, label) in &notes.factors {
            rows.push(vec![
                "factor label".into(),
                format!("factor {f}"),
                label.clone(),
            ]);
        }
        for (id, note) in &notes.items {
            let subject = model.ratings.items.get(id).map_or_else(
                || format!("{id} (not in this model)"),
                |j| item_label(model, j),
            );
            rows.push(vec!["item note".into(), subject, note.clone()]);
        }
        for ((a, b), note) in &notes.pairs {
            let subject = match (model.ratings.items.get(a), model.ratings.items.get(b)) {
                (Some(x), Some(y)) => {
                    let (u, v) = (model.factors.item(x), model.factors.item(y));
                    let distance = u
                        .iter()
                        .zip(v)
                        .map(|(p, q)| (p - q) * (p - q))
                        .sum::<f64>()
                        .sqrt();
                    let cos = crate::analysis::cosine(u, v)
                        .map_or_else(|| "–".into(), |c| format!("{c:.3}"));
                    format!(
                        "{} and {} (distance {distance:.3}, cosine {cos})",
                        item_label(model, x),
                        item_label(model, y)
                    )
                }
                _ => format!("{a} and {b} (not both in this model)"),
            };
            let text = if note.is_empty() {
                "flagged as wrong neighbours".to_owned()
            } else {
                format!("flagged as wrong neighbours: {note}")
            };
            rows.push(vec!["pair".into(), subject, text]);
        }
        table(&mut out, &["kind", "about", "note"], &rows);
        let orphans = notes.orphans(&model.ratings.items, m.rank);
        if !orphans.is_empty() {
            let _ = writeln!(out, "{}.\n", orphans.describe());
        }
    }
    out
}

/// One CSV file of the report: name and content.
pub type CsvFile = (&'static str, String);

fn csv(header: &[&str], rows: impl IntoIterator<Item = Vec<String>>) -> String {
    let mut bytes = Vec::new();
    let mut line = |fields: &[String]| {
        for (k, f) in fields.iter().enumerate() {
            if k > 0 {
                bytes.push(b',');
            }
            quote_field(&mut bytes, f);
        }
        bytes.push(b'\n');
    };
    line(&header.iter().map(|h| (*h).to_owned()).collect::<Vec<_>>());
    for row in rows {
        line(&row);
    }
    String::from_utf8(bytes).expect("CSV of UTF-8 fields is UTF-8")
}

/// The report's figures as CSV files (full precision, ids rather than labels).
pub fn csv_files(model: &Model, audit: &Audit, notes: &Annotations) -> Vec<CsvFile> {
    let m = &model.manifest;
    let implicit = m.implicit.is_some();
    let item = |j: u32| model.ratings.items.name(j).to_owned();
    let num = format_float;
    let mut files = Vec::new();
    let health = m.metrics.as_ref().map_or_else(Vec::new, |metrics| {
        vec![
            ("training", Some(&metrics.train)),
            ("held_out", metrics.holdout.as_ref()),
        ]
    });
    files.push((
        "health.csv",
        csv(
            &[
                "ratings",
                "count",
                "rmse",
                "mae",
                "rmse_rounded",
                "mae_rounded",
                "exact_rate",
            ],
            health.iter().filter_map(|(n, e)| {
                e.map(|e| {
                    vec![
                        (*n).to_owned(),
                        e.count.to_string(),
                        num(e.rmse),
                        num(e.mae),
                        num(e.rmse_rounded),
                        num(e.mae_rounded),
                        num(e.exact_rate),
                    ]
                })
            }),
        ),
    ));
    files.push((
        "ranking.csv",
        csv(
            &["metric", "k", "threshold", "users", "model", "random"],
            audit
                .ranking
                .iter()
                .flat_map(|r| {
                    [
                        ("precision", r.precision, r.random.0),
                        ("recall", r.recall, r.random.1),
                        ("ndcg", r.ndcg, r.random.2),
                    ]
                    .map(|(n, v, b)| {
                        vec![
                            n.to_owned(),
                            r.k.to_string(),
                            num(r.threshold),
                            r.users.to_string(),
                            num(v),
                            num(b),
                        ]
                    })
                })
                // Implicit feedback: over every candidate, so no cut-off; 0.5 is random.
                .chain(audit.percentile_rank.map(|p| {
                    vec![
                        "expected_percentile_rank".to_owned(),
                        String::new(),
                        String::new(),
                        audit
                            .ranking
                            .as_ref()
                            .map_or(String::new(), |r| r.users.to_string()),
                        num(p),
                        num(0.5),
                    ]
                })),
        ),
    ));
    let names = &audit.categories.names;
    if let Some(c) = &audit.coherence {
        files.push((
            "coherence.csv",
            csv(
                &[
                    "item",
                    "category",
                    "neighbours",
                    "same",
                    "share",
                    "expected",
                    "p_low",
                    "neighbour_category",
                ],
                c.items.iter().map(|i| {
                    vec![
                        item(i.item),
                        names[i.category as usize].clone(),
                        i.neighbours.to_string(),
                        i.same.to_string(),
                        num(i.share),
                        num(i.expected),
                        num(i.p_low),
                        i.neighbour_category
                            .map(|n| names[n as usize].clone())
                            .unwrap_or_default(),
                    ]
                }),
            ),
        ));
        files.push((
            "coherence-categories.csv",
            csv(
                &["category", "items", "mean_share", "random_share"],
                c.categories.iter().map(|g| {
                    vec![
                        names[g.category as usize].clone(),
                        g.items.to_string(),
                        num(g.mean),
                        num(g.baseline),
                    ]
                }),
            ),
        ));
    }
    files.push((
        "worst-fits.csv",
        csv(
            &[
                "ratings",
                "member",
                "item",
                "actual",
                "predicted",
                "residual",
            ],
            [
                ("training", &audit.worst_train),
                ("held_out", &audit.worst_holdout),
            ]
            .into_iter()
            .flat_map(|(n, list)| {
                list.iter().map(move |x| {
                    vec![
                        n.to_owned(),
                        model.ratings.users.name(x.user).to_owned(),
                        item(x.item),
                        num(x.actual),
                        num(x.predicted),
                        // A count minus a score is no residual: left empty.
                        if implicit {
                            String::new()
                        } else {
                            num(x.residual())
                        },
                    ]
                })
            }),
        ),
    ));
    let id_of = |side: Side, row: u32| match side {
        Side::User => model.ratings.users.name(row).to_owned(),
        Side::Item => item(row),
    };
    files.push((
        "low-support.csv",
        csv(
            &["kind", "id", "training_ratings"],
            audit.low_support.iter().map(|t| {
                vec![
                    t.side.noun().to_owned(),
                    id_of(t.side, t.row),
                    t.ratings.to_string(),
                ]
            }),
        ),
    ));
    files.push((
        "norm-outliers.csv",
        csv(
            &["kind", "id", "norm", "modified_z", "training_ratings"],
            audit.norms.iter().flat_map(|n| n.outliers.iter()).map(|o| {
                vec![
                    o.side.noun().to_owned(),
                    id_of(o.side, o.row),
                    num(o.norm),
                    num(o.score),
                    o.ratings.to_string(),
                ]
            }),
        ),
    ));
    files.push((
        "factors.csv",
        csv(
            &["factor", "label", "end", "position", "item", "loading"],
            audit.meanings.iter().flat_map(|f| {
                let label = notes
                    .factor_label(f.factor + 1)
                    .unwrap_or_default()
                    .to_owned();
                [("positive", &f.positive), ("negative", &f.negative)]
                    .into_iter()
                    .flat_map(move |(end, list)| {
                        let label = label.clone();
                        list.iter().enumerate().map(move |(k, (j, v))| {
                            vec![
                                (f.factor + 1).to_string(),
                                label.clone(),
                                end.to_owned(),
                                (k + 1).to_string(),
                                item(*j),
                                num(*v),
                            ]
                        })
                    })
            }),
        ),
    ));
    files.push((
        "factor-categories.csv",
        csv(
            &["factor", "end", "category", "count", "expected", "p_value"],
            audit.meanings.iter().flat_map(|f| {
                [
                    ("positive", &f.positive_categories),
                    ("negative", &f.negative_categories),
                ]
                .into_iter()
                .flat_map(move |(end, list)| {
                    list.iter().map(move |e| {
                        vec![
                            (f.factor + 1).to_string(),
                            end.to_owned(),
                            names[e.category as usize].clone(),
                            e.count.to_string(),
                            num(e.expected),
                            num(e.p_value),
                        ]
                    })
                })
            }),
        ),
    ));
    let mut note_rows = Vec::new();
    for (f, label) in &notes.factors {
        note_rows.push(vec![
            "factor".into(),
            f.to_string(),
            String::new(),
            label.clone(),
        ]);
    }
    for (id, note) in &notes.items {
        note_rows.push(vec!["item".into(), id.clone(), String::new(), note.clone()]);
    }
    for ((a, b), note) in &notes.pairs {
        note_rows.push(vec!["pair".into(), a.clone(), b.clone(), note.clone()]);
    }
    files.push((
        "notes.csv",
        csv(&["kind", "subject", "other", "note"], note_rows),
    ));
    files
}
