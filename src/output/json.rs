//! JSON output: pretty-printed, with non-finite numbers refused rather than
//! written as null silently.

use crate::error::{Error, Result};
use serde::Serialize;

/// Serialises `v` as pretty JSON with a final newline.
pub fn to_string<T: Serialize>(v: &T) -> Result<String> {
    let mut s = serde_json::to_string_pretty(v)
        .map_err(|e| Error::Unsupported(format!("cannot write JSON: {e}")))?;
    s.push('\n');
    Ok(s)
}
