//! Finding an item by what people type: its id, or its title (curators think in titles).

use super::ids::{IdMap, edit_distance};
use super::meta::ItemsMeta;

/// What a typed item name matches.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum ItemMatch {
    /// One item: by id, or the only one with that title.
    One(u32),
    /// Several items share that title (case-insensitively); their indices, in id order.
    Several(Vec<u32>),
    /// Nothing; the closest ids and titles, as (item, matched by title), best first.
    Nothing(Vec<(u32, bool)>),
}

/// The item `query` names: an exact id first, else an exact title in any case; when
/// nothing matches, up to `close` nearest ids and titles by edit distance (ties by index).
pub fn find_item(items: &IdMap, meta: Option<&ItemsMeta>, query: &str, close: usize) -> ItemMatch {
    if let Some(j) = items.get(query) {
        return ItemMatch::One(j);
    }
    let wanted = query.trim().to_lowercase();
    let title = |j: u32| meta.and_then(|m| m.get(j)).and_then(|m| m.title.as_deref());
    let mut by_title: Vec<u32> = (0..items.len() as u32)
        .filter(|&j| title(j).is_some_and(|t| t.trim().to_lowercase() == wanted))
        .collect();
    by_title.sort_by(|&a, &b| items.name(a).cmp(items.name(b)));
    match by_title.as_slice() {
        [j] => return ItemMatch::One(*j),
        [_, _, ..] => return ItemMatch::Several(by_title),
        [] => {}
    }
    let query: Vec<char> = wanted.chars().collect();
    let distance =
        |text: &str| edit_distance(&query, &text.to_lowercase().chars().collect::<Vec<_>>());
    let mut scored: Vec<(usize, u32, bool)> = (0..items.len() as u32)
        .map(|j| {
            let by_id = (distance(items.name(j)), j, false);
            match title(j) {
                Some(t) => by_id.min((distance(t), j, true)),
                None => by_id,
            }
        })
        .collect();
    scored.sort_unstable();
    ItemMatch::Nothing(
        scored
            .into_iter()
            .take(close)
            .map(|(_, j, by_title)| (j, by_title))
            .collect(),
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::data::meta::ItemMeta;

    fn catalogue() -> (IdMap, ItemsMeta) {
        let mut ids = IdMap::new();
        for id in ["r1", "r2", "r3"] {
            ids.intern(id);
        }
        let titled = |t: &str| {
            Some(ItemMeta {
                title: Some(t.to_owned()),
                ..Default::default()
            })
        };
        let meta = ItemsMeta {
            rows: vec![
                titled("Cedar Platter"),
                titled("Barley Soup"),
                titled("barley soup"),
            ],
            ..Default::default()
        };
        (ids, meta)
    }

    #[test]
    fn ids_then_titles_in_any_case() {
        let (ids, meta) = catalogue();
        assert_eq!(find_item(&ids, Some(&meta), "r2", 3), ItemMatch::One(1));
        assert_eq!(
            find_item(&ids, Some(&meta), "cedar PLATTER", 3),
            ItemMatch::One(0)
        );
        assert_eq!(
            find_item(&ids, Some(&meta), "Barley Soup", 3),
            ItemMatch::Several(vec![1, 2])
        );
        // A near miss finds the title, not just the ids.
        match find_item(&ids, Some(&meta), "Cedar Plater", 1) {
            ItemMatch::Nothing(close) => assert_eq!(close, vec![(0, true)]),
            other => panic!("{other:?}"),
        }
        assert!(matches!(
            find_item(&ids, None, "Cedar Platter", 2),
            ItemMatch::Nothing(_)
        ));
    }
}
