//! The tracking report: per observed month, the actual against the
//! forecast's P10/P50/P90 and its percentile; per remaining month, the
//! prior and the re-forecast quantiles; and the updated target odds.
//!
//! The re-forecast follows the data (issue 14): each future keeps its own
//! draw of the plan's incremental clicks (and revenue per click), and the
//! baseline part of the observed months is what the actuals leave once that
//! future's increments are taken out, `y_{s,m} = max(0, a_m / v_s − u_{s,m})`
//! (`a` the actual, `v` the metric per click, 1 for clicks, `u` the funded
//! increments). The baseline method's own states are updated with `y`
//! (`baseline::FittedModel::simulate_observed`: exact filtering for the
//! exponential smoothing family) and the remaining months re-simulated from
//! the updated states on the future's own random stream, so the update uses
//! common random numbers and lowering an actual can only lower what follows
//! (for the usual smoothing parameters). No future is reweighted, so nothing
//! flattens back to the prior when the actuals leave the simulated range:
//! the incremental factors keep their simulated spread, since a month's
//! total cannot tell the baseline from the increment apart beyond the
//! baseline's own error.
//!
//! - Percentile of an actual: the share of futures below it, ties counted
//!   half (a mid-distribution percentile).
//! - Observed-month quantiles are type 7 (Hyndman & Fan 1996). Re-forecast
//!   quantiles use the weighted rule with equal weights (the value where the
//!   cumulative share first reaches the level), and the prior beside them the
//!   same rule, so the two columns compare like with like.
//! - Updated target odds: each future's total is the actuals of the observed
//!   months plus its own re-forecast remaining months; the chance is the
//!   share of futures reaching the target. The prior chance uses the
//!   simulated totals of the whole horizon.

use super::weights::{ess_threshold, TrackOptions};
use super::TrackError;
use crate::baseline::run::PlanBaseline;
use crate::inputs::monthly::MonthlySeries;
use crate::month::Month;
use crate::stats::{quantile_sorted, sort, weighted_quantile_sorted};
use crate::target::Metric;
use serde::Serialize;

/// One observed month.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ObservedMonth {
    pub month: String,
    pub actual: f64,
    pub p10: f64,
    pub p50: f64,
    pub p90: f64,
    /// Share of futures below the actual (ties count half).
    pub percentile: f64,
    /// "below P10", "above P90" or "".
    pub flag: String,
}

/// One remaining month: prior and re-forecast quantiles.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ReforecastMonth {
    pub month: String,
    pub prior_p10: f64,
    pub prior_p50: f64,
    pub prior_p90: f64,
    pub p10: f64,
    pub p50: f64,
    pub p90: f64,
}

/// The target odds before and after the months seen.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TargetUpdate {
    pub amount: f64,
    /// Sum of the actuals so far.
    pub observed_so_far: f64,
    pub prior_chance: f64,
    pub updated_chance: f64,
}

/// The tracking report.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TrackReport {
    pub metric: Metric,
    pub scenarios: usize,
    pub observed: Vec<ObservedMonth>,
    pub reforecast: Vec<ReforecastMonth>,
    /// Kept for scripts that read them: the update no longer reweights
    /// futures, so σ is 0 (no likelihood tolerance), `widened` is false and
    /// the effective sample size is the number of futures.
    pub sigma_initial: f64,
    pub sigma: f64,
    pub widened: bool,
    pub ess: f64,
    pub ess_threshold: f64,
    pub target: Option<TargetUpdate>,
    /// How the re-forecast was made, in one sentence.
    pub method: String,
    /// How the update was made: `baseline-state-update`.
    pub update: String,
    /// The baseline method whose states were updated, and its update rule.
    pub baseline_method: String,
    pub baseline_update: String,
}

/// What to track.
#[derive(Debug, Clone, Copy)]
pub struct TrackInput<'a> {
    /// Actuals of the first months, in order from the forecast start.
    pub actuals: &'a [f64],
    /// Simulated monthly totals of the chosen allocation, `S × horizon`
    /// (baseline path plus funded increments, in the actuals' metric).
    pub sims: &'a [f64],
    /// The horizon's months (its length is the horizon).
    pub months: &'a [Month],
    pub metric: Metric,
    /// The target total over the horizon, in the same metric.
    pub target: Option<f64>,
    /// What the re-forecast updates.
    pub update: Update<'a>,
}

/// The parts of the simulation the re-forecast updates.
#[derive(Debug, Clone, Copy)]
pub struct Update<'a> {
    /// The plan's baseline (its fitted method and states).
    pub baseline: &'a PlanBaseline,
    /// The seed its paths were simulated with (future i on stream i).
    pub seed: u64,
    /// Funded incremental clicks, `S × horizon` (`target::funded_monthly`).
    pub increments: &'a [f64],
    /// The metric per click of each future: 1 for clicks, the revenue per
    /// click for revenue.
    pub per_click: &'a [f64],
}

/// The `update` field of the report.
pub const UPDATE: &str = "baseline-state-update";

const METHOD: &str = "each future's baseline states updated with the actuals less that future's funded increments (the baseline method's own recursion), and the remaining months re-simulated from the updated states on the same random streams; no future reweighted";

/// The actuals column for `metric` (revenue needs a `revenue` column).
pub fn actual_values(actuals: &MonthlySeries, metric: Metric) -> Result<Vec<f64>, TrackError> {
    actuals
        .get(metric.name())
        .map(<[f64]>::to_vec)
        .ok_or_else(|| {
            TrackError::Actuals(format!(
                "{} has no '{}' column; add it, or track clicks",
                actuals.file,
                metric.name()
            ))
        })
}

fn check(input: &TrackInput) -> Result<(usize, usize), TrackError> {
    let h = input.months.len();
    let k = input.actuals.len();
    if h == 0 || input.sims.is_empty() || !input.sims.len().is_multiple_of(h) {
        return Err(TrackError::Argument {
            what: "simulated monthly totals".into(),
            message: format!(
                "{} values do not make whole futures of {h} months",
                input.sims.len()
            ),
        });
    }
    if k == 0 || k > h {
        return Err(TrackError::Actuals(format!(
            "{k} months given; give 1 to {h} months from the forecast start"
        )));
    }
    if let Some(i) = input
        .actuals
        .iter()
        .position(|a| !(a.is_finite() && *a >= 0.0))
    {
        return Err(TrackError::Actuals(format!(
            "month {} is {}; expected a number, 0 or more",
            input.months[i], input.actuals[i]
        )));
    }
    if let Some(i) = input.sims.iter().position(|v| !v.is_finite()) {
        return Err(TrackError::Argument {
            what: "simulated monthly totals".into(),
            message: format!(
                "future {} month {} is not a finite number",
                i / h + 1,
                i % h + 1
            ),
        });
    }
    let s = input.sims.len() / h;
    let u = &input.update;
    if u.increments.len() != s * h || u.per_click.len() != s {
        return Err(TrackError::Argument {
            what: "the funded increments".into(),
            message: format!(
                "{} increments and {} per-click values for {s} futures of {h} months",
                u.increments.len(),
                u.per_click.len()
            ),
        });
    }
    if u.baseline.forecast.horizon() != u.baseline.skip + h {
        return Err(TrackError::Argument {
            what: "the baseline".into(),
            message: format!(
                "forecasts {} months after a gap of {}; the plan has {h}",
                u.baseline.forecast.horizon() - u.baseline.skip.min(u.baseline.forecast.horizon()),
                u.baseline.skip
            ),
        });
    }
    if let Some(i) = u
        .increments
        .iter()
        .chain(u.per_click)
        .position(|v| !v.is_finite())
    {
        return Err(TrackError::Argument {
            what: "the funded increments".into(),
            message: format!("value {} is not a finite number", i + 1),
        });
    }
    Ok((h, s))
}

fn column(sims: &[f64], h: usize, m: usize) -> Vec<f64> {
    sims.chunks(h).map(|r| r[m]).collect()
}

fn observed_month(month: Month, actual: f64, mut col: Vec<f64>) -> ObservedMonth {
    let below = col.iter().filter(|&&x| x < actual).count() as f64;
    let equal = col.iter().filter(|&&x| x == actual).count() as f64;
    let percentile = (below + 0.5 * equal) / col.len() as f64;
    sort(&mut col);
    let (p10, p50, p90) = (
        quantile_sorted(&col, 0.1),
        quantile_sorted(&col, 0.5),
        quantile_sorted(&col, 0.9),
    );
    let flag = if actual < p10 {
        "below P10"
    } else if actual > p90 {
        "above P90"
    } else {
        ""
    };
    ObservedMonth {
        month: month.to_string(),
        actual,
        p10,
        p50,
        p90,
        percentile,
        flag: flag.into(),
    }
}

fn weighted_q(col: &[f64], w: &[f64]) -> [f64; 3] {
    let mut pairs: Vec<(f64, f64)> = col.iter().copied().zip(w.iter().copied()).collect();
    pairs.sort_by(|a, b| a.0.total_cmp(&b.0));
    [0.1, 0.5, 0.9].map(|q| weighted_quantile_sorted(&pairs, q))
}

fn reforecast_month(month: Month, prior: &[f64], post: &[f64]) -> ReforecastMonth {
    let equal = vec![1.0; prior.len()];
    let [a, b, c] = weighted_q(prior, &equal);
    let [p10, p50, p90] = weighted_q(post, &equal);
    ReforecastMonth {
        month: month.to_string(),
        prior_p10: a,
        prior_p50: b,
        prior_p90: c,
        p10,
        p50,
        p90,
    }
}

fn target_update(input: &TrackInput, post: &[f64], h: usize, amount: f64) -> TargetUpdate {
    let k = input.actuals.len();
    let seen: f64 = input.actuals.iter().sum();
    let s = (input.sims.len() / h) as f64;
    let prior = input
        .sims
        .chunks(h)
        .filter(|row| row.iter().sum::<f64>() >= amount)
        .count() as f64
        / s;
    let updated = post
        .chunks(h)
        .filter(|row| seen + row[k..].iter().sum::<f64>() >= amount)
        .count() as f64
        / s;
    TargetUpdate {
        amount,
        observed_so_far: seen,
        prior_chance: prior,
        updated_chance: updated,
    }
}

/// Re-forecast monthly totals `S × horizon` in the metric: the observed
/// months hold the actuals, the later ones each future's updated baseline
/// plus its increments, times its metric per click.
pub fn reforecast_totals(input: &TrackInput) -> Result<Vec<f64>, TrackError> {
    let (h, s) = check(input)?;
    let u = &input.update;
    let k = input.actuals.len();
    let observed = |i: usize| -> Vec<f64> {
        let v = u.per_click[i];
        input
            .actuals
            .iter()
            .zip(&u.increments[i * h..i * h + k])
            .map(|(a, inc)| {
                // A future worth nothing per click says nothing about the
                // baseline: it keeps its own simulated months.
                if v > 0.0 {
                    (a / v - inc).max(0.0)
                } else {
                    0.0
                }
            })
            .collect()
    };
    let base = u.baseline.paths_observed(s, u.seed, observed);
    let mut out: Vec<f64> = base
        .iter()
        .zip(u.increments)
        .enumerate()
        .map(|(j, (b, inc))| (b + inc) * u.per_click[j / h])
        .collect();
    for row in out.chunks_mut(h) {
        row[..k].copy_from_slice(input.actuals);
    }
    Ok(out)
}

/// The tracking report of `input`. `_opts` is kept for callers of the
/// earlier reweighting; the update has no tolerance to set.
pub fn track(input: &TrackInput, _opts: &TrackOptions) -> Result<TrackReport, TrackError> {
    let (h, s) = check(input)?;
    let k = input.actuals.len();
    let post = reforecast_totals(input)?;
    let observed = (0..k)
        .map(|m| observed_month(input.months[m], input.actuals[m], column(input.sims, h, m)))
        .collect();
    let reforecast = (k..h)
        .map(|m| {
            reforecast_month(
                input.months[m],
                &column(input.sims, h, m),
                &column(&post, h, m),
            )
        })
        .collect();
    let fitted = &input.update.baseline.forecast;
    Ok(TrackReport {
        metric: input.metric,
        scenarios: s,
        observed,
        reforecast,
        sigma_initial: 0.0,
        sigma: 0.0,
        widened: false,
        ess: s as f64,
        ess_threshold: ess_threshold(s),
        target: input.target.map(|t| target_update(input, &post, h, t)),
        method: METHOD.to_string(),
        update: UPDATE.to_string(),
        baseline_method: if fitted.damped {
            format!("{} (damped)", fitted.method.name())
        } else {
            fitted.method.name().to_string()
        },
        baseline_update: fitted.fitted.update_rule().to_string(),
    })
}

impl TrackReport {
    fn amount(&self, v: f64) -> String {
        crate::text::int(v)
    }
}

impl crate::output::Render for TrackReport {
    fn table(&self) -> String {
        use crate::text::{int, pct, table, Align::*};
        let a = |v: f64| self.amount(v);
        let mut out = format!(
            "Actual {} against the forecast ({} futures):\n\n",
            self.metric.name(),
            int(self.scenarios as f64)
        );
        let rows: Vec<Vec<String>> = self
            .observed
            .iter()
            .map(|o| {
                vec![
                    o.month.clone(),
                    a(o.actual),
                    a(o.p10),
                    a(o.p50),
                    a(o.p90),
                    pct(o.percentile, 0),
                    o.flag.clone(),
                ]
            })
            .collect();
        out += &table(
            &["month", "actual", "P10", "P50", "P90", "percentile", "flag"],
            &[Left, Right, Right, Right, Right, Right, Left],
            &rows,
        );
        if !self.reforecast.is_empty() {
            out += "\nRe-forecast of the remaining months (baseline states updated with the months seen):\n\n";
            let rows: Vec<Vec<String>> = self
                .reforecast
                .iter()
                .map(|r| {
                    vec![
                        r.month.clone(),
                        a(r.prior_p10),
                        a(r.prior_p50),
                        a(r.prior_p90),
                        a(r.p10),
                        a(r.p50),
                        a(r.p90),
                    ]
                })
                .collect();
            out += &table(
                &[
                    "month",
                    "prior P10",
                    "prior P50",
                    "prior P90",
                    "P10",
                    "P50",
                    "P90",
                ],
                &[Left, Right, Right, Right, Right, Right, Right],
                &rows,
            );
        }
        out += &format!(
            "\nHow the re-forecast was made: {}. Baseline {}: {}.\n",
            self.method, self.baseline_method, self.baseline_update
        );
        if let Some(t) = &self.target {
            out += &format!(
                "Chance of reaching the target of {}: {} before, {} now ({} so far).\n",
                a(t.amount),
                pct(t.prior_chance, 0),
                pct(t.updated_chance, 0),
                a(t.observed_so_far)
            );
        }
        out
    }

    fn rows(&self) -> crate::output::Rows {
        use crate::output::num;
        let header = [
            "month",
            "kind",
            "actual",
            "prior_p10",
            "prior_p50",
            "prior_p90",
            "p10",
            "p50",
            "p90",
            "percentile",
            "flag",
        ]
        .map(String::from)
        .to_vec();
        let mut rows: Vec<Vec<String>> = self
            .observed
            .iter()
            .map(|o| {
                vec![
                    o.month.clone(),
                    "observed".into(),
                    num(o.actual),
                    num(o.p10),
                    num(o.p50),
                    num(o.p90),
                    String::new(),
                    String::new(),
                    String::new(),
                    num(o.percentile),
                    o.flag.clone(),
                ]
            })
            .collect();
        rows.extend(self.reforecast.iter().map(|r| {
            vec![
                r.month.clone(),
                "reforecast".into(),
                String::new(),
                num(r.prior_p10),
                num(r.prior_p50),
                num(r.prior_p90),
                num(r.p10),
                num(r.p50),
                num(r.p90),
                String::new(),
                String::new(),
            ]
        }));
        crate::output::Rows { header, rows }
    }
}
