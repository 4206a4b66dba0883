//! The docs promise only what exists (issue 14, item 8): every `--flag`
//! named in README.md and docs/plan.md is a flag of furrow (and of the
//! command a `furrow CMD ...` line names), the flags docs/plan.md says
//! override the plan are taken by every command that simulates a plan, and
//! every key in docs/plan.md's tables is a key the plan parser knows.

mod common;
use common::*;
use std::collections::BTreeSet;
use std::path::Path;

/// Flags of other tools that the docs show (cargo's).
const FOREIGN: &[&str] = &[
    "--release",
    "--features",
    "--test",
    "--all-targets",
    "--all",
];

/// The commands that read a plan and simulate it.
const SIMULATING: &[&str] = &[
    "report", "simulate", "allocate", "frontier", "stress", "track",
];

fn doc(name: &str) -> String {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    std::fs::read_to_string(root.join(name)).expect("the doc exists")
}

/// Every `--flag` token in `text`, in order.
fn flags_in(text: &str) -> Vec<String> {
    let b = text.as_bytes();
    let mut out = Vec::new();
    let mut i = 0;
    while i + 2 < b.len() {
        let starts = b[i] == b'-'
            && b[i + 1] == b'-'
            && b[i + 2].is_ascii_lowercase()
            && (i == 0 || !(b[i - 1].is_ascii_alphanumeric() || b[i - 1] == b'-'));
        if starts {
            let mut j = i + 2;
            while j < b.len()
                && (b[j].is_ascii_lowercase() || b[j].is_ascii_digit() || b[j] == b'-')
            {
                j += 1;
            }
            out.push(text[i..j].trim_end_matches('-').to_string());
            i = j;
        } else {
            i += 1;
        }
    }
    out
}

/// The flags `furrow ARGS --help` lists.
fn help_flags(args: &[&str]) -> BTreeSet<String> {
    let dir = std::env::temp_dir();
    let mut a = args.to_vec();
    a.push("--help");
    let o = furrow(&dir, &a);
    assert!(o.status.success(), "furrow {args:?} --help: {}", stderr(&o));
    flags_in(&stdout(&o)).into_iter().collect()
}

fn command_words() -> Vec<Vec<&'static str>> {
    [
        "report", "check", "init", "baseline", "estimate", "simulate", "allocate", "frontier",
        "stress", "track",
    ]
    .iter()
    .map(|c| vec![*c])
    .chain(std::iter::once(vec!["ctr", "fit"]))
    .collect()
}

#[test]
fn every_flag_the_docs_name_exists() {
    let mut all = BTreeSet::new();
    let per: Vec<(String, BTreeSet<String>)> = command_words()
        .into_iter()
        .map(|c| {
            let f = help_flags(&c);
            all.extend(f.iter().cloned());
            (c.join(" "), f)
        })
        .collect();
    for name in ["README.md", "docs/plan.md"] {
        let text = doc(name);
        for f in flags_in(&text) {
            if FOREIGN.contains(&f.as_str()) {
                continue;
            }
            assert!(all.contains(&f), "{name} names {f}, which no command takes");
        }
        // A `furrow CMD ...` line: its flags are that command's.
        for line in text.lines() {
            let Some(at) = line.find("furrow ") else {
                continue;
            };
            let rest = &line[at + "furrow ".len()..];
            let Some((cmd, flags)) = per
                .iter()
                .filter(|(c, _)| rest.starts_with(&format!("{c} ")) || rest == c)
                .max_by_key(|(c, _)| c.len())
            else {
                continue;
            };
            let rest = &rest[cmd.len()..];
            let rest = rest.split('`').next().unwrap_or(rest);
            for f in flags_in(rest) {
                assert!(
                    flags.contains(&f),
                    "{name}: `furrow {cmd}` has no {f} (line: {line})"
                );
            }
        }
    }
}

#[test]
fn the_flags_docs_say_override_the_plan_exist_on_the_commands_that_read_a_plan() {
    // docs/plan.md: "Flags given on the command line override the plan (...)".
    let text = doc("docs/plan.md");
    let start = text
        .find("override the")
        .expect("docs/plan.md says which flags override the plan");
    let end = start + text[start..].find(')').expect("a closed list");
    let named = flags_in(&text[start..end]);
    assert!(named.iter().any(|f| f == "--horizon"), "{named:?}");
    let helps: Vec<(&str, BTreeSet<String>)> =
        SIMULATING.iter().map(|c| (*c, help_flags(&[c]))).collect();
    for f in &named {
        assert!(
            helps.iter().any(|(_, h)| h.contains(f)),
            "docs/plan.md says {f} overrides the plan, but no plan-reading command takes it"
        );
    }
    // The interface: every simulating command takes these.
    for f in [
        "--scenarios",
        "--seed",
        "--threads",
        "--max-memory",
        "--quiet",
        "--horizon",
    ] {
        for (c, h) in &helps {
            assert!(h.contains(f), "furrow {c} does not take {f}");
        }
    }
    assert!(help_flags(&["check"]).contains("--horizon"));
}

#[test]
fn horizon_on_the_command_line_overrides_the_plan() {
    let (_t, dir) = project();
    let v = json(&furrow(
        &dir,
        &[
            "simulate",
            "plan.toml",
            "--horizon",
            "5",
            "--scenarios",
            "200",
            "--quiet",
            "--format",
            "json",
        ],
    ));
    assert_eq!(
        v["horizon"].as_u64(),
        Some(5),
        "{}",
        &v.to_string()[..200.min(v.to_string().len())]
    );
    let e = json(&furrow(
        &dir,
        &[
            "estimate",
            "plan.toml",
            "--horizon",
            "5",
            "--scenarios",
            "0",
            "--format",
            "json",
        ],
    ));
    assert_eq!(
        e["months"].as_array().map(Vec::len),
        Some(5),
        "estimate --horizon"
    );
    let o = furrow(
        &dir,
        &["allocate", "plan.toml", "--horizon", "0", "--quiet"],
    );
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(stderr(&o).contains("--horizon"), "{}", stderr(&o));
}

/// `(section, key)` of every row of docs/plan.md's key tables; section ""
/// is the top level, "[[cluster]]" the cluster tables.
fn documented_keys() -> Vec<(String, String)> {
    let text = doc("docs/plan.md");
    let mut section = String::new();
    let mut keys = Vec::new();
    for line in text.lines() {
        if let Some(h) = line.strip_prefix("## ") {
            section = match (h.find("`["), h.rfind("]`")) {
                (Some(a), Some(b)) if b > a => h[a + 1..b + 1].to_string(),
                _ => String::new(),
            };
            continue;
        }
        if line.starts_with("### ") {
            // Sub-tables such as [inputs.columns.<file>] have no key table.
            section = "<none>".into();
            continue;
        }
        let Some(cell) = line.strip_prefix("| ").and_then(|l| l.split(" |").next()) else {
            continue;
        };
        if section == "<none>" || !cell.starts_with('`') {
            continue;
        }
        for k in cell.split(',') {
            let k = k.trim().trim_matches('`');
            if !k.is_empty() {
                keys.push((section.clone(), k.to_string()));
            }
        }
    }
    keys
}

fn parse_error(dir: &Path, section: &str, key: &str) -> String {
    let head = if section.is_empty() {
        String::new()
    } else {
        format!("{section}\n")
    };
    write(
        dir,
        "keys.toml",
        format!("{head}{key} = \"?\"\n").as_bytes(),
    );
    stderr(&furrow(dir, &["check", "keys.toml"]))
}

#[test]
fn every_plan_key_the_docs_name_exists() {
    let keys = documented_keys();
    assert!(keys.len() > 25, "the key tables were read: {keys:?}");
    let t = tempfile::tempdir().unwrap();
    let mut sections = BTreeSet::new();
    for (section, key) in &keys {
        let err = parse_error(t.path(), section, key);
        assert!(
            !err.contains("unknown key"),
            "docs/plan.md names `{key}` in {section:?}, which the plan does not know: {err}"
        );
        sections.insert(section.clone());
    }
    // The probe can fail: a made-up key in each section is refused.
    for section in sections {
        let err = parse_error(t.path(), &section, "zz_not_a_key");
        assert!(err.contains("unknown key"), "{section:?}: {err}");
    }
}
