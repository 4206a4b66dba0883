//! Target odds: the chance that a plan reaches the business's target, how
//! far it may fall short, and how much more search volume would close the
//! gap.
//!
//! The target is a total of clicks or revenue over the horizon, given as an
//! amount or as growth over the last 12 months of history ([`Target`]). Per
//! simulated future, the baseline path (no new work) plus the funded
//! increments gives the total ([`totals`]); [`odds()`] turns the totals into
//! the chance of reaching the target, the shortfall and the extra volume
//! needed; [`report`] puts doing nothing, the chosen plan and the
//! unconstrained best plan side by side.
//!
//! Assumption, stated in every report: baseline revenue is the baseline's
//! clicks times the revenue per click of the same future (its conversion
//! rate times its order value), so existing organic clicks convert like the
//! incremental ones.

pub mod odds;
pub mod report;
pub mod totals;

pub use odds::{odds, volume_needed, Odds};
pub use report::{compare, PlanOdds, TargetReport};
pub use totals::{
    cluster_volumes, funded_monthly, horizon_totals, monthly_totals, uplift, with_baseline,
};

use crate::inputs::load::Inputs;
use crate::month::Month;
use crate::simulate::Model;
use serde::Serialize;

/// Everything that can go wrong when computing target odds.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum TargetError {
    /// A `[target]` setting cannot be used.
    #[error("[target] {key}: {message}")]
    Setting { key: String, message: String },

    /// An argument has the wrong number of values.
    #[error("{what} has {found} values; expected {expected} ({hint})")]
    Shape {
        what: String,
        found: usize,
        expected: usize,
        hint: String,
    },

    /// A value is not a finite number in its range.
    #[error("{what} is {found}; expected {expected}")]
    Value {
        what: String,
        found: String,
        expected: String,
    },
}

/// What the target counts.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Metric {
    /// Organic clicks over the horizon.
    Clicks,
    /// Organic revenue over the horizon.
    Revenue,
}

impl Metric {
    /// `"clicks"` or `"revenue"`.
    pub fn parse(text: &str) -> Result<Metric, TargetError> {
        match text.trim() {
            "clicks" => Ok(Metric::Clicks),
            "revenue" => Ok(Metric::Revenue),
            other => Err(TargetError::Setting {
                key: "metric".into(),
                message: format!("found \"{other}\"; use \"clicks\" or \"revenue\""),
            }),
        }
    }

    /// The metric's name.
    pub fn name(self) -> &'static str {
        match self {
            Metric::Clicks => "clicks",
            Metric::Revenue => "revenue",
        }
    }
}

/// A resolved target: a total of `metric` over the horizon.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Target {
    pub metric: Metric,
    /// The total to reach over the horizon.
    pub amount: f64,
    /// How the amount was set (for the report).
    pub basis: String,
}

impl Target {
    /// A target of `amount` (finite, 0 or more).
    pub fn new(metric: Metric, amount: f64, basis: &str) -> Result<Target, TargetError> {
        if !(amount.is_finite() && amount >= 0.0) {
            return Err(TargetError::Setting {
                key: "amount".into(),
                message: format!("is {amount}; give a total of 0 or more over the horizon"),
            });
        }
        Ok(Target {
            metric,
            amount,
            basis: basis.to_string(),
        })
    }

    /// The plan's `[target]`, if any. Growth applies to the last 12 months of
    /// history (see [`growth_target`]). A revenue growth target without a
    /// `revenue` column in the history uses its clicks times the mean revenue
    /// per click of the economics, and says so in `basis`.
    pub fn from_inputs(inputs: &Inputs, model: &Model) -> Result<Option<Target>, TargetError> {
        let Some(cfg) = &inputs.plan.file.target else {
            return Ok(None);
        };
        let metric = Metric::parse(cfg.metric.get_ref())?;
        match (&cfg.amount, &cfg.growth) {
            (Some(a), None) => Target::new(metric, *a.get_ref(), "amount in the plan").map(Some),
            (None, Some(g)) => from_growth(inputs, model, metric, *g.get_ref()).map(Some),
            _ => Err(TargetError::Setting {
                key: "amount".into(),
                message: "give either amount (a total over the horizon) or growth (over the last 12 months), not both or neither".into(),
            }),
        }
    }
}

fn from_growth(
    inputs: &Inputs,
    model: &Model,
    metric: Metric,
    growth: f64,
) -> Result<Target, TargetError> {
    let h = &inputs.history;
    let clicks = h.get("clicks").unwrap_or(&[]);
    let (values, note): (Vec<f64>, &str) = match (metric, h.get("revenue")) {
        (Metric::Clicks, _) => (clicks.to_vec(), "clicks of the last 12 months"),
        (Metric::Revenue, Some(r)) => (r.to_vec(), "revenue of the last 12 months"),
        (Metric::Revenue, None) => {
            let e = &model.economics;
            let rpc = e.conversion_rate.mean() * e.order_value.mean;
            (
                clicks.iter().map(|c| c * rpc).collect(),
                "the history has no revenue column: clicks of the last 12 months times the mean revenue per click",
            )
        }
    };
    let amount = growth_target(&h.months, &values, &model.months, growth)?;
    let basis = format!("{:+.1} % over {note}", growth * 100.0);
    Target::new(metric, amount, &basis)
}

/// The target for `growth` over the last 12 months of a monthly history:
/// each forecast month takes the value of the same calendar month in the
/// last 12 history months, times `1 + growth`, summed over the horizon. For a
/// 12-month horizon this is `(1 + growth)` times the last 12 months' total;
/// for a shorter one it respects the season of the months forecast; a
/// longer one repeats that year.
pub fn growth_target(
    history_months: &[Month],
    values: &[f64],
    forecast_months: &[Month],
    growth: f64,
) -> Result<f64, TargetError> {
    if !(growth.is_finite() && growth > -1.0) {
        return Err(TargetError::Setting {
            key: "growth".into(),
            message: format!("is {growth}; give a share above -1 (0.15 means +15 %)"),
        });
    }
    let n = values.len().min(history_months.len());
    if n < 12 {
        return Err(TargetError::Setting {
            key: "growth".into(),
            message: format!("needs 12 months of history, found {n}; give amount instead"),
        });
    }
    let mut by_month = [0.0; 12];
    for i in n - 12..n {
        by_month[history_months[i].month0()] = values[i];
    }
    let base: f64 = forecast_months.iter().map(|m| by_month[m.month0()]).sum();
    Ok(base * (1.0 + growth))
}
