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

/// Writes `text` to stdout in one go. Readable output (tables, Markdown, plain text) shows
/// control characters from ids, titles and notes escaped (`\x1b`), so a hostile id cannot
/// rewrite the terminal; CSV keeps the exact bytes (JSON escapes them itself).
pub fn print(text: &str, format: Format) -> anyhow::Result<()> {
    let text = match format {
        Format::Table => readable(text),
        Format::Csv | Format::Json => std::borrow::Cow::Borrowed(text),
    };
    let mut out = std::io::stdout().lock();
    out.write_all(text.as_bytes())?;
    out.flush()?;
    Ok(())
}

/// `text` with every control character but the line break escaped.
pub fn readable(text: &str) -> std::borrow::Cow<'_, str> {
    if !text
        .chars()
        .any(|c| c != '\n' && sextant::text::needs_escape(c))
    {
        return std::borrow::Cow::Borrowed(text);
    }
    let lines: Vec<_> = text.split('\n').map(sextant::text::escaped).collect();
    std::borrow::Cow::Owned(lines.join("\n"))
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
