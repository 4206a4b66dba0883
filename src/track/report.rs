//! The tracking report: per observed month, the actual against the
//! forecast's P10/P50/P90 and its percentile; per remaining month, the
//! prior and the re-forecast quantiles; and the updated target odds.
//!
//! - Percentile of an actual: the share of futures below it, ties counted
//!   half (a mid-distribution percentile).
//! - Observed-month quantiles are type 7 (Hyndman & Fan 1996). Re-forecast
//!   quantiles are weighted: the value where the cumulative weight first
//!   reaches the level; the prior beside them uses the same rule with equal
//!   weights, so the two columns compare like with like.
//! - Updated target odds: each future's total is the actuals of the observed
//!   months plus its own simulated remaining months; the chance is the
//!   weight of the futures reaching the target. The prior chance uses the
//!   simulated totals of the whole horizon with equal weights.

use super::weights::{reweight, TrackOptions, Weighting};
use super::TrackError;
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
    /// σ asked for and σ used (after widening).
    pub sigma_initial: f64,
    pub sigma: f64,
    /// True when σ had to be widened to keep enough futures in play.
    pub widened: bool,
    /// Effective sample size of the weights and its threshold.
    pub ess: f64,
    pub ess_threshold: f64,
    pub target: Option<TargetUpdate>,
    pub method: String,
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
}

const METHOD: &str = "futures weighted by exp(-sum of squared log errors / (2 sigma^2)) over the observed months (importance weighting; Smith & Gelfand 1992); sigma doubled until the effective sample size reaches the threshold";

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
    Ok((h, input.sims.len() / h))
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

fn reforecast_month(month: Month, col: &[f64], w: &Weighting) -> ReforecastMonth {
    let equal = vec![1.0; col.len()];
    let [a, b, c] = weighted_q(col, &equal);
    let [p10, p50, p90] = weighted_q(col, &w.weights);
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

fn target_update(input: &TrackInput, h: usize, w: &Weighting, amount: f64) -> TargetUpdate {
    let k = input.actuals.len();
    let seen: f64 = input.actuals.iter().sum();
    let s = w.weights.len() as f64;
    let mut prior = 0.0;
    let mut updated = 0.0;
    for (row, wt) in input.sims.chunks(h).zip(&w.weights) {
        if row.iter().sum::<f64>() >= amount {
            prior += 1.0 / s;
        }
        if seen + row[k..].iter().sum::<f64>() >= amount {
            updated += wt;
        }
    }
    TargetUpdate {
        amount,
        observed_so_far: seen,
        prior_chance: prior,
        updated_chance: updated.min(1.0),
    }
}

/// The tracking report of `input` with reweighting options `opts`.
pub fn track(input: &TrackInput, opts: &TrackOptions) -> Result<TrackReport, TrackError> {
    let (h, s) = check(input)?;
    let k = input.actuals.len();
    let w = reweight(input.actuals, input.sims, h, opts)?;
    let observed = (0..k)
        .map(|m| observed_month(input.months[m], input.actuals[m], column(input.sims, h, m)))
        .collect();
    let reforecast = (k..h)
        .map(|m| reforecast_month(input.months[m], &column(input.sims, h, m), &w))
        .collect();
    Ok(TrackReport {
        metric: input.metric,
        scenarios: s,
        observed,
        reforecast,
        sigma_initial: w.sigma_initial,
        sigma: w.sigma,
        widened: w.doublings > 0,
        ess: w.ess,
        ess_threshold: w.threshold,
        target: input.target.map(|t| target_update(input, h, &w, t)),
        method: METHOD.to_string(),
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
            out += "\nRe-forecast of the remaining months (futures weighted by how well they match the months seen):\n\n";
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
            "\nEffective sample size {} of {} futures (threshold {}); sigma {:.3} on the log scale{}.\n",
            int(self.ess), int(self.scenarios as f64), int(self.ess_threshold), self.sigma,
            if self.widened { format!(", widened from {:.3} because too few futures matched", self.sigma_initial) } else { String::new() }
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
