//! Exit codes through the binary (issue 14, item 9): a failure of tracking,
//! target odds or stress that is not a command-line usage error exits 1,
//! not 2; usage errors still exit 2.

mod common;
use common::*;

fn set_metric_revenue(dir: &std::path::Path) {
    let plan = std::fs::read_to_string(dir.join("plan.toml")).unwrap();
    let plan = plan.replace("metric = \"clicks\"", "metric = \"revenue\"");
    write(dir, "plan.toml", plan.as_bytes());
}

#[test]
fn a_track_failure_exits_1_not_as_a_usage_error() {
    let (_t, dir) = project();
    set_metric_revenue(&dir);
    // Revenue target, but the actuals have no revenue column: the actuals
    // cannot be used. That is bad input (exit 1), not a usage error (2).
    write(&dir, "a.csv", b"month,clicks\n2027-01,30000\n");
    let o = furrow(
        &dir,
        &[
            "track",
            "plan.toml",
            "--actuals",
            "a.csv",
            "--scenarios",
            "200",
            "--quiet",
        ],
    );
    assert_eq!(o.status.code(), Some(1), "{}", stderr(&o));
    assert!(stderr(&o).contains("revenue"), "{}", stderr(&o));
}

#[test]
fn a_stress_weight_outside_0_to_1_is_a_usage_error() {
    let (_t, dir) = project();
    let o = furrow(
        &dir,
        &[
            "stress",
            "plan.toml",
            "--optimize-under",
            "volume-drop",
            "--stress-weight",
            "1.5",
            "--scenarios",
            "200",
            "--quiet",
        ],
    );
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(stderr(&o).contains("--stress-weight"), "{}", stderr(&o));
}

#[test]
fn a_usage_error_still_exits_2() {
    let (_t, dir) = project();
    let o = furrow(&dir, &["allocate", "plan.toml", "--threads", "0"]);
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
}
