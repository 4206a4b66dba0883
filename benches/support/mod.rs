//! Shared set-up of the benches: the demo, regenerated from its seeded
//! generator into a temporary folder (so a bench does not depend on the
//! checkout's demo-data/ being current), using the built-in model files.

use std::path::{Path, PathBuf};

/// Writes the demo into `dir` and returns its plan's path.
pub fn demo_plan(dir: &Path) -> PathBuf {
    furrow::demo::generate(dir, &furrow::demo::DemoOptions::default()).expect("demo");
    // The demo plan points at ../models; the built-in copies are used instead.
    let plan = dir.join("plan.toml");
    let text = std::fs::read_to_string(&plan).expect("plan");
    std::fs::write(&plan, text.replace("dir = \"../models\"\n", "")).expect("plan");
    plan
}
