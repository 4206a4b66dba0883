//! Shared by the hostile-name tests: a `furrow init` project whose clusters
//! (and tier labels) are renamed to text chosen to attack the reader of
//! furrow's outputs — formulas for a spreadsheet, bidirectional controls and
//! very long names for the page, terminal escapes for the console.
#![allow(dead_code)]

use std::path::Path;

/// `s` as a TOML basic string, written out here so the test does not share
/// the code under test.
fn toml_string(s: &str) -> String {
    let mut out = String::from("\"");
    for c in s.chars() {
        match c {
            '"' => out.push_str("\\\""),
            '\\' => out.push_str("\\\\"),
            c if (c as u32) < 0x20 || c == '\u{7f}' => {
                out.push_str(&format!("\\u{:04X}", c as u32))
            }
            c => out.push(c),
        }
    }
    out.push('"');
    out
}

/// `s` as one CSV field, always quoted.
fn csv_field(s: &str) -> String {
    format!("\"{}\"", s.replace('"', "\"\""))
}

/// Renames cluster `old` of the project in `dir` to `new` in the plan and
/// the keyword list.
pub fn rename_cluster(dir: &Path, old: &str, new: &str) {
    let kw = dir.join("keywords.csv");
    let text = std::fs::read_to_string(&kw).expect("read keywords.csv");
    let from = format!(",{old},");
    assert!(text.contains(&from), "keywords.csv has no cluster '{old}'");
    std::fs::write(&kw, text.replace(&from, &format!(",{},", csv_field(new))))
        .expect("write keywords.csv");
    let plan = dir.join("plan.toml");
    let text = std::fs::read_to_string(&plan).expect("read plan.toml");
    let from = format!("name = \"{old}\"");
    assert!(text.contains(&from), "plan.toml has no cluster '{old}'");
    std::fs::write(
        &plan,
        text.replace(&from, &format!("name = {}", toml_string(new))),
    )
    .expect("write plan.toml");
}

/// Renames every tier labelled `old` in the plan to `new`.
pub fn rename_label(dir: &Path, old: &str, new: &str) {
    let plan = dir.join("plan.toml");
    let text = std::fs::read_to_string(&plan).expect("read plan.toml");
    let from = format!("label = \"{old}\"");
    assert!(text.contains(&from), "plan.toml has no tier '{old}'");
    std::fs::write(
        &plan,
        text.replace(&from, &format!("label = {}", toml_string(new))),
    )
    .expect("write plan.toml");
}
