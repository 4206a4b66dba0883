//! The query export: query, clicks, impressions, average position.
//!
//! Used to fit the site's own click-through-rate curve. Clicks may not exceed
//! impressions; positions are average positions (1 or more, may exceed 100).

use super::number::{Convention, NumberFormat, NumberKind};
use super::table::{self, required, ColumnSpec, Pass, ReadSettings};
use crate::error::{Issues, Result};
use std::collections::BTreeMap;
use std::path::Path;

/// One row of the query export.
#[derive(Debug, Clone, PartialEq)]
pub struct QueryRow {
    /// The query text.
    pub query: String,
    /// Clicks over the export's period.
    pub clicks: f64,
    /// Impressions over the export's period.
    pub impressions: f64,
    /// Average position.
    pub position: f64,
}

/// Columns of the query export (interface.md).
pub const QUERY_COLUMNS: &[ColumnSpec] = &[
    ColumnSpec {
        name: "query",
        required: true,
        aliases: &["keyword", "top queries"],
    },
    required("clicks"),
    required("impressions"),
    required("position"),
];

/// Reads the query export (as a plan's `queries` file, nothing declared).
pub fn read(path: &Path, mapping: &BTreeMap<String, String>) -> Result<Vec<QueryRow>> {
    read_with(path, &ReadSettings::plan("queries", mapping, None)).map(|r| r.0)
}

/// Reads the query export with `settings`; returns it and the number
/// format it was read with.
pub fn read_with(path: &Path, settings: &ReadSettings) -> Result<(Vec<QueryRow>, NumberFormat)> {
    table::twice(settings, |conv| read_once(path, settings, conv))
}

fn read_once(
    path: &Path,
    settings: &ReadSettings,
    conv: Convention,
) -> Result<Pass<Vec<QueryRow>>> {
    let mut t = table::open_with(path, QUERY_COLUMNS, settings, conv)?;
    let mut issues = Issues::default();
    let mut rows = Vec::new();
    while t.next_row(&mut issues) {
        let query = t.text(0, &mut issues).map(str::to_string);
        let clicks = t.number_in(1, 0.0, f64::INFINITY, NumberKind::Plain, &mut issues);
        let impressions = t.number_in(2, 0.0, f64::INFINITY, NumberKind::Plain, &mut issues);
        let position = t.number_in(3, 1.0, f64::INFINITY, NumberKind::Plain, &mut issues);
        let (Some(query), Some(clicks), Some(impressions), Some(position)) =
            (query, clicks, impressions, position)
        else {
            continue;
        };
        if clicks > impressions {
            t.complain(1, &mut issues, format!("clicks ({clicks}) exceed impressions ({impressions}); expected clicks no larger than impressions"));
            continue;
        }
        rows.push(QueryRow {
            query,
            clicks,
            impressions,
            position,
        });
    }
    t.expect_rows(&mut issues, "one row per query");
    Ok(t.finish(issues, rows))
}
