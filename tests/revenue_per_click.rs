//! The history's revenue is used (issue 14, item 5): `check` prints the
//! history's revenue per click beside the one the plan's economics imply
//! and warns beyond 25 %; `[economics] from_history = true` derives the
//! conversion rate and order value from the last 12 months.

mod common;

use common::{demo_copy, furrow, stderr, stdout};
use std::path::Path;

/// Sums of the last 12 rows of the demo history's columns, read here
/// independently of furrow's reader.
fn last_12(dir: &Path) -> std::collections::BTreeMap<String, f64> {
    let text = std::fs::read_to_string(dir.join("history.csv")).expect("history");
    let mut lines = text.lines();
    let header: Vec<&str> = lines.next().expect("header").split(',').collect();
    let rows: Vec<Vec<&str>> = lines.map(|l| l.split(',').collect()).collect();
    let mut out = std::collections::BTreeMap::new();
    for (i, h) in header.iter().enumerate().skip(1) {
        let s: f64 = rows[rows.len() - 12..]
            .iter()
            .map(|r| r[i].parse::<f64>().expect("a number"))
            .sum();
        out.insert(h.to_string(), s);
    }
    out
}

const ECONOMICS: &str = "conversions = 2150\nsessions = 98400\norder_value = 110.0\n";

#[test]
fn the_historys_revenue_per_click_is_shown_beside_the_plans_and_a_large_gap_warns() {
    // The demo's plan matches its history; an order value of 180 instead of
    // 110 puts the plan's revenue per click far above the history's.
    let tmp = tempfile::tempdir().expect("temp");
    demo_copy(tmp.path(), |p| {
        p.replace("order_value = 110.0", "order_value = 180.0")
    });
    let t = last_12(tmp.path());
    let history = t["revenue"] / t["clicks"];
    // The plan's rate is the posterior mean of its counts under a uniform
    // prior: (2150 + 1) / (98400 + 2).
    let plan = 2151.0 / 98402.0 * 180.0;
    let o = furrow(tmp.path(), &["check", "plan.toml"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let text = stdout(&o);
    let line = text
        .lines()
        .find(|l| l.starts_with("Revenue per click:"))
        .unwrap_or_else(|| panic!("no revenue-per-click line in:\n{text}"));
    assert!(line.contains(&format!("EUR {history:.2}")), "{line}");
    assert!(line.contains(&format!("EUR {plan:.2}")), "{line}");
    // Beyond the 25 % tolerance.
    assert!((plan / history - 1.0).abs() > 0.25);
    assert!(text.contains("Warnings:"), "{text}");
    assert!(text.contains("from_history = true"), "{text}");
}

#[test]
fn a_plan_close_to_its_history_does_not_warn() {
    let tmp = tempfile::tempdir().expect("temp");
    demo_copy(tmp.path(), |p| p);
    let t = last_12(tmp.path());
    // Order value set so the plan's revenue per click is 10 % above the
    // history's: inside the tolerance.
    let aov = 1.10 * t["revenue"] / t["clicks"] / (2150.0 / 98400.0);
    let dir = tmp.path().to_path_buf();
    demo_copy(&dir, |p| {
        p.replace("order_value = 110.0", &format!("order_value = {aov}"))
    });
    let text = stdout(&furrow(&dir, &["check", "plan.toml"]));
    assert!(text.contains("Revenue per click:"), "{text}");
    assert!(text.contains("(+10 %"), "{text}");
    assert!(!text.contains("revenue per click, the history"), "{text}");
}

#[test]
fn from_history_derives_conversion_rate_and_order_value_from_the_last_12_months() {
    let tmp = tempfile::tempdir().expect("temp");
    demo_copy(tmp.path(), |p| {
        p.replace(ECONOMICS, "from_history = true\n")
    });
    let t = last_12(tmp.path());
    let inputs = furrow::inputs::load::load(&tmp.path().join("plan.toml"), &Default::default())
        .expect("the plan loads");
    let m = furrow::simulate::prepare(&inputs).expect("the model is prepared");
    let rate = t["conversions"] / t["sessions"];
    let aov = t["revenue"] / t["conversions"];
    // Counts keep their uncertainty: the posterior mean under a uniform
    // prior is (c + 1) / (n + 2), within 1e-4 of c / n at these counts.
    assert!((m.economics.conversion_rate.mean() - rate).abs() < 1e-4);
    assert!((m.economics.order_value.mean - aov).abs() < 1e-9 * aov);
    assert!((m.economics.margin - 0.45).abs() < 1e-12);
}

#[test]
fn from_history_with_the_keys_it_replaces_is_refused_naming_the_key() {
    let tmp = tempfile::tempdir().expect("temp");
    demo_copy(tmp.path(), |p| {
        p.replace(
            "gross_margin = 0.45",
            "gross_margin = 0.45\nfrom_history = true",
        )
    });
    let o = furrow(tmp.path(), &["check", "plan.toml"]);
    assert!(!o.status.success());
    let e = stderr(&o);
    assert!(e.contains("economics.from_history"), "{e}");
    assert!(e.contains("order_value"), "{e}");
    assert!(!e.contains("panicked"), "{e}");
}

#[test]
fn economics_from_history_on_known_numbers() {
    use furrow::clicks::Economics;
    // 120 conversions in 6,000 sessions, revenue 9,000: rate 2 %, order
    // value 75, so 1.50 of revenue per session (= per click).
    let e = Economics::from_history(5_000.0, Some(6_000.0), Some(120.0), 9_000.0, None, 0.4)
        .expect("valid");
    assert!((e.conversion_rate.mean() - 121.0 / 6_002.0).abs() < 1e-12);
    assert!((e.order_value.mean - 75.0).abs() < 1e-12);
    // Revenue only: 5,000 over 2,500 clicks is 2 per click.
    let v = Economics::from_history(2_500.0, None, None, 5_000.0, None, 0.4).expect("valid");
    assert!((v.conversion_rate.mean() - 1.0).abs() < 1e-12);
    assert!((v.order_value.mean - 2.0).abs() < 1e-12);
    assert!(Economics::from_history(0.0, None, None, 5_000.0, None, 0.4).is_err());
}
