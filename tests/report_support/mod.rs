//! Shared by the report tests: a copy of the committed demo (with the
//! `models` folder it points to) in a temporary folder, optionally with the
//! demo's actuals named in the plan so the tracking section is written.
#![allow(dead_code)]

use std::path::{Path, PathBuf};

fn copy_dir(from: &Path, to: &Path) {
    std::fs::create_dir_all(to).expect("create a folder");
    for e in std::fs::read_dir(from).expect("read a folder") {
        let e = e.expect("a folder entry");
        let target = to.join(e.file_name());
        if e.file_type().expect("a file type").is_dir() {
            copy_dir(&e.path(), &target);
        } else {
            std::fs::copy(e.path(), &target).expect("copy a file");
        }
    }
}

/// The demo project copied into a fresh temporary folder; returns the
/// folder and the path of the copied `demo-data` (holding `plan.toml`).
pub fn demo(with_actuals: bool) -> (tempfile::TempDir, PathBuf) {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let tmp = tempfile::tempdir().expect("a temporary folder");
    copy_dir(&root.join("demo-data"), &tmp.path().join("demo-data"));
    copy_dir(&root.join("models"), &tmp.path().join("models"));
    let dir = tmp.path().join("demo-data");
    if with_actuals {
        let plan = dir.join("plan.toml");
        let text = std::fs::read_to_string(&plan).expect("read the plan");
        let text = text.replacen(
            "queries = \"queries.csv\"\n",
            "queries = \"queries.csv\"\nactuals = \"actuals.csv\"\n",
            1,
        );
        assert!(text.contains("actuals = "), "the demo plan changed shape");
        std::fs::write(&plan, text).expect("write the plan");
    }
    (tmp, dir)
}
