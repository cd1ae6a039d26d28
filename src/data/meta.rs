//! Items metadata: a CSV with an `item` column plus optional `title`, `category` and any
//! other columns, which are kept as named attributes.

use std::fs::File;
use std::io::{Read, Write};
use std::path::Path;

use super::ids::IdMap;
use super::ratings::{
    check_width, csv_error, csv_reader, find_column, id_field, optional_column, read_header,
    record_line, trimmed,
};
use crate::error::DataError;

/// Metadata of one item.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct ItemMeta {
    /// Display title.
    pub title: Option<String>,
    /// Category (used for colouring and coherence checks).
    pub category: Option<String>,
    /// Values of the extra columns, in the order of [`ItemsMeta::attribute_names`].
    pub attributes: Vec<String>,
}

/// Metadata for the items of a model, indexed like the model's items.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct ItemsMeta {
    /// Names of the extra columns.
    pub attribute_names: Vec<String>,
    /// Per item (dense index): its metadata, if the file had a row for it.
    pub rows: Vec<Option<ItemMeta>>,
    /// Ids that had metadata but no ratings (reported, not fatal).
    pub unknown: Vec<String>,
}

impl ItemsMeta {
    /// Metadata of item `i`, if any.
    pub fn get(&self, i: u32) -> Option<&ItemMeta> {
        self.rows.get(i as usize).and_then(Option::as_ref)
    }

    /// Number of items that have metadata.
    pub fn described(&self) -> usize {
        self.rows.iter().filter(|r| r.is_some()).count()
    }
}

/// Loads items metadata for the items in `items`.
pub fn load_items_meta(path: &Path, item_col: &str, items: &IdMap) -> Result<ItemsMeta, DataError> {
    let file = File::open(path).map_err(|e| DataError::read(path, e))?;
    read_items_meta(file, path, item_col, items)
}

/// Reads items metadata from any reader; `path` is used in messages only.
pub fn read_items_meta(
    reader: impl Read,
    path: &Path,
    item_col: &str,
    items: &IdMap,
) -> Result<ItemsMeta, DataError> {
    let mut csv = csv_reader(reader);
    let header = read_header(&mut csv, path, "item, title, category, …")?;
    let id_col = find_column(&header, item_col, "--item-col", path)?;
    let title_col = optional_column(&header, "title").filter(|&c| c != id_col);
    let category_col = optional_column(&header, "category").filter(|&c| c != id_col);
    let extra: Vec<usize> = (0..header.len())
        .filter(|&c| c != id_col && Some(c) != title_col && Some(c) != category_col)
        .collect();
    let mut meta = ItemsMeta {
        attribute_names: extra.iter().map(|&c| header[c].clone()).collect(),
        rows: vec![None; items.len()],
        unknown: Vec::new(),
    };
    let mut seen_lines = vec![0u64; items.len()];
    let mut unknown_seen = std::collections::HashSet::new();
    let mut record = csv::ByteRecord::new();
    while csv
        .read_byte_record(&mut record)
        .map_err(|e| csv_error(path, &e))?
    {
        let line = record_line(&record);
        check_width(&record, header.len(), path, line)?;
        let id = id_field(&record, id_col, "item id", path, line)?;
        let text = |col: Option<usize>| -> Result<Option<String>, DataError> {
            let Some(col) = col else { return Ok(None) };
            let Some(raw) = record.get(col) else {
                return Ok(None);
            };
            let value = std::str::from_utf8(trimmed(raw)).map_err(|_| {
                DataError::at_line(
                    path,
                    line,
                    format!("column '{}' is not valid UTF-8 text", header[col]),
                )
            })?;
            Ok((!value.is_empty()).then(|| value.to_owned()))
        };
        let row = ItemMeta {
            title: text(title_col)?,
            category: text(category_col)?,
            attributes: extra
                .iter()
                .map(|&c| text(Some(c)).map(Option::unwrap_or_default))
                .collect::<Result<_, _>>()?,
        };
        let Some(i) = items.get(id) else {
            if unknown_seen.insert(id.to_owned()) {
                meta.unknown.push(id.to_owned());
            } else {
                return Err(duplicate(path, line, id));
            }
            continue;
        };
        if seen_lines[i as usize] != 0 {
            return Err(DataError::at_line(
                path,
                line,
                format!(
                    "item '{id}' is described twice (first on line {})",
                    seen_lines[i as usize]
                ),
            ));
        }
        seen_lines[i as usize] = line;
        meta.rows[i as usize] = Some(row);
    }
    Ok(meta)
}

fn duplicate(path: &Path, line: u64, id: &str) -> DataError {
    DataError::at_line(path, line, format!("item '{id}' is described twice"))
}

/// Writes metadata as CSV (`item,title,category,<attributes>`) in item order.
pub fn write_items_meta(out: impl Write, meta: &ItemsMeta, items: &IdMap) -> std::io::Result<()> {
    let mut csv = csv::Writer::from_writer(out);
    let mut header = vec!["item", "title", "category"];
    header.extend(meta.attribute_names.iter().map(String::as_str));
    csv.write_record(&header)?;
    for (i, row) in meta.rows.iter().enumerate() {
        let Some(row) = row else { continue };
        let mut record = vec![
            items.name(i as u32),
            row.title.as_deref().unwrap_or(""),
            row.category.as_deref().unwrap_or(""),
        ];
        record.extend(row.attributes.iter().map(String::as_str));
        csv.write_record(&record)?;
    }
    csv.flush()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn items() -> IdMap {
        let mut ids = IdMap::new();
        ids.intern("r1");
        ids.intern("r2");
        ids
    }

    #[test]
    fn reads_known_and_reports_unknown() {
        let text = "item,title,category,serves\nr2,Barley Soup,soups,4\nzz,Ghost,cakes,1\n";
        let meta = read_items_meta(text.as_bytes(), Path::new("m.csv"), "item", &items()).unwrap();
        assert_eq!(meta.get(0), None);
        let r2 = meta.get(1).unwrap();
        assert_eq!(r2.title.as_deref(), Some("Barley Soup"));
        assert_eq!(r2.attributes, ["4"]);
        assert_eq!(meta.unknown, ["zz"]);
        let mut out = Vec::new();
        write_items_meta(&mut out, &meta, &items()).unwrap();
        assert_eq!(
            String::from_utf8(out).unwrap(),
            "item,title,category,serves\nr2,Barley Soup,soups,4\n"
        );
    }

    #[test]
    fn duplicate_rows_are_refused() {
        let text = "item,title\nr1,A\nr1,B\n";
        let err =
            read_items_meta(text.as_bytes(), Path::new("m.csv"), "item", &items()).unwrap_err();
        assert_eq!(
            err.to_string(),
            "m.csv, line 3: item 'r1' is described twice (first on line 2)"
        );
    }
}
