//! `furrow estimate`: the central estimate with no randomness, the
//! single-number version a spreadsheet gives, beside the mean over a modest
//! seeded Monte Carlo of the same model.
//!
//! The two answer different questions and may even differ in sign: the
//! "median case" sets every factor at its centre, while the "mean over
//! futures" averages the money over futures whose gains are skewed (most
//! keywords gain little, a few gain a lot), so the mean sits above the
//! median case when the upside is long. `simulate` shows the mean over
//! futures; [`attach_futures`] takes the same simulation summary, so for the
//! same seed and number of futures the two commands print the same mean.
//!
//! Every keyword gets its median log-position gain (no keyword luck, cluster
//! execution as planned), weighted by its chance of gaining anything; explicit
//! gain distributions give their median; site-wide factors sit at their means
//! (click-through erosion at its mean, volume as estimated, conversion rate
//! and order value at their means). It runs the same kernel as the Monte
//! Carlo, so with every spread set to zero the simulation equals it.

use crate::clicks::{return_on_spend, roi, KeywordDraws};
use crate::simulate::kernel::{add_keyword, FutureContext, KernelScratch};
use crate::simulate::model::{Model, TierGain};
use serde::Serialize;

/// Money of some clicks.
#[derive(Debug, Clone, Copy, Serialize, Default)]
pub struct Figures {
    /// Cost.
    pub cost: f64,
    /// Incremental clicks over the horizon.
    pub clicks: f64,
    /// Incremental orders (conversions).
    pub orders: f64,
    /// Incremental revenue.
    pub revenue: f64,
    /// Incremental gross profit.
    pub gross_profit: f64,
    /// Gross profit minus cost.
    pub net_return: f64,
    /// Incremental revenue / cost.
    pub return_on_spend: Option<f64>,
    /// (Incremental gross profit - cost) / cost.
    pub roi: Option<f64>,
}

/// One tier's central estimate.
#[derive(Debug, Clone, Serialize)]
pub struct EstimateRow {
    pub id: String,
    pub cluster: String,
    pub tier: usize,
    pub label: String,
    /// What this tier adds over the tier below, per forecast month.
    pub monthly_clicks: Vec<f64>,
    /// What this tier adds over the tier below.
    #[serde(flatten)]
    pub marginal: Figures,
    /// Funding the cluster up to and including this tier.
    pub cumulative: Figures,
    /// What this tier adds, averaged over the simulated futures (none when
    /// no simulation was attached).
    pub mean_over_futures: Option<MeanOverFutures>,
}

/// A tier's marginal figures averaged over simulated futures.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct MeanOverFutures {
    pub clicks: f64,
    pub revenue: f64,
    pub gross_profit: f64,
    pub net_return: f64,
    /// Share of futures where the tier's net return is negative.
    pub chance_of_loss: f64,
}

/// What the two kinds of figure are, stated in every output.
pub const MEDIAN_CASE: &str = "median case: every factor at its median (median gain per keyword weighted by its chance of gaining, site factors at their means)";
/// See [`MEDIAN_CASE`].
pub const MEAN_OVER_FUTURES: &str = "mean over futures: the average over simulated futures, as `simulate` prints it; above the median case when gains are skewed to the upside";

/// Futures `estimate` simulates unless told otherwise: enough for a mean
/// within a few percent on the demo, quick to run (common practice, no
/// source).
pub const DEFAULT_FUTURES: usize = 1_000;

/// The simulation behind the mean-over-futures figures.
#[derive(Debug, Clone, Serialize)]
pub struct FuturesInfo {
    pub futures: usize,
    pub seed: u64,
    pub label: String,
}

/// The estimate for every tier.
#[derive(Debug, Clone, Serialize)]
pub struct Estimate {
    pub currency: String,
    pub months: Vec<String>,
    pub conversion_rate: f64,
    pub order_value: f64,
    pub gross_margin: f64,
    /// What the row figures (`clicks`, `net_return`, ...) are.
    pub median_case: String,
    /// The simulation behind `mean_over_futures`, when one was run.
    pub mean_over_futures: Option<FuturesInfo>,
    pub rows: Vec<EstimateRow>,
}

/// Adds each tier's mean over the simulated futures from `simulate`'s own
/// summary of them.
pub fn attach_futures(est: &mut Estimate, sim: &crate::simulate::SimSummary) {
    for (row, t) in est.rows.iter_mut().zip(&sim.tiers) {
        if row.id != t.id {
            continue;
        }
        let m = &t.marginal;
        row.mean_over_futures = Some(MeanOverFutures {
            clicks: m.clicks.mean,
            revenue: m.revenue.mean,
            gross_profit: m.gross_profit.mean,
            net_return: m.net_return.mean,
            chance_of_loss: m.chance_of_loss,
        });
    }
    est.mean_over_futures = Some(FuturesInfo {
        futures: sim.scenarios,
        seed: sim.seed,
        label: MEAN_OVER_FUTURES.to_string(),
    });
}

/// The central draws: median gain, gains for sure (weighted later), median timing.
pub const CENTRAL_DRAWS: KeywordDraws = KeywordDraws {
    z_gain: 0.0,
    u_no_gain: 1.0,
    z_time: 0.0,
    u_explicit: 0.5,
};

/// Cumulative-tier monthly clicks per cluster (`tiers x horizon`), central.
pub fn central_clicks(model: &Model) -> Vec<Vec<f64>> {
    let h = model.horizon();
    let ctx = FutureContext::calm(h);
    let site = model.factors.expected_site(&model.economics);
    let scale = site.ctr_factor * site.volume_factor;
    let mut scratch = KernelScratch::new(h);
    model
        .clusters
        .iter()
        .map(|c| {
            let nt = c.n_tiers();
            let mut acc = vec![0.0; nt * h];
            let mut one = vec![0.0; nt * h];
            for (k, kw) in c.keywords.iter().enumerate() {
                one.fill(0.0);
                add_keyword(
                    model,
                    c,
                    k,
                    &CENTRAL_DRAWS,
                    1.0,
                    &ctx,
                    &mut scratch,
                    &mut one,
                );
                for t in 0..nt {
                    let w = match c.gains[t] {
                        TierGain::Model { .. } => 1.0 - kw.no_gain,
                        TierGain::Explicit(_) => 1.0,
                    };
                    for m in 0..h {
                        acc[t * h + m] += w * one[t * h + m];
                    }
                }
            }
            acc.iter_mut().for_each(|v| *v *= scale);
            acc
        })
        .collect()
}

fn figures(clicks: f64, cost: f64, rate: f64, aov: f64, margin: f64) -> Figures {
    let orders = clicks * rate;
    let revenue = orders * aov;
    let gross_profit = revenue * margin;
    Figures {
        cost,
        clicks,
        orders,
        revenue,
        gross_profit,
        net_return: gross_profit - cost,
        return_on_spend: return_on_spend(revenue, cost),
        roi: roi(gross_profit, cost),
    }
}

/// Computes the central estimate.
pub fn estimate(model: &Model, currency: &str) -> Estimate {
    let h = model.horizon();
    let site = model.factors.expected_site(&model.economics);
    let (rate, aov, margin) = (
        site.conversion_rate,
        site.order_value,
        model.economics.margin,
    );
    let per_cluster = central_clicks(model);
    let mut rows = Vec::new();
    for (c, (cl, acc)) in model.clusters.iter().zip(&per_cluster).enumerate() {
        let mut cum_cost = 0.0;
        for t in 0..cl.n_tiers() {
            let cost = cl.tiers[t].cost;
            cum_cost += cost;
            let monthly: Vec<f64> = (0..h)
                .map(|m| acc[t * h + m] - if t > 0 { acc[(t - 1) * h + m] } else { 0.0 })
                .collect();
            let cum_total: f64 = acc[t * h..(t + 1) * h].iter().sum();
            rows.push(EstimateRow {
                id: model.slot_id(c, t),
                cluster: cl.name.clone(),
                tier: t + 1,
                label: cl.tiers[t].label.clone(),
                marginal: figures(monthly.iter().sum(), cost, rate, aov, margin),
                cumulative: figures(cum_total, cum_cost, rate, aov, margin),
                mean_over_futures: None,
                monthly_clicks: monthly,
            });
        }
    }
    Estimate {
        currency: currency.to_string(),
        months: model.months.iter().map(|m| m.to_string()).collect(),
        conversion_rate: rate,
        order_value: aov,
        gross_margin: margin,
        median_case: MEDIAN_CASE.to_string(),
        mean_over_futures: None,
        rows,
    }
}

impl crate::output::Render for Estimate {
    fn table(&self) -> String {
        use crate::text::{int, money, pct, ratio, table, Align::*};
        let cur = &self.currency;
        let mut out = format!(
            "Estimate, {} to {}: median case (every factor at its median; median gain per keyword weighted by its chance of gaining; conversion rate {}, order value {}, gross margin {})\n",
            self.months.first().map(String::as_str).unwrap_or(""),
            self.months.last().map(String::as_str).unwrap_or(""),
            pct(self.conversion_rate, 2),
            money(self.order_value, cur),
            pct(self.gross_margin, 0)
        );
        out += &match &self.mean_over_futures {
            Some(f) => format!(
                "beside the mean over {} simulated futures (seed {}), as `simulate` prints it.\n\n",
                int(f.futures as f64),
                f.seed
            ),
            None => "\n".to_string(),
        };
        let rows: Vec<Vec<String>> = self
            .rows
            .iter()
            .map(|r| {
                let m = &r.marginal;
                vec![
                    r.cluster.clone(),
                    r.tier.to_string(),
                    r.label.clone(),
                    int(m.cost),
                    int(m.clicks),
                    int(m.net_return),
                    r.mean_over_futures
                        .map_or_else(|| "-".to_string(), |f| int(f.net_return)),
                    ratio(m.roi),
                    ratio(r.cumulative.roi),
                ]
            })
            .collect();
        // Money without the currency in the cells (it is named above the
        // table), so the table keeps within 100 columns.
        out += &format!("Amounts in {cur}.\n");
        out += &table(
            &[
                "cluster",
                "tier",
                "label",
                "cost",
                "clicks",
                "median net",
                "mean net",
                "ROI",
                "ROI to tier",
            ],
            &[Left, Right, Left, Right, Right, Right, Right, Right, Right],
            &rows,
        );
        out += "\nEach row is what the tier adds over the tier below, over the horizon; clicks, median net and ROI are the median case (revenue, gross profit and return on spend are in the CSV and JSON). Net = incremental gross profit - cost; ROI = net / cost; ROI to tier counts the tiers below too.\nThe median case sets every factor at its median; the mean net averages skewed futures (most keywords gain little, a few gain a lot), so the two can differ, even in sign.\n";
        out
    }

    fn rows(&self) -> crate::output::Rows {
        use crate::output::{num, opt};
        let mut header: Vec<String> = [
            "id",
            "cluster",
            "tier",
            "label",
            "cost",
            "clicks",
            "orders",
            "revenue",
            "gross_profit",
            "net_return",
            "return_on_spend",
            "roi",
            "cumulative_cost",
            "cumulative_clicks",
            "cumulative_revenue",
            "cumulative_gross_profit",
            "cumulative_roi",
            "mean_over_futures_clicks",
            "mean_over_futures_net_return",
        ]
        .iter()
        .map(|s| s.to_string())
        .collect();
        header.extend(self.months.iter().map(|m| format!("clicks_{m}")));
        let rows = self
            .rows
            .iter()
            .map(|r| {
                let (m, c) = (&r.marginal, &r.cumulative);
                let mut v = vec![
                    r.id.clone(),
                    r.cluster.clone(),
                    r.tier.to_string(),
                    r.label.clone(),
                    num(m.cost),
                    num(m.clicks),
                    num(m.orders),
                    num(m.revenue),
                    num(m.gross_profit),
                    num(m.net_return),
                    opt(m.return_on_spend),
                    opt(m.roi),
                    num(c.cost),
                    num(c.clicks),
                    num(c.revenue),
                    num(c.gross_profit),
                    opt(c.roi),
                    opt(r.mean_over_futures.map(|f| f.clicks)),
                    opt(r.mean_over_futures.map(|f| f.net_return)),
                ];
                v.extend(r.monthly_clicks.iter().map(|x| num(*x)));
                v
            })
            .collect();
        crate::output::Rows { header, rows }
    }
}
