//! Snapshot tests (insta) of the report's machine-readable outputs for the
//! committed demo, with its actuals, at a fixed seed and 1,000 futures:
//! `summary.json`, every CSV table and the plain-text summary.
//!
//! These guard against unintended change, nothing more: the snapshots are
//! the tool's own output, reviewed once by eye when accepted. Correctness
//! is checked elsewhere against outside references (baseline against the
//! NIST data sets and a statistics library, the allocation against an
//! independent LP solver, CVaR against its closed form, and so on). When a
//! change is meant, review the `.snap.new` files and accept them
//! (`INSTA_UPDATE=always cargo test --test report_snapshots`, then read the
//! diff before committing). The run time and the temporary folder's path
//! are redacted; everything else must match to the last digit (the
//! simulation is reproducible to the bit for a seed, whatever the threads).

mod common;
mod report_support;

use common::{furrow, stderr};
use serde_json::Value;
use std::path::Path;
use std::sync::OnceLock;

struct Run {
    _tmp: tempfile::TempDir,
    out: std::path::PathBuf,
    root: String,
}

fn run() -> &'static Run {
    static R: OnceLock<Run> = OnceLock::new();
    R.get_or_init(|| {
        let (tmp, dir) = report_support::demo(true);
        let o = furrow(
            &dir,
            &[
                "report",
                "plan.toml",
                "--scenarios",
                "1000",
                "--seed",
                "2027",
                "--threads",
                "2",
                "--out",
                "out",
                "--quiet",
            ],
        );
        assert!(o.status.success(), "report failed: {}", stderr(&o));
        Run {
            root: tmp.path().display().to_string(),
            out: dir.join("out"),
            _tmp: tmp,
        }
    })
}

fn read(name: &str) -> String {
    let r = run();
    let text = std::fs::read_to_string(r.out.join(name))
        .unwrap_or_else(|e| panic!("cannot read {name}: {e}"));
    text.replace(&r.root, "[tmp]")
}

fn redact_json(v: &mut Value) {
    if let Some(r) = v.get_mut("reproducibility") {
        r["run_seconds"] = Value::String("[redacted]".into());
    }
}

#[test]
fn summary_json_matches_its_snapshot() {
    let mut v: Value = serde_json::from_str(&read("summary.json")).expect("summary.json parses");
    assert!(v["reproducibility"]["run_seconds"].as_f64().is_some());
    redact_json(&mut v);
    let text = serde_json::to_string_pretty(&v).expect("serialise");
    insta::assert_snapshot!("summary_json", text);
}

#[test]
fn csv_tables_match_their_snapshots() {
    for name in [
        "allocation.csv",
        "clusters.csv",
        "frontier.csv",
        "stress.csv",
        "forecast.csv",
        "drivers.csv",
        "target.csv",
        "tracking.csv",
    ] {
        let text = read(name);
        insta::assert_snapshot!(name, text);
    }
}

#[test]
fn text_summary_matches_its_snapshot() {
    let text = read("summary.txt");
    let redacted: Vec<&str> = text
        .lines()
        .map(|l| {
            if l.contains("run time") {
                "[run time line redacted]"
            } else {
                l
            }
        })
        .collect();
    assert!(redacted.contains(&"[run time line redacted]"));
    insta::assert_snapshot!("summary_txt", redacted.join("\n"));
}

#[test]
fn every_file_of_the_report_is_there() {
    let r = run();
    let mut names: Vec<String> = std::fs::read_dir(&r.out)
        .expect("the report folder")
        .map(|e| e.expect("entry").file_name().to_string_lossy().to_string())
        .collect();
    names.sort();
    let want = [
        // The marker that lets a later run replace this folder (issue 24).
        ".furrow-report",
        "allocation.csv",
        "clusters.csv",
        "drivers.csv",
        "forecast.csv",
        "frontier.csv",
        "furrow-plan.xlsx",
        "index.html",
        "stress.csv",
        "summary.json",
        "summary.txt",
        "target.csv",
        "tracking.csv",
    ];
    assert_eq!(names, want);
    // Nothing left beside the folder by the temporary write.
    let parent = r.out.parent().unwrap_or(Path::new("."));
    let leftovers: Vec<String> = std::fs::read_dir(parent)
        .expect("the demo folder")
        .map(|e| e.expect("entry").file_name().to_string_lossy().to_string())
        .filter(|n| n.starts_with(".out."))
        .collect();
    assert!(leftovers.is_empty(), "{leftovers:?}");
}
