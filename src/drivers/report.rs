//! The variance-driver report: one ranking for the portfolio's net return
//! and, with baseline paths, one for the target metric's total; each row
//! carries the data of a tornado chart (outcome at the input's bottom and
//! top decile).

use super::inputs::{input_series, InputSeries};
use super::rank::{rank_drivers, Driver};
use super::DriversError;
use crate::simulate::{Futures, Model};
use crate::stats::mean;
use crate::target::totals::{check_fractions, check_paths, horizon_totals};
use crate::target::Metric;
use serde::Serialize;

/// How the ranking is computed (shown in every report).
pub const METHOD: &str = "squared Spearman rank correlation of each input with the outcome across the futures (Iman & Conover 1980; Saltelli et al. 2008); swing = mean outcome with the input in its top decile minus bottom decile";

/// One outcome's ranking.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DriverTable {
    /// "net return", "total clicks" or "total revenue".
    pub outcome: String,
    /// Mean outcome over the futures.
    pub mean: f64,
    /// Inputs, largest rank R² first.
    pub drivers: Vec<Driver>,
    /// Said when the outcome does not vary.
    pub note: Option<String>,
}

/// The report.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DriverReport {
    pub scenarios: usize,
    pub currency: String,
    pub method: String,
    pub tables: Vec<DriverTable>,
}

fn table(outcome: &str, inputs: &[InputSeries], y: &[f64]) -> Result<DriverTable, DriversError> {
    let drivers = rank_drivers(inputs, y)?;
    let varies = y.iter().any(|v| (v - y[0]).abs() > 0.0);
    Ok(DriverTable {
        outcome: outcome.to_string(),
        mean: mean(y),
        drivers,
        note: (!varies).then(|| format!("the {outcome} is the same in every future (the allocation funds nothing?); no input drives it")),
    })
}

/// Variance drivers of the allocation `fractions`: its net return, and,
/// when `baseline` clicks paths (`S × horizon`) and the target's metric are
/// given, the metric's total over the horizon (baseline plus funded
/// increments), where the baseline error joins the inputs.
pub fn drivers(
    model: &Model,
    futures: &Futures,
    fractions: &[f64],
    baseline: Option<(&[f64], Metric)>,
    currency: &str,
) -> Result<DriverReport, DriversError> {
    check_fractions(futures, fractions)?;
    if let Some((b, _)) = baseline {
        check_paths(futures, b, "the baseline paths")?;
    }
    let net = crate::stress::portfolio_net(model, futures, fractions).map_err(|e| {
        DriversError::Argument {
            what: "net return".into(),
            message: e.to_string(),
        }
    })?;
    let own = input_series(model, futures, fractions, None);
    let mut tables = vec![table("net return", &own, &net)?];
    if let Some((b, metric)) = baseline {
        let all = input_series(model, futures, fractions, Some(b));
        let totals = horizon_totals(futures, b, fractions, metric)?;
        tables.push(table(&format!("total {}", metric.name()), &all, &totals)?);
    }
    Ok(DriverReport {
        scenarios: futures.scenarios,
        currency: currency.to_string(),
        method: METHOD.to_string(),
        tables,
    })
}

fn value(v: f64) -> String {
    if v.abs() >= 100.0 {
        crate::text::int(v)
    } else {
        format!("{v:.3}")
    }
}

impl crate::output::Render for DriverReport {
    fn table(&self) -> String {
        use crate::text::{pct, table, Align::*};
        let mut out = String::new();
        for t in &self.tables {
            out += &format!(
                "What drives the {} (mean {}):\n\n",
                t.outcome,
                value(t.mean)
            );
            let rows: Vec<Vec<String>> = t
                .drivers
                .iter()
                .map(|d| {
                    vec![
                        d.input.clone(),
                        if d.constant {
                            "constant".into()
                        } else {
                            format!("{:+.2}", d.spearman)
                        },
                        pct(d.rank_r2, 1),
                        pct(d.share, 0),
                        crate::text::range(d.input_p10, d.input_p90),
                        value(d.outcome_low),
                        value(d.outcome_high),
                        value(d.swing),
                    ]
                })
                .collect();
            out += &table(
                &[
                    "input",
                    "rank corr",
                    "rank R2",
                    "share",
                    "input P10 .. P90",
                    "outcome low",
                    "outcome high",
                    "swing",
                ],
                &[Left, Right, Right, Right, Right, Right, Right, Right],
                &rows,
            );
            if let Some(n) = &t.note {
                out += &format!("Note: {n}\n");
            }
            out.push('\n');
        }
        out += &format!("Method: {}. Outcome low/high: mean outcome in the futures where the input is in its bottom/top 10 %.\n", self.method);
        out
    }

    fn rows(&self) -> crate::output::Rows {
        use crate::output::num;
        let header = [
            "outcome",
            "input",
            "group",
            "spearman",
            "rank_r2",
            "share",
            "constant",
            "input_p10",
            "input_p90",
            "outcome_low",
            "outcome_high",
            "swing",
        ]
        .map(String::from)
        .to_vec();
        let rows = self
            .tables
            .iter()
            .flat_map(|t| {
                t.drivers.iter().map(move |d| {
                    vec![
                        t.outcome.clone(),
                        d.input.clone(),
                        d.group.clone(),
                        num(d.spearman),
                        num(d.rank_r2),
                        num(d.share),
                        d.constant.to_string(),
                        num(d.input_p10),
                        num(d.input_p90),
                        num(d.outcome_low),
                        num(d.outcome_high),
                        num(d.swing),
                    ]
                })
            })
            .collect();
        crate::output::Rows { header, rows }
    }
}
