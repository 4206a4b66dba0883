//! Clusters and their funding tiers, from the plan's `[[cluster]]` tables or
//! from a CSV file (one row per tier), resolved into one typed list.
//!
//! CSV columns: `cluster`, `tier` (1, 2, ...), `cost`, `effort`, optional
//! `start` (YYYY-MM), `label`, `min_fraction`, `max_fraction`, and an
//! explicit rank-gain distribution `gain_distribution` (triangular or pert),
//! `gain_over` (positions-gained or final-position), `gain_min`, `gain_mode`,
//! `gain_max`, `gain_lambda`.

use super::number::{echo, Convention, NumberFormat, NumberKind};
use super::table::{self, optional, required, ColumnSpec, Pass, ReadSettings};
use crate::error::{Issues, Result};
use crate::month::Month;
use crate::plan::{ClusterCfg, GainCfg, Plan};
use std::collections::BTreeMap;
use std::path::Path;

/// What an explicit gain distribution is over.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum GainOver {
    /// Positions gained from today's position.
    PositionsGained,
    /// The final position reached.
    FinalPosition,
}

/// The shape of an explicit gain distribution.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
#[serde(tag = "distribution", rename_all = "lowercase")]
pub enum GainShape {
    /// Triangular(min, mode, max).
    Triangular { min: f64, mode: f64, max: f64 },
    /// PERT(min, mode, max, lambda): a scaled Beta.
    Pert {
        min: f64,
        mode: f64,
        max: f64,
        lambda: f64,
    },
}

/// An explicit rank-gain distribution for one tier.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct GainSpec {
    /// Its shape.
    pub shape: GainShape,
    /// What it is over.
    pub over: GainOver,
}

/// One funding tier.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct TierSpec {
    /// A short label.
    pub label: String,
    /// What this tier adds to the cost.
    pub cost: f64,
    /// Effort this tier adds.
    pub effort: f64,
    /// Explicit rank-gain distribution, replacing the model.
    pub gain: Option<GainSpec>,
    /// Smallest funded fraction.
    pub min_fraction: f64,
    /// Largest funded fraction.
    pub max_fraction: f64,
}

/// A cluster and its tiers.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct ClusterSpec {
    /// As in the keyword list.
    pub name: String,
    /// Month work starts (None: the forecast start).
    pub start: Option<Month>,
    /// Tiers, cheapest first.
    pub tiers: Vec<TierSpec>,
    /// Where it was defined (file and line).
    pub origin: String,
    /// The same place for messages about the cluster: file, 1-based line,
    /// and the column of its name (header or key, and 1-based position).
    #[serde(skip)]
    pub defined_at: (String, u64, (String, usize)),
}

fn gain_from_cfg(g: &GainCfg) -> GainSpec {
    let shape = if g.distribution.get_ref() == "pert" {
        GainShape::Pert {
            min: g.min,
            mode: g.mode,
            max: g.max,
            lambda: g.lambda.unwrap_or(4.0),
        }
    } else {
        GainShape::Triangular {
            min: g.min,
            mode: g.mode,
            max: g.max,
        }
    };
    let over = match g.over.as_ref().map(|o| o.get_ref().as_str()) {
        Some("final-position") => GainOver::FinalPosition,
        _ => GainOver::PositionsGained,
    };
    GainSpec { shape, over }
}

/// The plan's `[[cluster]]` tables as specs (the plan is already checked).
pub fn from_plan(plan: &Plan) -> Vec<ClusterSpec> {
    plan.file
        .cluster
        .iter()
        .map(|c| from_cfg(plan, c))
        .collect()
}

fn from_cfg(plan: &Plan, c: &ClusterCfg) -> ClusterSpec {
    let (line, col) = plan.line_col(c.name.span().start);
    let file = plan.path.display().to_string();
    ClusterSpec {
        name: c.name.get_ref().clone(),
        start: c.start.as_ref().and_then(|s| Month::parse(s.get_ref())),
        tiers: c
            .tiers
            .iter()
            .enumerate()
            .map(|(i, t)| TierSpec {
                label: t.label.clone().unwrap_or_else(|| format!("tier {}", i + 1)),
                cost: *t.cost.get_ref(),
                effort: *t.effort.get_ref(),
                gain: t.gain.as_ref().map(gain_from_cfg),
                min_fraction: t.min_fraction.as_ref().map(|v| *v.get_ref()).unwrap_or(0.0),
                max_fraction: t.max_fraction.as_ref().map(|v| *v.get_ref()).unwrap_or(1.0),
            })
            .collect(),
        origin: format!("{file}, line {line}"),
        defined_at: (file, line as u64, ("name".to_string(), col)),
    }
}

/// Columns of the cluster CSV.
pub const CLUSTER_COLUMNS: &[ColumnSpec] = &[
    required("cluster"),
    required("tier"),
    required("cost"),
    required("effort"),
    optional("start"),
    optional("label"),
    optional("min_fraction"),
    optional("max_fraction"),
    optional("gain_distribution"),
    optional("gain_over"),
    optional("gain_min"),
    optional("gain_mode"),
    optional("gain_max"),
    optional("gain_lambda"),
];

struct Row {
    cluster: String,
    tier: usize,
    start: Option<Month>,
    spec: TierSpec,
    line: u64,
}

/// Reads clusters from a CSV file (as a plan's `clusters` file, nothing
/// declared).
pub fn read(path: &Path, mapping: &BTreeMap<String, String>) -> Result<Vec<ClusterSpec>> {
    read_with(path, &ReadSettings::plan("clusters", mapping, None)).map(|r| r.0)
}

/// Reads clusters with `settings`; returns them and the number format they
/// were read with.
pub fn read_with(path: &Path, settings: &ReadSettings) -> Result<(Vec<ClusterSpec>, NumberFormat)> {
    table::twice(settings, |conv| read_once(path, settings, conv))
}

fn read_once(
    path: &Path,
    settings: &ReadSettings,
    conv: Convention,
) -> Result<Pass<Vec<ClusterSpec>>> {
    let mut t = table::open_with(path, CLUSTER_COLUMNS, settings, conv)?;
    let mut issues = Issues::default();
    let mut rows = Vec::new();
    while t.next_row(&mut issues) {
        if let Some(r) = read_row(&t, &mut issues) {
            rows.push(r);
        }
    }
    t.expect_rows(
        &mut issues,
        "one row per tier (cluster, tier, cost, effort)",
    );
    let columns = (t.column(0), t.column(1));
    let clusters = group(&t.file, columns, rows, &mut issues);
    Ok(t.finish(issues, clusters))
}

fn read_row(t: &table::Table, issues: &mut Issues) -> Option<Row> {
    let cluster = t.text(0, issues).map(str::to_string);
    let tier = t.number_in(1, 1.0, 50.0, NumberKind::Plain, issues);
    let cost = t.number_in(2, 0.0, f64::MAX, NumberKind::Plain, issues);
    let effort = read_effort(t, issues);
    let start = read_start(t, issues)?;
    let lo = opt_in(t, 6, issues, 0.0)?;
    let hi = opt_in(t, 7, issues, 1.0)?;
    let gain = read_gain(t, issues)?;
    let (cluster, tier, cost, effort) = (cluster?, tier?, cost?, effort?);
    if tier.fract() != 0.0 {
        t.complain(
            1,
            issues,
            format!("expected a whole tier number 1, 2, 3..., found {tier}"),
        );
        return None;
    }
    if cluster.is_empty() {
        t.complain(0, issues, "expected a cluster name, found an empty cell");
        return None;
    }
    if lo > hi {
        t.complain(
            6,
            issues,
            format!("min_fraction ({lo}) exceeds max_fraction ({hi}); expected min_fraction <= max_fraction"),
        );
        return None;
    }
    let label = t
        .text(5, issues)
        .filter(|s| !s.is_empty())
        .map(str::to_string);
    Some(Row {
        cluster,
        tier: tier as usize,
        start,
        spec: TierSpec {
            label: label.unwrap_or_else(|| format!("tier {tier}")),
            cost,
            effort,
            gain,
            min_fraction: lo,
            max_fraction: hi,
        },
        line: t.line(),
    })
}

/// Effort: positive (1 = a standard unit of work), at most 1e6.
fn read_effort(t: &table::Table, issues: &mut Issues) -> Option<f64> {
    let v = t.number_in(3, 0.0, 1e6, NumberKind::Plain, issues)?;
    if v <= 0.0 {
        let msg = format!("expected a positive effort (1 = a standard unit of work), found {v}");
        t.complain(3, issues, msg);
        return None;
    }
    Some(v)
}

fn read_start(t: &table::Table, issues: &mut Issues) -> Option<Option<Month>> {
    match t.text(4, issues) {
        None | Some("") => Some(None),
        Some(s) => match Month::parse(s) {
            Some(m) => Some(Some(m)),
            None => {
                t.complain(4, issues, crate::month::expected(s));
                None
            }
        },
    }
}

fn opt_in(t: &table::Table, k: usize, issues: &mut Issues, default: f64) -> Option<f64> {
    if !t.has(k) || t.text(k, &mut Issues::default()).is_some_and(str::is_empty) {
        return Some(default);
    }
    t.number_in(k, 0.0, 1.0, NumberKind::Rate, issues)
}

fn read_gain(t: &table::Table, issues: &mut Issues) -> Option<Option<GainSpec>> {
    let kind = t.text(8, issues).unwrap_or("").to_lowercase();
    if kind.is_empty() {
        return Some(None);
    }
    let nums: Vec<Option<f64>> = (10..=12)
        .map(|k| t.required_number(k, NumberKind::Plain, issues))
        .collect();
    let lambda = if t.has(13) {
        t.number(13, NumberKind::Plain, issues).unwrap_or(4.0)
    } else {
        4.0
    };
    let over = match t.text(9, issues).unwrap_or("") {
        "" | "positions-gained" => GainOver::PositionsGained,
        "final-position" => GainOver::FinalPosition,
        other => {
            t.complain(
                9,
                issues,
                format!(
                    "expected positions-gained or final-position, found '{}'",
                    echo(other)
                ),
            );
            return None;
        }
    };
    let (min, mode, max) = (nums[0]?, nums[1]?, nums[2]?);
    if !(min <= mode && mode <= max && min < max) || lambda <= 0.0 {
        t.complain_row(issues, format!("the gain distribution needs min <= mode <= max with min < max and lambda > 0, found {min}, {mode}, {max}"));
        return None;
    }
    let shape = match kind.as_str() {
        "triangular" => GainShape::Triangular { min, mode, max },
        "pert" => GainShape::Pert {
            min,
            mode,
            max,
            lambda,
        },
        other => {
            t.complain(
                8,
                issues,
                format!("expected triangular or pert, found '{}'", echo(other)),
            );
            return None;
        }
    };
    Some(Some(GainSpec { shape, over }))
}

/// Groups tier rows by cluster, checking tiers run 1, 2, ... with no gaps;
/// `columns` are the cluster and tier columns' headers and positions.
fn group(
    file: &str,
    columns: ((String, usize), (String, usize)),
    rows: Vec<Row>,
    issues: &mut Issues,
) -> Vec<ClusterSpec> {
    let mut by: Vec<(String, Vec<Row>)> = Vec::new();
    let mut at: std::collections::HashMap<String, usize> = std::collections::HashMap::new();
    for r in rows {
        match at.get(&r.cluster) {
            Some(&i) => by[i].1.push(r),
            None => {
                at.insert(r.cluster.clone(), by.len());
                by.push((r.cluster.clone(), vec![r]));
            }
        }
    }
    let (cluster_col, tier_col) = columns;
    let mut out = Vec::new();
    for (name, mut rs) in by {
        rs.sort_by_key(|r| r.tier);
        let first_line = rs.iter().map(|r| r.line).min().unwrap_or(0);
        for (i, r) in rs.iter().enumerate() {
            if r.tier != i + 1 {
                let msg = format!("cluster '{}': expected tier {} here (tiers run 1, 2, 3... once each), found tier {}", echo(&name), i + 1, r.tier);
                issues.add(file, Some(r.line), Some((&tier_col.0, tier_col.1)), msg);
                break;
            }
        }
        out.push(ClusterSpec {
            name,
            start: rs.iter().find_map(|r| r.start),
            tiers: rs.into_iter().map(|r| r.spec).collect(),
            origin: format!("{file}, line {first_line}"),
            defined_at: (file.to_string(), first_line, cluster_col.clone()),
        });
    }
    out
}
