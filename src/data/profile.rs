//! A what-if profile: one member's ratings as `item,rating` CSV (or, for a model of
//! implicit feedback, their counts as `item,count`), for folding into a model.

use std::fs::File;
use std::io::Read;
use std::path::Path;

use super::ids::IdMap;
use super::ratings::{
    check_width, csv_error, csv_reader, field, find_column, id_field, parse_rating, read_header,
    record_line, trimmed,
};
use super::scale::RatingScale;
use crate::error::DataError;

/// A profile read from CSV: the ratings of items the model knows, and the ids it does not.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ProfileRatings {
    /// (item index, rating), sorted by item.
    pub ratings: Vec<(u32, f64)>,
    /// Ids not in the model, with their lines (skipped).
    pub unknown: Vec<(String, u64)>,
}

/// What a profile's values are.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Values<'a> {
    /// Ratings on the model's scale (column `rating`).
    Ratings(&'a RatingScale),
    /// Counts of implicit feedback, at least 0 (column `count`).
    Counts,
}

impl Values<'_> {
    fn column(self) -> &'static str {
        match self {
            Self::Ratings(_) => "rating",
            Self::Counts => "count",
        }
    }

    /// Why `value` is refused, if it is.
    fn refuse(self, value: f64) -> Option<String> {
        match self {
            Self::Ratings(scale) if !scale.contains(value) => Some(format!(
                "rating {value} is not on the model's rating scale ({})",
                scale.describe()
            )),
            Self::Counts if value < 0.0 => Some(format!(
                "count {value} is negative; a count (or weight) is at least 0"
            )),
            _ => None,
        }
    }
}

/// Reads a profile CSV from a file.
pub fn load_profile(
    path: &Path,
    items: &IdMap,
    values: Values<'_>,
) -> Result<ProfileRatings, DataError> {
    let file = File::open(path).map_err(|e| DataError::read(path, e))?;
    read_profile(file, path, items, values)
}

/// Reads a profile CSV (`item,rating` header, or `item,count` for counts; extra columns
/// ignored). Ratings must be finite and on the model's scale, counts finite and at least
/// 0; an item may appear once; items the model does not know are collected in
/// [`ProfileRatings::unknown`].
pub fn read_profile(
    reader: impl Read,
    path: &Path,
    items: &IdMap,
    values: Values<'_>,
) -> Result<ProfileRatings, DataError> {
    let (mut csv, _) = csv_reader(reader, path, super::ratings::Delimiter::Auto)?;
    let column = values.column();
    let header = read_header(&mut csv, path, &format!("item, {column}"))?;
    let expected = format!("a profile's header row is item,{column}");
    let item_col = find_column(&header, "item", &expected, path)?;
    let rating_col = find_column(&header, column, &expected, path)?;
    let mut out = ProfileRatings::default();
    let mut lines: std::collections::HashMap<u32, u64> = std::collections::HashMap::new();
    let mut record = csv::ByteRecord::new();
    while csv
        .read_byte_record(&mut record)
        .map_err(|e| csv_error(path, &e))?
    {
        let line = record_line(&record);
        if record.iter().all(|f| trimmed(f).is_empty()) {
            continue;
        }
        check_width(&record, header.len(), path, line)?;
        let id = id_field(&record, item_col, "item id", path, line)?;
        let value = parse_rating(field(&record, rating_col, column, path, line)?, path, line)?;
        if let Some(why) = values.refuse(value) {
            return Err(DataError::at_line(path, line, why));
        }
        match items.get(id) {
            Some(j) => {
                if let Some(&first) = lines.get(&j) {
                    return Err(DataError::at_line(
                        path,
                        line,
                        format!("item '{id}' is rated twice (first on line {first})"),
                    ));
                }
                lines.insert(j, line);
                out.ratings.push((j, value));
            }
            None => out.unknown.push((id.to_owned(), line)),
        }
    }
    if out.ratings.is_empty() && out.unknown.is_empty() {
        return Err(DataError::in_file(
            path,
            format!(
                "has a header but no {column}s; a profile needs at least one 'item,{column}' row"
            ),
        ));
    }
    if out.ratings.is_empty() {
        let named: Vec<String> = out
            .unknown
            .iter()
            .take(3)
            .map(|(id, line)| format!("'{id}' (line {line})"))
            .collect();
        return Err(DataError::in_file(
            path,
            format!(
                "none of its {} rated item(s) is in the model ({}{}); a profile needs at \
                 least one item the model knows, named by its id as in the model's ratings",
                out.unknown.len(),
                named.join(", "),
                if out.unknown.len() > 3 { ", …" } else { "" }
            ),
        ));
    }
    out.ratings.sort_by_key(|&(j, _)| j);
    Ok(out)
}
