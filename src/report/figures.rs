//! The report's charts, each drawn from the same data structures that
//! `summary.json` serialises: the monthly forecast with its fans, the
//! allocation by cluster and tier, the efficient frontier, the distribution
//! of the portfolio's net return, and the variance-driver tornados.
//!
//! Colours come from the palette of Okabe & Ito, "Color Universal Design"
//! (2008), chosen for people with colour-vision deficiency; series also
//! differ in lightness, dash pattern and marker shape, and the reference
//! lines carry direct labels, so every chart reads in greyscale.

use super::charts::{label_every, nice_ticks, Layout, Legend, Plot, Swatch};
use super::svg::{data, money, number, shorten, text_width, Anchor, Shape};
use super::Summary;
use crate::month::Month;

/// Position of a month on a chart's month axis, from the first month shown.
fn month_pos(first: Month, m: &str) -> Option<f64> {
    Month::parse(m).map(|m| m.since(first) as f64)
}

/// History, forecast and actuals months: the first month and the count.
fn month_span(sm: &Summary) -> Option<(Month, usize)> {
    let all = sm
        .history
        .iter()
        .map(|h| h.0.as_str())
        .chain(sm.forecast.iter().map(|f| f.month.as_str()));
    let months: Vec<Month> = all.filter_map(Month::parse).collect();
    let first = *months.iter().min()?;
    let last = *months.iter().max()?;
    Some((first, last.since(first) as usize + 1))
}

/// The target's monthly average in clicks, when the target is in clicks.
fn monthly_target(sm: &Summary) -> Option<(f64, f64, usize)> {
    let t = sm.target.as_ref()?;
    let clicks = t.metric == crate::target::Metric::Clicks;
    (clicks && t.horizon > 0).then(|| (t.target / t.horizon as f64, t.target, t.horizon))
}

/// The target spread over the forecast months in the shape of the
/// baseline's median (its seasonality and trend): month `i` gets
/// `total × baseline_i / Σ baseline`, so the months add up to the target
/// and each can be compared with the fan of the same month. A flat average
/// over a seasonal series would sit above the fan in the low season and
/// below it in the high season, whatever the plan. Falls back to the flat
/// average when the baseline has no positive total.
pub(crate) fn seasonal_target(total: f64, baseline: &[f64]) -> Vec<f64> {
    let n = baseline.len();
    if n == 0 {
        return Vec::new();
    }
    let usable = baseline.iter().all(|v| v.is_finite() && *v >= 0.0);
    let sum: f64 = baseline.iter().sum();
    if !(usable && sum > 0.0) {
        return vec![total / n as f64; n];
    }
    baseline.iter().map(|b| total * b / sum).collect()
}

/// The target by forecast month, in clicks (see [`seasonal_target`]).
fn target_by_month(sm: &Summary) -> Vec<f64> {
    match monthly_target(sm) {
        Some((_, total, _)) => {
            let base: Vec<f64> = sm.forecast.iter().map(|r| r.baseline_p50).collect();
            seasonal_target(total, &base)
        }
        None => Vec::new(),
    }
}

/// Actuals in clicks from tracking, as (month, value).
fn actual_clicks(sm: &Summary) -> Vec<(String, f64)> {
    match &sm.tracking {
        Some(t) if t.metric == crate::target::Metric::Clicks => t
            .observed
            .iter()
            .map(|o| (o.month.clone(), o.actual))
            .collect(),
        _ => Vec::new(),
    }
}

fn forecast_legend(sm: &Summary) -> Vec<Legend> {
    let mut l = vec![
        Legend::new(Swatch::Line("s-history"), "history"),
        Legend::new(Swatch::Fill("band-base"), "baseline P10–P90"),
        Legend::new(Swatch::Line("s-base"), "baseline P50 (no new work)"),
        Legend::new(Swatch::Fill("band-plan"), "with the plan P10–P90"),
        Legend::new(
            Swatch::LineMarker("s-plan", Shape::Circle, "m-plan"),
            "with the plan P50",
        ),
    ];
    if monthly_target(sm).is_some() {
        l.push(Legend::new(
            Swatch::Line("s-target"),
            "target, spread over the months like the baseline",
        ));
    }
    if !actual_clicks(sm).is_empty() {
        l.push(Legend::new(
            Swatch::Marker(Shape::Diamond, "m-actual"),
            "actuals",
        ));
        l.push(Legend::new(
            Swatch::LineMarker("s-reforecast", Shape::Triangle, "m-reforecast"),
            "re-forecast P50",
        ));
    }
    l
}

fn forecast_max(sm: &Summary) -> f64 {
    let h = sm.history.iter().map(|h| h.1);
    let f = sm
        .forecast
        .iter()
        .flat_map(|r| [r.baseline_p90, r.with_plan_p90, r.with_plan_p50]);
    let t = target_by_month(sm);
    let a = actual_clicks(sm).into_iter().map(|a| a.1);
    h.chain(f)
        .chain(t)
        .chain(a)
        .filter(|v| v.is_finite())
        .fold(0.0, f64::max)
}

/// History, baseline fan, forecast fan with the plan, target and actuals.
pub fn forecast(sm: &Summary) -> String {
    let legend = forecast_legend(sm);
    let Some((first, n)) = month_span(sm) else {
        return empty("chart-forecast", "Monthly clicks", "no months to show");
    };
    let ticks = nice_ticks(0.0, forecast_max(sm), 6);
    let mut p = Plot::new(
        Layout::default(),
        &legend,
        (-0.5, n as f64 - 0.5),
        (ticks.lo, ticks.hi),
    );
    p.y_axis(&ticks, "clicks per month");
    let labels: Vec<String> = (0..n).map(|i| first.plus(i as i32).to_string()).collect();
    let spacing = (p.area.right - p.area.left) / n as f64;
    let every = label_every(spacing, text_width("2027-01", 11.0));
    p.x_categories(&labels, every, "month");
    forecast_fans(&mut p, sm, first);
    forecast_lines(&mut p, sm, first);
    forecast_refs(&mut p, sm, first);
    p.finish(
        "chart-forecast",
        "Monthly clicks: history, baseline and forecast with the plan",
        &forecast_desc(sm),
    )
}

fn positions(sm: &Summary, first: Month) -> Vec<f64> {
    sm.forecast
        .iter()
        .map(|r| month_pos(first, &r.month).unwrap_or(f64::NAN))
        .collect()
}

fn forecast_fans(p: &mut Plot, sm: &Summary, first: Month) {
    let xs = positions(sm, first);
    let col = |f: fn(&super::ForecastRow) -> f64| sm.forecast.iter().map(f).collect::<Vec<f64>>();
    p.band(
        &xs,
        &col(|r| r.baseline_p10),
        &col(|r| r.baseline_p90),
        "band-base",
    );
    // The plan's band has a dotted outline (see the style sheet), so the
    // two bands differ in more than their fill.
    p.band(
        &xs,
        &col(|r| r.with_plan_p10),
        &col(|r| r.with_plan_p90),
        "band-plan",
    );
}

fn forecast_lines(p: &mut Plot, sm: &Summary, first: Month) {
    let hist: Vec<(f64, f64)> = sm
        .history
        .iter()
        .filter_map(|(m, v)| Some((month_pos(first, m)?, *v)))
        .collect();
    p.line(&hist, "s-history", &[("data-series", "history".into())]);
    let xs = positions(sm, first);
    let base: Vec<(f64, f64)> = xs
        .iter()
        .zip(&sm.forecast)
        .map(|(x, r)| (*x, r.baseline_p50))
        .collect();
    p.line(&base, "s-base", &[("data-series", "baseline-p50".into())]);
    let plan: Vec<(f64, f64)> = xs
        .iter()
        .zip(&sm.forecast)
        .map(|(x, r)| (*x, r.with_plan_p50))
        .collect();
    p.line(&plan, "s-plan", &[("data-series", "with-plan-p50".into())]);
    for (x, r) in xs.iter().zip(&sm.forecast) {
        let attrs = [
            ("data-month", r.month.clone()),
            ("data-p10", data(r.with_plan_p10)),
            ("data-p50", data(r.with_plan_p50)),
            ("data-p90", data(r.with_plan_p90)),
        ];
        p.marker(*x, r.with_plan_p50, Shape::Circle, "m-plan", &attrs);
    }
}

fn forecast_refs(p: &mut Plot, sm: &Summary, first: Month) {
    if let Some(start) = sm.forecast.first().and_then(|r| month_pos(first, &r.month)) {
        p.vline(
            start - 0.5,
            "divider",
            ("forecast starts", 0),
            Some(Anchor::Start),
            &[],
        );
    }
    if let Some((_, total, h)) = monthly_target(sm) {
        // The target in the baseline's seasonal shape, month by month, so
        // each month compares with its own fan (see `seasonal_target`).
        let xs = positions(sm, first);
        let pts: Vec<(f64, f64)> = xs.iter().copied().zip(target_by_month(sm)).collect();
        p.line(
            &pts,
            "s-target",
            &[
                ("data-series", "target".into()),
                ("data-total", data(total)),
                ("data-months", h.to_string()),
                (
                    "data-values",
                    pts.iter().map(|q| data(q.1)).collect::<Vec<_>>().join(" "),
                ),
            ],
        );
        if let Some(&(x, y)) = pts.last() {
            let label = format!(
                "target: {} clicks in {h} months, spread like the baseline",
                number(total, 0)
            );
            p.label_at(x, y, &label);
        }
    }
    for (m, v) in actual_clicks(sm) {
        if let Some(x) = month_pos(first, &m) {
            let attrs = [("data-month", m.clone()), ("data-value", data(v))];
            p.marker(x, v, Shape::Diamond, "m-actual", &attrs);
        }
    }
    reforecast(p, sm, first);
}

fn reforecast(p: &mut Plot, sm: &Summary, first: Month) {
    let Some(t) = sm
        .tracking
        .as_ref()
        .filter(|t| t.metric == crate::target::Metric::Clicks)
    else {
        return;
    };
    let pts: Vec<(f64, f64)> = t
        .reforecast
        .iter()
        .filter_map(|r| Some((month_pos(first, &r.month)?, r.p50)))
        .collect();
    p.line(
        &pts,
        "s-reforecast",
        &[("data-series", "reforecast-p50".into())],
    );
    for &(x, y) in &pts {
        p.marker(
            x,
            y,
            Shape::Triangle,
            "m-reforecast",
            &[("data-value", data(y))],
        );
    }
}

fn forecast_desc(sm: &Summary) -> String {
    let mut d = format!("{} months of history", sm.history.len());
    if let (Some(a), Some(b)) = (sm.forecast.first(), sm.forecast.last()) {
        d += &format!(
            ", forecast {} to {}; in {} the baseline P50 is {} clicks and with the plan P50 {} (P10 {}, P90 {})",
            a.month,
            b.month,
            b.month,
            number(b.baseline_p50, 0),
            number(b.with_plan_p50, 0),
            number(b.with_plan_p10, 0),
            number(b.with_plan_p90, 0)
        );
    }
    if let Some((avg, total, h)) = monthly_target(sm) {
        d += &format!(
            "; the target of {} clicks in {h} months ({} a month on average) is drawn in the baseline's seasonal shape",
            number(total, 0),
            number(avg, 0)
        );
    }
    d + ". The table below the chart lists every month."
}

/// A chart with nothing to draw: says why instead of showing empty axes.
pub(super) fn empty(id: &str, title: &str, why: &str) -> String {
    let mut s = super::svg::Svg::new(860.0, 60.0);
    s.text(
        (20.0, 34.0),
        Anchor::Start,
        "empty",
        &format!("{title}: {why}"),
    );
    s.finish(id, title, why)
}

/// One tier of a cluster with its funding.
#[derive(Debug, Clone, PartialEq)]
pub struct TierSpend {
    pub id: String,
    pub tier: usize,
    pub label: String,
    pub cost: f64,
    pub fraction: f64,
    pub spend: f64,
}

/// One cluster with its tiers, in plan order.
#[derive(Debug, Clone, PartialEq)]
pub struct ClusterSpend {
    pub name: String,
    pub tiers: Vec<TierSpend>,
}

impl ClusterSpend {
    fn cost(&self) -> f64 {
        self.tiers.iter().map(|t| t.cost).sum()
    }

    fn spend(&self) -> f64 {
        self.tiers.iter().map(|t| t.spend).sum()
    }
}

/// Clusters in plan order with their tiers and the funded spend.
pub fn cluster_tiers(sm: &Summary) -> Vec<ClusterSpend> {
    let mut out: Vec<ClusterSpend> = Vec::new();
    for t in &sm.clusters.tiers {
        let item = sm.allocation.allocation.iter().find(|i| i.id == t.id);
        let row = TierSpend {
            id: t.id.clone(),
            tier: t.tier,
            label: t.label.clone(),
            cost: t.marginal.cost,
            fraction: item.map(|i| i.fraction).unwrap_or(0.0),
            spend: item.map(|i| i.spend).unwrap_or(0.0),
        };
        match out.iter_mut().find(|c| c.name == t.cluster) {
            Some(c) => c.tiers.push(row),
            None => out.push(ClusterSpend {
                name: t.cluster.clone(),
                tiers: vec![row],
            }),
        }
    }
    out
}

const TIER_CLASSES: [&str; 4] = ["tier1", "tier2", "tier3", "tier4"];

fn tier_class(tier: usize) -> &'static str {
    TIER_CLASSES[tier.saturating_sub(1) % TIER_CLASSES.len()]
}

fn allocation_legend(clusters: &[ClusterSpend]) -> Vec<Legend> {
    let tiers = clusters.iter().flat_map(|c| c.tiers.iter().map(|t| t.tier));
    let max_tier = tiers.max().unwrap_or(1).min(TIER_CLASSES.len());
    let mut legend: Vec<Legend> = (1..=max_tier)
        .map(|t| Legend::new(Swatch::Fill(tier_class(t)), format!("tier {t} spend")))
        .collect();
    legend.push(Legend::new(Swatch::Fill("capacity"), "cost of all tiers"));
    legend
}

const ALLOCATION_TITLE: &str = "Spend by cluster and tier";

/// Spend per cluster, stacked by tier, against the cost of all its tiers.
pub fn allocation(sm: &Summary) -> String {
    let clusters = cluster_tiers(sm);
    if clusters.is_empty() {
        return empty(
            "chart-allocation",
            ALLOCATION_TITLE,
            "no clusters in the plan",
        );
    }
    let top_cost = clusters.iter().map(ClusterSpend::cost).fold(0.0, f64::max);
    let ticks = nice_ticks(0.0, top_cost, 6);
    let n = clusters.len() as f64;
    let layout = Layout {
        height: 120.0 + 30.0 * n,
        left: 190.0,
        right: 150.0,
        ..Layout::default()
    };
    let legend = allocation_legend(&clusters);
    let mut p = Plot::new(layout, &legend, (ticks.lo, ticks.hi), (n - 0.5, -0.5));
    p.x_axis(&ticks, &format!("spend ({})", sm.currency));
    let names: Vec<String> = clusters.iter().map(|c| shorten(&c.name, 28)).collect();
    p.y_categories(&names);
    for (i, c) in clusters.iter().enumerate() {
        cluster_bar(&mut p, &sm.currency, i as f64, c);
    }
    let desc = allocation_desc(&sm.currency, &clusters);
    p.finish("chart-allocation", ALLOCATION_TITLE, &desc)
}

/// One cluster's bar: the dashed outline of all its tiers' cost, the spend
/// of each tier stacked inside, and the total at the end.
fn cluster_bar(p: &mut Plot, cur: &str, y: f64, c: &ClusterSpend) {
    let (total, used) = (c.cost(), c.spend());
    let band = (y - 0.32, y + 0.32);
    let attrs = [("data-cluster", c.name.clone()), ("data-cost", data(total))];
    p.bar((0.0, total), band, "capacity", &attrs);
    let mut x0 = 0.0;
    for t in &c.tiers {
        if t.spend > 0.0 {
            let attrs = [
                ("data-id", t.id.clone()),
                ("data-tier", t.tier.to_string()),
                ("data-label", t.label.clone()),
                ("data-fraction", data(t.fraction)),
                ("data-spend", data(t.spend)),
            ];
            p.bar((x0, x0 + t.spend), band, tier_class(t.tier), &attrs);
            segment_label(p, (x0, x0 + t.spend), y, t.tier);
            x0 += t.spend;
        }
    }
    let at = (p.x.at(total.max(used)) + 6.0, p.y.at(y) + 4.0);
    let text = format!("{} of {}", money(used, cur), number(total, 0));
    p.svg.text(at, Anchor::Start, "bar-label", &text);
}

/// The tier number inside a segment wide enough to hold it.
fn segment_label(p: &mut Plot, x: (f64, f64), y: f64, tier: usize) {
    let (a, b) = (p.x.at(x.0), p.x.at(x.1));
    if b - a >= 22.0 {
        let class = if tier == 1 {
            "seg-label on-dark"
        } else {
            "seg-label"
        };
        let at = ((a + b) / 2.0, p.y.at(y) + 4.0);
        p.svg.text(at, Anchor::Middle, class, &format!("T{tier}"));
    }
}

fn allocation_desc(cur: &str, clusters: &[ClusterSpend]) -> String {
    let parts: Vec<String> = clusters
        .iter()
        .map(|c| {
            format!(
                "{}: {} of {}",
                c.name,
                money(c.spend(), cur),
                number(c.cost(), 0)
            )
        })
        .collect();
    format!(
        "Spend per cluster against the cost of all its tiers. {}.",
        parts.join("; ")
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_target_is_drawn_in_the_baseline_seasonal_shape_not_as_a_flat_average() {
        // A seasonal baseline: high in the middle of the year.
        let base = [
            40.0, 45.0, 60.0, 70.0, 70.0, 60.0, 50.0, 45.0, 42.0, 44.0, 40.0, 40.0,
        ];
        let total = 720.0;
        let t = seasonal_target(total, &base);
        assert_eq!(t.len(), 12);
        let sum: f64 = t.iter().sum();
        assert!((sum - total).abs() < 1e-9, "sums to the target: {sum}");
        // Not flat: the high season asks for more than the low season.
        assert!(t[3] > t[0] * 1.5, "{t:?}");
        // Each month's share of the target is the baseline's share.
        let bsum: f64 = base.iter().sum();
        for (v, b) in t.iter().zip(&base) {
            assert!((v / total - b / bsum).abs() < 1e-12);
        }
        // No usable baseline: the flat average.
        let flat = seasonal_target(120.0, &[0.0, 0.0, 0.0]);
        assert!(flat.iter().all(|v| (v - 40.0).abs() < 1e-12));
    }
}
