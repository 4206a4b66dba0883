//! CSV formula injection (issue #24, fault 5): cluster names and tier labels
//! that a spreadsheet would run as formulas (`=HYPERLINK(...)`, `+1+1`,
//! `-2+3`, `@SUM(1)`) reach no CSV file furrow writes as a formula — not the
//! `--format csv` outputs, not the report's tables, not the dumped futures —
//! while numbers (negative ones included) stay numbers, and a dumped file
//! read back by `allocate --returns/--costs` gives the original names.

mod common;
mod hostile_support;

use common::{furrow, json, project, stderr, stdout};
use hostile_support::{rename_cluster, rename_label};
use std::collections::BTreeSet;
use std::path::Path;

/// The init project's clusters renamed to formulas, and one tier label too.
const NAMES: [(&str, &str); 4] = [
    ("raised beds", "=HYPERLINK(\"http://x.invalid\",\"y\")"),
    ("seed starting", "+1+1"),
    ("composting", "-2+3"),
    ("greenhouses", "@SUM(1)"),
];
const LABEL: (&str, &str) = ("outreach", "=1+1");

fn hostile_project() -> (tempfile::TempDir, std::path::PathBuf) {
    let (tmp, dir) = project();
    for (old, new) in NAMES {
        rename_cluster(&dir, old, new);
    }
    rename_label(&dir, LABEL.0, LABEL.1);
    (tmp, dir)
}

/// A cell a spreadsheet would read as a formula: it starts with `=`, `+`,
/// `-`, `@`, tab or carriage return and is not a plain decimal number.
fn is_formula(cell: &str) -> bool {
    let starts = cell.starts_with(['=', '+', '-', '@', '\t', '\r']);
    let number = cell
        .trim_start_matches(['+', '-'])
        .chars()
        .all(|c| c.is_ascii_digit() || matches!(c, '.' | 'e' | 'E' | '+' | '-'))
        && cell.parse::<f64>().is_ok_and(f64::is_finite);
    starts && !number
}

/// Every cell of the CSV `text` (named `what` in messages); fails on a cell
/// that a spreadsheet would run.
fn cells(what: &str, text: &str) -> Vec<String> {
    let mut r = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .from_reader(text.as_bytes());
    let mut out = Vec::new();
    for rec in r.records() {
        let rec = rec.unwrap_or_else(|e| panic!("{what} is not CSV: {e}"));
        for c in rec.iter() {
            assert!(!is_formula(c), "{what} has the formula cell {c:?}");
            out.push(c.to_string());
        }
    }
    out
}

/// The names reached the file (guarded), so the check above saw them.
fn assert_guarded_names(what: &str, cells: &[String]) {
    for (_, name) in NAMES {
        let guarded = format!("'{name}");
        assert!(
            cells.iter().any(|c| c.starts_with(&guarded)),
            "{what} has no cell starting with {guarded:?}"
        );
    }
}

fn run_ok(dir: &Path, args: &[&str]) -> String {
    let o = furrow(dir, args);
    assert!(o.status.success(), "{args:?} failed: {}", stderr(&o));
    stdout(&o)
}

#[test]
fn csv_formula_injection_is_neutralised_in_format_csv() {
    let (_tmp, dir) = hostile_project();
    for cmd in ["estimate", "simulate", "allocate"] {
        let mut args = vec![cmd, "plan.toml", "--format", "csv"];
        if cmd != "estimate" {
            args.extend(["--scenarios", "200"]);
        }
        let text = run_ok(&dir, &args);
        let all = cells(cmd, &text);
        assert_guarded_names(cmd, &all);
        if cmd == "simulate" {
            assert!(
                all.iter().any(|c| c == &format!("'{}", LABEL.1)),
                "simulate has no guarded tier label"
            );
            // Negative numbers are numbers: left as they are.
            assert!(
                all.iter()
                    .any(|c| c.starts_with('-') && c.parse::<f64>().is_ok()),
                "simulate has no negative number left unquoted"
            );
        }
    }
}

#[test]
fn csv_formula_injection_is_neutralised_in_the_report_tables() {
    let (_tmp, dir) = hostile_project();
    run_ok(
        &dir,
        &[
            "report",
            "plan.toml",
            "--scenarios",
            "200",
            "--out",
            "rep",
            "--quiet",
        ],
    );
    for name in ["allocation.csv", "clusters.csv"] {
        let text = std::fs::read_to_string(dir.join("rep").join(name)).expect("read a table");
        assert_guarded_names(name, &cells(name, &text));
    }
    for e in std::fs::read_dir(dir.join("rep")).expect("the report folder") {
        let path = e.expect("an entry").path();
        if path.extension().is_some_and(|x| x == "csv") {
            let text = std::fs::read_to_string(&path).expect("read a table");
            cells(&path.display().to_string(), &text);
        }
    }
}

#[test]
fn csv_formula_injection_in_dumped_futures_is_neutralised_and_read_back() {
    let (_tmp, dir) = hostile_project();
    run_ok(
        &dir,
        &[
            "simulate",
            "plan.toml",
            "--scenarios",
            "200",
            "--dump-scenarios",
            "f.csv",
        ],
    );
    let returns = std::fs::read_to_string(dir.join("f.csv")).expect("the returns file");
    let costs = std::fs::read_to_string(dir.join("f.costs.csv")).expect("the costs file");
    assert_guarded_names("f.csv", &cells("f.csv", &returns));
    assert_guarded_names("f.costs.csv", &cells("f.costs.csv", &costs));

    let out = json(&furrow(
        &dir,
        &[
            "allocate",
            "--returns",
            "f.csv",
            "--costs",
            "f.costs.csv",
            "--budget",
            "4000",
            "--format",
            "json",
        ],
    ));
    let ids: BTreeSet<String> = out["allocation"]
        .as_array()
        .expect("an allocation array")
        .iter()
        .map(|a| a["id"].as_str().expect("an id").to_string())
        .collect();
    for (_, name) in NAMES {
        let first = format!("{name}/1");
        assert!(ids.contains(&first), "{first:?} not read back: {ids:?}");
        assert!(
            !ids.iter().any(|i| i.starts_with('\'')),
            "a guard quote was read as part of a name: {ids:?}"
        );
    }
    // Printed as CSV again, the names are guarded again.
    let text = run_ok(
        &dir,
        &[
            "allocate",
            "--returns",
            "f.csv",
            "--costs",
            "f.costs.csv",
            "--budget",
            "4000",
            "--format",
            "csv",
        ],
    );
    assert_guarded_names("allocate --format csv", &cells("allocate", &text));
}
