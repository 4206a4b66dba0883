//! Replays saved fuzz inputs in the normal `cargo test`: every file under
//! `tests/fixtures/fuzz/<target>/` (the crashes the fuzzers found, then
//! fixed, and a handful of corpus entries, well-formed and malformed) goes
//! through the same check as the fuzz target (`tests/fuzz_support`): the
//! reader or the whole plan load must return, and an error must name the
//! file. The fuzzers themselves need nightly; see docs/reliability.md.

mod fuzz_support;

use std::path::{Path, PathBuf};

fn fixtures(target: &str) -> Vec<PathBuf> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures/fuzz")
        .join(target);
    let mut files: Vec<PathBuf> = std::fs::read_dir(&dir)
        .unwrap_or_else(|e| panic!("cannot list {}: {e}", dir.display()))
        .map(|e| e.expect("a directory entry").path())
        .filter(|p| p.is_file())
        .collect();
    files.sort();
    assert!(
        files.len() >= 10,
        "expected at least 10 saved inputs in {}, found {}",
        dir.display(),
        files.len()
    );
    files
}

#[test]
fn saved_csv_inputs_are_read_or_refused_with_the_file_named() {
    let tmp = tempfile::tempdir().expect("a temporary folder");
    let scratch = tmp.path().join("input.csv");
    let mut read = 0;
    let mut refused = 0;
    let mut readers = std::collections::BTreeSet::new();
    for f in fixtures("csv_readers") {
        let data = std::fs::read(&f).expect("read a saved input");
        eprintln!("replaying {}", f.display());
        if let Some(&selector) = data.first() {
            readers.insert(fuzz_support::selected(selector).0);
        }
        if fuzz_support::check_csv(&data, &scratch) {
            read += 1;
        } else {
            refused += 1;
        }
    }
    // The saved inputs cover both outcomes and every reader.
    assert!(read > 0 && refused > 0, "read {read}, refused {refused}");
    assert_eq!(readers.len(), fuzz_support::READERS.len(), "{readers:?}");
}

#[test]
fn the_keyword_crash_input_is_refused_naming_the_file() {
    // Found by the csv_readers fuzzer: a refused keyword row listed twice
    // indexed past the end of the kept keywords (a panic before the fix).
    let data = std::fs::read(
        Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("tests/fixtures/fuzz/csv_readers/crash-keywords-duplicate-of-refused-row"),
    )
    .expect("the saved crash input");
    let tmp = tempfile::tempdir().expect("a temporary folder");
    let path = tmp.path().join("keywords.csv");
    std::fs::write(&path, &data[1..]).expect("write the input");
    assert_eq!(fuzz_support::selected(data[0]).0, "keywords");
    let err = furrow::inputs::keywords::read(&path, &Default::default())
        .expect_err("blank volumes are refused");
    let msg = err.to_string();
    assert!(msg.contains(&path.display().to_string()), "{msg}");
    assert!(
        msg.contains("expected a number, found an empty cell"),
        "{msg}"
    );
}

#[test]
fn saved_plans_load_or_are_refused_with_a_file_named() {
    let tmp = tempfile::tempdir().expect("a temporary folder");
    let dir = tmp.path().join("project");
    fuzz_support::write_project(&dir);
    let plan = dir.join("plan.toml");
    let mut depth = [0usize; 4];
    for f in fixtures("plan") {
        let data = std::fs::read(&f).expect("read a saved plan");
        eprintln!("replaying {}", f.display());
        depth[usize::from(fuzz_support::check_plan(&data, &plan))] += 1;
    }
    // Some saved plans are refused, some get all the way to the estimate.
    assert!(depth[0] > 0 && depth[3] > 0, "{depth:?}");
}

#[test]
fn the_tiny_project_of_the_plan_target_is_valid() {
    // The plan target only goes deep if its project loads: the seed plans
    // of `furrow init` and of the demo must reach the central estimate.
    let tmp = tempfile::tempdir().expect("a temporary folder");
    let dir = tmp.path().join("project");
    fuzz_support::write_project(&dir);
    for name in ["init-template", "demo-plan-local-models"] {
        let data = std::fs::read(
            Path::new(env!("CARGO_MANIFEST_DIR"))
                .join("tests/fixtures/fuzz/plan")
                .join(name),
        )
        .expect("a saved seed plan");
        assert_eq!(
            fuzz_support::check_plan(&data, &dir.join("plan.toml")),
            3,
            "{name}"
        );
    }
}
