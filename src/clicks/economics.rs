//! From clicks to money: conversion rate, order value, gross margin, the two
//! money ratios, incremental clicks, and the seasonality of search volume.
//!
//! - Conversion rate: a plain number, or conversions and sessions counts.
//!   From counts, the rate is the Beta(conversions + 1, sessions -
//!   conversions + 1) posterior of a binomial rate under a uniform Beta(1, 1)
//!   prior (Gelman et al., *Bayesian Data Analysis*, 3rd ed., §2.4); its mean
//!   is `(conversions + 1) / (sessions + 2)`.
//! - Average order value: a mean and a spread, drawn lognormal with that mean
//!   and standard deviation (`sigma² = ln(1 + s²/m²)`,
//!   `mu = ln m - sigma²/2`; Johnson, Kotz & Balakrishnan vol. 1 ch. 14).
//! - Money: `orders = clicks * conversion rate`, `revenue = orders * order
//!   value`, `gross profit = revenue * margin`. A value per click `v` is the
//!   same as conversion rate 1 and order value `v` (then `orders` counts
//!   clicks).
//! - Two ratios, never mixed up: **return on spend** = incremental revenue /
//!   cost; **ROI** = (incremental gross profit - cost) / cost. Both are None
//!   when the cost is not positive (never inf or NaN).
//! - Seasonality: 12 monthly indices with mean 1, from history by classical
//!   multiplicative decomposition (each calendar month's average ratio to
//!   the centred 2x12 moving average; Hyndman & Athanasopoulos, *Forecasting:
//!   Principles and Practice*, 3rd ed., §3.4) when 24+ months are given, or
//!   given directly in the plan.

use serde::Serialize;

use super::sampling::{clamp_unit, uniform, BetaParams, LogNormalParams};
use super::{check_non_negative, check_range, invalid, ClicksError};
use crate::rng::Stream;

/// Where a conversion rate comes from.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum ConversionRate {
    /// A rate in [0, 1].
    Fixed(f64),
    /// Observed conversions out of sessions.
    Counts { conversions: f64, sessions: f64 },
}

/// A conversion rate's distribution in the Monte Carlo.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum RateDistribution {
    Point(f64),
    Beta(BetaParams),
}

impl RateDistribution {
    pub fn mean(&self) -> f64 {
        match self {
            RateDistribution::Point(r) => *r,
            RateDistribution::Beta(b) => b.mean(),
        }
    }

    pub fn variance(&self) -> f64 {
        match self {
            RateDistribution::Point(_) => 0.0,
            RateDistribution::Beta(b) => b.variance(),
        }
    }

    /// The `u` quantile (common random numbers).
    pub fn quantile(&self, u: f64) -> f64 {
        match self {
            RateDistribution::Point(r) => *r,
            RateDistribution::Beta(b) => b.quantile(clamp_unit(u)),
        }
    }

    /// One draw by inverse transform.
    pub fn sample(&self, rng: &mut Stream) -> f64 {
        self.quantile(uniform(rng))
    }
}

impl ConversionRate {
    /// A plain rate, checked to be in [0, 1].
    pub fn fixed(rate: f64) -> Result<ConversionRate, ClicksError> {
        check_range(
            "economics",
            "conversion_rate",
            rate,
            0.0,
            1.0,
            "a share: 0.02 means 2 %",
        )?;
        Ok(ConversionRate::Fixed(rate))
    }

    /// Counts: `0 <= conversions <= sessions`, both finite.
    pub fn from_counts(conversions: f64, sessions: f64) -> Result<ConversionRate, ClicksError> {
        if !(sessions.is_finite() && sessions >= 0.0) {
            return Err(invalid(
                "economics",
                "sessions",
                sessions,
                "a count, 0 or more",
            ));
        }
        check_range(
            "economics",
            "conversions",
            conversions,
            0.0,
            sessions,
            "a count, at most sessions",
        )?;
        Ok(ConversionRate::Counts {
            conversions,
            sessions,
        })
    }

    /// The Beta posterior under a uniform prior (counts only).
    pub fn posterior(&self) -> Option<BetaParams> {
        match *self {
            ConversionRate::Fixed(_) => None,
            ConversionRate::Counts {
                conversions,
                sessions,
            } => BetaParams::new(conversions + 1.0, sessions - conversions + 1.0).ok(),
        }
    }

    /// The rate used by `estimate`: the number, or the posterior mean.
    pub fn mean(&self) -> f64 {
        match (self, self.posterior()) {
            (ConversionRate::Fixed(r), _) => *r,
            (_, Some(b)) => b.mean(),
            (_, None) => 0.0,
        }
    }

    /// The distribution to draw from: the posterior for counts; for a plain
    /// rate `r`, a Beta with mean `r` and standard deviation `fixed_cv * r`
    /// (a point when that spread is 0 or `r` is 0 or 1).
    pub fn distribution(&self, fixed_cv: f64) -> Result<RateDistribution, ClicksError> {
        if let Some(b) = self.posterior() {
            return Ok(RateDistribution::Beta(b));
        }
        let r = self.mean();
        let sd = fixed_cv * r;
        if sd.is_nan() || sd <= 0.0 || r <= 0.0 || r >= 1.0 {
            return Ok(RateDistribution::Point(r));
        }
        BetaParams::from_mean_sd(r, sd)
            .map(RateDistribution::Beta)
            .map_err(|_| {
                let expected =
                    format!("a smaller relative spread: sqrt(r(1-r))/r is the most for r = {r}");
                invalid(
                    "rank-gain model",
                    "factors.conversion_rate_cv",
                    fixed_cv,
                    &expected,
                )
            })
    }
}

/// Average order value: mean and optional standard deviation.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct OrderValue {
    pub mean: f64,
    pub sd: Option<f64>,
}

impl OrderValue {
    /// `mean > 0`, `sd >= 0` when given.
    pub fn new(mean: f64, sd: Option<f64>) -> Result<OrderValue, ClicksError> {
        if !(mean.is_finite() && mean > 0.0) {
            return Err(invalid(
                "economics",
                "order_value",
                mean,
                "a positive amount",
            ));
        }
        if let Some(s) = sd {
            if !(s.is_finite() && s >= 0.0) {
                return Err(invalid(
                    "economics",
                    "order_value_sd",
                    s,
                    "a spread, 0 or more",
                ));
            }
        }
        Ok(OrderValue { mean, sd })
    }

    /// Lognormal with this mean and spread (`default_cv * mean` when none).
    pub fn distribution(&self, default_cv: f64) -> Result<LogNormalParams, ClicksError> {
        let sd = self.sd.unwrap_or(default_cv * self.mean);
        LogNormalParams::from_mean_sd(self.mean, sd)
    }
}

/// What the money of a click is made of: stated explicitly, so that a
/// conversion rate of 100 % is never mistaken for a value per click.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum ValueBasis {
    /// Clicks convert at the conversion rate into orders of the order value.
    #[default]
    Orders,
    /// Every click is worth the order value (the plan's `value_per_click`);
    /// the conversion rate is 1 by construction and is not a rate.
    PerClick,
}

impl ValueBasis {
    /// True for [`ValueBasis::Orders`] (kept out of JSON, the usual case).
    pub fn is_orders(&self) -> bool {
        *self == ValueBasis::Orders
    }
}

/// A business's economics.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Economics {
    pub conversion_rate: ConversionRate,
    pub order_value: OrderValue,
    /// Gross margin in [0, 1].
    pub margin: f64,
    /// Orders (rate times order value) or a value per click.
    #[serde(skip_serializing_if = "ValueBasis::is_orders")]
    pub basis: ValueBasis,
}

impl Economics {
    /// Checks the margin (the other parts are checked by their constructors).
    pub fn new(
        conversion_rate: ConversionRate,
        order_value: OrderValue,
        margin: f64,
    ) -> Result<Economics, ClicksError> {
        check_range(
            "economics",
            "margin",
            margin,
            0.0,
            1.0,
            "gross margin: 0.4 means 40 %",
        )?;
        Ok(Economics {
            conversion_rate,
            order_value,
            margin,
            basis: ValueBasis::Orders,
        })
    }

    /// A value per click: conversion rate 1 and order value `value` (its
    /// spread then comes from `factors.order_value_cv`).
    pub fn value_per_click(value: f64, margin: f64) -> Result<Economics, ClicksError> {
        let e = Economics::new(
            ConversionRate::Fixed(1.0),
            OrderValue::new(value, None)?,
            margin,
        )?;
        Ok(Economics {
            basis: ValueBasis::PerClick,
            ..e
        })
    }

    /// Economics derived from a history's totals (the plan's
    /// `[economics] from_history = true`): with conversions, sessions and
    /// revenue, the conversion rate is conversions over sessions (as counts,
    /// so its uncertainty follows them) and the order value revenue over
    /// conversions, one click counted as one session; with revenue but no
    /// usable conversions, a value per click of revenue over clicks.
    pub fn from_history(
        clicks: f64,
        sessions: Option<f64>,
        conversions: Option<f64>,
        revenue: f64,
        order_value_spread: Option<f64>,
        margin: f64,
    ) -> Result<Economics, ClicksError> {
        match (conversions, sessions) {
            (Some(c), Some(s)) if c > 0.0 && s >= c => Economics::new(
                ConversionRate::from_counts(c, s)?,
                OrderValue::new(revenue / c, order_value_spread)?,
                margin,
            ),
            _ => {
                if clicks.is_nan() || clicks <= 0.0 {
                    return Err(invalid(
                        "economics",
                        "from_history",
                        clicks,
                        "a history with clicks in its last 12 months",
                    ));
                }
                Economics::value_per_click(revenue / clicks, margin)
            }
        }
    }

    /// Money of `clicks` at the mean conversion rate and order value.
    pub fn money_at_means(&self, clicks: f64) -> Money {
        monthly_money(
            clicks,
            self.conversion_rate.mean(),
            self.order_value.mean,
            self.margin,
        )
    }
}

/// Orders, revenue and gross profit of some clicks.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
pub struct Money {
    pub orders: f64,
    pub revenue: f64,
    pub gross_profit: f64,
}

impl std::ops::Add for Money {
    type Output = Money;
    fn add(self, o: Money) -> Money {
        Money {
            orders: self.orders + o.orders,
            revenue: self.revenue + o.revenue,
            gross_profit: self.gross_profit + o.gross_profit,
        }
    }
}

/// `orders = clicks * conversion_rate`, `revenue = orders * order_value`,
/// `gross_profit = revenue * margin`.
pub fn monthly_money(clicks: f64, conversion_rate: f64, order_value: f64, margin: f64) -> Money {
    let orders = clicks * conversion_rate;
    let revenue = orders * order_value;
    Money {
        orders,
        revenue,
        gross_profit: revenue * margin,
    }
}

/// Return on spend = incremental revenue / cost; None unless cost > 0.
pub fn return_on_spend(revenue: f64, cost: f64) -> Option<f64> {
    (cost > 0.0 && cost.is_finite() && revenue.is_finite()).then(|| revenue / cost)
}

/// ROI = (incremental gross profit - cost) / cost; None unless cost > 0.
pub fn roi(gross_profit: f64, cost: f64) -> Option<f64> {
    (cost > 0.0 && cost.is_finite() && gross_profit.is_finite())
        .then(|| (gross_profit - cost) / cost)
}

/// `volume * season * (ctr_new - ctr_old)`: negative when the position worsens.
pub fn incremental_clicks(volume: f64, season: f64, ctr_new: f64, ctr_old: f64) -> f64 {
    volume * season * (ctr_new - ctr_old)
}

/// How seasonal indices were obtained.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum SeasonalityMethod {
    /// No seasonality (all indices 1).
    Flat,
    /// Given in the plan, normalised to mean 1.
    Given,
    /// Classical multiplicative decomposition (24+ months).
    Classical,
    /// Ratio of each of the last 12 months to their mean (12 to 23 months;
    /// cruder: any trend leaks into the indices).
    RatioToMean,
}

/// Twelve monthly indices of search volume with mean 1.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Seasonality {
    /// January first.
    indices: [f64; 12],
    method: SeasonalityMethod,
}

impl Seasonality {
    /// All months alike.
    pub fn flat() -> Seasonality {
        Seasonality {
            indices: [1.0; 12],
            method: SeasonalityMethod::Flat,
        }
    }

    /// Twelve indices from January, each finite and 0 or more, not all 0;
    /// scaled to mean 1.
    pub fn from_indices(indices: &[f64]) -> Result<Seasonality, ClicksError> {
        if indices.len() != 12 {
            return Err(ClicksError::Invalid {
                origin: "plan".to_string(),
                key: "seasonality".to_string(),
                found: format!("{} values", indices.len()),
                expected: "12 monthly indices, January first".to_string(),
            });
        }
        for (i, &v) in indices.iter().enumerate() {
            let key = format!("seasonality month {}", i + 1);
            check_non_negative("plan", &key, v, "a seasonal index")?;
        }
        normalised(indices, SeasonalityMethod::Given)
            .ok_or_else(|| invalid("plan", "seasonality", 0.0, "indices that are not all 0"))
    }

    /// Indices from monthly history `values`, the first of which is in
    /// calendar month `first_month` (1 = January). 24+ months: classical
    /// decomposition; 12 to 23: ratio to the mean of the last 12 months.
    pub fn from_history(values: &[f64], first_month: u32) -> Result<Seasonality, ClicksError> {
        let short = |needed: usize| ClicksError::TooShort {
            what: "seasonality from history".to_string(),
            months: values.len(),
            needed,
            hint: "give 12 seasonal indices in the plan instead".to_string(),
        };
        if values.len() < 12 {
            return Err(short(12));
        }
        for (i, &v) in values.iter().enumerate() {
            check_non_negative("history", &format!("month {}", i + 1), v, "a monthly value")?;
        }
        let start = (first_month.max(1) as usize - 1) % 12;
        let (ratios, method) = if values.len() >= 24 {
            (
                classical_ratios(values, start),
                SeasonalityMethod::Classical,
            )
        } else {
            (ratio_to_mean(values, start), SeasonalityMethod::RatioToMean)
        };
        // The ratios fail only when a year of the history has no clicks: say
        // so (this used to ask for one more month, which would not help).
        let no_clicks = || {
            ClicksError::Invalid {
            origin: "seasonality from history".to_string(),
            key: "clicks".to_string(),
            found: "0 throughout a year of the history".to_string(),
            expected: "clicks in every year to measure a seasonal shape; give 12 seasonal indices in the plan (or seasonality = \"none\") instead".to_string(),
        }
        };
        let ratios = ratios.ok_or_else(no_clicks)?;
        normalised(&ratios, method).ok_or_else(no_clicks)
    }

    /// Index of calendar month `month` (1 = January; taken modulo 12, so 0
    /// and 12 are both December).
    pub fn index(&self, month: u32) -> f64 {
        self.indices[(month as usize + 11) % 12]
    }

    /// All twelve, January first.
    pub fn indices(&self) -> [f64; 12] {
        self.indices
    }

    pub fn method(&self) -> SeasonalityMethod {
        self.method
    }
}

/// Scales to mean 1; None when the mean is not positive.
fn normalised(v: &[f64], method: SeasonalityMethod) -> Option<Seasonality> {
    let mean = v.iter().sum::<f64>() / 12.0;
    if !(mean > 0.0 && mean.is_finite()) {
        return None;
    }
    let mut indices = [0.0; 12];
    for (out, x) in indices.iter_mut().zip(v) {
        *out = x / mean;
    }
    Some(Seasonality { indices, method })
}

/// Per calendar month (January first), the average ratio of the value to
/// its centred 2x12 moving average; None if an average is 0.
fn classical_ratios(y: &[f64], start: usize) -> Option<Vec<f64>> {
    let (mut sum, mut count) = ([0.0; 12], [0usize; 12]);
    for t in 6..y.len() - 6 {
        let ma = (0.5 * y[t - 6] + y[t - 5..=t + 5].iter().sum::<f64>() + 0.5 * y[t + 6]) / 12.0;
        if ma.is_nan() || ma <= 0.0 {
            return None;
        }
        let m = (start + t) % 12;
        sum[m] += y[t] / ma;
        count[m] += 1;
    }
    Some((0..12).map(|m| sum[m] / count[m] as f64).collect())
}

/// The last 12 months over their mean, January first; None if the mean is 0.
fn ratio_to_mean(y: &[f64], start: usize) -> Option<Vec<f64>> {
    let first = y.len() - 12;
    let mean = y[first..].iter().sum::<f64>() / 12.0;
    if mean.is_nan() || mean <= 0.0 {
        return None;
    }
    let mut out = vec![0.0; 12];
    for (t, v) in y.iter().enumerate().skip(first) {
        out[(start + t) % 12] = v / mean;
    }
    Some(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ratios_are_none_without_positive_cost() {
        assert_eq!(roi(10.0, 0.0), None);
        assert_eq!(return_on_spend(10.0, -1.0), None);
        assert_eq!(roi(30.0, 10.0), Some(2.0));
    }

    #[test]
    fn index_wraps_months() {
        let s = Seasonality::from_indices(&[
            1.0, 1.0, 1.0, 1.0, 1.0, 1.0, 1.0, 1.0, 1.0, 1.0, 1.0, 2.0,
        ])
        .unwrap();
        assert!((s.index(12) - s.index(0)).abs() < 1e-15);
        assert!(s.index(12) > s.index(1));
    }
}
