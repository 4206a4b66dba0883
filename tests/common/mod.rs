//! Shared helpers for integration tests: run the binary in a fresh
//! temporary folder and read what it printed.
#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

/// Runs `furrow` with `args` in `dir`.
pub fn furrow(dir: &Path, args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_furrow"))
        .args(args)
        .current_dir(dir)
        .env_remove("RUST_BACKTRACE")
        .output()
        .expect("the furrow binary runs")
}

/// Text of stdout.
pub fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).to_string()
}

/// Text of stderr.
pub fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).to_string()
}

/// A fresh folder holding a valid project made by `furrow init`.
pub fn project() -> (tempfile::TempDir, PathBuf) {
    let tmp = tempfile::tempdir().expect("a temporary folder");
    let o = furrow(tmp.path(), &["init", "p"]);
    assert!(o.status.success(), "init failed: {}", stderr(&o));
    let dir = tmp.path().join("p");
    (tmp, dir)
}

/// Writes `bytes` to `dir/name`.
pub fn write(dir: &Path, name: &str, bytes: &[u8]) {
    std::fs::write(dir.join(name), bytes).expect("write a fixture");
}

/// The JSON a successful run printed (fails the test, with stderr, when the
/// run failed or printed something else).
pub fn json(o: &Output) -> serde_json::Value {
    assert!(o.status.success(), "{}", stderr(o));
    serde_json::from_slice(&o.stdout).expect("valid JSON")
}

/// Copies the committed demo's plan and inputs into `dir`, its models
/// folder named by absolute path, with the plan text passed through `edit`.
pub fn demo_copy(dir: &Path, edit: impl Fn(String) -> String) {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data");
    for f in ["history.csv", "interest.csv", "keywords.csv", "queries.csv"] {
        std::fs::copy(src.join(f), dir.join(f)).expect("copy a demo file");
    }
    let plan = std::fs::read_to_string(src.join("plan.toml")).expect("demo plan");
    let models = Path::new(env!("CARGO_MANIFEST_DIR")).join("models");
    let plan = plan.replace(
        "dir = \"../models\"",
        &format!("dir = {:?}", models.display().to_string()),
    );
    std::fs::write(dir.join("plan.toml"), edit(plan)).expect("write the plan");
}
