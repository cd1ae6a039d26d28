//! A what-if profile: one member's ratings as `item,rating` CSV, for folding into a model.

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

/// Reads a profile CSV from a file.
pub fn load_profile(
    path: &Path,
    items: &IdMap,
    scale: &RatingScale,
) -> Result<ProfileRatings, DataError> {
    let file = File::open(path).map_err(|e| DataError::read(path, e))?;
    read_profile(file, path, items, scale)
}

/// Reads a profile CSV (`item,rating` header, extra columns ignored). Ratings must be
/// finite and on the model's scale; an item may appear once; items the model does not know
/// are collected in [`ProfileRatings::unknown`].
pub fn read_profile(
    reader: impl Read,
    path: &Path,
    items: &IdMap,
    scale: &RatingScale,
) -> Result<ProfileRatings, DataError> {
    let (mut csv, _) = csv_reader(reader, path, super::ratings::Delimiter::Auto)?;
    let header = read_header(&mut csv, path, "item, rating")?;
    let expected = "a profile's header row is item,rating";
    let item_col = find_column(&header, "item", expected, path)?;
    let rating_col = find_column(&header, "rating", expected, path)?;
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
        let value = parse_rating(
            field(&record, rating_col, "rating", path, line)?,
            path,
            line,
        )?;
        if !scale.contains(value) {
            return Err(DataError::at_line(
                path,
                line,
                format!(
                    "rating {value} is not on the model's rating scale ({})",
                    scale.describe()
                ),
            ));
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
            "has a header but no ratings; a profile needs at least one 'item,rating' row",
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
