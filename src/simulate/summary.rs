//! From simulated futures to money and distributions.
//!
//! Each future's clicks become revenue (clicks x conversion rate x order
//! value of that future) and gross profit (x margin). A tier's net return is
//! what it adds over the tier below: its extra gross profit minus its extra
//! cost. Two ratios, never mixed up: return on spend = incremental revenue /
//! cost; ROI = (incremental gross profit - cost) / cost.

use super::engine::Futures;
use super::model::Model;
use crate::clicks::{return_on_spend, roi, SiteDraw};
use crate::stats::{share_negative, summarise, Stats};
use rayon::prelude::*;
use serde::Serialize;

/// Revenue per click in one future.
pub fn revenue_per_click(site: &SiteDraw) -> f64 {
    site.conversion_rate * site.order_value
}

/// Distributions of one slot (a tier, or a cumulative package of tiers).
#[derive(Debug, Clone, Serialize)]
pub struct Outcome {
    /// Cost.
    pub cost: f64,
    /// Incremental clicks over the horizon.
    pub clicks: Stats,
    /// Incremental revenue.
    pub revenue: Stats,
    /// Incremental gross profit.
    pub gross_profit: Stats,
    /// Net return: gross profit minus cost.
    pub net_return: Stats,
    /// Return on spend at the means: incremental revenue / cost.
    pub return_on_spend: Option<f64>,
    /// ROI at the means: (incremental gross profit - cost) / cost.
    pub roi: Option<f64>,
    /// Share of futures where the net return is negative.
    pub chance_of_loss: f64,
}

/// One cluster tier's results.
#[derive(Debug, Clone, Serialize)]
pub struct TierResult {
    /// `cluster/tier`.
    pub id: String,
    pub cluster: String,
    /// Tier number from 1.
    pub tier: usize,
    pub label: String,
    /// What this tier adds over the tier below (at its own cost).
    #[serde(flatten)]
    pub marginal: Outcome,
    /// Funding the cluster up to and including this tier.
    pub cumulative: Outcome,
}

/// The summary `simulate` prints.
#[derive(Debug, Clone, Serialize)]
pub struct SimSummary {
    pub currency: String,
    pub scenarios: usize,
    pub seed: u64,
    pub horizon: usize,
    pub first_month: String,
    pub tiers: Vec<TierResult>,
    /// All clusters funded at their first tier.
    pub first_tiers: Outcome,
}

/// Total clicks of slot j's *marginal* part in future s.
fn marginal_clicks(f: &Futures, s: usize, j: usize) -> f64 {
    let (_, t) = f.slots[j];
    let own = f.total(s, j);
    if t == 0 {
        own
    } else {
        own - f.total(s, j - 1)
    }
}

fn outcome(clicks: Vec<f64>, sites: &[SiteDraw], margin: f64, cost: f64) -> Outcome {
    let mut revenue: Vec<f64> = clicks
        .iter()
        .zip(sites)
        .map(|(c, s)| c * revenue_per_click(s))
        .collect();
    let mut gp: Vec<f64> = revenue.iter().map(|r| r * margin).collect();
    let mut net: Vec<f64> = gp.iter().map(|g| g - cost).collect();
    let chance_of_loss = share_negative(&net);
    let mut clicks = clicks;
    let r = summarise(&mut revenue);
    let g = summarise(&mut gp);
    Outcome {
        cost,
        clicks: summarise(&mut clicks),
        return_on_spend: return_on_spend(r.mean, cost),
        roi: roi(g.mean, cost),
        revenue: r,
        gross_profit: g,
        net_return: summarise(&mut net),
        chance_of_loss,
    }
}

/// Summarises futures per tier and for the portfolio of all first tiers.
pub fn summarise_futures(model: &Model, f: &Futures, seed: u64, currency: &str) -> SimSummary {
    let margin = model.economics.margin;
    // Slots are summarised in parallel; each is independent of the others,
    // so the result does not depend on the thread count.
    let tiers: Vec<TierResult> = f
        .slots
        .par_iter()
        .enumerate()
        .map(|(j, &(c, t))| {
            let cl = &model.clusters[c];
            let cost = cl.tiers[t].cost;
            let cum_cost: f64 = cl.tiers[..=t].iter().map(|x| x.cost).sum();
            let marg: Vec<f64> = (0..f.scenarios).map(|s| marginal_clicks(f, s, j)).collect();
            let cum: Vec<f64> = (0..f.scenarios).map(|s| f.total(s, j)).collect();
            TierResult {
                id: model.slot_id(c, t),
                cluster: cl.name.clone(),
                tier: t + 1,
                label: cl.tiers[t].label.clone(),
                marginal: outcome(marg, &f.site, margin, cost),
                cumulative: outcome(cum, &f.site, margin, cum_cost),
            }
        })
        .collect();
    let firsts: Vec<usize> = f
        .slots
        .iter()
        .enumerate()
        .filter(|(_, s)| s.1 == 0)
        .map(|(j, _)| j)
        .collect();
    let first_cost: f64 = model
        .clusters
        .iter()
        .filter_map(|c| c.tiers.first())
        .map(|t| t.cost)
        .sum();
    let port: Vec<f64> = (0..f.scenarios)
        .map(|s| firsts.iter().map(|&j| f.total(s, j)).sum())
        .collect();
    SimSummary {
        currency: currency.to_string(),
        scenarios: f.scenarios,
        seed,
        horizon: f.horizon,
        first_month: model
            .months
            .first()
            .map(|m| m.to_string())
            .unwrap_or_default(),
        tiers,
        first_tiers: outcome(port, &f.site, margin, first_cost),
    }
}

/// The net-return matrix for the allocation: `S x slots`, scenario-major,
/// each slot's marginal gross profit minus its cost.
pub fn net_returns(model: &Model, f: &Futures) -> Vec<f32> {
    let costs = slot_costs(model, f);
    let n = f.slots.len();
    let mut out = vec![0f32; f.scenarios * n];
    // Futures in parallel (each row on its own: any thread count gives the
    // same bits).
    out.par_chunks_mut(n.max(1))
        .take(f.scenarios)
        .enumerate()
        .for_each(|(s, row)| {
            let v = profit_per_click(model, f, s);
            for (j, r) in row.iter_mut().enumerate() {
                *r = net_return(f, s, j, v, costs[j]);
            }
        });
    out
}

/// Each slot's own cost (not cumulative), in slot order.
pub(crate) fn slot_costs(model: &Model, f: &Futures) -> Vec<f64> {
    f.slots
        .iter()
        .map(|&(c, t)| model.clusters[c].tiers[t].cost)
        .collect()
}

/// Gross profit per incremental click in future `s`.
pub(crate) fn profit_per_click(model: &Model, f: &Futures, s: usize) -> f64 {
    revenue_per_click(&f.site[s]) * model.economics.margin
}

/// Entry `(s, j)` of [`net_returns`], given future `s`'s profit per click
/// `v` and slot `j`'s cost.
#[inline]
pub(crate) fn net_return(f: &Futures, s: usize, j: usize, v: f64, cost: f64) -> f32 {
    (marginal_clicks(f, s, j) * v - cost) as f32
}

fn stat_cols(s: &Stats) -> [String; 4] {
    use crate::output::num;
    [num(s.mean), num(s.p10), num(s.p50), num(s.p90)]
}

impl crate::output::Render for SimSummary {
    fn table(&self) -> String {
        use crate::text::{int, pct, ratio, table, Align::*};
        let cur = &self.currency;
        let mut out = format!(
            "Monte Carlo: {} futures (seed {}), {} months from {}. Each row is what the tier adds over the tier below; \"mean\" is the mean over futures, which can differ from the median case (every factor at its median) that `estimate` shows beside it.\n\n",
            int(self.scenarios as f64), self.seed, self.horizon, self.first_month
        );
        let mut rows: Vec<Vec<String>> = self
            .tiers
            .iter()
            .map(|r| {
                let m = &r.marginal;
                vec![
                    r.id.clone(),
                    int(m.cost),
                    int(m.clicks.mean),
                    int(m.revenue.mean),
                    int(m.net_return.mean),
                    int(m.net_return.p10),
                    int(m.net_return.p90),
                    ratio(m.roi),
                    pct(m.chance_of_loss, 0),
                ]
            })
            .collect();
        let p = &self.first_tiers;
        rows.push(vec![
            "all first tiers".into(),
            int(p.cost),
            int(p.clicks.mean),
            int(p.revenue.mean),
            int(p.net_return.mean),
            int(p.net_return.p10),
            int(p.net_return.p90),
            ratio(p.roi),
            pct(p.chance_of_loss, 0),
        ]);
        // Money without the currency in the cells, and the clicks' P10 and
        // P90 left to the CSV and JSON, so the table keeps within 100
        // columns.
        out += &format!("Amounts in {cur}.\n");
        out += &table(
            &[
                "cluster/tier",
                "cost",
                "clicks",
                "revenue",
                "net mean",
                "net P10",
                "net P90",
                "ROI",
                "loss chance",
            ],
            &[Left, Right, Right, Right, Right, Right, Right, Right, Right],
            &rows,
        );
        out += "\nClicks, revenue and net mean are means over the futures; net return = incremental gross profit - cost; ROI = (mean incremental gross profit - cost) / cost; loss chance = share of futures with a negative net return. The clicks' P10 and P90 are in the CSV and JSON.\n";
        out
    }

    fn rows(&self) -> crate::output::Rows {
        use crate::output::{num, opt};
        let mut header: Vec<String> = vec![
            "id".into(),
            "cluster".into(),
            "tier".into(),
            "label".into(),
            "cost".into(),
        ];
        for m in ["clicks", "revenue", "net_return"] {
            for q in ["mean", "p10", "p50", "p90"] {
                header.push(format!("{m}_{q}"));
            }
        }
        header.extend(["return_on_spend", "roi", "chance_of_loss"].map(String::from));
        let line = |id: &str, cluster: &str, tier: String, label: &str, o: &Outcome| {
            let mut v = vec![
                id.to_string(),
                cluster.to_string(),
                tier,
                label.to_string(),
                num(o.cost),
            ];
            for s in [&o.clicks, &o.revenue, &o.net_return] {
                v.extend(stat_cols(s));
            }
            v.extend([opt(o.return_on_spend), opt(o.roi), num(o.chance_of_loss)]);
            v
        };
        let mut rows: Vec<Vec<String>> = self
            .tiers
            .iter()
            .map(|r| line(&r.id, &r.cluster, r.tier.to_string(), &r.label, &r.marginal))
            .collect();
        rows.push(line(
            "all-first-tiers",
            "",
            String::new(),
            "portfolio of every cluster's first tier",
            &self.first_tiers,
        ));
        crate::output::Rows { header, rows }
    }
}
