//! Loading ratings from CSV (RFC 4180 with a header row).
//!
//! Columns are found by name (`user,item,rating` unless renamed); extra columns are ignored;
//! a UTF-8 byte-order mark, CRLF line ends and quoted fields are accepted; surrounding
//! spaces are trimmed. Fields are separated by commas, semicolons, tabs or pipes: the
//! separator is read off the header line ([`Delimiter::Auto`]) or given. Every problem is
//! reported with the file, the line and the reason.

use std::fs::File;
use std::io::Read;
use std::path::Path;

use super::ids::IdMap;
use super::scale::RatingScale;
use crate::error::DataError;
use crate::files::bounded::Bounded;

/// One observed rating, by dense indices.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Rating {
    /// Dense user index.
    pub user: u32,
    /// Dense item index.
    pub item: u32,
    /// The rating value.
    pub value: f64,
    /// True when the rating is held out from training.
    pub holdout: bool,
}

/// A set of ratings with interned ids, sorted by (user, item), without duplicate pairs.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Ratings {
    /// User ids in index order.
    pub users: IdMap,
    /// Item ids in index order.
    pub items: IdMap,
    /// The ratings, sorted by (user, item).
    pub entries: Vec<Rating>,
}

impl Ratings {
    /// Number of ratings used for training.
    pub fn train_count(&self) -> usize {
        self.entries.iter().filter(|r| !r.holdout).count()
    }

    /// Number of held-out ratings.
    pub fn holdout_count(&self) -> usize {
        self.entries.iter().filter(|r| r.holdout).count()
    }

    /// Training ratings per user and per item.
    pub fn train_support(&self) -> (Vec<u32>, Vec<u32>) {
        let mut users = vec![0u32; self.users.len()];
        let mut items = vec![0u32; self.items.len()];
        for r in self.entries.iter().filter(|r| !r.holdout) {
            users[r.user as usize] += 1;
            items[r.item as usize] += 1;
        }
        (users, items)
    }
}

/// What to do when the same (user, item) pair is rated more than once.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
pub enum Duplicates {
    /// Refuse the file (default): a duplicate usually means a broken export.
    #[default]
    Error,
    /// Keep the rating that comes last in the file.
    Last,
    /// Keep the mean of all ratings of the pair.
    Mean,
}

use serde::{Deserialize, Serialize};

/// Column names of a ratings file.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct RatingColumns {
    /// Column holding the user id (default `user`).
    pub user: String,
    /// Column holding the item id (default `item`).
    pub item: String,
    /// Column holding the rating (default `rating`).
    pub rating: String,
    /// Optional column marking `train` / `holdout` rows (model directories use `split`).
    pub split: Option<String>,
}

impl Default for RatingColumns {
    fn default() -> Self {
        Self {
            user: "user".into(),
            item: "item".into(),
            rating: "rating".into(),
            split: None,
        }
    }
}

/// The separator between the fields of a CSV file.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Delimiter {
    /// Read off the header line: a comma, unless the header is one field when split at
    /// commas and splits into more at a semicolon, tab or pipe (the one giving the most
    /// fields).
    #[default]
    Auto,
    /// This byte.
    Given(u8),
}

/// The separators [`Delimiter::Auto`] recognises, with their names for messages.
pub const DELIMITERS: [(u8, &str); 4] =
    [(b',', "','"), (b';', "';'"), (b'\t', "tab"), (b'|', "'|'")];

impl Delimiter {
    /// Parses `,` `;` `|` `tab` (or a literal tab), and the names comma, semicolon, pipe.
    pub fn parse(text: &str) -> Result<Self, String> {
        let byte = match text.trim_matches(' ').to_ascii_lowercase().as_str() {
            "," | "comma" => b',',
            ";" | "semicolon" => b';',
            "|" | "pipe" => b'|',
            "\t" | "tab" | "\\t" => b'\t',
            _ => {
                return Err(format!(
                    "'{text}' is not a separator sextant reads; use one of , ; | tab"
                ));
            }
        };
        Ok(Self::Given(byte))
    }
}

/// How a separator is named in messages.
pub fn delimiter_name(byte: u8) -> &'static str {
    DELIMITERS
        .iter()
        .find(|(b, _)| *b == byte)
        .map_or("the given separator", |(_, name)| name)
}

/// The separator the header line `line` uses (see [`Delimiter::Auto`]).
pub fn sniff_delimiter(line: &[u8]) -> u8 {
    let fields = |d: u8| {
        let mut reader = csv::ReaderBuilder::new()
            .has_headers(false)
            .flexible(true)
            .delimiter(d)
            .from_reader(line);
        let mut record = csv::ByteRecord::new();
        match reader.read_byte_record(&mut record) {
            Ok(true) => record.len(),
            _ => 0,
        }
    };
    if fields(b',') > 1 {
        return b',';
    }
    DELIMITERS[1..]
        .iter()
        .map(|&(d, _)| (fields(d), d))
        .filter(|&(n, _)| n > 1)
        .max_by_key(|&(n, d)| (n, std::cmp::Reverse(d)))
        .map_or(b',', |(_, d)| d)
}

/// How to read a ratings file.
#[derive(Debug, Clone, Default)]
pub struct RatingsOptions {
    /// Column names.
    pub columns: RatingColumns,
    /// The field separator.
    pub delimiter: Delimiter,
    /// When given, every rating must lie on this scale.
    pub scale: Option<RatingScale>,
    /// Policy for repeated (user, item) pairs.
    pub duplicates: Duplicates,
    /// When true, user and item ids must already be in the maps passed to
    /// [`read_ratings_with_ids`] (loading a model directory, importing vectors).
    pub known_ids_only: bool,
    /// The ratings file of a model directory: no flag renames its columns, so a missing
    /// one means the file is damaged (not that a flag is needed).
    pub model_file: bool,
    /// The values are counts of implicit feedback (or any weights): each must be ≥ 0.
    pub counts: bool,
}

/// Loads a ratings CSV file.
pub fn load_ratings(path: &Path, options: &RatingsOptions) -> Result<Ratings, DataError> {
    let file = File::open(path).map_err(|e| DataError::read(path, e))?;
    read_ratings(file, path, options)
}

/// Reads ratings CSV from any reader; `path` is used in messages only.
pub fn read_ratings(
    reader: impl Read + Send,
    path: &Path,
    options: &RatingsOptions,
) -> Result<Ratings, DataError> {
    read_ratings_with_ids(reader, path, options, IdMap::new(), IdMap::new())
}

/// Rows parsed from the CSV, handed from the parsing thread to the interning one.
#[derive(Default)]
struct Batch {
    /// User id then item id of every row, back to back.
    ids: Vec<u8>,
    /// Per row: where its user id ends and where its item id ends in `ids`.
    ends: Vec<(u32, u32)>,
    values: Vec<f64>,
    holdout: Vec<bool>,
    lines: Vec<u64>,
}

/// Rows per batch: large enough to make the hand-over cheap, small enough to stream.
const BATCH_ROWS: usize = 1 << 15;

/// Reads ratings CSV, interning ids into the given maps (pre-filled maps fix the index order).
///
/// The file is streamed in two stages on two threads: one parses CSV records (fields,
/// UTF-8, numbers, the scale) into batches, the other interns ids and collects ratings, so
/// the two halves of the work overlap. Errors are the same as a single pass would give:
/// the first faulty line of the file is reported.
pub fn read_ratings_with_ids(
    reader: impl Read + Send,
    path: &Path,
    options: &RatingsOptions,
    users: IdMap,
    items: IdMap,
) -> Result<Ratings, DataError> {
    let (mut csv, _) = csv_reader(reader, path, options.delimiter)?;
    let header = read_header(&mut csv, path, "user, item, rating")?;
    let cols = &options.columns;
    // In a model directory no flag renames a column: the file itself is wrong.
    let advice = |flag: &'static str| {
        if options.model_file {
            "the model directory's ratings file is damaged; fit the model again"
        } else {
            flag
        }
    };
    let user_col = find_column(&header, &cols.user, advice("--user-col"), path)?;
    let item_col = find_column(&header, &cols.item, advice("--item-col"), path)?;
    let rating_col = find_column(&header, &cols.rating, advice("--rating-col"), path)?;
    let split_col = match &cols.split {
        Some(name) => Some(find_column(
            &header,
            name,
            advice("a split column marks each rating train or holdout"),
            path,
        )?),
        None => None,
    };
    let mut loader = Loader {
        path,
        users,
        items,
        raw: Vec::new(),
        lines: Vec::new(),
        last_user: (Vec::new(), 0),
    };
    let columns = header.len();
    let mut parse = move |sender: std::sync::mpsc::SyncSender<Result<Batch, DataError>>| {
        let mut record = csv::ByteRecord::new();
        let mut batch = Batch::default();
        let mut row = |batch: &mut Batch| -> Result<bool, DataError> {
            if !csv
                .read_byte_record(&mut record)
                .map_err(|e| csv_error(path, &e))?
            {
                return Ok(false);
            }
            let line = record_line(&record);
            check_width(&record, columns, path, line)?;
            let user = id_field(&record, user_col, "user id", path, line)?;
            let item = id_field(&record, item_col, "item id", path, line)?;
            let value = parse_rating(
                field(&record, rating_col, "rating", path, line)?,
                path,
                line,
            )?;
            if let Some(scale) = &options.scale {
                check_on_scale(scale, value, path, line)?;
            }
            if options.counts && value < 0.0 {
                return Err(DataError::at_line(
                    path,
                    line,
                    format!(
                        "count '{value}' is negative; implicit feedback needs counts (or weights) of at least 0"
                    ),
                ));
            }
            let holdout = match split_col {
                Some(col) => parse_split(field(&record, col, "split", path, line)?, path, line)?,
                None => false,
            };
            batch.ids.extend_from_slice(user.as_bytes());
            let user_end = batch.ids.len() as u32;
            batch.ids.extend_from_slice(item.as_bytes());
            batch.ends.push((user_end, batch.ids.len() as u32));
            batch.values.push(value);
            batch.holdout.push(holdout);
            batch.lines.push(line);
            Ok(true)
        };
        loop {
            match row(&mut batch) {
                Ok(true) if batch.lines.len() < BATCH_ROWS => {}
                Ok(more) => {
                    let full = std::mem::take(&mut batch);
                    if (!full.lines.is_empty() && sender.send(Ok(full)).is_err()) || !more {
                        return;
                    }
                }
                Err(e) => {
                    let done = std::mem::take(&mut batch);
                    if !done.lines.is_empty() && sender.send(Ok(done)).is_err() {
                        return;
                    }
                    let _ = sender.send(Err(e));
                    return;
                }
            }
        }
    };
    std::thread::scope(|scope| -> Result<(), DataError> {
        let (sender, receiver) = std::sync::mpsc::sync_channel(4);
        scope.spawn(move || parse(sender));
        for batch in receiver {
            let batch = batch?;
            let mut start = 0usize;
            for (k, &(user_end, item_end)) in batch.ends.iter().enumerate() {
                let (user_end, item_end) = (user_end as usize, item_end as usize);
                // Both were UTF-8 when parsed; the bytes are only moved.
                let user = std::str::from_utf8(&batch.ids[start..user_end]).expect("UTF-8");
                let item = std::str::from_utf8(&batch.ids[user_end..item_end]).expect("UTF-8");
                start = item_end;
                loader.push(
                    user,
                    item,
                    batch.values[k],
                    batch.holdout[k],
                    batch.lines[k],
                    options.known_ids_only,
                )?;
            }
        }
        Ok(())
    })?;
    if loader.raw.is_empty() {
        return Err(DataError::in_file(
            path,
            "no ratings: the file has a header row but no data rows",
        ));
    }
    loader.finish(options.duplicates)
}

struct Loader<'a> {
    path: &'a Path,
    users: IdMap,
    items: IdMap,
    raw: Vec<Rating>,
    lines: Vec<u64>,
    /// The previous row's user id and index: exports are usually grouped by user, so most
    /// rows skip the user lookup.
    last_user: (Vec<u8>, u32),
}

impl Loader<'_> {
    fn push(
        &mut self,
        user: &str,
        item: &str,
        value: f64,
        holdout: bool,
        line: u64,
        known_only: bool,
    ) -> Result<(), DataError> {
        let (user, item) = if known_only {
            let u = self.users.get(user).ok_or_else(|| {
                DataError::at_line(
                    self.path,
                    line,
                    format!("user '{user}' is not in the users table"),
                )
            })?;
            let i = self.items.get(item).ok_or_else(|| {
                DataError::at_line(
                    self.path,
                    line,
                    format!("item '{item}' is not in the items table"),
                )
            })?;
            (u, i)
        } else {
            let u = if !self.last_user.0.is_empty() && self.last_user.0 == user.as_bytes() {
                self.last_user.1
            } else {
                let u = self.users.intern(user);
                self.last_user.0.clear();
                self.last_user.0.extend_from_slice(user.as_bytes());
                self.last_user.1 = u;
                u
            };
            (u, self.items.intern(item))
        };
        self.raw.push(Rating {
            user,
            item,
            value,
            holdout,
        });
        self.lines.push(line);
        Ok(())
    }

    fn finish(self, duplicates: Duplicates) -> Result<Ratings, DataError> {
        let Self {
            path,
            users,
            items,
            raw,
            lines,
            ..
        } = self;
        let order = pair_order(&raw, users.len());
        let mut entries: Vec<Rating> = Vec::with_capacity(raw.len());
        let mut run = 0usize; // ratings merged into the last entry
        for (pos, &k) in order.iter().enumerate() {
            let r = raw[k as usize];
            let same_pair = entries
                .last()
                .is_some_and(|e| e.user == r.user && e.item == r.item);
            if !same_pair {
                entries.push(r);
                run = 1;
                continue;
            }
            let last = entries.last_mut().expect("same_pair implies an entry");
            match duplicates {
                Duplicates::Error => {
                    let first_line = lines[order[pos - run] as usize];
                    return Err(DataError::at_line(
                        path,
                        lines[k as usize],
                        format!(
                            "duplicate rating for user '{}' and item '{}' (first rated on line \
                             {first_line}); use --duplicates last or --duplicates mean to combine them",
                            users.name(r.user),
                            items.name(r.item)
                        ),
                    ));
                }
                Duplicates::Last => *last = r,
                Duplicates::Mean => {
                    // Running mean keeps the value exact for equal ratings.
                    run += 1;
                    last.value += (r.value - last.value) / run as f64;
                    last.holdout = r.holdout;
                }
            }
        }
        Ok(Ratings {
            users,
            items,
            entries,
        })
    }
}

/// Row positions sorted by (user, item, position in the file), so "last" and error lines
/// are exact: a counting sort by user (one pass, no comparisons), then a sort of each
/// user's few rows by item — far faster than one comparison sort over every row.
fn pair_order(raw: &[Rating], users: usize) -> Vec<u32> {
    let mut start = vec![0u32; users + 1];
    for r in raw {
        start[r.user as usize + 1] += 1;
    }
    for u in 0..users {
        start[u + 1] += start[u];
    }
    let mut next = start.clone();
    let mut order = vec![0u32; raw.len()];
    for (k, r) in raw.iter().enumerate() {
        let slot = &mut next[r.user as usize];
        order[*slot as usize] = k as u32;
        *slot += 1;
    }
    for u in 0..users {
        let block = &mut order[start[u] as usize..start[u + 1] as usize];
        // Positions within a block are already increasing, so a stable sort by item keeps
        // the file order among repeats of a pair.
        block.sort_by_key(|&k| raw[k as usize].item);
    }
    order
}

/// A CSV reader as every sextant input is read: lines are bounded and UTF-16 or UTF-32
/// files are named ([`crate::files::bounded`]), and fields are split at `delimiter`
/// (read off the header line when [`Delimiter::Auto`]).
pub(crate) type CsvReader<R> = csv::Reader<std::io::Chain<std::io::Cursor<Vec<u8>>, Bounded<R>>>;

/// Opens `reader` as CSV (see [`CsvReader`]); returns the reader and the separator used.
pub(crate) fn csv_reader<R: Read>(
    reader: R,
    path: &Path,
    delimiter: Delimiter,
) -> Result<(CsvReader<R>, u8), DataError> {
    let mut bounded = Bounded::new(reader);
    // The first line (and what came with it) is read ahead to choose the separator, then
    // handed to the CSV reader before the rest.
    let mut head = Vec::new();
    let mut chunk = [0u8; 8192];
    while !head.contains(&b'\n') {
        let n = bounded
            .read(&mut chunk)
            .map_err(|e| match crate::files::bounded::refusal(&e) {
                Some((Some(line), reason)) => DataError::at_line(path, line, reason),
                Some((None, reason)) => DataError::in_file(path, reason),
                None => DataError::read(path, e),
            })?;
        if n == 0 {
            break;
        }
        head.extend_from_slice(&chunk[..n]);
    }
    let byte = match delimiter {
        Delimiter::Given(byte) => byte,
        Delimiter::Auto => {
            let line = head.split(|&b| b == b'\n').next().unwrap_or_default();
            sniff_delimiter(line)
        }
    };
    // Fields are trimmed where they are read ([`trimmed`]): the csv crate's own trimming
    // builds a new record for every row.
    let csv = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .delimiter(byte)
        .buffer_capacity(1 << 20)
        .from_reader(std::io::Cursor::new(head).chain(bounded));
    Ok((csv, byte))
}

/// A field without surrounding ASCII whitespace.
pub(crate) fn trimmed(raw: &[u8]) -> &[u8] {
    raw.trim_ascii()
}

/// The column names of the CSV in `reader` (its header row).
pub fn read_csv_header(
    reader: impl Read,
    path: &Path,
    delimiter: Delimiter,
) -> Result<Vec<String>, DataError> {
    let (mut csv, _) = csv_reader(reader, path, delimiter)?;
    read_header(&mut csv, path, "a header row")
}

/// Reads the header row; an empty file is an error that says what was expected.
pub(crate) fn read_header<R: Read>(
    csv: &mut csv::Reader<R>,
    path: &Path,
    expected: &str,
) -> Result<Vec<String>, DataError> {
    let mut record = csv::ByteRecord::new();
    let has_row = csv
        .read_byte_record(&mut record)
        .map_err(|e| csv_error(path, &e))?;
    if !has_row || record.iter().all(|f| trimmed(f).is_empty()) {
        return Err(DataError::in_file(
            path,
            format!("the file is empty; expected a header row naming the columns {expected}"),
        ));
    }
    let mut names = Vec::with_capacity(record.len());
    for raw in &record {
        let text = std::str::from_utf8(raw)
            .map_err(|_| DataError::at_line(path, 1, "the header row is not valid UTF-8 text"))?;
        names.push(text.trim_start_matches('\u{feff}').trim().to_owned());
    }
    Ok(names)
}

/// Finds a column by exact name, or case-insensitively when the exact name is absent.
/// `option` is the advice for a missing column: a flag (`--user-col`), said as "name the
/// right column with --user-col", or a sentence of its own.
pub(crate) fn find_column(
    header: &[String],
    name: &str,
    option: &str,
    path: &Path,
) -> Result<usize, DataError> {
    // A header that is one field holding a separator was split at the wrong one.
    if let [only] = header
        && only != name
        && let Some(&(byte, seen)) = DELIMITERS[1..]
            .iter()
            .chain(&DELIMITERS[..1])
            .find(|&&(d, _)| only.as_bytes().contains(&d))
    {
        let value = if byte == b'\t' {
            "tab".to_owned()
        } else {
            char::from(byte).to_string()
        };
        return Err(DataError::at_line(
            path,
            1,
            format!(
                "missing column '{name}': the header reads as one column, '{}', which looks separated by {seen}; pass --delimiter '{value}'",
                abbreviate_header(header)
            ),
        ));
    }
    let exact: Vec<usize> = (0..header.len()).filter(|&c| header[c] == name).collect();
    let found = if exact.is_empty() {
        (0..header.len())
            .filter(|&c| header[c].eq_ignore_ascii_case(name))
            .collect()
    } else {
        exact
    };
    match found.as_slice() {
        [c] => Ok(*c),
        [] => Err(DataError::at_line(
            path,
            1,
            format!(
                "missing column '{name}' in the header (found: {}); {}",
                abbreviate_header(header),
                if option.starts_with("--") {
                    format!("name the right column with {option}")
                } else {
                    option.to_owned()
                }
            ),
        )),
        _ => Err(DataError::at_line(
            path,
            1,
            format!("column '{name}' appears more than once in the header"),
        )),
    }
}

/// The header's names for a message: at most ten, each cut to 40 characters.
fn abbreviate_header(header: &[String]) -> String {
    let mut names: Vec<String> = header
        .iter()
        .take(10)
        .map(|h| {
            if h.chars().count() > 40 {
                format!(
                    "{}… ({} characters)",
                    h.chars().take(40).collect::<String>(),
                    h.chars().count()
                )
            } else {
                h.clone()
            }
        })
        .collect();
    if header.len() > 10 {
        names.push(format!("… {} more", header.len() - 10));
    }
    names.join(", ")
}

/// Refuses a row with more fields than the header names columns (usually an unquoted
/// delimiter inside a value, such as a decimal comma).
pub(crate) fn check_width(
    record: &csv::ByteRecord,
    columns: usize,
    path: &Path,
    line: u64,
) -> Result<(), DataError> {
    if record.len() > columns {
        return Err(DataError::at_line(
            path,
            line,
            format!(
                "the row has {} fields but the header names {columns} columns (is a value with a comma, such as a decimal comma, not quoted?)",
                record.len()
            ),
        ));
    }
    Ok(())
}

/// The 1-based line on which a record starts.
pub(crate) fn record_line(record: &csv::ByteRecord) -> u64 {
    record.position().map_or(0, csv::Position::line)
}

/// Turns a csv crate error into a located error.
pub(crate) fn csv_error(path: &Path, error: &csv::Error) -> DataError {
    let line = error.position().map(csv::Position::line);
    let reason = match error.kind() {
        csv::ErrorKind::Io(e) => {
            return match crate::files::bounded::refusal(e) {
                Some((Some(line), reason)) => DataError::at_line(path, line, reason),
                Some((None, reason)) => DataError::in_file(path, reason),
                None => DataError::read(path, std::io::Error::new(e.kind(), e.to_string())),
            };
        }
        csv::ErrorKind::Utf8 { .. } => "text is not valid UTF-8".to_owned(),
        other => format!("malformed CSV: {other:?}"),
    };
    match line {
        Some(line) => DataError::at_line(path, line, reason),
        None => DataError::in_file(path, reason),
    }
}

/// Field `col` of a record as trimmed UTF-8 text; missing or empty fields are errors.
pub(crate) fn field<'r>(
    record: &'r csv::ByteRecord,
    col: usize,
    what: &str,
    path: &Path,
    line: u64,
) -> Result<&'r str, DataError> {
    let Some(raw) = record.get(col) else {
        let open_quote = record.iter().any(|f| f.contains(&b'\n'));
        return Err(DataError::at_line(
            path,
            line,
            format!(
                "the row has {} field(s) but the {what} is in column {}{}",
                record.len(),
                col + 1,
                if open_quote {
                    " (a quote opened on this line is never closed)"
                } else {
                    ""
                }
            ),
        ));
    };
    let text = std::str::from_utf8(trimmed(raw)).map_err(|_| {
        DataError::at_line(path, line, format!("the {what} is not valid UTF-8 text"))
    })?;
    if text.is_empty() {
        return Err(DataError::at_line(
            path,
            line,
            format!("the {what} is empty"),
        ));
    }
    Ok(text)
}

pub use crate::limits::{MAX_ID_BYTES, MAX_MAGNITUDE};

/// An id field: like [`field`], and at most [`MAX_ID_BYTES`] long.
pub(crate) fn id_field<'r>(
    record: &'r csv::ByteRecord,
    col: usize,
    what: &str,
    path: &Path,
    line: u64,
) -> Result<&'r str, DataError> {
    let id = field(record, col, what, path, line)?;
    check_id_length(id, what, path, line)?;
    Ok(id)
}

/// Refuses ids longer than [`MAX_ID_BYTES`].
pub(crate) fn check_id_length(
    id: &str,
    what: &str,
    path: &Path,
    line: u64,
) -> Result<(), DataError> {
    if id.len() > MAX_ID_BYTES {
        let start: String = id.chars().take(20).collect();
        return Err(DataError::at_line(
            path,
            line,
            format!(
                "the {what} '{start}…' is {} bytes long; ids may have at most {MAX_ID_BYTES} (is a quote or delimiter wrong?)",
                id.len()
            ),
        ));
    }
    Ok(())
}

/// Parses a rating value; it must be a finite number within ±[`MAX_MAGNITUDE`]. Negative
/// zero is read as zero.
pub(crate) fn parse_rating(text: &str, path: &Path, line: u64) -> Result<f64, DataError> {
    // Most ratings are small whole numbers: read those digit by digit (exact, and several
    // times faster than the general float parser).
    let bytes = text.as_bytes();
    if !bytes.is_empty() && bytes.len() <= 6 && bytes.iter().all(u8::is_ascii_digit) {
        return Ok(bytes
            .iter()
            .fold(0u32, |n, b| n * 10 + u32::from(b - b'0'))
            .into());
    }
    match text.parse::<f64>() {
        Ok(v) if v.is_finite() && v.abs() > MAX_MAGNITUDE => Err(DataError::at_line(
            path,
            line,
            format!("rating '{text}' is too large: ratings must lie within ±1e12"),
        )),
        Ok(v) if v.is_finite() => Ok(v + 0.0),
        Ok(_) => Err(DataError::at_line(
            path,
            line,
            format!("rating '{text}' is not a finite number"),
        )),
        Err(_) => Err(DataError::at_line(
            path,
            line,
            format!("rating '{text}' is not a number"),
        )),
    }
}

fn check_on_scale(
    scale: &RatingScale,
    value: f64,
    path: &Path,
    line: u64,
) -> Result<(), DataError> {
    if scale.contains(value) {
        return Ok(());
    }
    let reason = if value < scale.min() || value > scale.max() {
        format!(
            "rating '{value}' is outside the scale {} to {} given by --scale",
            scale.min(),
            scale.max()
        )
    } else {
        format!(
            "rating '{value}' is not on the scale given by --scale ({})",
            scale.describe()
        )
    };
    Err(DataError::at_line(path, line, reason))
}

fn parse_split(text: &str, path: &Path, line: u64) -> Result<bool, DataError> {
    match text {
        "train" => Ok(false),
        "holdout" => Ok(true),
        other => Err(DataError::at_line(
            path,
            line,
            format!("split '{other}' must be 'train' or 'holdout'"),
        )),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn read(text: &str, options: &RatingsOptions) -> Result<Ratings, DataError> {
        read_ratings(text.as_bytes(), Path::new("r.csv"), options)
    }

    fn message(text: &str, options: &RatingsOptions) -> String {
        read(text, options).unwrap_err().to_string()
    }

    #[test]
    fn reads_bom_crlf_quotes_and_extra_columns() {
        let text = "\u{feff}when,user,item,rating\r\nx,\"a\",\"i,1\",4\r\ny, b ,i2,3.5\r\n";
        let r = read(text, &RatingsOptions::default()).unwrap();
        assert_eq!(r.users.names(), ["a", "b"]);
        assert_eq!(r.items.names(), ["i,1", "i2"]);
        assert_eq!(r.entries.len(), 2);
        assert_eq!(r.entries[1].value, 3.5);
    }

    #[test]
    fn renamed_columns() {
        let options = RatingsOptions {
            columns: RatingColumns {
                user: "member".into(),
                item: "recipe".into(),
                rating: "stars".into(),
                split: None,
            },
            ..RatingsOptions::default()
        };
        let r = read("member,recipe,stars\nm1,r1,5\n", &options).unwrap();
        assert_eq!(r.entries[0].value, 5.0);
    }

    #[test]
    fn errors_name_line_and_reason() {
        let d = RatingsOptions::default();
        assert_eq!(
            message("", &d),
            "r.csv: the file is empty; expected a header row naming the columns user, item, rating"
        );
        assert_eq!(
            message("user,item,rating\n", &d),
            "r.csv: no ratings: the file has a header row but no data rows"
        );
        assert!(
            message("user,item\na,b\n", &d).starts_with("r.csv, line 1: missing column 'rating'")
        );
        assert_eq!(
            message("user,item,rating\na,b,4\n,c,3\n", &d),
            "r.csv, line 3: the user id is empty"
        );
        assert_eq!(
            message("user,item,rating\na,b,abc\n", &d),
            "r.csv, line 2: rating 'abc' is not a number"
        );
        assert_eq!(
            message("user,item,rating\na,b,NaN\n", &d),
            "r.csv, line 2: rating 'NaN' is not a finite number"
        );
        assert_eq!(
            message("user,item,rating\na,b,4\nc,d,1\na,b,5\n", &d),
            "r.csv, line 4: duplicate rating for user 'a' and item 'b' (first rated on line 2); \
             use --duplicates last or --duplicates mean to combine them"
        );
        let scaled = RatingsOptions {
            scale: Some(RatingScale::parse("1:5:1").unwrap()),
            ..d
        };
        assert_eq!(
            message("user,item,rating\na,b,6\n", &scaled),
            "r.csv, line 2: rating '6' is outside the scale 1 to 5 given by --scale"
        );
    }

    #[test]
    fn duplicates_last_and_mean() {
        let text = "user,item,rating\na,b,4\nc,d,1\na,b,5\na,b,3\n";
        let last = RatingsOptions {
            duplicates: Duplicates::Last,
            ..RatingsOptions::default()
        };
        assert_eq!(read(text, &last).unwrap().entries[0].value, 3.0);
        let mean = RatingsOptions {
            duplicates: Duplicates::Mean,
            ..RatingsOptions::default()
        };
        let r = read(text, &mean).unwrap();
        assert_eq!(r.entries.len(), 2);
        assert_eq!(r.entries[0].value, 4.0);
    }
}

#[cfg(test)]
mod streaming_tests {
    use super::*;
    use std::fmt::Write as _;

    fn rows(n: usize, bad_at: Option<usize>) -> String {
        let mut text = String::from("user,item,rating\n");
        for k in 0..n {
            let rating = if Some(k) == bad_at { "x" } else { "3" };
            let _ = writeln!(text, "u{},i{},{rating}", k / 7, k % 7);
        }
        text
    }

    #[test]
    fn many_batches_read_like_one() {
        let text = rows(100_000, None);
        let r = read_ratings(
            text.as_bytes(),
            Path::new("r.csv"),
            &RatingsOptions::default(),
        )
        .expect("reads");
        assert_eq!(r.entries.len(), 100_000);
        assert_eq!(r.users.len(), 100_000_usize.div_ceil(7));
        assert_eq!(r.users.name(0), "u0");
        assert_eq!(r.items.len(), 7);
    }

    #[test]
    fn the_first_faulty_line_is_reported_whatever_the_batch() {
        // Row k is on line k + 2; the fault sits well past the first batch.
        let text = rows(100_000, Some(70_000));
        let err = read_ratings(
            text.as_bytes(),
            Path::new("r.csv"),
            &RatingsOptions::default(),
        )
        .expect_err("refused");
        assert!(
            err.to_string()
                .contains("line 70002: rating 'x' is not a number"),
            "{err}"
        );
        // An unknown id (found by the interning thread) before a parse fault (found by the
        // parsing thread) is the one reported.
        let mut users = IdMap::new();
        for u in 0..5000 {
            users.intern(&format!("u{u}"));
        }
        let mut items = IdMap::new();
        for i in 0..7 {
            items.intern(&format!("i{i}"));
        }
        let options = RatingsOptions {
            known_ids_only: true,
            ..RatingsOptions::default()
        };
        let err =
            read_ratings_with_ids(text.as_bytes(), Path::new("r.csv"), &options, users, items)
                .expect_err("refused");
        assert!(
            err.to_string()
                .contains("line 35002: user 'u5000' is not in the users table"),
            "{err}"
        );
    }
}
