//! Factor tables: CSV files `id,f1,…,fD` holding one vector per user or item.

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
}

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
/// then rows of one id and D finite numbers. Ids must be unique and non-empty.
pub fn read_factor_table(reader: impl Read, path: &Path) -> Result<FactorTable, DataError> {
    let (mut csv, _) = csv_reader(reader, path, super::ratings::Delimiter::Auto)?;
    let header = read_header(&mut csv, path, "id, f1, …, fD")?;
    if header.len() < 2 {
        return Err(DataError::at_line(
            path,
            1,
            "a factor table needs an id column and at least one factor column (id,f1,…,fD)",
        ));
    }
    let rank = header.len() - 1;
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
    };
    let mut record = csv::ByteRecord::new();
    while csv
        .read_byte_record(&mut record)
        .map_err(|e| csv_error(path, &e))?
    {
        let line = record_line(&record);
        if record.len() != rank + 1 {
            return Err(DataError::at_line(
                path,
                line,
                format!(
                    "expected {} fields (an id and {rank} factors), found {}",
                    rank + 1,
                    record.len()
                ),
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
        for (d, raw) in record.iter().skip(1).enumerate() {
            let text = std::str::from_utf8(trimmed(raw)).unwrap_or("");
            match text.parse::<f64>() {
                Ok(v) if v.is_finite() && v.abs() <= super::ratings::MAX_MAGNITUDE => {
                    table.values.push(v + 0.0);
                }
                Ok(v) if v.is_finite() => {
                    return Err(DataError::at_line(
                        path,
                        line,
                        format!(
                            "factor f{} of '{id}' is {text}: factor values must lie within ±1e12",
                            d + 1
                        ),
                    ));
                }
                _ => {
                    return Err(DataError::at_line(
                        path,
                        line,
                        format!(
                            "factor f{} of '{id}' is '{text}', not a finite number",
                            d + 1
                        ),
                    ));
                }
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

/// Writes vectors as a factor table CSV. Numbers use the shortest text that reads back to
/// the same `f64`, so a save → load → save round trip is byte-identical.
pub fn write_factor_table(
    out: impl Write,
    ids: &IdMap,
    rank: usize,
    values: &[f64],
) -> std::io::Result<()> {
    let mut out = std::io::BufWriter::new(out);
    out.write_all(b"id")?;
    for d in 1..=rank {
        write!(out, ",f{d}")?;
    }
    out.write_all(b"\n")?;
    let mut csv_id = Vec::new();
    for (i, row) in values.chunks_exact(rank.max(1)).enumerate().take(ids.len()) {
        csv_id.clear();
        quote_field(&mut csv_id, ids.name(i as u32));
        out.write_all(&csv_id)?;
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
        write_factor_table(&mut first, &ids, 2, &values).unwrap();
        let table = read_factor_table(first.as_slice(), Path::new("t.csv")).unwrap();
        assert_eq!(table.values, values);
        assert_eq!(table.ids, ids);
        let mut second = Vec::new();
        write_factor_table(&mut second, &table.ids, 2, &table.values).unwrap();
        assert_eq!(first, second);
        assert!(
            String::from_utf8(first)
                .unwrap()
                .starts_with("id,f1,f2\na,0.1,")
        );
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
        assert_eq!(
            err("id\na\n"),
            "t.csv, line 1: a factor table needs an id column and at least one factor column (id,f1,…,fD)"
        );
    }
}
