//! The committed demo is exactly what the seeded generator writes, and it
//! passes `check`: the demo stays reproducible.

mod common;
use common::*;

#[test]
fn committed_demo_matches_the_generator() {
    let tmp = tempfile::tempdir().unwrap();
    let o = furrow(tmp.path(), &["demo-data", "d"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data");
    for f in [
        "history.csv",
        "interest.csv",
        "keywords.csv",
        "queries.csv",
        "actuals.csv",
        "plan.toml",
    ] {
        let fresh = std::fs::read(tmp.path().join("d").join(f)).unwrap();
        let committed = std::fs::read(root.join(f)).unwrap();
        assert!(
            fresh == committed,
            "demo-data/{f} differs from the generator's output; run `furrow demo-data demo-data`"
        );
    }
    let o = furrow(
        std::path::Path::new(env!("CARGO_MANIFEST_DIR")),
        &["check", "demo-data/plan.toml"],
    );
    assert!(o.status.success(), "{}", stderr(&o));
}

#[test]
fn generator_refuses_nonsense_sizes() {
    let tmp = tempfile::tempdir().unwrap();
    let o = furrow(tmp.path(), &["demo-data", "d", "--clusters", "0"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("--clusters"));
}
