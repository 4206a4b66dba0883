//! Output formats of the data commands: an aligned table for people, JSON
//! and CSV for scripts. JSON is the serialisation of the same data
//! structures the table and the report are drawn from.

pub mod csv;
pub mod json;

use crate::error::Result;
use serde::Serialize;

/// An output format.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Format {
    /// Aligned text for the terminal.
    Table,
    /// JSON on stdout.
    Json,
    /// CSV on stdout.
    Csv,
}

/// A table of strings: a header and rows.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Rows {
    pub header: Vec<String>,
    pub rows: Vec<Vec<String>>,
}

/// Data a command prints.
pub trait Render: Serialize {
    /// Text for the terminal.
    fn table(&self) -> String;
    /// Rows for CSV.
    fn rows(&self) -> Rows;
}

/// Renders `v` in format `f`.
pub fn render<T: Render>(v: &T, f: Format) -> Result<String> {
    match f {
        // A table is for a terminal: control characters in names are shown
        // as escapes (`text::visible`). JSON and CSV keep names exactly.
        Format::Table => Ok(crate::text::visible_lines(&v.table()).into_owned()),
        Format::Json => json::to_string(v),
        Format::Csv => csv::to_string(&v.rows()),
    }
}

/// A number for CSV: full precision, empty for None or non-finite.
pub fn num(v: f64) -> String {
    if v.is_finite() {
        format!("{v}")
    } else {
        String::new()
    }
}

/// An optional number for CSV.
pub fn opt(v: Option<f64>) -> String {
    v.map(num).unwrap_or_default()
}
