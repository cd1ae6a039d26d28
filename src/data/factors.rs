//! Factor tables: CSV files `id,f1,…,fD` holding one vector per user or item, or
//! `id,bias,f1,…,fD` for a model with biases (each row's offset after its id).

use std::fs::File;
use std::io::{Read, Write};
use std::path::Path;

use super::ids::IdMap;
use super::ratings::{csv_error, csv_reader, read_header, record_line, trimmed};
use crate::error::DataError;

/// Vectors keyed by id, stored row-major (`values[i * rank + d]`).
#[derive(Debug, Clone, PartialEq)]
pub struct FactorTable {
    /// Ids in row order.
    pub ids: IdMap,
    /// Width of each vector.
    pub rank: usize,
    /// Row-major values.
    pub values: Vec<f64>,
    /// Each row's offset, when the table has a bias column.
    pub bias: Option<Vec<f64>>,
}

/// What a reader does with a column of offsets.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum BiasColumn<'a> {
    /// The table has none: a column named `bias` is refused rather than read as a factor
    /// (it would shift every prediction without a warning).
    Absent,
    /// The column of this name (exact, else case-insensitive) holds the offsets; the
    /// string after it is the option that names it, for the message when it is missing.
    Named(&'a str, &'a str),
    /// A column named `bias` is read as offsets when there is one.
    IfPresent,
}

/// The name a model's own tables give their offsets column.
pub const BIAS: &str = "bias";

impl FactorTable {
    /// The vector of row `i`.
    pub fn row(&self, i: usize) -> &[f64] {
        &self.values[i * self.rank..(i + 1) * self.rank]
    }
}

/// Loads a factor table CSV.
pub fn load_factor_table(path: &Path) -> Result<FactorTable, DataError> {
    let file = File::open(path).map_err(|e| DataError::read(path, e))?;
    read_factor_table(file, path)
}

/// Reads a factor table: a header (`id,f1,…,fD`; the names are not checked beyond the count),
/// then rows of one id and D finite numbers. Ids must be unique and non-empty. A column
/// named `bias` is refused: see [`read_factor_table_with`].
pub fn read_factor_table(reader: impl Read, path: &Path) -> Result<FactorTable, DataError> {
    read_factor_table_with(reader, path, BiasColumn::Absent)
}

/// [`read_factor_table`] for a table that may hold a column of offsets (`bias`): that
/// column is taken out and every other column after the id is a factor.
pub fn read_factor_table_with(
    reader: impl Read,
    path: &Path,
    bias: BiasColumn<'_>,
) -> Result<FactorTable, DataError> {
    let (mut csv, _) = csv_reader(reader, path, super::ratings::Delimiter::Auto)?;
    let header = read_header(&mut csv, path, "id, f1, …, fD")?;
    let bias_col = match bias {
        BiasColumn::Named(name, option) => {
            let c = super::ratings::find_column(&header, name, option, path)?;
            if c == 0 {
                return Err(DataError::at_line(
                    path,
                    1,
                    format!(
                        "'{name}' is the id column (the first); the offsets need a column of their own"
                    ),
                ));
            }
            Some(c)
        }
        BiasColumn::IfPresent => (1..header.len()).find(|&c| header[c].eq_ignore_ascii_case(BIAS)),
        BiasColumn::Absent => {
            if let Some(c) = (1..header.len()).find(|&c| header[c].eq_ignore_ascii_case(BIAS)) {
                return Err(DataError::at_line(
                    path,
                    1,
                    format!(
                        "column {} is named '{}', which holds offsets, not a factor: read as a factor it would shift every prediction. Import it as the table's bias column (import --user-bias-col / --item-bias-col), or rename it if it really is a factor",
                        c + 1,
                        header[c]
                    ),
                ));
            }
            None
        }
    };
    let width = header.len() - 1 - usize::from(bias_col.is_some());
    if width == 0 {
        return Err(DataError::at_line(
            path,
            1,
            "a factor table needs an id column and at least one factor column (id,f1,…,fD)",
        ));
    }
    let rank = width;
    if let Err(why) = crate::limits::check_rank(rank) {
        return Err(DataError::at_line(
            path,
            1,
            format!("the table has {rank} factor columns, and a rank {why}"),
        ));
    }
    let mut table = FactorTable {
        ids: IdMap::new(),
        rank,
        values: Vec::new(),
        bias: bias_col.map(|_| Vec::new()),
    };
    let fields = header.len();
    let mut record = csv::ByteRecord::new();
    while csv
        .read_byte_record(&mut record)
        .map_err(|e| csv_error(path, &e))?
    {
        let line = record_line(&record);
        if record.len() != fields {
            let what = if bias_col.is_some() {
                format!("an id, an offset and {rank} factors")
            } else {
                format!("an id and {rank} factors")
            };
            return Err(DataError::at_line(
                path,
                line,
                format!("expected {fields} fields ({what}), found {}", record.len()),
            ));
        }
        let id = std::str::from_utf8(trimmed(&record[0]))
            .map_err(|_| DataError::at_line(path, line, "the id is not valid UTF-8 text"))?;
        if id.is_empty() {
            return Err(DataError::at_line(path, line, "the id is empty"));
        }
        super::ratings::check_id_length(id, "id", path, line)?;
        if table.ids.push_new(id).is_none() {
            return Err(DataError::at_line(
                path,
                line,
                format!("id '{id}' appears more than once"),
            ));
        }
        let mut d = 0;
        for (c, raw) in record.iter().enumerate().skip(1) {
            let name = if Some(c) == bias_col {
                "the offset".to_owned()
            } else {
                d += 1;
                format!("factor f{d}")
            };
            let v = number(raw, &name, id, path, line)?;
            match (&mut table.bias, Some(c) == bias_col) {
                (Some(bias), true) => bias.push(v),
                _ => table.values.push(v),
            }
        }
    }
    if table.ids.is_empty() {
        return Err(DataError::in_file(
            path,
            "no rows: the file has a header row but no vectors",
        ));
    }
    Ok(table)
}

/// One finite table value within the magnitude limit (`-0` read as `0`).
fn number(raw: &[u8], what: &str, id: &str, path: &Path, line: u64) -> Result<f64, DataError> {
    let kind = if what.starts_with("factor") {
        "factor values"
    } else {
        "offsets"
    };
    let text = std::str::from_utf8(trimmed(raw)).unwrap_or("");
    match text.parse::<f64>() {
        Ok(v) if v.is_finite() && v.abs() <= super::ratings::MAX_MAGNITUDE => Ok(v + 0.0),
        Ok(v) if v.is_finite() => Err(DataError::at_line(
            path,
            line,
            format!("{what} of '{id}' is {text}: {kind} must lie within ±1e12"),
        )),
        _ => Err(DataError::at_line(
            path,
            line,
            format!("{what} of '{id}' is '{text}', not a finite number"),
        )),
    }
}

/// Writes vectors as a factor table CSV. Numbers use the shortest text that reads back to
/// the same `f64`, so a save → load → save round trip is byte-identical.
/// With `bias`, each row's offset follows its id in a column named `bias`.
pub fn write_factor_table(
    out: impl Write,
    ids: &IdMap,
    rank: usize,
    values: &[f64],
    bias: Option<&[f64]>,
) -> std::io::Result<()> {
    let mut out = std::io::BufWriter::new(out);
    out.write_all(b"id")?;
    if bias.is_some() {
        write!(out, ",{BIAS}")?;
    }
    for d in 1..=rank {
        write!(out, ",f{d}")?;
    }
    out.write_all(b"\n")?;
    let mut csv_id = Vec::new();
    for (i, row) in values.chunks_exact(rank.max(1)).enumerate().take(ids.len()) {
        csv_id.clear();
        quote_field(&mut csv_id, ids.name(i as u32));
        out.write_all(&csv_id)?;
        if let Some(bias) = bias {
            out.write_all(b",")?;
            out.write_all(format_float(bias[i]).as_bytes())?;
        }
        for &v in row {
            out.write_all(b",")?;
            out.write_all(format_float(v).as_bytes())?;
        }
        out.write_all(b"\n")?;
    }
    out.flush()
}

/// Shortest round-trip text for a finite float (`1`, `-0.25`, `1.5e-7`).
pub fn format_float(v: f64) -> String {
    let text = format!("{v:?}");
    match text.strip_suffix(".0") {
        Some(whole) => whole.to_owned(),
        None => text,
    }
}

/// Appends `field` to `out`, quoted per RFC 4180 when it needs to be.
pub fn quote_field(out: &mut Vec<u8>, field: &str) {
    let needs = field
        .bytes()
        .any(|b| matches!(b, b',' | b'"' | b'\n' | b'\r'))
        || field.starts_with(' ')
        || field.ends_with(' ');
    if !needs {
        out.extend_from_slice(field.as_bytes());
        return;
    }
    out.push(b'"');
    for b in field.bytes() {
        if b == b'"' {
            out.push(b'"');
        }
        out.push(b);
    }
    out.push(b'"');
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn round_trips_bit_for_bit() {
        let mut ids = IdMap::new();
        ids.intern("a");
        ids.intern("b,c");
        let values = [0.1, -1.0 / 3.0, 1e-300, 12_345_678.9];
        let mut first = Vec::new();
        write_factor_table(&mut first, &ids, 2, &values, None).unwrap();
        let table = read_factor_table(first.as_slice(), Path::new("t.csv")).unwrap();
        assert_eq!(table.values, values);
        assert_eq!(table.ids, ids);
        let mut second = Vec::new();
        write_factor_table(&mut second, &table.ids, 2, &table.values, None).unwrap();
        assert_eq!(first, second);
        assert!(
            String::from_utf8(first)
                .unwrap()
                .starts_with("id,f1,f2\na,0.1,")
        );
    }

    #[test]
    fn round_trips_a_bias_column() {
        let mut ids = IdMap::new();
        ids.intern("a");
        ids.intern("b");
        let (values, bias) = ([0.5, -2.0, 3.25, 1e-9], [0.125, -1.5]);
        let mut text = Vec::new();
        write_factor_table(&mut text, &ids, 2, &values, Some(&bias)).unwrap();
        assert!(
            String::from_utf8(text.clone())
                .unwrap()
                .starts_with("id,bias,f1,f2\na,0.125,0.5,-2\n")
        );
        let table =
            read_factor_table_with(text.as_slice(), Path::new("t.csv"), BiasColumn::IfPresent)
                .unwrap();
        assert_eq!((table.rank, &table.values[..]), (2, &values[..]));
        assert_eq!(table.bias.as_deref(), Some(&bias[..]));
        // A bias column anywhere, named by the importer.
        let moved = "id,f1,offset,f2\na,0.5,0.125,-2\nb,3.25,-1.5,1e-9\n";
        let named = BiasColumn::Named("offset", "--user-bias-col");
        let table = read_factor_table_with(moved.as_bytes(), Path::new("t.csv"), named).unwrap();
        assert_eq!(table.values, values);
        assert_eq!(table.bias.as_deref(), Some(&bias[..]));
        let missing = read_factor_table_with(
            moved.as_bytes(),
            Path::new("t.csv"),
            BiasColumn::Named("b", "--user-bias-col"),
        )
        .unwrap_err()
        .to_string();
        assert!(missing.contains("--user-bias-col"), "{missing}");
    }

    #[test]
    fn refuses_bad_rows() {
        let err = |text: &str| {
            read_factor_table(text.as_bytes(), Path::new("t.csv"))
                .unwrap_err()
                .to_string()
        };
        assert_eq!(
            err("id,f1,f2\na,1\n"),
            "t.csv, line 2: expected 3 fields (an id and 2 factors), found 2"
        );
        assert_eq!(
            err("id,f1\na,1\na,2\n"),
            "t.csv, line 3: id 'a' appears more than once"
        );
        assert_eq!(
            err("id,f1\na,inf\n"),
            "t.csv, line 2: factor f1 of 'a' is 'inf', not a finite number"
        );
        assert!(err("id,f1,Bias\na,1,2\n").starts_with(
            "t.csv, line 1: column 3 is named 'Bias', which holds offsets, not a factor"
        ));
        assert_eq!(
            err("id\na\n"),
            "t.csv, line 1: a factor table needs an id column and at least one factor column (id,f1,…,fD)"
        );
    }
}
