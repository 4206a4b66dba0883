//! `index.html`: the report as one self-contained page for people: inline
//! CSS and inline SVG, no script, no font or image fetched, so it opens
//! offline and prints to PDF from a browser (print rules put each section
//! on its own page and keep the backgrounds white).
//!
//! The page is drawn from the same [`Summary`] that `summary.json`
//! serialises. Every piece of user text (plan, cluster, tier and file
//! names, notes) is escaped where it is written; numbers that are not
//! finite print as "n/a".
//!
//! User text in the page's prose and tables goes through [`text_html`]:
//! escaped (bidirectional controls dropped, so a name holding U+202E cannot
//! reverse what follows it), and a run too long to wrap (a 10,000
//! character name) cut to [`RUN_MAX`] characters inside a `<bdi>` whose
//! `title` holds it whole, so the page keeps its width and the full name
//! shows on hover.

use super::svg::{chance, cut_run, esc, money, number, ratio, runs, RUN_MAX};
use super::Summary;
use super::{assumptions, sections};
use std::fmt::Write;

/// What writes the body of a section (empty: the section is left out).
type SectionFn = fn(&Summary) -> String;

/// Section ids, headings and bodies, in page order.
pub const SECTIONS: &[(&str, &str, SectionFn)] = &[
    ("decision", "The decision", decision),
    ("forecast", "Forecast", sections::forecast),
    ("allocation", "Allocation", sections::allocation),
    ("frontier", "Efficient frontier", sections::frontier),
    (
        "distribution",
        "Distribution of the net return",
        sections::distribution,
    ),
    ("stress", "Stress tests", sections::stress),
    ("drivers", "What drives the variance", sections::drivers),
    ("tracking", "Tracking against actuals", sections::tracking),
    (
        "assumptions",
        "Assumptions and model constants",
        assumptions::assumptions,
    ),
    ("cautions", "Cautions", cautions),
    ("reproducibility", "Reproducibility", reproducibility),
];

/// The whole page.
pub fn page(sm: &Summary) -> String {
    let parts: Vec<(&str, &str, String)> = SECTIONS
        .iter()
        .map(|(id, title, body)| (*id, *title, body(sm)))
        .filter(|p| !p.2.is_empty())
        .collect();
    let mut body = header(sm, &parts);
    for (id, title, content) in &parts {
        let _ = write!(
            body,
            "<section id=\"{id}\">\n<h2>{}</h2>\n{content}</section>\n",
            esc(title)
        );
    }
    format!(
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n<title>furrow report: {}</title>\n<style>\n{CSS}</style>\n</head>\n<body>\n{body}</body>\n</html>\n",
        esc(&super::svg::cut_runs(&sm.plan))
    )
}

fn header(sm: &Summary, parts: &[(&str, &str, String)]) -> String {
    let c = &sm.check;
    let mut h = format!(
        "<header>\n<h1>furrow report: {}</h1>\n<p class=\"sub\">Forecast {} to {}, amounts in {}, {} simulated futures (seed {}).</p>\n",
        text_html(&sm.plan),
        esc(&c.forecast_first),
        esc(&c.forecast_last),
        esc(&sm.currency),
        number(sm.reproducibility.scenarios as f64, 0),
        sm.reproducibility.seed
    );
    h += "<nav aria-label=\"Sections\"><ol>\n";
    for (id, title, _) in parts {
        let _ = writeln!(h, "<li><a href=\"#{id}\">{}</a></li>", esc(title));
    }
    h + "</ol></nav>\n</header>\n"
}

/// User text as page text: escaped, each run longer than [`RUN_MAX`]
/// characters cut and isolated in a `<bdi>` with the whole run as title.
pub fn text_html(s: &str) -> String {
    let mut out = String::with_capacity(s.len().min(4 * RUN_MAX) + 16);
    for (run, long) in runs(s) {
        if long {
            let _ = write!(
                out,
                "<bdi title=\"{}\">{}</bdi>",
                esc(run),
                esc(&cut_run(run))
            );
        } else {
            out.push_str(&esc(run));
        }
    }
    out
}

/// A paragraph of escaped text.
pub fn para(text: &str) -> String {
    format!("<p>{}</p>\n", text_html(text))
}

/// A bulleted list of escaped lines (nothing when empty).
pub fn list(items: &[String]) -> String {
    if items.is_empty() {
        return String::new();
    }
    let lis: String = items
        .iter()
        .map(|i| format!("<li>{}</li>\n", text_html(i)))
        .collect();
    format!("<ul>\n{lis}</ul>\n")
}

/// The class of a column from the end of its header: `#` numeric
/// (right-aligned), `~` a hash or code (monospace).
fn column_class(header: &str) -> &'static str {
    if header.ends_with('#') {
        " class=\"num\""
    } else if header.ends_with('~') {
        " class=\"hash\""
    } else {
        ""
    }
}

/// A table with a caption; a header ending in `#` marks a numeric column
/// and one ending in `~` a column of hashes (the mark is not shown). Every
/// cell is escaped.
pub fn table(caption: &str, header: &[&str], rows: &[Vec<String>]) -> String {
    let classes: Vec<&str> = header.iter().map(|h| column_class(h)).collect();
    let class = |i: usize| classes.get(i).copied().unwrap_or("");
    let head: String = header
        .iter()
        .enumerate()
        .map(|(i, h)| {
            let shown = h.trim_end_matches(['#', '~']);
            format!("<th scope=\"col\"{}>{}</th>", class(i), esc(shown))
        })
        .collect();
    let body: String = rows
        .iter()
        .map(|r| {
            let cells: String = r
                .iter()
                .enumerate()
                .map(|(i, c)| format!("<td{}>{}</td>", class(i), text_html(c)))
                .collect();
            format!("<tr>{cells}</tr>\n")
        })
        .collect();
    format!(
        "<table>\n<caption>{}</caption>\n<thead><tr>{head}</tr></thead>\n<tbody>\n{body}</tbody>\n</table>\n",
        text_html(caption)
    )
}

/// A chart in a figure with a caption.
pub fn figure(svg: &str, caption: &str) -> String {
    format!(
        "<figure>\n{svg}<figcaption>{}</figcaption>\n</figure>\n",
        text_html(caption)
    )
}

/// Key figures as a definition list: (term, value).
pub fn figures_list(items: &[(String, String)]) -> String {
    let inner: String = items
        .iter()
        .map(|(k, v)| {
            format!(
                "<div><dt>{}</dt><dd>{}</dd></div>\n",
                text_html(k),
                text_html(v)
            )
        })
        .collect();
    format!("<dl class=\"key\">\n{inner}</dl>\n")
}

/// A key figure: its name and value.
pub fn kv(name: impl Into<String>, value: String) -> (String, String) {
    (name.into(), value)
}

/// The decision's key figures.
fn key_figures(sm: &Summary) -> Vec<(String, String)> {
    let a = &sm.allocation;
    let cur = &sm.currency;
    let share = super::risk::tail_share(a.tail_level);
    let limit = a.max_tail_loss.map(|l| money(l, cur));
    let mut key = vec![
        kv("budget", money(a.budget, cur)),
        kv("spend", money(a.budget_used, cur)),
        kv("expected net return", money(a.expected_net_return, cur)),
        kv("expected ROI", ratio(a.expected_roi)),
        kv(
            format!("tail loss (CVaR, worst {share})"),
            loss(a.tail_loss, cur),
        ),
        kv(
            format!("value at risk ({share} tail)"),
            loss(a.value_at_risk, cur),
        ),
        kv("chance of a loss", chance(a.chance_of_loss)),
        kv("tail-loss limit", limit.unwrap_or_else(|| "none".into())),
    ];
    if let Some(t) = &sm.target {
        key.push(kv("chance of the target", chance(t.chosen.odds.chance)));
    }
    key
}

/// A list under a lead-in line (nothing when the list is empty).
fn titled_list(lead: &str, items: &[String]) -> String {
    if items.is_empty() {
        return String::new();
    }
    para(lead) + &list(items)
}

fn decision(sm: &Summary) -> String {
    let a = &sm.allocation;
    let mut s = format!("<p class=\"decision\">{}</p>\n", text_html(&sm.decision));
    s += &figures_list(&key_figures(sm));
    s += &sections::target(sm);
    s += &titled_list("What binds the choice:", &a.binding);
    s += &titled_list("How the allocation was found:", &a.explanation);
    s += "<p class=\"note\">An estimate under the assumptions stated below, not a promise; see <a href=\"#cautions\">Cautions</a>.</p>\n";
    s
}

/// A loss amount; a negative loss is said to be a gain.
fn loss(v: f64, cur: &str) -> String {
    if v < 0.0 {
        format!("{} (a gain)", money(v, cur))
    } else {
        money(v, cur)
    }
}

fn cautions(sm: &Summary) -> String {
    list(&sm.cautions)
}

fn reproducibility(sm: &Summary) -> String {
    let r = &sm.reproducibility;
    let key = [
        kv("tool version", format!("furrow {}", r.tool_version)),
        kv("seed", r.seed.to_string()),
        kv("simulated futures", number(r.scenarios as f64, 0)),
        kv("run time", format!("{} s", number(r.run_seconds, 2))),
    ];
    let hashes: Vec<Vec<String>> = r
        .inputs
        .iter()
        .map(|h| vec![h.label.clone(), h.path.clone(), h.sha256.clone()])
        .collect();
    let models: Vec<Vec<String>> = r
        .models
        .iter()
        .map(|(what, origin)| vec![what.clone(), origin.clone()])
        .collect();
    let caption = "SHA-256 of every input file";
    figures_list(&key)
        + &table(caption, &["input", "file", "SHA-256~"], &hashes)
        + &table("Model files", &["model", "origin"], &models)
        + &para("The same inputs, seed and number of futures give the same figures with any number of threads.")
}

/// The page's style sheet: light backgrounds only, print rules, and the
/// chart classes (Okabe & Ito colours; dashes and markers for greyscale).
const CSS: &str = r#"body { font-family: sans-serif; font-size: 15px; line-height: 1.45; color: #1a1a1a; background: #fff; max-width: 1000px; margin: 0 auto; padding: 24px; }
h1 { font-size: 26px; margin: 0 0 4px; }
h2 { font-size: 21px; border-bottom: 2px solid #1a1a1a; padding-bottom: 3px; margin-top: 0; }
h3 { font-size: 16px; margin: 18px 0 6px; }
.sub { color: #444; margin: 0 0 10px; }
nav ol { columns: 3; font-size: 14px; padding-left: 22px; }
section { margin: 36px 0; }
.decision { font-size: 17px; border-left: 6px solid #0072B2; padding: 10px 16px; background: #f2f6f9; }
dl.key { display: grid; grid-template-columns: repeat(4, 1fr); gap: 8px 16px; margin: 14px 0; }
dl.key div { border-top: 1px solid #bbb; padding-top: 4px; }
dl.key dt { font-size: 12px; color: #444; }
dl.key dd { margin: 0; font-size: 16px; font-weight: 600; font-variant-numeric: tabular-nums; }
table { border-collapse: collapse; width: 100%; font-size: 13px; margin: 10px 0 16px; font-variant-numeric: tabular-nums; }
caption { text-align: left; font-weight: 600; padding: 4px 0; }
th, td { text-align: left; vertical-align: top; padding: 3px 8px; border-bottom: 1px solid #d0d0d0; }
th { border-bottom: 1.5px solid #1a1a1a; }
.num { text-align: right; white-space: nowrap; }
td.hash { font-family: monospace; font-size: 12px; word-break: break-all; }
figure { margin: 12px 0 18px; }
figcaption { font-size: 13px; color: #444; margin-top: 4px; }
.note { font-size: 13px; color: #444; }
svg.chart { display: block; width: 100%; height: auto; }
.chart text { font-family: sans-serif; font-size: 12px; fill: #1a1a1a; }
.chart .tick { font-size: 11px; fill: #333; }
.chart .axis-title { font-size: 12.5px; font-weight: 600; }
.chart .ref-label, .chart .bar-label { font-size: 11.5px; }
.chart .point-label { font-size: 12px; font-weight: 600; }
.chart .halo { stroke: #fff; stroke-width: 4px; stroke-linejoin: round; }
.chart .seg-label { font-size: 11px; font-weight: 600; }
.chart .on-dark { fill: #fff; }
.chart .empty { font-style: italic; fill: #444; }
.grid { stroke: #e4e4e4; stroke-width: 1; }
.zero, .axis { stroke: #444; stroke-width: 1.2; }
.divider { stroke: #777; stroke-width: 1.2; stroke-dasharray: 2 3; }
polyline { fill: none; }
.s-history { stroke: #1a1a1a; stroke-width: 2; }
.band-base { fill: #e9e9e9; }
.s-base { stroke: #6b6b6b; stroke-width: 2; stroke-dasharray: 7 4; }
.band-plan { fill: #56B4E9; fill-opacity: 0.5; stroke: #0072B2; stroke-width: 1; stroke-dasharray: 2 2; }
.s-plan { stroke: #0072B2; stroke-width: 2.5; }
.m-plan { fill: #0072B2; stroke: #fff; stroke-width: 1; }
.s-target { stroke: #D55E00; stroke-width: 2; stroke-dasharray: 10 3 2 3; }
.m-actual { fill: #E69F00; stroke: #1a1a1a; stroke-width: 1.2; }
.s-reforecast { stroke: #CC79A7; stroke-width: 2; stroke-dasharray: 1 3; }
.m-reforecast { fill: #CC79A7; stroke: #1a1a1a; stroke-width: 0.8; }
.tier1 { fill: #0072B2; stroke: #1a1a1a; stroke-width: 0.8; }
.tier2 { fill: #E69F00; stroke: #1a1a1a; stroke-width: 0.8; }
.tier3 { fill: #F0E442; stroke: #1a1a1a; stroke-width: 0.8; }
.tier4 { fill: #CC79A7; stroke: #1a1a1a; stroke-width: 0.8; }
.capacity { fill: none; stroke: #555; stroke-width: 1.2; stroke-dasharray: 4 3; }
.s-frontier { stroke: #0072B2; stroke-width: 2; }
.m-frontier { fill: #fff; stroke: #0072B2; stroke-width: 1.5; }
.m-chosen { fill: #D55E00; stroke: #1a1a1a; stroke-width: 1.2; }
.m-best { fill: #F0E442; stroke: #1a1a1a; stroke-width: 1.2; }
.s-limit { stroke: #555; stroke-width: 1.5; stroke-dasharray: 6 4; }
.hist-gain { fill: #9ecae1; stroke: #fff; stroke-width: 0.5; }
.hist-loss { fill: #D55E00; stroke: #fff; stroke-width: 0.5; }
.s-mean { stroke: #0072B2; stroke-width: 2; }
.s-var { stroke: #1a1a1a; stroke-width: 1.8; stroke-dasharray: 7 4; }
.s-cvar { stroke: #1a1a1a; stroke-width: 2.2; stroke-dasharray: 2 3; }
.low { fill: #E69F00; stroke: #1a1a1a; stroke-width: 0.6; }
.high { fill: #0072B2; stroke: #1a1a1a; stroke-width: 0.6; }
* { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
@page { margin: 14mm; }
@media print {
  body { max-width: none; padding: 0; font-size: 10.5pt; }
  nav { display: none; }
  section { break-before: page; margin: 0; }
  section:first-of-type { break-before: auto; margin-top: 18px; }
  figure, table, tr, dl.key { break-inside: avoid; }
  h2, h3, caption { break-after: avoid; }
  a { color: inherit; text-decoration: none; }
  .decision { background: none; }
}
"#;
