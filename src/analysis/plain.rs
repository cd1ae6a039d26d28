//! Plain explanations for members: a few short sentences, built only from the member's own
//! ratings, the catalogue's titles and the model's vectors — never from another member's
//! data — that support staff can pass on.

use super::explain::Explanation;
use crate::data::RatingScale;
use crate::data::factors::format_float;
use crate::model::Model;
use crate::model::notes::Annotations;

/// How many of the member's nearest rated items are named.
const NAMED: usize = 2;

/// A catalogue name for an item: its title, else its id.
fn name(model: &Model, item: u32) -> String {
    model
        .meta
        .as_ref()
        .and_then(|m| m.get(item))
        .and_then(|m| m.title.clone())
        .unwrap_or_else(|| model.ratings.items.name(item).to_owned())
}

/// "4 out of 5" on a level scale; the number alone otherwise.
fn rating_words(value: f64, scale: &RatingScale) -> String {
    match scale {
        RatingScale::Levels(_) => {
            format!(
                "{} out of {}",
                format_float(value),
                format_float(scale.max())
            )
        }
        RatingScale::Continuous { .. } => format!("{value:.1}"),
    }
}

/// "from 3 to 5 out of 5" on a level scale; "from 2.5 to 4.1" otherwise.
fn range_words(low: f64, high: f64, scale: &RatingScale) -> String {
    match scale {
        RatingScale::Levels(_) => format!(
            "from {} to {} out of {}",
            format_float(low),
            format_float(high),
            format_float(scale.max())
        ),
        RatingScale::Continuous { .. } => format!("from {low:.1} to {high:.1}"),
    }
}

fn list(names: &[String]) -> String {
    match names {
        [] => String::new(),
        [one] => one.clone(),
        [rest @ .., last] => format!("{} and {last}", rest.join(", ")),
    }
}

/// A count in running text: "one" to "ten" in words when every count in the sentence is at
/// most ten, digits otherwise, so a sentence never mixes "ten" and "12" (common practice in
/// style guides).
fn count_words(n: usize, in_words: bool) -> String {
    const WORDS: [&str; 11] = [
        "no", "one", "two", "three", "four", "five", "six", "seven", "eight", "nine", "ten",
    ];
    match WORDS.get(n) {
        Some(word) if in_words => (*word).to_owned(),
        _ => n.to_string(),
    }
}

/// The opening sentence: the estimate, and the member's own rating when there is one.
fn estimate_sentence(item: &str, e: &Explanation, scale: &RatingScale) -> String {
    let rounded = scale.round(e.predicted);
    let estimate = rating_words(rounded, scale);
    match e.actual {
        Some(actual) if scale.round(actual) == rounded => format!(
            "You rated {item} {}, just as the model expected.",
            rating_words(actual, scale)
        ),
        Some(actual) => format!(
            "You rated {item} {}; the model had expected about {estimate}.",
            rating_words(actual, scale)
        ),
        None => format!("The model estimates you would rate {item} about {estimate}."),
    }
}

/// The member's nearest rated items, each with the member's rating of it.
fn evidence_sentence(model: &Model, e: &Explanation, scale: &RatingScale) -> Option<String> {
    let named: Vec<_> = e.evidence.iter().take(NAMED).collect();
    let first = named.first()?;
    let items: Vec<String> = named.iter().map(|n| name(model, n.item)).collect();
    let same = named.iter().all(|n| n.actual == first.actual);
    let clause = match named.as_slice() {
        [one] => format!(
            "{}, which you rated {}",
            items[0],
            rating_words(one.actual, scale)
        ),
        [_, _] if same => format!(
            "{}, both of which you rated {}",
            list(&items),
            rating_words(first.actual, scale)
        ),
        _ if same => format!(
            "{}, all of which you rated {}",
            list(&items),
            rating_words(first.actual, scale)
        ),
        _ => {
            let parts: Vec<String> = named
                .iter()
                .zip(&items)
                .map(|(n, title)| {
                    format!("{title} (you rated it {})", rating_words(n.actual, scale))
                })
                .collect();
            list(&parts)
        }
    };
    Some(format!(
        "Of the items you have rated, it is most like {clause}."
    ))
}

/// Smallest share of a rating worth naming, in rating points.
const NOTABLE_SHARE: f64 = 0.05;

/// Which of the member's own ratings raised the estimate most, and which lowered it most
/// (their shares in the decomposition by rating; the explained item itself is not named).
fn influence_sentence(
    model: &Model,
    e: &Explanation,
    yours: &dyn Fn(&Model, &super::explain::RatingShare) -> String,
) -> Option<String> {
    let shares = &e.by_rating.as_ref()?.shares;
    let others = || shares.iter().filter(|s| s.item != e.item);
    let raised = others()
        .filter(|s| s.share >= NOTABLE_SHARE)
        .max_by(|a, b| a.share.total_cmp(&b.share));
    let lowered = others()
        .filter(|s| s.share <= -NOTABLE_SHARE)
        .min_by(|a, b| a.share.total_cmp(&b.share));
    let yours = |s: &super::explain::RatingShare| yours(model, s);
    let (own, what) = if model.implicit().is_some() {
        ("Of your own choices", "score")
    } else {
        ("Of your own ratings", "estimate")
    };
    match (raised, lowered) {
        (Some(up), Some(down)) => Some(format!(
            "{own}, {} did most to raise this {what}, and {} did most to lower it.",
            yours(up),
            yours(down)
        )),
        (Some(up), None) => Some(format!(
            "{own}, {} did most to raise this {what}.",
            yours(up)
        )),
        (None, Some(down)) => Some(format!(
            "{own}, {} did most to lower this {what}.",
            yours(down)
        )),
        (None, None) => None,
    }
}

/// How many of the member's ratings stand behind the estimate, held-out ones included.
fn support_sentence(e: &Explanation) -> String {
    let used = e.support.user_ratings;
    let held = e.support.user_held_out;
    let words = used + held <= 10;
    // "the other one was", "one more was": never "the other 1".
    let n = |k: usize| count_words(k, words || k == 1);
    let ratings = |k: usize| if k == 1 { "rating" } else { "ratings" };
    if e.support.user_low_support {
        let seen = match held {
            0 => format!(
                "You have rated only {} item{}",
                n(used),
                if used == 1 { "" } else { "s" }
            ),
            _ => format!(
                "The model has seen only {} {} of yours ({} more {} set aside to check how \
                 accurate the model is)",
                n(used),
                ratings(used),
                n(held),
                if held == 1 { "was" } else { "were" }
            ),
        };
        format!("{seen}, so this estimate leans more on what is typical than on your own taste.")
    } else if held == 0 {
        format!(
            "The estimate is based on your {} {}.",
            n(used),
            ratings(used)
        )
    } else {
        format!(
            "The estimate is based on {} of your {} ratings; the other {} {} set aside to check \
             how accurate the model is.",
            n(used),
            n(used + held),
            n(held),
            if held == 1 { "was" } else { "were" }
        )
    }
}

/// The spread of ratings that would not be surprising: the estimate give or take one
/// predictive standard deviation (about two chances in three for a Gaussian), kept inside
/// the scale and snapped onto it.
fn spread_sentence(e: &Explanation, sd: f64, scale: &RatingScale) -> String {
    let low = scale.round((e.predicted - sd).max(scale.min()));
    let high = scale.round((e.predicted + sd).min(scale.max()));
    if high <= low {
        format!(
            "It is an estimate, not a certainty, but a rating far from {} would be a surprise.",
            rating_words(scale.round(e.predicted), scale)
        )
    } else if low <= scale.min() && high >= scale.max() {
        format!(
            "It is a rough estimate: any rating {} would not be surprising.",
            range_words(low, high, scale)
        )
    } else {
        format!(
            "It is an estimate, not a certainty: anything {} would not be surprising.",
            range_words(low, high, scale)
        )
    }
}

/// The plain explanation of `e` (an explanation of one item for one member or profile).
/// Uses the member's own ratings only: the evidence in `e` comes from them. When the
/// factor that moves the estimate most carries a curator's label in `notes`, a sentence
/// names it in the curator's words.
pub fn plain_explanation(model: &Model, e: &Explanation, notes: &Annotations) -> String {
    let scale = &model.manifest.scale;
    let item = name(model, e.item);
    if model.implicit().is_some() {
        return implicit_explanation(model, &item, e, notes);
    }
    let mut sentences = vec![estimate_sentence(&item, e, scale)];
    sentences.extend(evidence_sentence(model, e, scale));
    sentences.extend(influence_sentence(model, e, &rating_phrase));
    sentences.extend(label_sentence(e, notes));
    sentences.push(support_sentence(e));
    if let Some(sd) = e.predictive_sd {
        sentences.push(spread_sentence(e, sd, scale));
    }
    sentences.join(" ")
}

/// "your 5 out of 5 for X".
fn rating_phrase(model: &Model, s: &super::explain::RatingShare) -> String {
    format!(
        "your {} for {}",
        rating_words(s.rating, &model.manifest.scale),
        name(model, s.item)
    )
}

/// "once", "twice", "3 times", "2.5 times" (a weight need not be whole).
fn times(count: f64) -> String {
    if count == 1.0 {
        "once".into()
    } else if count == 2.0 {
        "twice".into()
    } else {
        format!("{} times", format_float(count))
    }
}

/// "the 3 times you chose X".
fn use_phrase(model: &Model, s: &super::explain::RatingShare) -> String {
    format!(
        "the {} you chose {}",
        times(s.rating)
            .replace("once", "one time")
            .replace("twice", "two times"),
        name(model, s.item)
    )
}

/// The plain explanation of a score of an implicit-feedback model: what the member chose
/// and how often, never a rating.
fn implicit_explanation(model: &Model, item: &str, e: &Explanation, notes: &Annotations) -> String {
    let score = format!(
        "the model's score for {item} is {:.2} (near 1: a likely interest; near 0: unlikely)",
        e.predicted
    );
    let mut sentences = vec![match e.actual {
        Some(count) if count > 0.0 => format!("You have chosen {item} {}; {score}.", times(count)),
        _ => format!("You have not chosen {item} yet; {score}."),
    }];
    let named: Vec<String> = e
        .evidence
        .iter()
        .take(NAMED)
        .map(|n| format!("{} (chosen {})", name(model, n.item), times(n.actual)))
        .collect();
    if !named.is_empty() {
        sentences.push(format!(
            "Of the items you have chosen, it is most like {}.",
            list(&named)
        ));
    }
    sentences.extend(influence_sentence(model, e, &use_phrase));
    sentences.extend(label_sentence(e, notes));
    let used = e.support.user_ratings;
    sentences.push(if e.support.user_low_support {
        format!(
            "You have chosen only {} item{}, so this score leans more on what is popular than on your own taste.",
            count_words(used, used <= 10),
            if used == 1 { "" } else { "s" }
        )
    } else {
        format!(
            "The score is based on the {} items you have chosen.",
            count_words(used, used <= 10)
        )
    });
    sentences.join(" ")
}

/// The curator's label of the factor that moves the estimate most, when it has one.
fn label_sentence(e: &Explanation, notes: &Annotations) -> Option<String> {
    if let Some(top) = e.contributions.first()
        && let Some(label) = notes.factor_label(top.factor)
        && top.value.abs() >= 0.05
    {
        return Some(format!(
            "The biggest single influence on this estimate is \"{label}\", which {} it by {:.1}.",
            if top.value > 0.0 { "raises" } else { "lowers" },
            top.value.abs()
        ));
    }
    None
}

#[cfg(test)]
mod tests {
    use std::fmt::Write as _;

    use super::*;

    #[test]
    fn a_labelled_factor_is_named_in_the_curators_words() {
        let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/model");
        let model = crate::model::load_model(&dir).expect("demo model loads");
        let counts = crate::analysis::explain::item_support(&model);
        let e = crate::analysis::explain(&model, 0, 5, 2, &counts);
        let top = e.contributions[0];
        let mut notes = Annotations::default();
        let bare = plain_explanation(&model, &e, &notes);
        assert!(!bare.contains("biggest single influence"), "{bare}");
        notes
            .set_factor_label(top.factor, "hearty vs light")
            .expect("a plain label is kept");
        let named = plain_explanation(&model, &e, &notes);
        assert!(named.contains("\"hearty vs light\""), "{named}");
        assert!(
            named.contains(if top.value > 0.0 { "raises" } else { "lowers" }),
            "{named}"
        );
    }

    fn demo() -> Model {
        let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/model");
        crate::model::load_model(&dir).expect("demo model loads")
    }

    /// An explanation of item 0 with the given prediction and spread, for wording checks.
    fn made_up(model: &Model, predicted: f64, sd: f64) -> Explanation {
        let counts = crate::analysis::explain::item_support(model);
        let mut e = crate::analysis::explain(model, 0, 0, 2, &counts);
        e.predicted = predicted;
        e.rounded = model.round(predicted);
        e.predictive_sd = Some(sd);
        e
    }

    #[test]
    fn the_spread_stays_inside_the_scale() {
        let model = demo();
        let notes = Annotations::default();
        // 3 ± 2.8 on 1–5 covers the whole scale: said as such, never "2.8 higher or lower".
        let wide = plain_explanation(&model, &made_up(&model, 3.0, 2.8), &notes);
        assert!(
            wide.contains("any rating from 1 to 5 out of 5 would not be surprising"),
            "{wide}"
        );
        assert!(!wide.contains("2.8"), "{wide}");
        // 4.6 ± 0.9 reaches past 5: cut at 5.
        let high = plain_explanation(&model, &made_up(&model, 4.6, 0.9), &notes);
        assert!(high.contains("anything from 4 to 5 out of 5"), "{high}");
        // A narrow spread does not make a range of one value.
        let narrow = plain_explanation(&model, &made_up(&model, 4.0, 0.2), &notes);
        assert!(
            narrow.contains("a rating far from 4 out of 5 would be a surprise"),
            "{narrow}"
        );
    }

    #[test]
    fn every_rating_the_member_made_is_counted() {
        let model = demo();
        let counts = crate::analysis::explain::item_support(&model);
        let (user, held) = (0..model.ratings.users.len() as u32)
            .map(|u| (u, crate::analysis::explain::held_out_count(&model, u)))
            .find(|&(_, h)| h >= 2)
            .expect("the demo holds out ratings of some member");
        let e = crate::analysis::explain(&model, user, 0, 2, &counts);
        let total = e.support.user_ratings + held;
        let text = plain_explanation(&model, &e, &Annotations::default());
        let words = total <= 10;
        let expected = format!(
            "The estimate is based on {} of your {} ratings; the other {} were set aside",
            count_words(e.support.user_ratings, words),
            count_words(total, words),
            count_words(held, words)
        );
        assert!(text.contains(&expected), "{text}");
    }

    /// Twelve explanations as a member would read them, across rated and unrated items, one
    /// and two pieces of evidence, equal and different ratings, members with and without
    /// held-out ratings and a labelled factor. Read aloud when the snapshot changes.
    #[test]
    fn explanations_read_naturally() {
        let model = demo();
        let counts = crate::analysis::explain::item_support(&model);
        let mut notes = Annotations::default();
        let first = crate::analysis::explain(&model, 3, 7, 2, &counts);
        notes
            .set_factor_label(first.contributions[0].factor, "hearty vs light")
            .expect("a plain label is kept");
        let cases: [(u32, u32, usize); 10] = [
            (0, 0, 2),
            (1, 5, 2),
            (2, 11, 1),
            (3, 7, 2),
            (4, 20, 2),
            (5, 33, 2),
            (6, 2, 0),
            (7, 41, 2),
            (8, 15, 2),
            (9, 60, 2),
        ];
        // Two ratings the fit did not see, one the model got right after rounding and one
        // it did not.
        let held_out = |right: bool| {
            model
                .ratings
                .entries
                .iter()
                .find(|r| {
                    r.holdout
                        && (model
                            .manifest
                            .scale
                            .round(model.factors.predict(r.user, r.item))
                            == r.value)
                            == right
                })
                .map(|r| (r.user, r.item, 2))
                .expect("the demo holds out ratings of both kinds")
        };
        let mut out = String::new();
        for (user, item, evidence) in cases.into_iter().chain([held_out(true), held_out(false)]) {
            let e = crate::analysis::explain(&model, user, item, evidence, &counts);
            let _ = write!(
                out,
                "{} / {}:\n{}\n\n",
                model.ratings.users.name(user),
                model.ratings.items.name(item),
                plain_explanation(&model, &e, &notes)
            );
        }
        insta::assert_snapshot!("explanations", out);
    }
}
