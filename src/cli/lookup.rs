//! Resolving the ids people type, and the labels shown beside items.

use sextant::data::IdMap;
use sextant::model::Model;

use super::UsageError;

/// The dense index of `id` in `ids`, or an error naming the closest existing ids.
pub fn resolve(ids: &IdMap, id: &str, kind: &str) -> Result<u32, UsageError> {
    ids.get(id).ok_or_else(|| {
        let close: Vec<String> = ids
            .closest(id, 3)
            .into_iter()
            .map(|c| format!("'{c}'"))
            .collect();
        let hint = if close.is_empty() {
            String::new()
        } else {
            format!("; did you mean {}?", close.join(", "))
        };
        UsageError(format!("the model has no {kind} '{id}'{hint}"))
    })
}

/// The item `query` names in `model`: its id, or its exact title in any case. Several
/// items with that title, or none, are a usage error that lists the ids (with titles) to
/// choose from.
pub fn resolve_item(model: &Model, query: &str) -> Result<u32, UsageError> {
    use sextant::data::lookup::{ItemMatch, find_item};
    let label = |j: u32| match item_title(model, j).0 {
        Some(title) => format!("'{}' ({title})", model.ratings.items.name(j)),
        None => format!("'{}'", model.ratings.items.name(j)),
    };
    match find_item(&model.ratings.items, model.meta.as_ref(), query, 3) {
        ItemMatch::One(j) => Ok(j),
        ItemMatch::Several(all) => {
            let shown: Vec<String> = all.iter().take(10).map(|&j| label(j)).collect();
            let more = if all.len() > 10 {
                format!(" and {} more", all.len() - 10)
            } else {
                String::new()
            };
            Err(UsageError(format!(
                "{} items are titled '{query}': {}{more}; name one by its id",
                all.len(),
                shown.join(", ")
            )))
        }
        ItemMatch::Nothing(close) => {
            let close: Vec<String> = close.iter().map(|&(j, _)| label(j)).collect();
            let hint = if close.is_empty() {
                String::new()
            } else {
                format!("; did you mean {}?", close.join(", "))
            };
            Err(UsageError(format!(
                "the model has no item with id or title '{query}'{hint}"
            )))
        }
    }
}

/// Title and category of item `j`, when the model has metadata for it.
pub fn item_title(model: &Model, j: u32) -> (Option<&str>, Option<&str>) {
    model
        .meta
        .as_ref()
        .and_then(|m| m.get(j))
        .map_or((None, None), |m| {
            (m.title.as_deref(), m.category.as_deref())
        })
}

/// `id` followed by its title in the table form, e.g. `r042 Smoky Lentil Soup (soups)`.
pub fn item_label(model: &Model, j: u32) -> String {
    let id = model.ratings.items.name(j);
    match item_title(model, j) {
        (Some(title), Some(category)) => format!("{id}  {title} ({category})"),
        (Some(title), None) => format!("{id}  {title}"),
        (None, Some(category)) => format!("{id}  ({category})"),
        (None, None) => id.to_owned(),
    }
}

/// Formats a float for CSV: shortest round-trip text, empty for `None`.
pub fn csv_number(value: Option<f64>) -> String {
    value
        .map(sextant::data::factors::format_float)
        .unwrap_or_default()
}
