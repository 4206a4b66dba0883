//! `stress --optimize-under NAME` shows the split it chose, tier by tier,
//! beside the base allocation (issue 14, item 7), in the table, JSON and CSV.

mod common;
use common::*;

const N: &str = "300";

fn stress(dir: &std::path::Path, format: &str) -> std::process::Output {
    furrow(
        dir,
        &[
            "stress",
            "plan.toml",
            "--preset",
            "volume-drop",
            "--optimize-under",
            "volume-drop",
            "--scenarios",
            N,
            "--quiet",
            "--format",
            format,
        ],
    )
}

#[test]
fn stress_optimize_under_shows_the_split_and_its_difference_from_the_base_allocation() {
    let (_t, dir) = project();
    let v = json(&stress(&dir, "json"));
    let split = &v["optimized_under"];
    assert_eq!(split["preset"], "volume-drop");
    let tiers = split["tiers"].as_array().expect("a list of tiers");
    assert!(!tiers.is_empty());
    // The base fractions are those `allocate` chooses on the same futures.
    let a = json(&furrow(
        &dir,
        &[
            "allocate",
            "plan.toml",
            "--scenarios",
            N,
            "--quiet",
            "--format",
            "json",
        ],
    ));
    let alloc = a["allocation"].as_array().unwrap();
    assert_eq!(alloc.len(), tiers.len());
    let mut spend = 0.0;
    for (t, b) in tiers.iter().zip(alloc) {
        assert_eq!(t["id"], b["id"]);
        let bf = t["base_fraction"].as_f64().unwrap();
        let f = t["fraction"].as_f64().unwrap();
        assert!(
            (bf - b["fraction"].as_f64().unwrap()).abs() < 1e-9,
            "{t} {b}"
        );
        assert!((t["difference"].as_f64().unwrap() - (f - bf)).abs() < 1e-9);
        assert!((0.0..=1.0 + 1e-9).contains(&f));
        spend += t["spend"].as_f64().unwrap();
    }
    // The split is the allocation the stress rows evaluate: its spend.
    let reported = v["spend"].as_f64().unwrap();
    assert!(
        (spend - reported).abs() < 1e-6 * reported.max(1.0),
        "{spend} vs {reported}"
    );
    assert!((split["spend"].as_f64().unwrap() - reported).abs() < 1e-6 * reported.max(1.0));

    let table = stdout(&stress(&dir, "table"));
    assert!(
        table.contains("Split optimized under volume-drop"),
        "{table}"
    );
    assert!(table.contains("under volume-drop"), "{table}");

    let csv = stdout(&stress(&dir, "csv"));
    let header = csv.lines().next().unwrap();
    assert!(header.contains("base_fraction") && header.contains("fraction_under_preset"));
    let split_rows = csv
        .lines()
        .filter(|l| l.starts_with("split under volume-drop"))
        .count();
    assert_eq!(split_rows, tiers.len(), "{csv}");
}

#[test]
fn stress_without_optimize_under_has_no_split() {
    let (_t, dir) = project();
    let o = furrow(
        &dir,
        &[
            "stress",
            "plan.toml",
            "--preset",
            "volume-drop",
            "--scenarios",
            N,
            "--quiet",
            "--format",
            "json",
        ],
    );
    let v = json(&o);
    assert!(v.get("optimized_under").is_none());
}
