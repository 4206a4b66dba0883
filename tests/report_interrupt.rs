//! Interrupting `furrow report` leaves the earlier report whole (issue 8).
//!
//! The report is written to a temporary folder beside its place and
//! swapped in at the end. The test writes one report, then starts a second
//! run with another seed and kills it (SIGKILL, no chance to clean up) as
//! soon as its temporary folder appears, that is while it is writing files.
//! The earlier report must be byte for byte what it was. A later complete
//! run removes the killed run's leftovers and replaces the report.

mod common;
mod report_support;

use common::{furrow, stderr};
use std::collections::BTreeMap;
use std::path::Path;
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

fn snapshot(dir: &Path) -> BTreeMap<String, Vec<u8>> {
    std::fs::read_dir(dir)
        .expect("the report folder")
        .map(|e| {
            let e = e.expect("entry");
            (
                e.file_name().to_string_lossy().to_string(),
                std::fs::read(e.path()).expect("read a report file"),
            )
        })
        .collect()
}

fn leftovers(dir: &Path) -> Vec<String> {
    std::fs::read_dir(dir)
        .expect("the demo folder")
        .filter_map(|e| e.ok())
        .map(|e| e.file_name().to_string_lossy().to_string())
        .filter(|n| n.starts_with(".out."))
        .collect()
}

const ARGS: [&str; 6] = ["report", "plan.toml", "--scenarios", "1000", "--out", "out"];

/// Starts a report with `seed` and kills it once `when` says so; true if
/// it was killed before it finished.
fn kill_when(dir: &Path, seed: &str, when: impl Fn(&Path, Duration) -> bool) -> bool {
    let mut child = Command::new(env!("CARGO_BIN_EXE_furrow"))
        .args(ARGS)
        .args(["--seed", seed, "--quiet"])
        .current_dir(dir)
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .expect("start furrow");
    let start = Instant::now();
    loop {
        if let Some(_status) = child.try_wait().expect("poll the child") {
            return false;
        }
        if when(dir, start.elapsed()) {
            child.kill().expect("kill the child");
            child.wait().expect("reap the child");
            return true;
        }
        std::thread::sleep(Duration::from_micros(200));
    }
}

#[test]
fn killing_a_report_run_leaves_the_earlier_report_whole() {
    let (_tmp, dir) = report_support::demo(false);
    let o = furrow(&dir, &[&ARGS[..], &["--quiet"]].concat());
    assert!(o.status.success(), "first report: {}", stderr(&o));
    let before = snapshot(&dir.join("out"));
    assert!(before.contains_key("summary.json") && before.contains_key("index.html"));

    // Killed while computing (before any file is written) ...
    let early = kill_when(&dir, "7", |_, t| t > Duration::from_millis(30));
    assert!(
        early,
        "the run finished within 30 ms; nothing was interrupted"
    );
    assert_eq!(snapshot(&dir.join("out")), before);

    // ... and killed while writing: as soon as its temporary folder shows.
    // A run can finish its writing between two polls, so try a few times.
    let mut killed_mid_write = 0;
    for seed in ["8", "9", "10", "11", "12"] {
        let writing = |d: &Path, _| leftovers(d).iter().any(|n| n.starts_with(".out.tmp-"));
        if kill_when(&dir, seed, writing) {
            killed_mid_write += 1;
            assert_eq!(
                snapshot(&dir.join("out")),
                before,
                "the earlier report changed after a kill mid-write (seed {seed})"
            );
        } else {
            // It finished: the report is now the new run's, complete.
            let now = snapshot(&dir.join("out"));
            assert_eq!(
                now.keys().collect::<Vec<_>>(),
                before.keys().collect::<Vec<_>>()
            );
            break;
        }
    }
    assert!(killed_mid_write > 0, "no run was caught while writing");
    assert!(
        !leftovers(&dir).is_empty(),
        "a killed run leaves its temporary folder"
    );

    // A complete run replaces the report and sweeps the dead runs' folders.
    let o = furrow(&dir, &[&ARGS[..], &["--seed", "13", "--quiet"]].concat());
    assert!(o.status.success(), "last report: {}", stderr(&o));
    let after = snapshot(&dir.join("out"));
    assert_eq!(
        after.keys().collect::<Vec<_>>(),
        before.keys().collect::<Vec<_>>()
    );
    assert_ne!(after["summary.json"], before["summary.json"]);
    assert!(leftovers(&dir).is_empty(), "{:?}", leftovers(&dir));
}
