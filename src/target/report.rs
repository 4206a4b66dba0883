//! Doing nothing, the chosen plan and the unconstrained best plan side by
//! side against the target: the table `report` and `stress` show.

use super::odds::{odds, Odds};
use super::totals::{check_fractions, cluster_volumes, funded_volume, horizon_totals, uplift};
use super::{Metric, Target, TargetError};
use crate::simulate::{Futures, Model};
use serde::Serialize;

/// The stated assumptions of every target report.
pub const ASSUMPTIONS: &[&str] = &[
    "Baseline revenue = baseline clicks x the revenue per click of the same future (existing organic clicks convert like the incremental ones).",
    "Extra search volume is assumed to be worked at the plan's own average uplift per unit of monthly volume, in the same futures.",
];

/// One plan's odds.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PlanOdds {
    /// "do nothing", "chosen plan" or "best expected return".
    pub plan: String,
    /// What the plan spends.
    pub spend: f64,
    /// Monthly search volume of the funded clusters' keywords, weighted by
    /// their first tier's funded fraction.
    pub funded_volume: f64,
    /// Whose keywords the uplift per unit of volume comes from.
    pub uplift_basis: String,
    /// Average monthly volume of one funded cluster (the uplift basis).
    pub average_cluster_volume: Option<f64>,
    /// `volume_for_50` in clusters of that average volume.
    pub clusters_for_50: Option<f64>,
    /// `volume_for_80` in clusters of that average volume.
    pub clusters_for_80: Option<f64>,
    #[serde(flatten)]
    pub odds: Odds,
}

/// The target report: three plans side by side.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TargetReport {
    pub metric: Metric,
    /// The target total over the horizon.
    pub target: f64,
    /// How the target was set.
    pub basis: String,
    pub currency: String,
    pub scenarios: usize,
    pub horizon: usize,
    pub do_nothing: PlanOdds,
    pub chosen: PlanOdds,
    pub best: PlanOdds,
    pub assumptions: Vec<String>,
}

/// The spend of funded fractions.
pub fn spend(model: &Model, futures: &Futures, fractions: &[f64]) -> f64 {
    futures
        .slots
        .iter()
        .zip(fractions)
        .map(|(&(c, t), &x)| {
            let cost = model
                .clusters
                .get(c)
                .and_then(|cl| cl.tiers.get(t))
                .map(|tier| tier.cost)
                .unwrap_or(0.0);
            x.clamp(0.0, 1.0) * cost
        })
        .sum()
}

/// Every cluster's first tier fully funded: the reference mix for the
/// uplift of a plan that funds no volume.
pub fn first_tiers(futures: &Futures) -> Vec<f64> {
    futures
        .slots
        .iter()
        .map(|&(_, t)| if t == 0 { 1.0 } else { 0.0 })
        .collect()
}

/// Inputs shared by the three columns.
struct Ctx<'a> {
    target: &'a Target,
    model: &'a Model,
    futures: &'a Futures,
    baseline: &'a [f64],
    volumes: Vec<f64>,
}

fn plan_odds(ctx: &Ctx, name: &str, fractions: &[f64]) -> Result<PlanOdds, TargetError> {
    let f = ctx.futures;
    let metric = ctx.target.metric;
    let totals = horizon_totals(f, ctx.baseline, fractions, metric)?;
    let own = funded_volume(f, fractions, &ctx.volumes);
    let (basis_x, basis) = if own > 0.0 {
        (fractions.to_vec(), "the plan's funded clusters")
    } else {
        (
            first_tiers(f),
            "every cluster's first tier (the plan funds none)",
        )
    };
    let up = uplift(f, &basis_x, &ctx.volumes, metric)?;
    let o = odds(
        &totals,
        ctx.target.amount,
        up.as_ref().map(|u| u.0.as_slice()),
    );
    let n_funded: f64 = f
        .slots
        .iter()
        .zip(&basis_x)
        .filter(|((_, t), _)| *t == 0)
        .map(|(_, x)| x.clamp(0.0, 1.0))
        .sum();
    let avg = up
        .as_ref()
        .map(|u| u.1 / n_funded)
        .filter(|a| a.is_finite() && *a > 0.0);
    let per = |v: Option<f64>| v.zip(avg).map(|(v, a)| v / a);
    Ok(PlanOdds {
        plan: name.to_string(),
        spend: spend(ctx.model, f, fractions),
        funded_volume: own,
        uplift_basis: basis.to_string(),
        average_cluster_volume: avg,
        clusters_for_50: per(o.volume_for_50),
        clusters_for_80: per(o.volume_for_80),
        odds: o,
    })
}

/// Target odds of doing nothing, of the `chosen` allocation and of the
/// unconstrained `best` expected-return allocation (funded fractions per
/// slot), with `baseline` paths (`S × horizon` clicks, path s with future s).
pub fn compare(
    target: &Target,
    model: &Model,
    futures: &Futures,
    baseline: &[f64],
    chosen: &[f64],
    best: &[f64],
    currency: &str,
) -> Result<TargetReport, TargetError> {
    check_fractions(futures, chosen)?;
    check_fractions(futures, best)?;
    super::totals::check_model(model, futures)?;
    let ctx = Ctx {
        target,
        model,
        futures,
        baseline,
        volumes: cluster_volumes(model),
    };
    let zero = vec![0.0; futures.slots.len()];
    Ok(TargetReport {
        metric: target.metric,
        target: target.amount,
        basis: target.basis.clone(),
        currency: currency.to_string(),
        scenarios: futures.scenarios,
        horizon: futures.horizon,
        do_nothing: plan_odds(&ctx, "do nothing", &zero)?,
        chosen: plan_odds(&ctx, "chosen plan", chosen)?,
        best: plan_odds(&ctx, "best expected return", best)?,
        assumptions: ASSUMPTIONS.iter().map(|s| s.to_string()).collect(),
    })
}

impl TargetReport {
    fn columns(&self) -> [&PlanOdds; 3] {
        [&self.do_nothing, &self.chosen, &self.best]
    }

    fn amount(&self, v: f64) -> String {
        match self.metric {
            Metric::Clicks => crate::text::int(v),
            Metric::Revenue => crate::text::money(v, &self.currency),
        }
    }
}

fn opt_text(v: Option<f64>, f: impl Fn(f64) -> String) -> String {
    v.map(f).unwrap_or_else(|| "n/a".into())
}

impl crate::output::Render for TargetReport {
    fn table(&self) -> String {
        use crate::text::{int, money, table, Align::*};
        let cols = self.columns();
        let row = |label: &str, f: &dyn Fn(&PlanOdds) -> String| {
            let mut r = vec![label.to_string()];
            r.extend(cols.iter().map(|c| f(c)));
            r
        };
        let rows = vec![
            row("spend", &|c| money(c.spend, &self.currency)),
            row("chance of reaching the target", &|c| {
                crate::text::chance(c.odds.chance, 0)
            }),
            row("total, mean", &|c| self.amount(c.odds.total.mean)),
            row("total, P10", &|c| self.amount(c.odds.total.p10)),
            row("total, P90", &|c| self.amount(c.odds.total.p90)),
            row("median shortfall", &|c| self.amount(c.odds.shortfall_p50)),
            row("shortfall in the P10 future", &|c| {
                self.amount(c.odds.shortfall_p10)
            }),
            row("more monthly volume for 50 %", &|c| {
                opt_text(c.odds.volume_for_50, int)
            }),
            row("more monthly volume for 80 %", &|c| {
                opt_text(c.odds.volume_for_80, int)
            }),
            row("  in average clusters (80 %)", &|c| {
                opt_text(c.clusters_for_80, |v| format!("{v:.1}"))
            }),
        ];
        let mut out = format!(
            "Target: {} {} over {} months ({}); {} futures.\n\n",
            self.amount(self.target),
            self.metric.name(),
            self.horizon,
            self.basis,
            int(self.scenarios as f64)
        );
        out += &table(
            &["", "do nothing", "chosen plan", "best expected return"],
            &[Left, Right, Right, Right],
            &rows,
        );
        out += "\nShortfall = max(0, target - total). Volume: extra monthly search volume worked at the plan's average uplift (n/a: not reachable that way).\n";
        for a in &self.assumptions {
            out += &format!("Assumption: {a}\n");
        }
        out
    }

    fn rows(&self) -> crate::output::Rows {
        use crate::output::{num, opt};
        let header = [
            "plan",
            "metric",
            "target",
            "spend",
            "chance",
            "total_mean",
            "total_p10",
            "total_p50",
            "total_p90",
            "shortfall_mean",
            "shortfall_p50",
            "shortfall_p10",
            "uplift_per_volume",
            "volume_for_50",
            "volume_for_80",
            "clusters_for_50",
            "clusters_for_80",
        ]
        .map(String::from)
        .to_vec();
        let rows = self
            .columns()
            .iter()
            .map(|c| {
                let o = &c.odds;
                vec![
                    c.plan.clone(),
                    self.metric.name().to_string(),
                    num(self.target),
                    num(c.spend),
                    num(o.chance),
                    num(o.total.mean),
                    num(o.total.p10),
                    num(o.total.p50),
                    num(o.total.p90),
                    num(o.shortfall_mean),
                    num(o.shortfall_p50),
                    num(o.shortfall_p10),
                    opt(o.uplift_per_volume),
                    opt(o.volume_for_50),
                    opt(o.volume_for_80),
                    opt(c.clusters_for_50),
                    opt(c.clusters_for_80),
                ]
            })
            .collect();
        crate::output::Rows { header, rows }
    }
}
