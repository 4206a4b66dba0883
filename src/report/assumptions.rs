//! The assumptions section of `index.html`: the model files, the baseline
//! method and its fitted parameters, the economics, the risk settings and
//! what was read from the inputs, so a reader can see every constant the
//! figures rest on.

use super::html::{figures_list, kv, list, para, table};
use super::risk::tail_share;
use super::svg::{money, number, pct};
use super::Summary;
use std::collections::BTreeMap;

/// Models, baseline, economics, risk settings and what was read.
pub fn assumptions(sm: &Summary) -> String {
    let models: Vec<Vec<String>> = sm
        .reproducibility
        .models
        .iter()
        .map(|(what, origin)| vec![what.clone(), origin.clone()])
        .collect();
    let mut s = table("Model files used", &["model", "origin"], &models);
    s += &click_through_facts(sm);
    s += &baseline_facts(sm);
    s += &economics_facts(sm);
    s += &risk_facts(sm);
    s += &inputs_facts(sm);
    if let Some(t) = &sm.target {
        s += "<h3>Target</h3>\n";
        s += &para(&format!("{}.", t.basis));
        s += &list(&t.assumptions);
    }
    s
}

/// Parameter rows: scalars by name, and numbered families (the initial
/// seasonal states `s0_1` to `s0_12`) on one row each, in numeric order.
fn parameter_rows(params: &BTreeMap<String, f64>) -> Vec<Vec<String>> {
    let mut rows = Vec::new();
    let mut families: Vec<(String, Vec<(u32, f64)>)> = Vec::new();
    for (k, v) in params {
        let numbered = k
            .rsplit_once('_')
            .and_then(|(f, i)| Some((f, i.parse::<u32>().ok()?)));
        match numbered {
            Some((f, i)) => match families.iter_mut().find(|x| x.0 == f) {
                Some(x) => x.1.push((i, *v)),
                None => families.push((f.to_string(), vec![(i, *v)])),
            },
            None => rows.push(vec![k.clone(), number(*v, 4)]),
        }
    }
    for (f, mut vals) in families {
        vals.sort_by_key(|x| x.0);
        let first = vals.first().map(|x| x.0).unwrap_or(0);
        let last = vals.last().map(|x| x.0).unwrap_or(0);
        let list: Vec<String> = vals.iter().map(|x| number(x.1, 4)).collect();
        rows.push(vec![format!("{f}_{first} to {f}_{last}"), list.join(", ")]);
    }
    rows
}

/// The click-through curve fitted to the plan's query export, or why the
/// named curve was kept, with the errors that decided it.
fn click_through_facts(sm: &Summary) -> String {
    let Some(c) = &sm.click_through else {
        return String::new();
    };
    let err = |x: Option<f64>| x.map_or_else(|| "n/a".to_string(), |v| pct(v, 2));
    let key = [
        kv(
            "curve used",
            if c.fitted {
                "fitted to the query export".to_string()
            } else {
                "the named curve".to_string()
            },
        ),
        kv("query export", c.queries.clone()),
        kv("fit", c.fit.clone().unwrap_or_else(|| "none".into())),
        kv("fit error (cross-validated RMSE)", err(c.fit_cv_rmse)),
        kv(
            "named curve's error (same positions)",
            err(c.named_curve_rmse),
        ),
        kv("CTR at position 1", pct(c.ctr_at_1, 1)),
    ];
    "<h3>Click-through curve</h3>\n".to_string()
        + &figures_list(&key)
        + &para(&format!("{}.", c.reason))
}

fn baseline_facts(sm: &Summary) -> String {
    let b = &sm.baseline;
    let mut rows = parameter_rows(&b.parameters);
    rows.push(vec![
        "AICc".into(),
        b.aicc.map(|a| number(a, 1)).unwrap_or_else(|| "n/a".into()),
    ]);
    let caption = format!(
        "Baseline: {}{} on {} months of {}",
        b.method,
        if b.damped { " (damped)" } else { "" },
        b.history_months,
        b.column
    );
    let mut s = "<h3>Baseline</h3>\n".to_string();
    s += &table(&caption, &["parameter", "value#"], &rows);
    s + &list(&b.notes)
}

/// The conversion rate at its mean, and how it is known.
fn conversion(rate: &crate::clicks::ConversionRate) -> (f64, String) {
    use crate::clicks::ConversionRate;
    match *rate {
        ConversionRate::Fixed(r) => (r, pct(r, 2)),
        ConversionRate::Counts {
            conversions,
            sessions,
        } => {
            let r = conversions / sessions;
            let how = format!(
                "{} ({} conversions in {} sessions)",
                pct(r, 2),
                number(conversions, 0),
                number(sessions, 0)
            );
            (r, how)
        }
    }
}

fn economics_facts(sm: &Summary) -> String {
    let e = &sm.economics;
    let cur = &sm.currency;
    let (rate, conv) = conversion(&e.conversion_rate);
    let ov = match e.order_value.sd {
        Some(sd) => format!(
            "{} (spread {})",
            money(e.order_value.mean, cur),
            number(sd, 2)
        ),
        None => money(e.order_value.mean, cur),
    };
    let per_click = format!("{cur} {}", number(rate * e.order_value.mean, 2));
    let mut key = vec![
        kv("conversion rate", conv),
        kv("average order value", ov),
        kv("gross margin", pct(e.margin, 0)),
        kv("revenue per click (at the means)", per_click),
    ];
    let history = sm.check.revenue_per_click.map(|r| {
        let text = format!(
            "{cur} {} (last {} months; the plan's is {} {})",
            number(r.history, 2),
            r.months,
            pct(r.difference.abs(), 0),
            if r.difference >= 0.0 {
                "higher"
            } else {
                "lower"
            }
        );
        (r, text)
    });
    if let Some((_, text)) = &history {
        key.push(kv("revenue per click in the history", text.clone()));
    }
    let mut s = "<h3>Economics</h3>\n".to_string() + &figures_list(&key);
    if let Some((r, _)) = history.filter(|(r, _)| r.differs()) {
        s += &para(&format!(
            "The plan's revenue per click differs from the history's by more than {}: {}.",
            pct(r.tolerance, 0),
            r.warning(cur)
        ));
    }
    s
}

fn risk_facts(sm: &Summary) -> String {
    let a = &sm.allocation;
    let c = &sm.clusters;
    let cur = &sm.currency;
    let limit = a.max_tail_loss.map(|l| money(l, cur));
    let key = [
        kv("budget", money(a.budget, cur)),
        kv("tail", format!("worst {}", tail_share(a.tail_level))),
        kv("tail-loss limit", limit.unwrap_or_else(|| "none".into())),
        kv(
            "horizon",
            format!("{} months from {}", c.horizon, c.first_month),
        ),
        kv("simulated futures", number(c.scenarios as f64, 0)),
        kv("solver", format!("{} ({})", a.backend, a.method_used)),
    ];
    "<h3>Risk settings and simulation</h3>\n".to_string() + &figures_list(&key)
}

fn inputs_facts(sm: &Summary) -> String {
    let c = &sm.check;
    let history = format!(
        "{} months, {} to {}",
        c.history_months, c.history_first, c.history_last
    );
    let key = [
        kv("history", history),
        kv("clicks in the last 12 months", number(c.clicks_last_12, 0)),
        kv("keywords", number(c.keywords as f64, 0)),
        kv("monthly search volume", number(c.total_volume, 0)),
        kv("not ranking", pct(c.not_ranking_share, 0)),
        kv("branded", pct(c.branded_share, 0)),
    ];
    let mut s = "<h3>Inputs read</h3>\n".to_string() + &figures_list(&key);
    if !c.warnings.is_empty() {
        s += &para("Warnings from the input check:");
        s += &list(&c.warnings);
    }
    s
}
