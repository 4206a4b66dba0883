//! Fuzz target: a plan file of arbitrary bytes, loaded the whole way.
//!
//! The bytes become `plan.toml` in a tiny valid project (written once per
//! process under /dev/shm), so a plan that parses goes on to read the CSV
//! inputs it names, the cross-checks, the model and the central estimate.
//! Errors must name the plan or the file they are about; the estimate must
//! hold no NaN. Plans naming files outside the project are only parsed.
#![no_main]

use libfuzzer_sys::fuzz_target;
use std::path::PathBuf;
use std::sync::OnceLock;

#[path = "../../tests/fuzz_support/mod.rs"]
mod fuzz_support;

fn plan_path() -> &'static PathBuf {
    static PLAN: OnceLock<PathBuf> = OnceLock::new();
    PLAN.get_or_init(|| {
        let base = if std::path::Path::new("/dev/shm").is_dir() {
            PathBuf::from("/dev/shm")
        } else {
            std::env::temp_dir()
        };
        let dir = base.join(format!("furrow-fuzz-plan-{}", std::process::id()));
        fuzz_support::write_project(&dir);
        dir.join("plan.toml")
    })
}

fuzz_target!(|data: &[u8]| {
    fuzz_support::check_plan(data, plan_path());
});
