//! Fuzz target: every CSV reader of furrow on arbitrary bytes.
//!
//! The first byte picks the reader (history, interest, actuals, keywords,
//! queries, clusters, scenario returns, scenario costs; bit 3 adds a column
//! mapping), the rest is the file. The readers take a path, so the bytes go
//! to one scratch file per process under /dev/shm (memory, not disk),
//! overwritten each time. A reader must return; an error must name the file.
#![no_main]

use libfuzzer_sys::fuzz_target;
use std::path::PathBuf;
use std::sync::OnceLock;

#[path = "../../tests/fuzz_support/mod.rs"]
mod fuzz_support;

fn scratch() -> &'static PathBuf {
    static FILE: OnceLock<PathBuf> = OnceLock::new();
    FILE.get_or_init(|| {
        let base = if std::path::Path::new("/dev/shm").is_dir() {
            PathBuf::from("/dev/shm")
        } else {
            std::env::temp_dir()
        };
        let dir = base.join(format!("furrow-fuzz-csv-{}", std::process::id()));
        std::fs::create_dir_all(&dir).expect("create the scratch folder");
        dir.join("input.csv")
    })
}

fuzz_target!(|data: &[u8]| {
    fuzz_support::check_csv(data, scratch());
});
