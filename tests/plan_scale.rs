//! Loading a plan stays linear in its number of clusters (issue 24: `check`
//! took 13.5 s for 20,000 clusters, and 200,000 invalid ones did not finish
//! in two minutes, because names were matched by scanning lists and every
//! problem counted lines from the top of the file). Speed itself is
//! measured by `cargo bench --bench readers` (plan_20k_clusters), never
//! asserted here; these tests check that the large plans are read right:
//! every cluster summarised, and problems placed at their own lines.

mod common;

use common::{furrow, stderr, stdout};
use std::fmt::Write as _;
use std::path::Path;

/// A plan of `n` one-tier clusters, each with one keyword, beside the init
/// project's other inputs; `cost` is written into every tier.
fn big_plan(dir: &Path, n: usize, cost: &str) {
    let plan = std::fs::read_to_string(dir.join("plan.toml")).expect("read");
    let head = plan.split("\n[[cluster]]").next().expect("a head");
    let mut text = head.replace("keywords.csv", "many.csv") + "\n";
    let mut kw = String::from("keyword,cluster,volume,position,difficulty\n");
    for c in 0..n {
        let _ = write!(
            text,
            "[[cluster]]\nname = \"c{c}\"\ntiers = [{{ cost = {cost}, effort = 1 }}]\n\n"
        );
        let _ = writeln!(kw, "kw {c},c{c},100,20,30");
    }
    std::fs::write(dir.join("big.toml"), text).expect("write");
    std::fs::write(dir.join("many.csv"), kw).expect("write");
}

#[test]
fn plan_loading_is_linear_in_clusters_and_reads_all_twenty_thousand() {
    let (_tmp, dir) = common::project();
    big_plan(&dir, 20_000, "100");
    let o = furrow(&dir, &["check", "big.toml"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let text = stdout(&o);
    assert!(text.contains("\nc0 "), "first cluster listed");
    assert!(text.contains("\nc19999 "), "last cluster listed");
    assert_eq!(
        text.lines()
            .filter(|l| l.starts_with('c') && l.contains("EUR 100"))
            .count(),
        20_000
    );
}

#[test]
fn plan_loading_places_problems_of_many_clusters_at_their_lines() {
    let (_tmp, dir) = common::project();
    big_plan(&dir, 50_000, "-1");
    let o = furrow(&dir, &["check", "big.toml"]);
    assert_eq!(o.status.code(), Some(1));
    let err = stderr(&o);
    // Clusters start after the head; each takes four lines, the cost on
    // the third: the first problem's line follows from the head's length.
    let plan = std::fs::read_to_string(dir.join("big.toml")).expect("read");
    let first = plan
        .lines()
        .position(|l| l.contains("cost = -1"))
        .expect("a tier")
        + 1;
    assert!(
        err.contains(&format!("big.toml, line {first}, column ")),
        "{err}"
    );
    assert!(
        err.contains(&format!("line {}, column ", first + 4)),
        "{err}"
    );
    assert!(err.contains("and 49950 more not listed"), "{err}");
}
