//! Shell completions and the manual page come from the binary's own clap
//! definitions (`furrow completions SHELL`, `furrow manual`): every visible
//! command and the flags the docs promise are in them.

mod common;

use common::{furrow, stderr, stdout};

/// Commands a user types (hidden helper commands are left out).
const COMMANDS: [&str; 10] = [
    "report", "check", "init", "baseline", "ctr", "estimate", "simulate", "allocate", "frontier",
    "stress",
];

#[test]
fn completions_for_bash_zsh_and_fish_name_every_command_and_flag() {
    let dir = tempfile::tempdir().expect("tmp");
    for shell in ["bash", "zsh", "fish"] {
        let o = furrow(dir.path(), &["completions", shell]);
        assert!(o.status.success(), "{shell}: {}", stderr(&o));
        let text = stdout(&o);
        for c in COMMANDS.iter().chain(&["track"]) {
            assert!(text.contains(c), "{shell} completions lack '{c}'");
        }
        for flag in [
            "max-memory",
            "allow-long-run",
            "horizon",
            "tail-level",
            "dump-scenarios",
        ] {
            assert!(text.contains(flag), "{shell} completions lack '--{flag}'");
        }
    }
    let o = furrow(dir.path(), &["completions", "tcsh"]);
    assert_eq!(
        o.status.code(),
        Some(2),
        "an unknown shell is a usage error"
    );
}

#[test]
fn the_manual_page_is_roff_with_a_section_per_command() {
    let dir = tempfile::tempdir().expect("tmp");
    let o = furrow(dir.path(), &["manual"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let text = stdout(&o);
    assert!(text.contains(".TH furrow 1"), "a roff title line");
    for c in COMMANDS {
        assert!(
            text.contains(&format!("furrow {c}\\fR")) || text.contains(&format!("\\fBfurrow {c}")),
            "the manual lacks a synopsis for '{c}'"
        );
    }
    assert!(text.contains("max\\-memory"), "flags are listed");
    // Hidden helpers stay out of the manual.
    assert!(
        !text.contains("demo\\-data"),
        "hidden commands are left out"
    );
}
