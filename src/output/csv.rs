//! CSV output (RFC 4180 quoting through the csv crate).

use super::Rows;
use crate::error::{Error, Result};

/// Writes rows as CSV text.
pub fn to_string(rows: &Rows) -> Result<String> {
    let mut w = csv::WriterBuilder::new().from_writer(Vec::new());
    let err = |e: csv::Error| Error::Unsupported(format!("cannot write CSV: {e}"));
    w.write_record(&rows.header).map_err(err)?;
    for r in &rows.rows {
        w.write_record(r).map_err(err)?;
    }
    let bytes = w
        .into_inner()
        .map_err(|e| Error::Unsupported(format!("cannot write CSV: {e}")))?;
    String::from_utf8(bytes).map_err(|e| Error::Unsupported(format!("cannot write CSV: {e}")))
}
