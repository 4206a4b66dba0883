//! Monthly series files: history, the search-interest index, and actuals.
//!
//! All three are a `month` column plus numbers. Months must be consecutive,
//! with no gaps and no duplicates; rows may come in any order and are sorted.
//! Every value must be a finite number (non-negative for counts and money);
//! a blank cell in a present column is refused rather than guessed. Months
//! are read by `Month::parse` (`2024-01`, `2024-01-01`, `202401`); forms
//! such as `01/02/2024`, which read as two different months, are refused.

use super::number::{Convention, NumberFormat, NumberKind};
use super::table::{self, optional, required, ColumnSpec, Pass, ReadSettings};
use crate::error::{Issues, Result};
use crate::month::Month;
use std::collections::BTreeMap;
use std::path::Path;

/// A set of monthly series read from one file.
#[derive(Debug, Clone, Default)]
pub struct MonthlySeries {
    /// The file, as named.
    pub file: String,
    /// Consecutive months, ascending.
    pub months: Vec<Month>,
    /// Column name (canonical, lower case) to values, one per month.
    pub columns: BTreeMap<String, Vec<f64>>,
    /// Extra columns that were not all numbers, with the first problem seen.
    pub non_numeric: BTreeMap<String, String>,
}

impl MonthlySeries {
    /// The values of `name`, if the file has that column.
    pub fn get(&self, name: &str) -> Option<&[f64]> {
        self.columns.get(&name.to_lowercase()).map(Vec::as_slice)
    }

    /// The first month.
    pub fn first(&self) -> Option<Month> {
        self.months.first().copied()
    }

    /// The last month.
    pub fn last(&self) -> Option<Month> {
        self.months.last().copied()
    }

    /// Number of months.
    pub fn len(&self) -> usize {
        self.months.len()
    }

    /// True when there are no months.
    pub fn is_empty(&self) -> bool {
        self.months.is_empty()
    }
}

/// Columns of the monthly history (interface.md).
pub const HISTORY_COLUMNS: &[ColumnSpec] = &[
    required("month"),
    required("clicks"),
    optional("impressions"),
    optional("branded_clicks"),
    optional("sessions"),
    optional("conversions"),
    optional("revenue"),
];

/// Columns of the search-interest index.
pub const INDEX_COLUMNS: &[ColumnSpec] = &[
    required("month"),
    ColumnSpec {
        name: "index",
        required: true,
        aliases: &["interest", "value"],
    },
];

/// Columns of an actuals file (months observed since the forecast start).
pub const ACTUALS_COLUMNS: &[ColumnSpec] =
    &[required("month"), required("clicks"), optional("revenue")];

/// How values of a file are checked.
#[derive(Debug, Clone, Copy)]
pub struct ValueRule {
    /// Smallest allowed value.
    pub min: f64,
    /// Largest allowed value.
    pub max: f64,
    /// What a percent sign means in the file's columns.
    pub kind: NumberKind,
}

/// Counts and money: non-negative, no percentages.
pub const NON_NEGATIVE: ValueRule = ValueRule {
    min: 0.0,
    max: f64::INFINITY,
    kind: NumberKind::Plain,
};

/// An index from 0 to 100, a score: `84%` reads as 84.
pub const INDEX_RANGE: ValueRule = ValueRule {
    min: 0.0,
    max: 100.0,
    kind: NumberKind::Score,
};

/// The plan key of a monthly file with columns `specs`.
fn plan_key(specs: &[ColumnSpec]) -> &'static str {
    if std::ptr::eq(specs, INDEX_COLUMNS) {
        "interest"
    } else if std::ptr::eq(specs, ACTUALS_COLUMNS) {
        "actuals"
    } else {
        "history"
    }
}

/// Reads a monthly file with the given columns; extra columns are kept when
/// they are numeric (so `--column` can pick any of them).
pub fn read(
    path: &Path,
    specs: &[ColumnSpec],
    mapping: &BTreeMap<String, String>,
    rule: ValueRule,
) -> Result<MonthlySeries> {
    let settings = ReadSettings::plan(plan_key(specs), mapping, None);
    read_with(path, specs, &settings, rule).map(|r| r.0)
}

/// Like [`read`], with `settings`; returns the series and the number
/// format it was read with.
pub fn read_with(
    path: &Path,
    specs: &[ColumnSpec],
    settings: &ReadSettings,
    rule: ValueRule,
) -> Result<(MonthlySeries, NumberFormat)> {
    table::twice(settings, |conv| {
        read_once(path, specs, settings, rule, conv)
    })
}

fn read_once(
    path: &Path,
    specs: &[ColumnSpec],
    settings: &ReadSettings,
    rule: ValueRule,
    conv: Convention,
) -> Result<Pass<MonthlySeries>> {
    let mut t = table::open_with(path, specs, settings, conv)?;
    let mut issues = Issues::default();
    let extras = t.extra_columns();
    let mut rows: Vec<(Month, u64, Vec<f64>)> = Vec::new();
    let mut extra_vals: Vec<Vec<f64>> = vec![Vec::new(); extras.len()];
    let mut non_numeric = BTreeMap::new();
    let mut unreadable_months = 0;
    while t.next_row(&mut issues) {
        let Some(month) = read_month(&t, &mut issues) else {
            unreadable_months += 1;
            continue;
        };
        let mut vals = Vec::with_capacity(specs.len());
        for (k, spec) in specs.iter().enumerate().skip(1) {
            if !t.has(k) {
                continue;
            }
            match t.number_in(k, rule.min, rule.max, rule.kind, &mut issues) {
                Some(v) => vals.push(v),
                None => vals.push(f64::NAN),
            }
            let _ = spec;
        }
        read_extras(&t, &extras, &mut extra_vals, &mut non_numeric);
        rows.push((month, t.line(), vals));
    }
    t.expect_rows(&mut issues, "one row per month");
    let (name, pos) = t.column(0);
    // A row refused for its month or its shape is reported already; the gap
    // it leaves is not a second problem.
    let gaps = unreadable_months == 0 && t.skipped() == 0;
    let months = check_months(&t.file, (&name, pos), gaps, &mut rows, &mut issues);
    let mut columns = BTreeMap::new();
    let present: Vec<&ColumnSpec> = specs
        .iter()
        .enumerate()
        .skip(1)
        .filter(|(k, _)| t.has(*k))
        .map(|(_, s)| s)
        .collect();
    for (j, spec) in present.iter().enumerate() {
        columns.insert(spec.name.to_string(), rows.iter().map(|r| r.2[j]).collect());
    }
    add_extras(&extras, extra_vals, &rows, &non_numeric, &mut columns);
    let series = MonthlySeries {
        file: t.file.clone(),
        months,
        columns,
        non_numeric,
    };
    Ok(t.finish(issues, series))
}

fn read_month(t: &table::Table, issues: &mut Issues) -> Option<Month> {
    let text = t.text(0, issues)?;
    match Month::parse(text) {
        Some(m) => Some(m),
        None => {
            t.complain(0, issues, crate::month::expected(text));
            None
        }
    }
}

fn read_extras(
    t: &table::Table,
    extras: &[(usize, String)],
    vals: &mut [Vec<f64>],
    non_numeric: &mut BTreeMap<String, String>,
) {
    for (j, (pos, name)) in extras.iter().enumerate() {
        let key = name.to_lowercase();
        if non_numeric.contains_key(&key) {
            continue;
        }
        let cell = t
            .raw(*pos)
            .and_then(|c| std::str::from_utf8(c).ok())
            .unwrap_or("");
        let column = || (super::number::echo(name).into_owned(), pos + 1);
        match t.parse(cell, NumberKind::Plain, column) {
            Ok(v) => vals[j].push(v),
            Err(e) => {
                non_numeric.insert(key, format!("line {}: {e}", t.line()));
            }
        }
    }
}

fn add_extras(
    extras: &[(usize, String)],
    vals: Vec<Vec<f64>>,
    rows: &[(Month, u64, Vec<f64>)],
    non_numeric: &BTreeMap<String, String>,
    columns: &mut BTreeMap<String, Vec<f64>>,
) {
    for ((_, name), v) in extras.iter().zip(vals) {
        let key = name.to_lowercase();
        if !key.is_empty() && !non_numeric.contains_key(&key) && v.len() == rows.len() {
            columns.insert(key, v);
        }
    }
}

/// Sorts rows by month and reports duplicates and (when `gaps`) gaps with
/// their lines, at the month column (header name and position).
fn check_months(
    file: &str,
    column: (&str, usize),
    gaps: bool,
    rows: &mut [(Month, u64, Vec<f64>)],
    issues: &mut Issues,
) -> Vec<Month> {
    rows.sort_by_key(|r| r.0);
    for w in rows.windows(2) {
        let (a, b) = (&w[0], &w[1]);
        let gap = b.0.since(a.0);
        if gap == 0 {
            let msg = format!(
                "the month {} appears twice (also on line {}); expected each month once",
                b.0, a.1
            );
            issues.add(file, Some(b.1), Some(column), msg);
        } else if gap > 1 && gaps {
            let msg = format!(
                "months must be consecutive: {} is missing between {} (line {}) and {} (line {})",
                missing_range(a.0, b.0),
                a.0,
                a.1,
                b.0,
                b.1
            );
            issues.add(file, Some(b.1), Some(column), msg);
        }
    }
    rows.iter().map(|r| r.0).collect()
}

fn missing_range(a: Month, b: Month) -> String {
    if b.since(a) == 2 {
        a.plus(1).to_string()
    } else {
        format!("{} to {}", a.plus(1), b.plus(-1))
    }
}
