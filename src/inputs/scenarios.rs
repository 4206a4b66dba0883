//! Scenario files for `furrow allocate --returns FILE --costs FILE`.
//!
//! The returns file has a header of investment ids, then one row per
//! simulated future: the net return of funding that id fully in that future.
//! The costs file has `id`, `cost`, optional `max_fraction` (default 1),
//! `min_fraction` (default 0) and `requires` (an id that must be funded at
//! least as much: the tier below). `simulate --dump-scenarios` writes both.
//! Every id must appear in both files; `requires` must name a known id and
//! must not form a cycle.
//!
//! Ids are names of the user's clusters, which furrow writes guarded
//! against formula injection (a quote before a leading `=`, `+`, `-`, `@`:
//! see `output::csv`); the guard is removed here, so a dumped file read back
//! gives the names that were written.

use super::number::{echo, Convention, NumberKind};
use super::table::{self, optional, required, ColumnSpec, Pass, ReadSettings};
use crate::error::{Issues, Result};
use crate::output::csv::unguard;
use std::collections::{BTreeMap, HashMap, HashSet};
use std::path::Path;

/// The futures: `values[s * ids.len() + i]` is id `i` in future `s`.
#[derive(Debug, Clone, Default)]
pub struct Returns {
    /// The file, as named.
    pub file: String,
    /// Investment ids in header order.
    pub ids: Vec<String>,
    /// Scenario-major net returns.
    pub values: Vec<f32>,
}

impl Returns {
    /// Number of futures.
    pub fn scenarios(&self) -> usize {
        self.values.len() / self.ids.len().max(1)
    }
}

/// One row of the costs file.
#[derive(Debug, Clone, PartialEq)]
pub struct CostRow {
    pub id: String,
    pub cost: f64,
    pub min_fraction: f64,
    pub max_fraction: f64,
    pub requires: Option<String>,
    pub line: u64,
    /// 1-based position of the `id` column in the costs file.
    pub id_column: usize,
}

/// Reads the returns file (its number convention found from its cells).
pub fn read_returns(path: &Path) -> Result<Returns> {
    let none = BTreeMap::new();
    read_returns_with(path, &ReadSettings::bare(&none))
}

/// Reads the returns file with the settings of the command line (a
/// declared number format; its header is the ids, so nothing is mapped).
pub fn read_returns_with(path: &Path, settings: &ReadSettings) -> Result<Returns> {
    table::twice(settings, |conv| returns_once(path, settings, conv)).map(|r| r.0)
}

fn returns_once(path: &Path, settings: &ReadSettings, conv: Convention) -> Result<Pass<Returns>> {
    let header = "a header line of investment ids (such as cluster/tier), then one row of net returns per future";
    let mut t = table::open_as(path, &[], settings, conv, header)?;
    let mut issues = Issues::default();
    let ids: Vec<String> = t.headers().iter().map(|h| unguard(h).to_string()).collect();
    check_ids(&t, &ids, &mut issues);
    let mut values = Vec::new();
    while t.next_row(&mut issues) {
        for (i, id) in ids.iter().enumerate() {
            let Some(cell) = t.cell(i, &mut issues) else {
                values.push(0.0);
                continue;
            };
            match t.parse(cell, NumberKind::Plain, || (echo(id).into_owned(), i + 1)) {
                Ok(v) if v.abs() < f32::MAX as f64 => values.push(v as f32),
                Ok(v) => {
                    issues.add(
                        &t.file,
                        Some(t.line()),
                        Some((&echo(id), i + 1)),
                        format!("the value {v} is too large; expected a net return below 3.4e38"),
                    );
                    values.push(0.0);
                }
                Err(msg) => {
                    issues.add(&t.file, Some(t.line()), Some((&echo(id), i + 1)), msg);
                    values.push(0.0);
                }
            }
        }
    }
    if values.is_empty() && issues.is_empty() {
        issues.add(
            &t.file,
            Some(2),
            None,
            "no futures: expected one row of net returns per simulated future after the header",
        );
    }
    let returns = Returns {
        file: t.file.clone(),
        ids,
        values,
    };
    Ok(t.finish(issues, returns))
}

fn check_ids(t: &table::Table, ids: &[String], issues: &mut Issues) {
    let mut seen: HashMap<&str, usize> = HashMap::new();
    for (i, id) in ids.iter().enumerate() {
        if id.is_empty() {
            issues.add(
                &t.file,
                Some(1),
                Some(("", i + 1)),
                "an empty investment id in the header; expected a name such as cluster/tier",
            );
        } else if let Some(prev) = seen.insert(id, i + 1) {
            let id = echo(id);
            issues.add(&t.file, Some(1), Some((&id, i + 1)), format!("the id '{id}' appears twice in the header (also column {prev}); expected each id once"));
        }
    }
}

/// Columns of the costs file.
pub const COST_COLUMNS: &[ColumnSpec] = &[
    required("id"),
    required("cost"),
    optional("max_fraction"),
    optional("requires"),
    optional("min_fraction"),
];

/// Reads the costs file (its number convention found from its cells).
pub fn read_costs(path: &Path) -> Result<Vec<CostRow>> {
    let none = BTreeMap::new();
    read_costs_with(path, &ReadSettings::bare(&none))
}

/// Reads the costs file with the settings of the command line (`--map`
/// for its headers, a declared number format).
pub fn read_costs_with(path: &Path, settings: &ReadSettings) -> Result<Vec<CostRow>> {
    table::twice(settings, |conv| costs_once(path, settings, conv)).map(|r| r.0)
}

fn costs_once(
    path: &Path,
    settings: &ReadSettings,
    conv: Convention,
) -> Result<Pass<Vec<CostRow>>> {
    let mut t = table::open_with(path, COST_COLUMNS, settings, conv)?;
    let mut issues = Issues::default();
    let mut rows: Vec<CostRow> = Vec::new();
    // Every id named in the file, kept rows or not, so that a `requires` of
    // a refused row is not also reported as unknown.
    let mut named: HashSet<String> = HashSet::new();
    let id_column = t.column(0).1;
    while t.next_row(&mut issues) {
        let id = t.text(0, &mut issues).map(|s| unguard(s).to_string());
        if let Some(id) = id.as_ref().filter(|s| !s.is_empty()) {
            named.insert(id.clone());
        }
        let cost = t.number_in(1, 0.0, f64::MAX, NumberKind::Plain, &mut issues);
        let max = fraction(&t, 2, 1.0, &mut issues);
        let min = fraction(&t, 4, 0.0, &mut issues);
        let requires = t
            .text(3, &mut issues)
            .filter(|s| !s.is_empty())
            .map(|s| unguard(s).to_string());
        let (Some(id), Some(cost), Some(max), Some(min)) = (id, cost, max, min) else {
            continue;
        };
        if id.is_empty() {
            t.complain(
                0,
                &mut issues,
                "expected an investment id, found an empty cell",
            );
            continue;
        }
        if min > max {
            t.complain(
                4,
                &mut issues,
                format!("min_fraction ({min}) exceeds max_fraction ({max}); expected min_fraction <= max_fraction"),
            );
        }
        if let Some(prev) = rows.iter().find(|r| r.id == id) {
            t.complain(
                0,
                &mut issues,
                format!(
                    "the id '{}' is listed twice (also on line {}); expected each id once",
                    echo(&id),
                    prev.line
                ),
            );
            continue;
        }
        rows.push(CostRow {
            id,
            cost,
            min_fraction: min,
            max_fraction: max,
            requires,
            line: t.line(),
            id_column,
        });
    }
    t.expect_rows(&mut issues, "one row per investment id (id, cost)");
    let (name, pos) = t.column(3);
    check_requires(&t.file, (&name, pos), &rows, &named, &mut issues);
    Ok(t.finish(issues, rows))
}

fn fraction(t: &table::Table, k: usize, default: f64, issues: &mut Issues) -> Option<f64> {
    if !t.has(k) || t.text(k, &mut Issues::default()).is_some_and(str::is_empty) {
        return Some(default);
    }
    t.number_in(k, 0.0, 1.0, NumberKind::Rate, issues)
}

/// `requires` must name a listed id and must not form a cycle; `column` is
/// the `requires` column's header and position, `named` every id in the file.
fn check_requires(
    file: &str,
    column: (&str, usize),
    rows: &[CostRow],
    named: &HashSet<String>,
    issues: &mut Issues,
) {
    let index: HashMap<&str, usize> = rows
        .iter()
        .enumerate()
        .map(|(i, r)| (r.id.as_str(), i))
        .collect();
    for r in rows {
        let Some(req) = &r.requires else { continue };
        if !index.contains_key(req.as_str()) {
            if named.contains(req) {
                continue; // its own row was refused, and reported
            }
            issues.add(
                file,
                Some(r.line),
                Some(column),
                format!(
                    "'{}' requires '{}', which is not an id in this file; expected an id listed in the id column (the tier below)",
                    echo(&r.id),
                    echo(req)
                ),
            );
            continue;
        }
        let mut cur = req.as_str();
        for _ in 0..=rows.len() {
            if cur == r.id {
                issues.add(file, Some(r.line), Some(column), format!("'{}' requires itself through a cycle of 'requires'; expected a chain that ends at a first tier", echo(&r.id)));
                break;
            }
            match index.get(cur).and_then(|&i| rows[i].requires.as_deref()) {
                Some(next) => cur = next,
                None => break,
            }
        }
    }
}

/// Checks that the two files name the same ids; returns costs ordered as
/// the returns header.
pub fn match_ids(returns: &Returns, costs: &[CostRow], costs_file: &str) -> Result<Vec<CostRow>> {
    let mut issues = Issues::default();
    let mut ordered = Vec::with_capacity(returns.ids.len());
    for (i, id) in returns.ids.iter().enumerate() {
        match costs.iter().find(|c| &c.id == id) {
            Some(c) => ordered.push(c.clone()),
            None => {
                let id = echo(id);
                issues.add(&returns.file, Some(1), Some((&id, i + 1)), format!("the id '{id}' has no row in the costs file {costs_file}; expected every id of the returns header there"));
            }
        }
    }
    for c in costs {
        if !returns.ids.contains(&c.id) {
            issues.add(costs_file, Some(c.line), Some(("id", c.id_column)), format!("the id '{}' is not in the returns header of {}; expected the same ids in both files", echo(&c.id), returns.file));
        }
    }
    issues.into_result(ordered)
}
