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

fn list(names: &[String]) -> String {
    match names {
        [] => String::new(),
        [one] => one.clone(),
        [rest @ .., last] => format!("{} and {last}", rest.join(", ")),
    }
}

/// The plain explanation of `e` (an explanation of one item for one member or profile).
/// Uses the member's own ratings only: the evidence in `e` comes from them. When the
/// factor that moves the estimate most carries a curator's label in `notes`, a sentence
/// names it in the curator's words.
pub fn plain_explanation(model: &Model, e: &Explanation, notes: &Annotations) -> String {
    let scale = &model.manifest.scale;
    let item = name(model, e.item);
    let mut sentences = Vec::new();
    match e.actual {
        Some(actual) => sentences.push(format!(
            "You rated {item} {}; the model's estimate for you was {}.",
            rating_words(actual, scale),
            rating_words(e.rounded, scale)
        )),
        None => sentences.push(format!(
            "The model estimates you would rate {item} about {}.",
            rating_words(e.rounded, scale)
        )),
    }
    let named: Vec<_> = e.evidence.iter().take(NAMED).collect();
    if !named.is_empty() {
        let items: Vec<String> = named.iter().map(|n| name(model, n.item)).collect();
        let ratings: Vec<String> = named.iter().map(|n| format_float(n.actual)).collect();
        let rated = if named.len() == 1 {
            format!("you rated {}", rating_words(named[0].actual, scale))
        } else {
            format!("you rated {} respectively", list(&ratings))
        };
        sentences.push(format!(
            "Among the items you have rated, it is most like {}, which {rated}.",
            list(&items)
        ));
    }
    if let Some(top) = e.contributions.first()
        && let Some(label) = notes.factor_label(top.factor)
        && top.value.abs() >= 0.05
    {
        sentences.push(format!(
            "What moves this estimate most is \"{label}\": it {} it by {:.1}.",
            if top.value > 0.0 { "raises" } else { "lowers" },
            top.value.abs()
        ));
    }
    let rated = e.support.user_ratings;
    if e.support.user_low_support {
        sentences.push(format!(
            "You have rated only {rated} item{}, so this estimate rests more on what is typical than on your own taste.",
            if rated == 1 { "" } else { "s" }
        ));
    } else {
        sentences.push(format!("The estimate is based on your {rated} ratings."));
    }
    if let Some(sd) = e.predictive_sd {
        sentences.push(format!(
            "It is an estimate, not a certainty: a rating about {sd:.1} higher or lower would not be surprising."
        ));
    }
    sentences.join(" ")
}

#[cfg(test)]
mod tests {
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
        assert!(!bare.contains("moves this estimate"), "{bare}");
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
}
