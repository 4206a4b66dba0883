//! Running the baseline on loaded inputs: picks the history column, aligns
//! the search-interest index, forecasts from the month after the history to
//! the end of the plan's horizon (so a gap before the plan's start is
//! forecast too, then dropped), and labels every forecast month. Also the
//! output of `furrow baseline` (table, JSON, CSV).

use super::{forecast, BaselineError, BaselineForecast, BaselineOptions, Candidate, Method};
use crate::error::{Error, Result};
use crate::inputs::monthly::MonthlySeries;
use crate::month::Month;
use crate::output::{num, opt, Render, Rows};
use rayon::prelude::*;
use serde::Serialize;
use std::collections::BTreeMap;

/// One forecast month.
#[derive(Debug, Clone, Serialize)]
pub struct ForecastMonth {
    pub month: Month,
    pub mean: f64,
    pub p10: f64,
    pub p50: f64,
    pub p90: f64,
}

/// What `furrow baseline` prints.
#[derive(Debug, Clone, Serialize)]
pub struct BaselineOutput {
    /// The method used (never "auto").
    pub method: String,
    pub damped: bool,
    /// The history column forecast.
    pub column: String,
    pub history_file: String,
    pub history_months: usize,
    pub parameters: BTreeMap<String, f64>,
    pub aicc: Option<f64>,
    pub forecast: Vec<ForecastMonth>,
    pub selection: Vec<Candidate>,
    pub notes: Vec<String>,
}

/// A baseline forecast aligned with a plan's horizon.
#[derive(Debug, Clone)]
pub struct PlanBaseline {
    /// The forecast over gap + horizon.
    pub forecast: BaselineForecast,
    /// Months between the history's end and the plan's start (dropped).
    pub skip: usize,
    /// First forecast month of the plan.
    pub start: Month,
    /// The printable output, trimmed to the plan's months.
    pub output: BaselineOutput,
}

/// The values of `column` in the history, or an error naming the columns there.
pub fn column<'a>(history: &'a MonthlySeries, column: &str) -> Result<&'a [f64]> {
    if let Some(v) = history.get(column) {
        return Ok(v);
    }
    let why = history
        .non_numeric
        .get(&column.to_lowercase())
        .map(|e| format!(" (it is not all numbers: {e})"))
        .unwrap_or_default();
    let have: Vec<&str> = history.columns.keys().map(String::as_str).collect();
    Err(Error::Setting(format!(
        "--column {column}: no numeric column of that name in {}{why}; numeric columns there: {}",
        history.file,
        have.join(", ")
    )))
}

/// The index aligned with the history's months, when it covers all of them.
pub fn aligned_index(history: &MonthlySeries, index: Option<&MonthlySeries>) -> Option<Vec<f64>> {
    let idx = index?;
    let values = idx.get("index")?;
    history
        .months
        .iter()
        .map(|m| idx.months.iter().position(|x| x == m).map(|i| values[i]))
        .collect()
}

/// Forecasts `column` of the history so that the result covers `start` to
/// `start + horizon - 1`.
pub fn run(
    history: &MonthlySeries,
    index: Option<&MonthlySeries>,
    col: &str,
    start: Month,
    opts: &BaselineOptions,
) -> Result<PlanBaseline> {
    let y = column(history, col)?;
    let last = history
        .last()
        .ok_or_else(|| Error::Unsupported(format!("{} has no months", history.file)))?;
    let skip = start.since(last.plus(1));
    if skip < 0 {
        return Err(Error::Unsupported(format!(
            "the forecast starts at {start}, inside the history (which ends {last}); set start after the history's last month"
        )));
    }
    let skip = skip as usize;
    let aligned = aligned_index(history, index);
    if opts.method == Method::IndexGrowth && aligned.is_none() {
        return Err(Error::Setting("--method index-growth needs a search-interest index covering every history month ([inputs] interest = FILE)".into()));
    }
    let mut o = opts.clone();
    o.horizon = opts.horizon + skip;
    // A history too short for the baseline names its file.
    let fc = forecast(y, aligned.as_deref(), &o).map_err(|e| match e {
        BaselineError::TooShort { .. } | BaselineError::NotEnoughForMethod { .. } => {
            Error::Unsupported(format!("{}: {e}", history.file))
        }
        other => Error::Baseline(other),
    })?;
    let output = output(&fc, history, col, skip, last.plus(1));
    Ok(PlanBaseline {
        forecast: fc,
        skip,
        start,
        output,
    })
}

fn output(
    fc: &BaselineForecast,
    history: &MonthlySeries,
    col: &str,
    skip: usize,
    first: Month,
) -> BaselineOutput {
    let forecast = (skip..fc.mean.len())
        .map(|i| ForecastMonth {
            month: first.plus(i as i32),
            mean: fc.mean[i],
            p10: fc.p10[i],
            p50: fc.p50[i],
            p90: fc.p90[i],
        })
        .collect();
    BaselineOutput {
        method: fc.method.name().to_string(),
        damped: fc.damped,
        column: col.to_string(),
        history_file: history.file.clone(),
        history_months: history.len(),
        parameters: fc.parameters.iter().cloned().collect(),
        aicc: fc.aicc,
        forecast,
        selection: fc.selection.clone(),
        notes: fc.notes.clone(),
    }
}

impl PlanBaseline {
    /// Simulated paths over the plan's months only (`n x horizon`).
    pub fn paths(&self, n: usize, seed: u64) -> Vec<f64> {
        let full = self.forecast.simulate_paths(n, seed);
        let h_all = self.forecast.mean.len();
        let h = h_all - self.skip;
        let mut out = Vec::with_capacity(n * h);
        for p in 0..n {
            out.extend_from_slice(&full[p * h_all + self.skip..(p + 1) * h_all]);
        }
        out
    }
}

impl PlanBaseline {
    /// Paths over the plan's months like [`PlanBaseline::paths`] (path i on
    /// the same stream), with the first `k` plan months of path i observed
    /// at `observed(i)` (`k` values): the method's states are updated with
    /// them and the rest re-simulated (`FittedModel::simulate_observed`).
    /// Months between the history and the plan's start stay simulated.
    pub fn paths_observed(
        &self,
        n: usize,
        seed: u64,
        observed: impl Fn(usize) -> Vec<f64> + Sync,
    ) -> Vec<f64> {
        let fitted = &self.forecast.fitted;
        let h_all = fitted.horizon();
        let h = h_all - self.skip;
        let mut out = vec![0.0; n * h];
        if h == 0 {
            return out;
        }
        let skip = self.skip;
        out.par_chunks_mut(h)
            .with_min_len(64)
            .enumerate()
            .for_each(|(i, row)| {
                let mut rng = crate::rng::stream(seed, crate::rng::domain::BASELINE, i as u64);
                let mut full = vec![0.0; h_all];
                fitted.simulate_observed(&mut rng, skip, &observed(i), &mut full);
                row.copy_from_slice(&full[skip..]);
            });
        out
    }
}

fn f(v: Option<f64>, digits: usize) -> String {
    v.map(|x| format!("{x:.digits$}"))
        .unwrap_or_else(|| "-".into())
}

impl Render for BaselineOutput {
    fn table(&self) -> String {
        use crate::text::{int, table, Align::*};
        let name = if self.damped {
            format!("{} (damped)", self.method)
        } else {
            self.method.clone()
        };
        let mut out = format!(
            "Baseline of '{}' from {} months of {}: {name}\n",
            self.column, self.history_months, self.history_file
        );
        let params: Vec<String> = self
            .parameters
            .iter()
            .filter(|(k, _)| !k.starts_with("s0_"))
            .map(|(k, v)| format!("{k} = {v:.4}"))
            .collect();
        out += &format!("Parameters: {}\n", params.join(", "));
        if let Some(a) = self.aicc {
            out += &format!("AICc: {a:.2}\n");
        }
        out.push('\n');
        let rows: Vec<Vec<String>> = self
            .forecast
            .iter()
            .map(|m| {
                vec![
                    m.month.to_string(),
                    int(m.mean),
                    int(m.p10),
                    int(m.p50),
                    int(m.p90),
                ]
            })
            .collect();
        out += &table(
            &["month", "mean", "P10", "P50", "P90"],
            &[Left, Right, Right, Right, Right],
            &rows,
        );
        out += &format!(
            "Total over {} months: mean {}\n",
            self.forecast.len(),
            int(self.forecast.iter().map(|m| m.mean).sum())
        );
        if self.selection.len() > 1 {
            out += "\nCandidates (AICc: lower is better; backtest MASE and sMAPE: lower is better; coverage of the 80 % interval: near 80 % is right):\n";
            let rows: Vec<Vec<String>> = self
                .selection
                .iter()
                .map(|c| {
                    vec![
                        if c.chosen {
                            format!("* {}", c.label)
                        } else {
                            format!("  {}", c.label)
                        },
                        f(c.aicc, 2),
                        f(c.mase, 3),
                        f(c.smape, 2),
                        f(c.coverage80.map(|x| x * 100.0), 0),
                        c.note.clone(),
                    ]
                })
                .collect();
            out += &table(
                &["method", "AICc", "MASE", "sMAPE %", "cover80 %", "note"],
                &[Left, Right, Right, Right, Right, Left],
                &rows,
            );
        }
        for n in &self.notes {
            out += &format!("Note: {n}\n");
        }
        out
    }

    fn rows(&self) -> Rows {
        Rows {
            header: ["month", "mean", "p10", "p50", "p90", "method"]
                .map(String::from)
                .to_vec(),
            rows: self
                .forecast
                .iter()
                .map(|m| {
                    vec![
                        m.month.to_string(),
                        num(m.mean),
                        num(m.p10),
                        num(m.p50),
                        num(m.p90),
                        self.method.clone(),
                    ]
                })
                .collect(),
        }
    }
}

/// Selection table as CSV rows (for the report).
pub fn selection_rows(sel: &[Candidate]) -> Rows {
    Rows {
        header: [
            "method",
            "aicc",
            "mase",
            "smape",
            "coverage80",
            "chosen",
            "note",
        ]
        .map(String::from)
        .to_vec(),
        rows: sel
            .iter()
            .map(|c| {
                vec![
                    c.label.clone(),
                    opt(c.aicc),
                    opt(c.mase),
                    opt(c.smape),
                    opt(c.coverage80),
                    c.chosen.to_string(),
                    c.note.clone(),
                ]
            })
            .collect(),
    }
}
