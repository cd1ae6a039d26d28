//! Factor tables in Apache Parquet: vectors fitted elsewhere (a cluster writes them to a data
//! lake this way) read for `import`, and tables written by `export`.
//!
//! Reading accepts an id column (named by option, else `id`, else the first text column)
//! and either one list-of-floats column (named by option, or the only one) or the float
//! columns in schema order (`f1 … fD`), and, for a model with biases, a float column of
//! offsets named by option. Writing gives `id`, `bias` for a model with biases, and
//! `f1 … fD`, as doubles.

use std::fs::File;
use std::path::Path;
use std::sync::Arc;

use arrow_array::{
    Array, ArrayRef, FixedSizeListArray, Float32Array, Float64Array, LargeListArray,
    LargeStringArray, ListArray, RecordBatch, StringArray,
};
use arrow_schema::{DataType, Field, Schema};
use parquet::arrow::ArrowWriter;
use parquet::arrow::arrow_reader::ParquetRecordBatchReaderBuilder;

use super::factors::{BIAS, BiasColumn, FactorTable};
use super::ids::IdMap;
use super::ratings::{MAX_ID_BYTES, MAX_MAGNITUDE};
use crate::error::DataError;

/// Which columns hold the ids and the vectors.
#[derive(Debug, Clone, Default)]
pub struct ParquetColumns {
    /// The id column (default: `id`, else the first text column).
    pub id: Option<String>,
    /// A list-of-floats vector column (default: the only list column, else float columns).
    pub vector: Option<String>,
}

fn invalid(path: &Path, reason: impl Into<String>) -> DataError {
    DataError::in_file(path, reason)
}

/// Reads a factor table from a Parquet file; `bias` says which float column, if any, holds
/// the rows' offsets (as for CSV tables: a column named `bias` is never read as a factor).
pub fn read_factor_parquet(
    path: &Path,
    columns: &ParquetColumns,
    bias: BiasColumn<'_>,
) -> Result<FactorTable, DataError> {
    let file = File::open(path).map_err(|e| DataError::read(path, e))?;
    let builder = ParquetRecordBatchReaderBuilder::try_new(file)
        .map_err(|e| invalid(path, format!("not a readable Parquet file: {e}")))?;
    let schema = builder.schema().clone();
    let fields = schema.fields();
    let is_text = |t: &DataType| matches!(t, DataType::Utf8 | DataType::LargeUtf8);
    let is_float = |t: &DataType| matches!(t, DataType::Float32 | DataType::Float64);
    let is_list = |t: &DataType| match t {
        DataType::List(f) | DataType::LargeList(f) | DataType::FixedSizeList(f, _) => {
            is_float(f.data_type())
        }
        _ => false,
    };
    let names: Vec<&str> = fields.iter().map(|f| f.name().as_str()).collect();
    let find = |name: &str| names.iter().position(|n| *n == name);
    let id_col = match &columns.id {
        Some(name) => find(name).ok_or_else(|| {
            invalid(
                path,
                format!("no column '{name}' (found: {})", names.join(", ")),
            )
        })?,
        None => find("id")
            .filter(|&c| is_text(fields[c].data_type()))
            .or_else(|| fields.iter().position(|f| is_text(f.data_type())))
            .ok_or_else(|| {
                invalid(
                    path,
                    format!(
                        "no text column for the ids (found: {}); name it with --id-col",
                        names.join(", ")
                    ),
                )
            })?,
    };
    if !is_text(fields[id_col].data_type()) {
        return Err(invalid(
            path,
            format!("the id column '{}' is not text", names[id_col]),
        ));
    }
    let named_bias =
        (0..fields.len()).find(|&c| c != id_col && names[c].eq_ignore_ascii_case(BIAS));
    let bias_col = match bias {
        BiasColumn::Named(name, option) => {
            let c = find(name)
                .or_else(|| names.iter().position(|n| n.eq_ignore_ascii_case(name)))
                .ok_or_else(|| {
                    invalid(
                        path,
                        format!(
                            "no column '{name}' (found: {}); name the right column with {option}",
                            names.join(", ")
                        ),
                    )
                })?;
            if c == id_col || !is_float(fields[c].data_type()) {
                return Err(invalid(
                    path,
                    format!("the offsets column '{name}' is not a float column"),
                ));
            }
            Some(c)
        }
        BiasColumn::IfPresent => named_bias,
        BiasColumn::Absent => {
            if let Some(c) = named_bias {
                return Err(invalid(
                    path,
                    format!(
                        "column '{}' holds offsets, not factors: used as a factor or left out it would shift every prediction. Import it as the table's bias column (import --user-bias-col / --item-bias-col)",
                        names[c]
                    ),
                ));
            }
            None
        }
    };
    let lists: Vec<usize> = (0..fields.len())
        .filter(|&c| is_list(fields[c].data_type()))
        .collect();
    let vector_cols: Vec<usize> = match &columns.vector {
        Some(name) => {
            let c = find(name).ok_or_else(|| {
                invalid(
                    path,
                    format!("no column '{name}' (found: {})", names.join(", ")),
                )
            })?;
            if !is_list(fields[c].data_type()) {
                return Err(invalid(
                    path,
                    format!("column '{name}' is not a list of floats"),
                ));
            }
            vec![c]
        }
        None if lists.len() == 1 => lists.clone(),
        None if lists.len() > 1 => {
            return Err(invalid(
                path,
                "several list columns: name the vector column with --vector-col",
            ));
        }
        None => (0..fields.len())
            .filter(|&c| c != id_col && Some(c) != bias_col && is_float(fields[c].data_type()))
            .collect(),
    };
    if vector_cols.is_empty() {
        return Err(invalid(
            path,
            format!(
                "no vector column: expected one list of floats or float columns f1 … fD (found: {})",
                names.join(", ")
            ),
        ));
    }
    let reader = builder
        .build()
        .map_err(|e| invalid(path, format!("not a readable Parquet file: {e}")))?;
    let mut table = FactorTable {
        ids: IdMap::new(),
        rank: 0,
        values: Vec::new(),
        bias: bias_col.map(|_| Vec::new()),
    };
    let mut row = 0usize;
    for batch in reader {
        let batch = batch.map_err(|e| invalid(path, format!("unreadable data: {e}")))?;
        let ids = batch.column(id_col);
        for r in 0..batch.num_rows() {
            row += 1;
            let at = |reason: String| invalid(path, format!("row {row}: {reason}"));
            let id = text_at(ids, r).ok_or_else(|| at("the id is missing".into()))?;
            if id.is_empty() {
                return Err(at("the id is empty".into()));
            }
            if id.len() > MAX_ID_BYTES {
                return Err(at(format!(
                    "the id is {} bytes long; ids may have at most {MAX_ID_BYTES}",
                    id.len()
                )));
            }
            let vector = if vector_cols.len() == 1 && lists.contains(&vector_cols[0]) {
                list_at(batch.column(vector_cols[0]), r)
                    .ok_or_else(|| at("the vector is missing".into()))?
            } else {
                vector_cols
                    .iter()
                    .map(|&c| float_at(batch.column(c), r))
                    .collect::<Option<Vec<f64>>>()
                    .ok_or_else(|| at("a factor value is missing".into()))?
            };
            if table.rank == 0 {
                table.rank = vector.len();
                if table.rank == 0 {
                    return Err(at("the vector is empty".into()));
                }
                if let Err(why) = crate::limits::check_rank(table.rank) {
                    return Err(at(format!(
                        "the vector has {} factors, and a rank {why}",
                        table.rank
                    )));
                }
            } else if vector.len() != table.rank {
                return Err(at(format!(
                    "'{id}' has {} factors, the rows before it {}",
                    vector.len(),
                    table.rank
                )));
            }
            if let Some(v) = vector
                .iter()
                .find(|v| !v.is_finite() || v.abs() > MAX_MAGNITUDE)
            {
                return Err(at(format!(
                    "a factor of '{id}' is {v}: factor values must be finite, within ±1e12"
                )));
            }
            if table.ids.push_new(id).is_none() {
                return Err(at(format!("id '{id}' appears more than once")));
            }
            if let (Some(c), Some(offsets)) = (bias_col, &mut table.bias) {
                let b = float_at(batch.column(c), r)
                    .ok_or_else(|| at(format!("the offset of '{id}' is missing")))?;
                if !b.is_finite() || b.abs() > MAX_MAGNITUDE {
                    return Err(at(format!(
                        "the offset of '{id}' is {b}: offsets must be finite, within ±1e12"
                    )));
                }
                offsets.push(b + 0.0);
            }
            table.values.extend(vector.iter().map(|v| v + 0.0));
        }
    }
    if table.ids.is_empty() {
        return Err(invalid(path, "no rows: the file has no vectors"));
    }
    Ok(table)
}

fn text_at(column: &ArrayRef, r: usize) -> Option<&str> {
    if column.is_null(r) {
        return None;
    }
    if let Some(a) = column.as_any().downcast_ref::<StringArray>() {
        return Some(a.value(r));
    }
    column
        .as_any()
        .downcast_ref::<LargeStringArray>()
        .map(|a| a.value(r))
}

fn float_at(column: &ArrayRef, r: usize) -> Option<f64> {
    if column.is_null(r) {
        return None;
    }
    if let Some(a) = column.as_any().downcast_ref::<Float64Array>() {
        return Some(a.value(r));
    }
    column
        .as_any()
        .downcast_ref::<Float32Array>()
        .map(|a| f64::from(a.value(r)))
}

fn floats(values: &ArrayRef) -> Option<Vec<f64>> {
    (0..values.len()).map(|i| float_at(values, i)).collect()
}

fn list_at(column: &ArrayRef, r: usize) -> Option<Vec<f64>> {
    if column.is_null(r) {
        return None;
    }
    let any = column.as_any();
    if let Some(a) = any.downcast_ref::<ListArray>() {
        return floats(&a.value(r));
    }
    if let Some(a) = any.downcast_ref::<LargeListArray>() {
        return floats(&a.value(r));
    }
    any.downcast_ref::<FixedSizeListArray>()
        .and_then(|a| floats(&a.value(r)))
}

/// Writes a factor table as Parquet: `id` (text), `bias` when given, and `f1 … fD`
/// (doubles).
pub fn write_factor_parquet(
    out: impl std::io::Write + Send,
    ids: &IdMap,
    values: &[f64],
    rank: usize,
    bias: Option<&[f64]>,
) -> std::io::Result<()> {
    let mut fields = vec![Field::new("id", DataType::Utf8, false)];
    if bias.is_some() {
        fields.push(Field::new(BIAS, DataType::Float64, false));
    }
    fields.extend((1..=rank).map(|d| Field::new(format!("f{d}"), DataType::Float64, false)));
    let schema = Arc::new(Schema::new(fields));
    let mut arrays: Vec<ArrayRef> = vec![Arc::new(StringArray::from_iter_values(
        ids.names().iter().map(String::as_str),
    ))];
    if let Some(bias) = bias {
        arrays.push(Arc::new(Float64Array::from_iter_values(
            bias.iter().copied(),
        )));
    }
    for d in 0..rank {
        arrays.push(Arc::new(Float64Array::from_iter_values(
            values.chunks_exact(rank).map(|v| v[d]),
        )));
    }
    let batch = RecordBatch::try_new(schema.clone(), arrays).map_err(std::io::Error::other)?;
    let mut writer = ArrowWriter::try_new(out, schema, None).map_err(std::io::Error::other)?;
    writer.write(&batch).map_err(std::io::Error::other)?;
    writer.close().map_err(std::io::Error::other)?;
    Ok(())
}
