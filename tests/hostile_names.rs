//! Hostile names on the page and on the terminal (issue #24, fault 7).
//!
//! A cluster name holding a right-to-left override (U+202E) used to reverse
//! the text after it on the page; a 10,000-character name made the page
//! tens of thousands of pixels wide; escape and bell characters in a name
//! went raw to the terminal (tables, the report's summary, error
//! messages). Now the page drops bidirectional controls and cuts runs too
//! long to wrap (the whole name stays in a `title`), and the terminal shows
//! control characters as escapes (`\x1b`). JSON and CSV keep names exactly.

mod common;
mod hostile_support;

use common::{furrow, json, project, stderr, stdout};
use hostile_support::rename_cluster;
use std::path::Path;

const BIDI: [char; 12] = [
    '\u{202A}', '\u{202B}', '\u{202C}', '\u{202D}', '\u{202E}', '\u{2066}', '\u{2067}', '\u{2068}',
    '\u{2069}', '\u{200E}', '\u{200F}', '\u{061C}',
];

fn report_page(dir: &Path) -> String {
    let o = furrow(
        dir,
        &[
            "report",
            "plan.toml",
            "--scenarios",
            "200",
            "--out",
            "rep",
            "--quiet",
        ],
    );
    assert!(o.status.success(), "report failed: {}", stderr(&o));
    std::fs::read_to_string(dir.join("rep").join("index.html")).expect("read index.html")
}

/// The text nodes of the page's body (between tags), entities undone.
fn text_nodes(html: &str) -> Vec<String> {
    let body = &html[html.find("<body>").expect("a body")..];
    body.split('<')
        .filter_map(|piece| piece.split_once('>').map(|(_, text)| text))
        .map(|t| {
            t.replace("&lt;", "<")
                .replace("&gt;", ">")
                .replace("&quot;", "\"")
                .replace("&#39;", "'")
                .replace("&amp;", "&")
        })
        .collect()
}

#[test]
fn a_right_to_left_override_in_a_name_does_not_reach_the_page() {
    let (_tmp, dir) = project();
    let name = "abc\u{202E}def";
    rename_cluster(&dir, "raised beds", name);
    let html = report_page(&dir);
    for c in BIDI {
        assert!(!html.contains(c), "the page holds U+{:04X}", c as u32);
    }
    // The name is still there, in order, and what follows it too.
    assert!(html.contains("abcdef/1"), "the name left the page");
    // The data of the run keeps the name exactly.
    let summary = std::fs::read_to_string(dir.join("rep").join("summary.json")).expect("json");
    assert!(
        summary.contains("abc\u{202E}def"),
        "summary.json changed the name"
    );
}

#[test]
fn a_ten_thousand_character_name_does_not_widen_the_page() {
    let (_tmp, dir) = project();
    let name = "ab".repeat(5_000);
    rename_cluster(&dir, "raised beds", &name);
    let html = report_page(&dir);
    let mut longest = 0;
    for t in text_nodes(&html) {
        for run in t.split_whitespace() {
            longest = longest.max(run.chars().count());
        }
    }
    assert!(
        longest <= 61,
        "a text run of {longest} characters on the page"
    );
    // The whole name is kept where a reader can see it on hover.
    assert!(
        html.contains(&format!("title=\"{name}")),
        "the full name is in no title"
    );
}

#[test]
fn escape_and_bell_in_a_name_are_shown_escaped_on_the_terminal() {
    let (_tmp, dir) = project();
    let name = "red\u{1b}[31mX\u{7}";
    rename_cluster(&dir, "composting", name);
    let shown = "red\\x1b[31mX\\x07";
    for args in [
        vec!["check", "plan.toml"],
        vec!["allocate", "plan.toml", "--scenarios", "200"],
        vec!["simulate", "plan.toml", "--scenarios", "200"],
        vec!["report", "plan.toml", "--scenarios", "200", "--out", "rep"],
    ] {
        let o = furrow(&dir, &args);
        assert!(o.status.success(), "{args:?}: {}", stderr(&o));
        let (out, err) = (stdout(&o), stderr(&o));
        for c in ['\u{1b}', '\u{7}'] {
            assert!(!out.contains(c), "{args:?} printed U+{:04X}", c as u32);
            assert!(
                !err.contains(c),
                "{args:?} printed U+{:04X} on stderr",
                c as u32
            );
        }
        if args[0] != "report" || out.contains("red") {
            assert!(
                out.contains(shown),
                "{args:?} does not show the name: {out}"
            );
        }
    }
    // Data formats keep the name exactly.
    let v = json(&furrow(
        &dir,
        &[
            "simulate",
            "plan.toml",
            "--scenarios",
            "200",
            "--format",
            "json",
        ],
    ));
    assert!(
        v.to_string().contains("\\u001b[31mX\\u0007"),
        "JSON changed the name"
    );
    let csv = furrow(
        &dir,
        &[
            "simulate",
            "plan.toml",
            "--scenarios",
            "200",
            "--format",
            "csv",
        ],
    );
    assert!(stdout(&csv).contains(name), "CSV changed the name");
}

#[test]
fn control_characters_in_error_messages_are_shown_escaped() {
    let (_tmp, dir) = project();
    let plan = dir.join("plan.toml");
    let text = std::fs::read_to_string(&plan).expect("read the plan");
    // A cluster of the plan with no keywords: the message names it.
    let text = text.replacen(
        "name = \"raised beds\"",
        "name = \"gone\\u001b]0;title\\u0007\\u001b[2J\"",
        1,
    );
    std::fs::write(&plan, text).expect("write the plan");
    let o = furrow(&dir, &["check", "plan.toml"]);
    assert_eq!(o.status.code(), Some(1), "{}", stderr(&o));
    let err = stderr(&o);
    assert!(!err.contains('\u{1b}') && !err.contains('\u{7}'), "{err:?}");
    assert!(err.contains("gone\\x1b]0;title\\x07\\x1b[2J"), "{err}");
    assert!(err.contains("plan.toml, line"), "{err}");
}
