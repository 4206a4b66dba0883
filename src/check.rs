//! `furrow check`: load everything, summarise what was read, list warnings.
//!
//! The summary is what a user needs to trust the inputs before a run: how
//! much history, how many keywords and how much search volume per cluster,
//! how much of it is not ranking or branded, and what the tool will not be
//! able to do with this data.

use crate::inputs::load::Inputs;
use crate::text::{int, money, pct, table, Align};
use serde::Serialize;

/// One cluster's line in the summary.
#[derive(Debug, Clone, Serialize)]
pub struct ClusterSummary {
    pub name: String,
    pub keywords: usize,
    pub volume: f64,
    pub not_ranking_share: f64,
    pub branded_share: f64,
    pub tiers: usize,
    pub cost_all_tiers: f64,
}

/// What `check` found.
#[derive(Debug, Clone, Serialize)]
pub struct Summary {
    pub plan: String,
    pub history_months: usize,
    pub history_first: String,
    pub history_last: String,
    pub clicks_last_12: f64,
    pub interest_months: Option<usize>,
    pub queries: Option<usize>,
    pub actual_months: Option<usize>,
    pub keywords: usize,
    pub total_volume: f64,
    pub not_ranking_share: f64,
    pub branded_share: f64,
    pub forecast_first: String,
    pub forecast_last: String,
    pub currency: String,
    pub budget: f64,
    pub tail_level: f64,
    pub max_tail_loss: Option<f64>,
    pub clusters: Vec<ClusterSummary>,
    pub warnings: Vec<String>,
    /// The number format each CSV file was read with (plan key, file,
    /// format). Kept out of the report's JSON, which predates it.
    #[serde(skip)]
    pub numbers: Vec<(String, String, crate::inputs::number::NumberFormat)>,
    /// The history's revenue per click beside the plan's (when the history
    /// has revenue).
    pub revenue_per_click: Option<RevenuePerClick>,
}

/// Share by which the plan's revenue per click may differ from the
/// history's before `check` warns: 25 % (common practice, no source).
pub const REVENUE_PER_CLICK_TOLERANCE: f64 = 0.25;

/// Totals of the last (up to) 12 months of the history.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct HistoryTotals {
    /// Months summed (12, or fewer in a shorter history).
    pub months: usize,
    pub clicks: f64,
    /// None when the column is absent or has a blank in the window.
    pub sessions: Option<f64>,
    pub conversions: Option<f64>,
    pub revenue: Option<f64>,
}

/// Sums the last 12 months of the history's clicks, sessions, conversions
/// and revenue.
pub fn history_totals(inp: &Inputs) -> HistoryTotals {
    let sum = |name: &str| -> Option<f64> {
        let v = inp.history.get(name)?;
        let tail = &v[v.len().saturating_sub(12)..];
        if tail.is_empty() || tail.iter().any(|x| !x.is_finite()) {
            return None;
        }
        Some(tail.iter().sum())
    };
    HistoryTotals {
        months: inp.history.len().min(12),
        clicks: sum("clicks").unwrap_or(0.0),
        sessions: sum("sessions"),
        conversions: sum("conversions"),
        revenue: sum("revenue"),
    }
}

/// The history's revenue per click against the one the plan's economics
/// imply (conversion rate times order value, at their means).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct RevenuePerClick {
    /// Months of history compared (the last 12, or fewer).
    pub months: usize,
    /// Revenue over clicks in those months.
    pub history: f64,
    /// Conversion rate times order value of the plan (at the means).
    pub plan: f64,
    /// `plan / history - 1`.
    pub difference: f64,
    /// Warn beyond this share.
    pub tolerance: f64,
}

impl RevenuePerClick {
    /// True when the two differ by more than the tolerance.
    pub fn differs(&self) -> bool {
        self.difference.abs() > self.tolerance
    }

    /// The warning `check` prints when they differ.
    pub fn warning(&self, currency: &str) -> String {
        format!(
            "the plan's economics imply {} of revenue per click, the history's last {} months {} ({} {}): check conversion_rate and order_value in [economics], or set from_history = true there to use the history's",
            per_click(self.plan, currency),
            self.months,
            per_click(self.history, currency),
            if self.difference > 0.0 { "the plan is higher by" } else { "the plan is lower by" },
            pct(self.difference.abs(), 0),
        )
    }
}

/// Compares the history's revenue per click with the plan's, when the
/// history has revenue and the plan's economics can be read.
pub fn revenue_per_click(inp: &Inputs) -> Option<RevenuePerClick> {
    let t = history_totals(inp);
    let revenue = t.revenue?;
    if t.clicks <= 0.0 {
        return None;
    }
    let e = crate::simulate::model::economics(inp).ok()?;
    let plan = e.conversion_rate.mean() * e.order_value.mean;
    let history = revenue / t.clicks;
    if !(history > 0.0 && plan.is_finite()) {
        return None;
    }
    Some(RevenuePerClick {
        months: t.months,
        history,
        plan,
        difference: plan / history - 1.0,
        tolerance: REVENUE_PER_CLICK_TOLERANCE,
    })
}

/// Reads every model file the plan uses (click-through curves, rank-gain
/// constants, the stress presets a report runs) and the economics, so that
/// `check` finds a broken model file instead of a run halfway through.
pub fn models(inp: &Inputs) -> crate::error::Result<()> {
    crate::simulate::prepare(inp)?;
    let names: Vec<String> = match &inp.plan.file.models.stress {
        Some(list) => list.clone(),
        None => crate::stress::PRESET_NAMES
            .iter()
            .map(|n| n.to_string())
            .collect(),
    };
    for name in names {
        let text = crate::model_files::find(&inp.plan, "stress", &name)?;
        crate::stress::StressPreset::from_toml_str(&text.text, &text.origin)?;
    }
    Ok(())
}

/// Summarises loaded inputs.
pub fn summarise(inp: &Inputs) -> Summary {
    let kws = &inp.keywords.keywords;
    let total_volume: f64 = kws.iter().map(|k| k.volume).sum();
    let share = |f: &dyn Fn(&crate::inputs::keywords::Keyword) -> bool| {
        if kws.is_empty() {
            0.0
        } else {
            kws.iter().filter(|k| f(k)).count() as f64 / kws.len() as f64
        }
    };
    let clicks = inp.history.get("clicks").unwrap_or(&[]);
    let last12: f64 = clicks.iter().rev().take(12).sum();
    let rpc = revenue_per_click(inp);
    let mut warnings = inp.warnings.clone();
    if let Some(r) = rpc.filter(RevenuePerClick::differs) {
        warnings.push(r.warning(&inp.plan.currency));
    }
    Summary {
        plan: inp.plan.name.clone(),
        history_months: inp.history.len(),
        history_first: inp
            .history
            .first()
            .map(|m| m.to_string())
            .unwrap_or_default(),
        history_last: inp
            .history
            .last()
            .map(|m| m.to_string())
            .unwrap_or_default(),
        clicks_last_12: last12,
        interest_months: inp.interest.as_ref().map(|i| i.len()),
        queries: inp.queries.as_ref().map(Vec::len),
        actual_months: inp.actuals.as_ref().map(|a| a.len()),
        keywords: kws.len(),
        total_volume,
        not_ranking_share: share(&|k| k.position.is_none()),
        branded_share: share(&|k| k.branded),
        forecast_first: inp.start.to_string(),
        forecast_last: inp.start.plus(inp.plan.horizon as i32 - 1).to_string(),
        currency: inp.plan.currency.clone(),
        budget: inp.plan.budget,
        tail_level: inp.plan.tail_level,
        max_tail_loss: inp.plan.max_tail_loss,
        clusters: cluster_summaries(inp),
        warnings,
        numbers: inp.numbers.clone(),
        revenue_per_click: rpc,
    }
}

fn cluster_summaries(inp: &Inputs) -> Vec<ClusterSummary> {
    let grouped = inp.keywords.grouped();
    inp.clusters
        .iter()
        .map(|c| {
            let ks: &[_] = grouped.get(c.name.as_str()).map_or(&[], Vec::as_slice);
            let n = ks.len().max(1) as f64;
            ClusterSummary {
                name: c.name.clone(),
                keywords: ks.len(),
                volume: ks.iter().map(|k| k.volume).sum(),
                not_ranking_share: ks.iter().filter(|k| k.position.is_none()).count() as f64 / n,
                branded_share: ks.iter().filter(|k| k.branded).count() as f64 / n,
                tiers: c.tiers.len(),
                cost_all_tiers: c.tiers.iter().map(|t| t.cost).sum(),
            }
        })
        .collect()
}

/// The summary as text for the terminal.
pub fn render(s: &Summary) -> String {
    let found = match s.warnings.len() {
        0 => "no problems found".to_string(),
        1 => "1 warning (listed at the end)".to_string(),
        n => format!("{n} warnings (listed at the end)"),
    };
    let mut out = format!("Plan '{}': inputs read, {found}.\n\n", s.plan);
    out += &format!(
        "History: {} months, {} to {}; clicks in the last 12 months: {}\n",
        s.history_months,
        s.history_first,
        s.history_last,
        int(s.clicks_last_12)
    );
    if let Some(n) = s.interest_months {
        out += &format!("Search-interest index: {n} months\n");
    }
    if let Some(n) = s.queries {
        out += &format!("Query export: {n} queries\n");
    }
    if let Some(n) = s.actual_months {
        out += &format!("Actuals: {n} months observed\n");
    }
    out += &format!(
        "Keywords: {} in the list, total monthly search volume {}; not ranking {}; branded {}\n",
        int(s.keywords as f64),
        int(s.total_volume),
        pct(s.not_ranking_share, 1),
        pct(s.branded_share, 1)
    );
    out += &revenue_line(s);
    out += &format!("Forecast: {} to {}\n", s.forecast_first, s.forecast_last);
    let limit = s
        .max_tail_loss
        .map(|v| money(v, &s.currency))
        .unwrap_or_else(|| "none".into());
    out += &format!(
        "Budget: {}; tail level {} (the worst {} of futures); largest tolerated average tail loss: {limit}\n\n",
        money(s.budget, &s.currency),
        crate::text::tail_level(s.tail_level),
        crate::text::tail_share(s.tail_level)
    );
    out += &cluster_table(s);
    if !s.warnings.is_empty() {
        out += "\nWarnings:\n";
        for w in &s.warnings {
            out += &format!("  - {w}\n");
        }
    }
    out
}

/// One line per CSV file read: the number convention it was read with
/// (decimal mark, grouping marks, and what settled them). `furrow check`
/// prints these after the summary; the report's summary.txt, whose paths
/// are the report's own, does not.
pub fn render_numbers(s: &Summary) -> String {
    let mut out = String::new();
    if s.numbers.is_empty() {
        return out;
    }
    out += "\nNumber formats read:\n";
    for (key, file, format) in &s.numbers {
        out += &format!("  {key}, {file}: {format}\n");
    }
    out
}

/// An amount per click, to the cent: `EUR 2.40`.
fn per_click(v: f64, currency: &str) -> String {
    if !v.is_finite() {
        return "n/a".into();
    }
    format!("{currency} {}", crate::text::number(v, 2))
}

/// The history's revenue per click beside the plan's, when known.
fn revenue_line(s: &Summary) -> String {
    let Some(r) = &s.revenue_per_click else {
        return String::new();
    };
    format!(
        "Revenue per click: history {} (last {} months), plan's economics {} ({}{}; warn beyond {})\n",
        per_click(r.history, &s.currency),
        r.months,
        per_click(r.plan, &s.currency),
        if r.difference >= 0.0 { "+" } else { "-" },
        pct(r.difference.abs(), 0),
        pct(r.tolerance, 0)
    )
}

fn cluster_table(s: &Summary) -> String {
    let rows: Vec<Vec<String>> = s
        .clusters
        .iter()
        .map(|c| {
            vec![
                c.name.clone(),
                int(c.keywords as f64),
                int(c.volume),
                pct(c.not_ranking_share, 0),
                pct(c.branded_share, 0),
                c.tiers.to_string(),
                money(c.cost_all_tiers, &s.currency),
            ]
        })
        .collect();
    use Align::*;
    table(
        &[
            "cluster",
            "keywords",
            "monthly volume",
            "not ranking",
            "branded",
            "tiers",
            "cost of all tiers",
        ],
        &[Left, Right, Right, Right, Right, Right, Right],
        &rows,
    )
}
