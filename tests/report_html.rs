//! `index.html` of `furrow report`: user text escaped, the page
//! self-contained (no script, nothing fetched), every section and input
//! hash present, and the charts' numbers (read back from their `data-*`
//! attributes) equal to the figures in `summary.json`.

mod common;

use common::{furrow, project, stderr};
use regex::Regex;
use serde_json::Value;
use std::path::Path;
use std::sync::OnceLock;

/// The page and the JSON of one report run.
struct Report {
    html: String,
    json: Value,
}

fn run_report(dir: &Path) -> Report {
    let o = furrow(
        dir,
        &[
            "report",
            "plan.toml",
            "--scenarios",
            "300",
            "--out",
            "rep",
            "--quiet",
        ],
    );
    assert!(o.status.success(), "report failed: {}", stderr(&o));
    let read = |name: &str| {
        std::fs::read_to_string(dir.join("rep").join(name))
            .unwrap_or_else(|e| panic!("cannot read rep/{name}: {e}"))
    };
    let json = serde_json::from_str(&read("summary.json")).expect("summary.json parses");
    Report {
        html: read("index.html"),
        json,
    }
}

/// The report of an unchanged `furrow init` project, made once.
fn plain() -> &'static Report {
    static R: OnceLock<Report> = OnceLock::new();
    R.get_or_init(|| {
        let (_tmp, dir) = project();
        run_report(&dir)
    })
}

/// The five markup characters escaped, written out here so the test does
/// not share the code under test.
fn escaped(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
        .replace('\'', "&#39;")
}

/// Every start tag with `class="<class>"` and data attributes, as text
/// (legend swatches share the class but carry no data).
fn tags<'a>(html: &'a str, class: &str) -> Vec<&'a str> {
    let re = Regex::new(&format!(
        r#"<[a-z]+ [^>]*class="{}"[^>]*>"#,
        regex::escape(class)
    ))
    .expect("valid pattern");
    re.find_iter(html)
        .map(|m| m.as_str())
        .filter(|t| t.contains(" data-"))
        .collect()
}

/// The value of attribute `name` in tag text `tag`, as a number.
fn attr(tag: &str, name: &str) -> f64 {
    let re = Regex::new(&format!(r#" {}="([^"]*)""#, regex::escape(name))).expect("valid pattern");
    let v = re
        .captures(tag)
        .and_then(|c| c.get(1))
        .unwrap_or_else(|| panic!("no {name} in {tag}"));
    v.as_str()
        .parse()
        .unwrap_or_else(|_| panic!("{name} is not a number in {tag}"))
}

fn num(v: &Value) -> f64 {
    v.as_f64().unwrap_or_else(|| panic!("not a number: {v}"))
}

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-9 * (1.0 + a.abs().max(b.abs()))
}

#[test]
fn a_cluster_named_like_a_script_is_escaped() {
    let (_tmp, dir) = project();
    let evil = "<script>alert(1)</script>";
    for file in ["keywords.csv", "plan.toml"] {
        let text = std::fs::read_to_string(dir.join(file)).expect("init wrote the file");
        assert!(text.contains("raised beds"), "{file} has no 'raised beds'");
        std::fs::write(dir.join(file), text.replace("raised beds", evil)).expect("rewrite");
    }
    let r = run_report(&dir);
    let json = serde_json::to_string(&r.json).unwrap_or_default();
    assert!(json.contains(evil), "the rename did not reach the report");
    assert!(!r.html.contains(evil), "the raw name is in index.html");
    assert!(!r.html.to_lowercase().contains("<script"));
    assert!(r.html.contains(&escaped(evil)));
    // In the allocation chart's labels and data attributes as well.
    assert!(r
        .html
        .contains(&format!("data-cluster=\"{}\"", escaped(evil))));
}

#[test]
fn the_page_fetches_nothing_and_runs_nothing() {
    let html = &plain().html;
    let lower = html.to_lowercase();
    for bad in [
        "<script", "http://", "https://", "@import", "url(", "<iframe", "<object", "<embed",
        "<link", "<img",
    ] {
        assert!(!lower.contains(bad), "index.html contains {bad}");
    }
    let re = Regex::new(r#"(?i)\b(src|href|xlink:href)\s*=\s*"([^"]*)""#).expect("valid pattern");
    for c in re.captures_iter(html) {
        assert!(c[2].starts_with('#'), "external reference {}", &c[0]);
    }
    let handlers = Regex::new(r"(?i)<[^>]+\son[a-z]+\s*=").expect("valid pattern");
    assert!(!handlers.is_match(html), "an inline event handler");
}

#[test]
fn the_page_has_every_section_caution_and_hash() {
    let r = plain();
    for h in [
        "The decision",
        "Forecast",
        "Allocation",
        "Efficient frontier",
        "Distribution of the net return",
        "Stress tests",
        "What drives the variance",
        "Assumptions and model constants",
        "Cautions",
        "Reproducibility",
    ] {
        assert!(r.html.contains(&format!("<h2>{h}</h2>")), "no section {h}");
    }
    // No actuals in the init plan: no tracking section.
    assert!(!r.html.contains("id=\"tracking\""));
    let cautions = r.json["cautions"].as_array().expect("cautions");
    assert!(cautions.len() >= 3);
    for c in cautions {
        let c = c.as_str().expect("a caution is text");
        assert!(r.html.contains(&escaped(c)), "caution missing: {c}");
    }
    let inputs = r.json["reproducibility"]["inputs"]
        .as_array()
        .expect("inputs");
    assert!(inputs.len() >= 3, "init's plan reads several files");
    let hex = Regex::new("^[0-9a-f]{64}$").expect("valid pattern");
    for i in inputs {
        let h = i["sha256"].as_str().expect("sha256");
        assert!(hex.is_match(h));
        assert!(r.html.contains(h), "hash of {} missing", i["path"]);
    }
    let decision = r.json["decision"].as_str().expect("decision");
    assert!(r.html.contains(&escaped(decision)));
}

#[test]
fn one_chart_per_figure_each_with_a_title_and_a_text_alternative() {
    let r = plain();
    let tables = r.json["drivers"]["tables"]
        .as_array()
        .expect("driver tables")
        .len();
    let svgs = r.html.matches("<svg ").count();
    // forecast, allocation, frontier, distribution and one tornado per table
    assert_eq!(svgs, 4 + tables);
    for id in [
        "chart-forecast",
        "chart-allocation",
        "chart-frontier",
        "chart-distribution",
    ] {
        assert!(r.html.contains(&format!("<svg id=\"{id}\"")), "no {id}");
    }
    let svg = Regex::new(r"(?s)<svg [^>]*>(.*?)</svg>").expect("valid pattern");
    for c in svg.captures_iter(&r.html) {
        let tag = &c[0][..c[0].find('>').unwrap_or(0)];
        assert!(
            tag.contains("role=\"img\"") && tag.contains("aria-label=\""),
            "{tag}"
        );
        assert!(c[1].contains("<title") && c[1].contains("<desc"), "{tag}");
    }
    let nan = Regex::new(r"\b(NaN|-?inf(inity)?)\b").expect("valid pattern");
    assert!(!nan.is_match(&r.html), "a non-finite number printed");
}

#[test]
fn frontier_marks_are_the_frontier_of_summary_json() {
    let r = plain();
    let mut want: Vec<(f64, f64)> = r.json["frontier"]
        .as_array()
        .expect("frontier")
        .iter()
        .map(|p| (num(&p["tail_loss"]), num(&p["expected_net_return"])))
        .collect();
    want.sort_by(|a, b| a.0.total_cmp(&b.0));
    let got: Vec<(f64, f64)> = tags(&r.html, "m-frontier")
        .iter()
        .map(|t| (attr(t, "data-tail-loss"), attr(t, "data-expected")))
        .collect();
    assert_eq!(got.len(), want.len());
    for (g, w) in got.iter().zip(&want) {
        assert!(close(g.0, w.0) && close(g.1, w.1), "{g:?} vs {w:?}");
    }
    let chosen = tags(&r.html, "m-chosen");
    assert_eq!(chosen.len(), 1);
    let a = &r.json["allocation"];
    assert!(close(
        attr(chosen[0], "data-tail-loss"),
        num(&a["tail_loss"])
    ));
    assert!(close(
        attr(chosen[0], "data-expected"),
        num(&a["expected_net_return"])
    ));
    // Every frontier point is efficient: a larger tail loss buys at least
    // as much expected return (up to solver tolerance).
    for w in got.windows(2) {
        assert!(w[1].1 >= w[0].1 - 1e-6 * (1.0 + w[0].1.abs()), "{w:?}");
    }
}

#[test]
fn the_histogram_counts_every_future_and_agrees_with_the_risk_figures() {
    let r = plain();
    let bars = tags(&r.html, "hist-loss")
        .into_iter()
        .chain(tags(&r.html, "hist-gain"))
        .collect::<Vec<_>>();
    let bins: Vec<(f64, f64, f64)> = bars
        .iter()
        .map(|t| {
            (
                attr(t, "data-lo"),
                attr(t, "data-hi"),
                attr(t, "data-count"),
            )
        })
        .collect();
    let n: f64 = bins.iter().map(|b| b.2).sum();
    assert_eq!(n, 300.0, "counts sum to the scenarios asked for");
    let counts: Vec<f64> = r.json["return_distribution"]["counts"]
        .as_array()
        .expect("counts")
        .iter()
        .map(num)
        .collect();
    assert_eq!(counts.iter().sum::<f64>(), 300.0);
    assert_eq!(counts.len(), bins.len());
    let a = &r.json["allocation"];
    // The allocation's chance of a loss comes from the LP's loss vector;
    // the histogram from the portfolio's net return: futures in bins wholly
    // below zero are losses, futures in bins reaching below zero may be.
    let surely: f64 = bins.iter().filter(|b| b.1 <= 0.0).map(|b| b.2).sum();
    let maybe: f64 = bins.iter().filter(|b| b.0 < 0.0).map(|b| b.2).sum();
    let losses = num(&a["chance_of_loss"]) * 300.0;
    assert!(
        surely - 0.5 <= losses && losses <= maybe + 0.5,
        "{surely} {losses} {maybe}"
    );
    // The mean from bin midpoints is within half a bin of the expected return.
    let width = bins.iter().map(|b| b.1 - b.0).fold(0.0, f64::max);
    let mid_mean: f64 = bins.iter().map(|b| (b.0 + b.1) / 2.0 * b.2).sum::<f64>() / n;
    let expected = num(&a["expected_net_return"]);
    assert!(
        (mid_mean - expected).abs() <= width / 2.0 + 1e-6,
        "{mid_mean} {expected}"
    );
}

#[test]
fn var_and_cvar_lines_sit_at_minus_the_losses() {
    let r = plain();
    let a = &r.json["allocation"];
    let var = tags(&r.html, "s-var");
    let cvar = tags(&r.html, "s-cvar");
    // One line in the chart (the legend's swatch has no data-value).
    let value = |ts: &[&str]| -> Vec<f64> {
        ts.iter()
            .filter(|t| t.contains("data-value"))
            .map(|t| attr(t, "data-value"))
            .collect()
    };
    // (serde_json's default parser may be one unit in the last place off.)
    assert_eq!(value(&var).len(), 1);
    assert_eq!(value(&cvar).len(), 1);
    assert!(close(value(&var)[0], -num(&a["value_at_risk"])));
    assert!(close(value(&cvar)[0], -num(&a["tail_loss"])));
    // CVaR is the mean beyond VaR, so its line is never right of VaR's.
    assert!(value(&cvar)[0] <= value(&var)[0] + 1e-9);
}

#[test]
fn forecast_marks_are_the_forecast_of_summary_json() {
    let r = plain();
    let rows = r.json["forecast"].as_array().expect("forecast");
    let marks = tags(&r.html, "m-plan");
    let with_data: Vec<&&str> = marks.iter().filter(|t| t.contains("data-month")).collect();
    assert_eq!(with_data.len(), rows.len());
    for (t, row) in with_data.iter().zip(rows) {
        let month = row["month"].as_str().expect("month");
        assert!(t.contains(&format!("data-month=\"{month}\"")));
        for q in ["p10", "p50", "p90"] {
            assert!(close(
                attr(t, &format!("data-{q}")),
                num(&row[format!("with_plan_{q}")])
            ));
        }
    }
    let history = r.json["history"].as_array().expect("history");
    assert_eq!(
        history.len(),
        num(&r.json["check"]["history_months"]) as usize
    );
    // The target in clicks: one value per forecast month, adding up to the
    // target, in the shape of the baseline's median (issue 14: a flat
    // monthly average over a seasonal series cannot be compared honestly).
    let t = &r.json["target"];
    let line = tags(&r.html, "s-target");
    let line: Vec<&&str> = line.iter().filter(|l| l.contains("data-values")).collect();
    assert_eq!(line.len(), 1);
    assert!(close(attr(line[0], "data-total"), num(&t["target"])));
    let re = Regex::new(r#" data-values="([^"]*)""#).expect("valid pattern");
    let values: Vec<f64> = re.captures(line[0]).expect("data-values")[1]
        .split(' ')
        .map(|v| v.parse().expect("a number"))
        .collect();
    let f = r.json["forecast"].as_array().expect("forecast rows");
    assert_eq!(values.len(), f.len());
    assert!(close(values.iter().sum::<f64>(), num(&t["target"])));
    let base: Vec<f64> = f.iter().map(|m| num(&m["baseline_p50"])).collect();
    let bsum: f64 = base.iter().sum();
    for (v, b) in values.iter().zip(&base) {
        assert!((v / num(&t["target"]) - b / bsum).abs() < 1e-6, "{v} {b}");
    }
}

#[test]
fn allocation_bars_spend_what_the_allocation_spends() {
    let r = plain();
    let items = r.json["allocation"]["allocation"]
        .as_array()
        .expect("items");
    for i in items {
        let id = i["id"].as_str().expect("id");
        let spend = num(&i["spend"]);
        let bar = Regex::new(&format!(
            r#"<rect [^>]*data-id="{}"[^>]*>"#,
            regex::escape(&escaped(id))
        ))
        .expect("valid pattern");
        let found: Vec<&str> = bar.find_iter(&r.html).map(|m| m.as_str()).collect();
        if spend > 0.0 {
            assert_eq!(found.len(), 1, "{id}");
            assert!(close(attr(found[0], "data-spend"), spend));
        } else {
            assert!(found.is_empty(), "{id} has a bar without spend");
        }
    }
}

#[test]
fn tracking_shows_the_actuals_when_the_plan_names_them() {
    let (_tmp, dir) = project();
    let plan = std::fs::read_to_string(dir.join("plan.toml")).expect("plan");
    let line = "# actuals = \"actuals.csv\"";
    assert!(plan.contains(line));
    let plan = plan.replace(line, "actuals = \"actuals.csv\"");
    std::fs::write(dir.join("plan.toml"), plan).expect("rewrite");
    let r = run_report(&dir);
    assert!(r.html.contains("<h2>Tracking against actuals</h2>"));
    let observed = r.json["tracking"]["observed"].as_array().expect("observed");
    assert!(!observed.is_empty());
    let marks: Vec<f64> = tags(&r.html, "m-actual")
        .iter()
        .filter(|t| t.contains("data-value"))
        .map(|t| attr(t, "data-value"))
        .collect();
    let want: Vec<f64> = observed.iter().map(|o| num(&o["actual"])).collect();
    assert_eq!(marks.len(), want.len());
    for (m, w) in marks.iter().zip(&want) {
        assert!(close(*m, *w), "{m} vs {w}");
    }
}
