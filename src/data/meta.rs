//! Items metadata: a CSV with an id column plus optional title and category columns and
//! any other columns, which are kept as named attributes.
//!
//! Other people's catalogues name their columns their own way, so the title and category
//! columns are found among the usual names ([`TITLE_NAMES`], [`CATEGORY_NAMES`], any case)
//! unless named, and the id column may differ from the ratings' ([`MetaColumns`]).

use std::fs::File;
use std::io::{Read, Write};
use std::path::Path;

use super::ids::IdMap;
use super::ratings::{
    Delimiter, check_width, csv_error, csv_reader, find_column, id_field, read_header, record_line,
    trimmed,
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

/// Column names a title column goes by when none is named (compared in any case).
pub const TITLE_NAMES: [&str; 8] = [
    "title",
    "name",
    "item_title",
    "item_name",
    "product_name",
    "display_name",
    "label",
    "headline",
];

/// Column names a category column goes by when none is named (compared in any case).
pub const CATEGORY_NAMES: [&str; 7] = [
    "category",
    "genre",
    "section",
    "department",
    "group",
    "class",
    "type",
];

/// Which columns of an items metadata file hold what.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct MetaColumns {
    /// The id column as named (`--meta-id-col`), if it was.
    pub id: Option<String>,
    /// The ratings' item column: the metadata's id column when it has one by that name.
    pub ratings_item: String,
    /// The title column as named (`--title-col`), if it was.
    pub title: Option<String>,
    /// The category column as named (`--category-col`), if it was.
    pub category: Option<String>,
    /// The field separator.
    pub delimiter: Delimiter,
}

impl Default for MetaColumns {
    /// The columns sextant itself writes (`item,title,category`), separator read off the
    /// header.
    fn default() -> Self {
        Self {
            id: None,
            ratings_item: "item".into(),
            title: None,
            category: None,
            delimiter: Delimiter::Auto,
        }
    }
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
    /// When no title column was found: the columns the file has, for a warning (not kept
    /// with the model).
    pub untitled: Option<Vec<String>>,
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
pub fn load_items_meta(
    path: &Path,
    columns: &MetaColumns,
    items: &IdMap,
) -> Result<ItemsMeta, DataError> {
    let file = File::open(path).map_err(|e| DataError::read(path, e))?;
    read_items_meta(file, path, columns, items)
}

/// The first column of `header` with one of `names` (any case), other than `skip`.
fn usual_column(header: &[String], names: &[&str], skip: usize) -> Option<usize> {
    names.iter().find_map(|name| {
        (0..header.len()).find(|&c| c != skip && header[c].eq_ignore_ascii_case(name))
    })
}

/// The id column: as named, else the ratings' item column, else `id`, `item` or
/// `item_id`.
fn id_column(header: &[String], columns: &MetaColumns, path: &Path) -> Result<usize, DataError> {
    if let Some(name) = &columns.id {
        return find_column(header, name, "--meta-id-col", path);
    }
    let candidates = [columns.ratings_item.as_str(), "id", "item", "item_id"];
    match candidates
        .iter()
        .find_map(|name| header.iter().position(|h| h.eq_ignore_ascii_case(name)))
    {
        Some(c) => Ok(c),
        None => find_column(header, &columns.ratings_item, "--meta-id-col", path),
    }
}

/// Reads items metadata from any reader; `path` is used in messages only.
pub fn read_items_meta(
    reader: impl Read,
    path: &Path,
    columns: &MetaColumns,
    items: &IdMap,
) -> Result<ItemsMeta, DataError> {
    let (mut csv, _) = csv_reader(reader, path, columns.delimiter)?;
    let header = read_header(&mut csv, path, "item, title, category, …")?;
    let id_col = id_column(&header, columns, path)?;
    let named = |name: &Option<String>, flag: &str| -> Result<Option<usize>, DataError> {
        name.as_deref()
            .map(|n| find_column(&header, n, flag, path))
            .transpose()
    };
    let title_col = match named(&columns.title, "--title-col")? {
        Some(c) => Some(c),
        None => usual_column(&header, &TITLE_NAMES, id_col),
    };
    let category_col = match named(&columns.category, "--category-col")? {
        Some(c) => Some(c),
        None => usual_column(&header, &CATEGORY_NAMES, id_col).filter(|&c| Some(c) != title_col),
    };
    let extra: Vec<usize> = (0..header.len())
        .filter(|&c| c != id_col && Some(c) != title_col && Some(c) != category_col)
        .collect();
    let mut meta = ItemsMeta {
        attribute_names: extra.iter().map(|&c| header[c].clone()).collect(),
        rows: vec![None; items.len()],
        unknown: Vec::new(),
        untitled: title_col.is_none().then(|| header.clone()),
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
        let meta = read_items_meta(
            text.as_bytes(),
            Path::new("m.csv"),
            &MetaColumns::default(),
            &items(),
        )
        .unwrap();
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
        let err = read_items_meta(
            text.as_bytes(),
            Path::new("m.csv"),
            &MetaColumns::default(),
            &items(),
        )
        .unwrap_err();
        assert_eq!(
            err.to_string(),
            "m.csv, line 3: item 'r1' is described twice (first on line 2)"
        );
    }
}
