//! The plan's query export fits the site's click-through curve (issue 14,
//! item 3): with `[inputs] queries`, the curve the simulation uses is the
//! one fitted to the export, branded queries are left out by
//! `[models] brand`, and the named curve is kept when cross-validation says
//! the fit is not better, with the reason stated.

mod common;

use common::{demo_copy, furrow, json, stderr};
use std::path::Path;

fn total_clicks(v: &serde_json::Value) -> f64 {
    v["rows"]
        .as_array()
        .expect("estimate rows")
        .iter()
        .map(|r| r["clicks"].as_f64().expect("clicks"))
        .sum()
}

fn estimate(dir: &Path) -> serde_json::Value {
    json(&furrow(dir, &["estimate", "plan.toml", "--format", "json"]))
}

fn prepared(dir: &Path) -> furrow::simulate::Model {
    let inputs = furrow::inputs::load::load(&dir.join("plan.toml"), &Default::default())
        .expect("the plan loads");
    furrow::simulate::prepare(&inputs).expect("the model is prepared")
}

#[test]
fn the_plans_query_export_changes_the_curve() {
    let with = tempfile::tempdir().expect("temp");
    let without = tempfile::tempdir().expect("temp");
    demo_copy(with.path(), |p| p);
    demo_copy(without.path(), |p| {
        p.replace("queries = \"queries.csv\"\n", "")
    });
    let a = total_clicks(&estimate(with.path()));
    let b = total_clicks(&estimate(without.path()));
    // The demo's export has about 25 % CTR at position 1 against the
    // default's 28 %, so the fitted curve gives visibly fewer clicks.
    assert!(
        (a - b).abs() > 0.01 * b,
        "the query export must change the estimate: {a} with it, {b} without"
    );
    let m = prepared(with.path());
    let c = m.ctr_choice.as_ref().expect("a curve choice is recorded");
    assert!(c.fitted, "the demo's fit beats the default: {}", c.reason);
    let (fit, named) = (
        c.fit_cv_rmse.expect("fit error"),
        c.named_curve_rmse.expect("named error"),
    );
    assert!(fit < named, "fit {fit} vs named {named}");
    // Sensible shape: non-increasing, between 20 % and 35 % at position 1.
    let head = m.ctr.head();
    assert!(head.windows(2).all(|w| w[1] <= w[0] + 1e-12), "{head:?}");
    assert!((0.20..=0.35).contains(&head[0]), "CTR at 1: {}", head[0]);
    assert!(m.origins[0].1.contains("fitted to"), "{:?}", m.origins[0]);
    assert!(prepared(without.path()).ctr_choice.is_none());
}

#[test]
fn fit_ctr_false_keeps_the_named_curve() {
    let on = tempfile::tempdir().expect("temp");
    let off = tempfile::tempdir().expect("temp");
    let none = tempfile::tempdir().expect("temp");
    demo_copy(on.path(), |p| p);
    demo_copy(off.path(), |p| {
        p.replace(
            "brand = \"quillfern\"",
            "brand = \"quillfern\"\nfit_ctr = false",
        )
    });
    demo_copy(none.path(), |p| {
        p.replace("queries = \"queries.csv\"\n", "")
    });
    let off_clicks = total_clicks(&estimate(off.path()));
    let none_clicks = total_clicks(&estimate(none.path()));
    assert!((off_clicks - none_clicks).abs() <= 1e-9 * none_clicks.max(1.0));
    assert!((total_clicks(&estimate(on.path())) - off_clicks).abs() > 0.01 * off_clicks);
}

#[test]
fn branded_queries_left_out_by_the_brand_key_lower_the_fitted_curve() {
    // The demo's branded queries have high CTR at the top: left in, they
    // raise position 1 of the fitted curve.
    let with_brand = tempfile::tempdir().expect("temp");
    let no_brand = tempfile::tempdir().expect("temp");
    demo_copy(with_brand.path(), |p| p);
    demo_copy(no_brand.path(), |p| {
        p.replace("brand = \"quillfern\"\n", "")
    });
    let a = prepared(with_brand.path()).ctr.head()[0];
    let b = prepared(no_brand.path()).ctr.head()[0];
    assert!(a < b - 0.01, "with brand {a}, without {b}");
}

#[test]
fn a_named_curve_that_predicts_better_is_kept_and_the_reason_said() {
    // A query export drawn exactly from the default curve: no fit can beat
    // the curve that made the data on held-out positions.
    let dir = tempfile::tempdir().expect("temp");
    demo_copy(dir.path(), |p| p);
    let curve = furrow::clicks::CtrCurve::builtin_default().expect("default curve");
    let mut csv = String::from("query,clicks,impressions,position\n");
    for p in 1..=20u32 {
        let impressions = 10_000.0;
        let clicks = curve.ctr(f64::from(p)) * impressions;
        csv += &format!("q{p},{clicks},{impressions},{p}\n");
    }
    std::fs::write(dir.path().join("queries.csv"), csv).expect("write queries");
    let m = prepared(dir.path());
    let c = m.ctr_choice.as_ref().expect("a choice");
    assert!(!c.fitted, "{c:?}");
    assert!(c.reason.contains("named curve kept"), "{}", c.reason);
    assert!((m.ctr.head()[0] - curve.head()[0]).abs() < 1e-12);
}

#[test]
fn a_bad_brand_pattern_names_the_plan_key() {
    let dir = tempfile::tempdir().expect("temp");
    demo_copy(dir.path(), |p| {
        p.replace("brand = \"quillfern\"", "brand = \"(\"")
    });
    let o = furrow(dir.path(), &["estimate", "plan.toml"]);
    assert!(!o.status.success());
    let e = stderr(&o);
    assert!(e.contains("models.brand"), "{e}");
    assert!(e.contains("plan.toml"), "{e}");
    assert!(!e.contains("panicked"), "{e}");
}
