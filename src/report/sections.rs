//! The body of each section of `index.html` after the decision: a chart
//! where one helps and the table of the same figures beside it, so the
//! page reads without the pictures (and in a screen reader).
//!
//! Table headers ending in `#` mark numeric columns (see [`table`]).

use super::html::{figure, list, para, table};
use super::risk::tail_share;
use super::svg::{chance, money, number, pct, ratio};
use super::{figures, risk, Summary};
use crate::target::Metric;

/// One table row from cells.
type Row = Vec<String>;

fn opt_chance(v: Option<f64>) -> String {
    v.map(chance).unwrap_or_else(|| "n/a".into())
}

/// A change with its sign (`+1,234`, `-56`, `0`).
fn signed(v: f64) -> String {
    let n = number(v, 0);
    if v > 0.0 && n != "0" {
        format!("+{n}")
    } else {
        n
    }
}

fn signed_pct_points(v: Option<f64>) -> String {
    match v.filter(|x| x.is_finite()) {
        Some(x) => format!("{:+.0} pts", x * 100.0),
        None => "n/a".into(),
    }
}

const TARGET_HEADER: [&str; 7] = [
    "plan",
    "spend#",
    "chance#",
    "total P10#",
    "total P50#",
    "total P90#",
    "mean shortfall#",
];

/// The target odds of the three plans (empty without a target).
pub fn target(sm: &Summary) -> String {
    let Some(t) = &sm.target else {
        return String::new();
    };
    let amount = |v: f64| match t.metric {
        Metric::Clicks => number(v, 0),
        Metric::Revenue => money(v, &t.currency),
    };
    let rows: Vec<Row> = [&t.do_nothing, &t.chosen, &t.best]
        .iter()
        .map(|p| {
            let o = &p.odds;
            let (p10, p50, p90) = (o.total.p10, o.total.p50, o.total.p90);
            let mut r = vec![p.plan.clone(), money(p.spend, &sm.currency)];
            r.push(chance(o.chance));
            r.extend([p10, p50, p90, o.shortfall_mean].map(amount));
            r
        })
        .collect();
    let caption = format!(
        "Odds of the target: {} {} over {} months ({})",
        amount(t.target),
        t.metric.name(),
        t.horizon,
        t.basis
    );
    table(&caption, &TARGET_HEADER, &rows)
}

const FORECAST_HEADER: [&str; 7] = [
    "month",
    "baseline P10#",
    "baseline P50#",
    "baseline P90#",
    "with plan P10#",
    "with plan P50#",
    "with plan P90#",
];

fn forecast_row(r: &super::ForecastRow) -> Row {
    let values = [
        r.baseline_p10,
        r.baseline_p50,
        r.baseline_p90,
        r.with_plan_p10,
        r.with_plan_p50,
        r.with_plan_p90,
    ];
    let mut row = vec![r.month.clone()];
    row.extend(values.map(|v| number(v, 0)));
    row
}

/// History, baseline and the forecast with the plan.
pub fn forecast(sm: &Summary) -> String {
    let caption = "Clicks per month. Shaded: the range from P10 to P90 (8 futures in 10 fall inside); lines: P50 (the middle future).";
    let mut s = figure(&figures::forecast(sm), caption);
    let rows: Vec<Row> = sm.forecast.iter().map(forecast_row).collect();
    s += &table("Clicks per month", &FORECAST_HEADER, &rows);
    let revenue_target = sm.target.as_ref().filter(|t| t.metric == Metric::Revenue);
    if let Some(t) = revenue_target {
        s += &para(&format!(
            "The target is in revenue ({} over {} months), so it is not drawn on this chart of clicks; its odds are in the decision above.",
            money(t.target, &t.currency),
            t.horizon
        ));
    }
    let b = &sm.baseline;
    s + &para(&format!(
        "Baseline: {} on the {} column of {} ({} months).",
        b.method, b.column, b.history_file, b.history_months
    ))
}

const ALLOCATION_HEADER: [&str; 11] = [
    "cluster",
    "tier#",
    "work",
    "cost#",
    "funded#",
    "spend#",
    "net return mean#",
    "P10#",
    "P90#",
    "ROI#",
    "chance of loss#",
];

fn tier_row(sm: &Summary, t: &crate::simulate::summary::TierResult) -> Row {
    let item = sm.allocation.allocation.iter().find(|i| i.id == t.id);
    let (fraction, spend) = item.map(|i| (i.fraction, i.spend)).unwrap_or((0.0, 0.0));
    let m = &t.marginal;
    let cur = &sm.currency;
    let mut row = vec![t.cluster.clone(), t.tier.to_string(), t.label.clone()];
    row.extend([money(m.cost, cur), pct(fraction, 0), money(spend, cur)]);
    let net = [m.net_return.mean, m.net_return.p10, m.net_return.p90];
    row.extend(net.map(|v| number(v, 0)));
    row.extend([ratio(m.roi), chance(m.chance_of_loss)]);
    row
}

/// Spend per cluster and tier, and each tier's own outcome.
pub fn allocation(sm: &Summary) -> String {
    let caption = "Filled: the spend of each tier (T1, T2, ... from the left); dashed outline: the cost of all the cluster's tiers.";
    let mut s = figure(&figures::allocation(sm), caption);
    let rows: Vec<Row> = sm.clusters.tiers.iter().map(|t| tier_row(sm, t)).collect();
    let caption = format!(
        "Each tier: what it adds over the tier below when fully funded (net return in {})",
        sm.currency
    );
    s += &table(&caption, &ALLOCATION_HEADER, &rows);
    s
}

const FRONTIER_HEADER: [&str; 5] = [
    "tail-loss limit#",
    "tail loss#",
    "value at risk#",
    "expected net return#",
    "spend#",
];

/// The frontier chart and its points.
pub fn frontier(sm: &Summary) -> String {
    let cur = &sm.currency;
    let share = tail_share(sm.allocation.tail_level);
    let caption = format!("Each point is the best expected net return for a limit on the average loss in the worst {share} of futures.");
    let mut s = figure(&risk::frontier(sm), &caption);
    let rows: Vec<Row> = sm
        .frontier
        .iter()
        .map(|p| {
            let mut row = vec![money(p.max_tail_loss, cur)];
            row.extend(
                [
                    p.tail_loss,
                    p.value_at_risk,
                    p.expected_net_return,
                    p.budget_used,
                ]
                .map(|v| v.map_or_else(|| "missing".to_string(), |v| money(v, cur))),
            );
            row
        })
        .collect();
    s += &table("Frontier points", &FRONTIER_HEADER, &rows);
    let missing: Vec<String> = sm
        .frontier
        .iter()
        .filter_map(|p| {
            let why = p.missing.as_ref()?;
            Some(format!("limit {}: {why}", money(p.max_tail_loss, cur)))
        })
        .collect();
    if !missing.is_empty() {
        s += &para(&format!(
            "Points marked missing could not be solved and are left off the chart: {}.",
            missing.join("; ")
        ));
    }
    s
}

/// The histogram of the net return.
pub fn distribution(sm: &Summary) -> String {
    let a = &sm.allocation;
    let cur = &sm.currency;
    let share = tail_share(a.tail_level);
    let caption = format!(
        "Net return of the chosen plan in each simulated future. VaR: the loss exceeded in only {share} of futures; CVaR (the tail loss the plan is limited by): the average loss in those futures."
    );
    let mut s = figure(&risk::distribution(sm), &caption);
    s += &para(&format!(
        "Chance of a loss: {}. Expected net return {}. In {share} of futures the net return is {} or less, and those futures average {}. As losses these are the value at risk ({}) and the tail loss, or CVaR ({}); a negative loss is a gain.",
        chance(a.chance_of_loss),
        money(a.expected_net_return, cur),
        money(-a.value_at_risk, cur),
        money(-a.tail_loss, cur),
        money(a.value_at_risk, cur),
        money(a.tail_loss, cur)
    ));
    s
}

const STRESS_HEADER: [&str; 9] = [
    "case",
    "what changes",
    "expected net return#",
    "change#",
    "tail loss#",
    "change#",
    "ROI#",
    "chance of target#",
    "change#",
];

fn stress_row(r: &crate::stress::StressRow, cur: &str) -> Row {
    vec![
        r.name.clone(),
        r.description.clone(),
        money(r.expected_net_return, cur),
        signed(r.change_in_net_return),
        money(r.tail_loss, cur),
        signed(r.change_in_tail_loss),
        ratio(r.roi),
        opt_chance(r.chance_of_target),
        signed_pct_points(r.change_in_chance),
    ]
}

/// The stress table and the presets' notes.
pub fn stress(sm: &Summary) -> String {
    let st = &sm.stress;
    let cases = || std::iter::once(&st.base).chain(&st.presets);
    let rows: Vec<Row> = cases().map(|r| stress_row(r, &st.currency)).collect();
    let caption = format!(
        "The chosen allocation ({} spent) under pessimistic presets, with the same random draws",
        money(st.spend, &st.currency)
    );
    let notes: Vec<String> = cases()
        .flat_map(|r| r.notes.iter().map(move |n| format!("{}: {n}", r.name)))
        .collect();
    table(&caption, &STRESS_HEADER, &rows) + &list(&notes)
}

const DRIVERS_HEADER: [&str; 6] = [
    "input",
    "group",
    "rank correlation#",
    "share of variance#",
    "bottom decile#",
    "top decile#",
];

fn driver_row(d: &crate::drivers::Driver) -> Row {
    let rho = if d.constant {
        "constant".into()
    } else {
        format!("{:+.2}", d.spearman)
    };
    vec![
        d.input.clone(),
        d.group.clone(),
        rho,
        pct(d.share, 0),
        number(d.outcome_low, 0),
        number(d.outcome_high, 0),
    ]
}

/// One tornado and table per driver table.
pub fn drivers(sm: &Summary) -> String {
    let caption = "Each bar: the mean outcome in the futures where the input is in its bottom decile and in its top decile; the longest bars move the result most.";
    let mut s = para(&format!("Method: {}.", sm.drivers.method));
    for (k, t) in sm.drivers.tables.iter().enumerate() {
        let heading = format!("What drives the {}", t.outcome);
        s += &format!("<h3>{}</h3>\n", super::html::text_html(&heading));
        s += &figure(&risk::tornado(sm, k), caption);
        if let Some(n) = &t.note {
            s += &para(n);
        }
        let rows: Vec<Row> = t.drivers.iter().map(driver_row).collect();
        let caption = format!("Inputs ranked for the {}", t.outcome);
        s += &table(&caption, &DRIVERS_HEADER, &rows);
    }
    s
}

const OBSERVED_HEADER: [&str; 7] = [
    "month",
    "actual#",
    "forecast P10#",
    "P50#",
    "P90#",
    "percentile#",
    "flag",
];

const REFORECAST_HEADER: [&str; 5] = ["month", "prior P50#", "re-forecast P10#", "P50#", "P90#"];

fn observed_rows(t: &crate::track::TrackReport) -> Vec<Row> {
    t.observed
        .iter()
        .map(|o| {
            let mut r = vec![o.month.clone()];
            r.extend([o.actual, o.p10, o.p50, o.p90].map(|v| number(v, 0)));
            r.extend([pct(o.percentile, 0), o.flag.clone()]);
            r
        })
        .collect()
}

fn reforecast_rows(t: &crate::track::TrackReport) -> Vec<Row> {
    t.reforecast
        .iter()
        .map(|r| {
            let mut row = vec![r.month.clone()];
            row.extend([r.prior_p50, r.p10, r.p50, r.p90].map(|v| number(v, 0)));
            row
        })
        .collect()
}

/// Tracking against actuals (empty when the plan names none).
pub fn tracking(sm: &Summary) -> String {
    let Some(t) = &sm.tracking else {
        return String::new();
    };
    let caption = format!("Months observed ({})", t.metric.name());
    let mut s = table(&caption, &OBSERVED_HEADER, &observed_rows(t));
    let caption = "Remaining months re-forecast from the actuals";
    s += &table(caption, &REFORECAST_HEADER, &reforecast_rows(t));
    if let Some(u) = &t.target {
        s += &para(&format!(
            "Target {}: {} so far; chance of reaching it {} before the actuals, {} now.",
            number(u.amount, 0),
            number(u.observed_so_far, 0),
            chance(u.prior_chance),
            chance(u.updated_chance)
        ));
    }
    s + &para(&format!(
        "How the re-forecast was made: {}. Baseline {}: {}.",
        t.method, t.baseline_method, t.baseline_update
    ))
}
