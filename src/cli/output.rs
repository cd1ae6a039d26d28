//! Output formats and writing to stdout.

use std::io::Write;

use clap::ValueEnum;

/// How results are printed on stdout.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, ValueEnum)]
pub enum Format {
    /// A readable summary or table.
    #[default]
    Table,
    /// A header row and one row per list entry.
    Csv,
    /// One JSON object.
    Json,
}

/// Writes `text` to stdout in one go.
pub fn print(text: &str) -> anyhow::Result<()> {
    let mut out = std::io::stdout().lock();
    out.write_all(text.as_bytes())?;
    out.flush()?;
    Ok(())
}

/// Appends one CSV row (RFC 4180 quoting where needed) to `out`.
pub fn csv_row(out: &mut String, fields: &[&str]) {
    let mut line = Vec::new();
    for (k, field) in fields.iter().enumerate() {
        if k > 0 {
            line.push(b',');
        }
        sextant::data::factors::quote_field(&mut line, field);
    }
    line.push(b'\n');
    out.push_str(&String::from_utf8_lossy(&line));
}

/// `12345` → `12,345`.
pub fn group(n: usize) -> String {
    let digits = n.to_string();
    let mut out = String::with_capacity(digits.len() + digits.len() / 3);
    for (k, c) in digits.chars().enumerate() {
        if k > 0 && (digits.len() - k).is_multiple_of(3) {
            out.push(',');
        }
        out.push(c);
    }
    out
}

/// A float with `digits` decimals, or `–` when absent.
pub fn fixed(value: Option<f64>, digits: usize) -> String {
    value.map_or_else(|| "–".to_owned(), |v| format!("{v:.digits$}"))
}

/// Writes `bytes` to `path` atomically: a temporary file beside it, fsync, rename. An
/// interrupted write leaves the old file (or none), never half of one.
pub fn write_atomic(path: &std::path::Path, bytes: &[u8]) -> anyhow::Result<()> {
    use anyhow::Context as _;
    let dir = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => std::path::PathBuf::from("."),
    };
    let name = path
        .file_name()
        .map_or_else(|| "out".into(), |n| n.to_string_lossy().into_owned());
    let temp = dir.join(format!(".{name}.{}.tmp", std::process::id()));
    let result = (|| -> std::io::Result<()> {
        let mut file = std::fs::File::create(&temp)?;
        file.write_all(bytes)?;
        file.sync_all()?;
        std::fs::rename(&temp, path)
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&temp);
    }
    result.with_context(|| format!("{}: cannot write", path.display()))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn grouping() {
        assert_eq!(group(0), "0");
        assert_eq!(group(999), "999");
        assert_eq!(group(1000), "1,000");
        assert_eq!(group(1_234_567), "1,234,567");
    }
}
