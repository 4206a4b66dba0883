//! Formatting defects seen by a practitioner (issue 14, item 11), through
//! the binary: prose figures with separators, no blank for a missing
//! currency, tables within 100 columns, a short history named by file.

mod common;
use common::*;

/// Runs of 4 or more digits with no thousands separator in `line`
/// (years such as 2027 in months excepted: they are followed by '-').
fn ungrouped_numbers(line: &str) -> Vec<String> {
    let mut out = Vec::new();
    let b: Vec<char> = line.chars().collect();
    let mut i = 0;
    while i < b.len() {
        if b[i].is_ascii_digit()
            && (i == 0 || !(b[i - 1].is_ascii_digit() || b[i - 1] == '.' || b[i - 1] == ','))
        {
            let mut j = i;
            while j < b.len() && b[j].is_ascii_digit() {
                j += 1;
            }
            let month = j < b.len() && b[j] == '-';
            if j - i >= 4 && !month {
                out.push(b[i..j].iter().collect());
            }
            i = j;
        } else {
            i += 1;
        }
    }
    out
}

#[test]
fn explanation_bullets_print_numbers_with_the_tables_separators() {
    let (_t, dir) = project();
    let o = furrow(
        &dir,
        &["allocate", "plan.toml", "--scenarios", "300", "--quiet"],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let text = stdout(&o);
    let bullets: Vec<&str> = text.lines().filter(|l| l.starts_with("- ")).collect();
    assert!(bullets.iter().any(|l| l.contains("spending")), "{text}");
    for l in bullets {
        assert!(ungrouped_numbers(l).is_empty(), "raw number in: {l}");
        assert!(!l.contains(".000000"), "{l}");
    }
}

#[test]
fn allocate_from_files_leaves_no_blank_where_the_currency_goes() {
    let (_t, dir) = project();
    write(
        &dir,
        "r.csv",
        b"a,b\n100,-50\n-20,300\n40,10\n-10,-5\n250,90\n",
    );
    write(&dir, "c.csv", b"id,cost\na,1000\nb,2000\n");
    let o = furrow(
        &dir,
        &[
            "allocate",
            "--returns",
            "r.csv",
            "--costs",
            "c.csv",
            "--budget",
            "1500",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let text = stdout(&o);
    assert!(!text.contains("One more  of"), "{text}");
    assert!(!text.contains("  of budget"), "{text}");
    assert!(text.contains("One more unit of budget"), "{text}");
    for l in text.lines().filter(|l| l.contains(": ")) {
        assert!(!l.contains(":  "), "blank for the currency: {l}");
    }
}

fn widest(text: &str) -> usize {
    text.lines().map(|l| l.chars().count()).max().unwrap_or(0)
}

#[test]
fn the_frontier_table_keeps_within_100_columns() {
    // The demo: its frontier has all eleven points (the init project's
    // futures all gain, so its frontier is a single point).
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR"));
    let plan = root.join("demo-data/plan.toml").display().to_string();
    let o = furrow(root, &["frontier", &plan, "--scenarios", "300", "--quiet"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let text = stdout(&o);
    assert!(widest(&text) <= 100, "{} columns:\n{text}", widest(&text));
    // Every point's funded tiers are still listed.
    assert!(text.contains("Funded at each point"), "{text}");
    assert!(text.contains("11."), "{text}");
}

#[test]
fn a_history_too_short_names_its_file() {
    let (_t, dir) = project();
    write(
        &dir,
        "short.csv",
        b"month,clicks\n2026-01,100\n2026-02,110\n2026-03,120\n2026-04,130\n",
    );
    let o = furrow(&dir, &["baseline", "--history", "short.csv"]);
    assert_eq!(o.status.code(), Some(1), "{}", stderr(&o));
    assert!(stderr(&o).contains("short.csv"), "{}", stderr(&o));
}

/// The widest table rule (a line of dashes) of a command's terminal output.
fn widest_table(text: &str) -> usize {
    text.lines()
        .filter(|l| l.len() >= 10 && l.chars().all(|c| c == '-'))
        .map(|l| l.chars().count())
        .max()
        .unwrap_or(0)
}

#[test]
fn estimate_and_simulate_tables_keep_within_100_columns_on_the_demo() {
    let demo = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/plan.toml");
    let plan = demo.display().to_string();
    for args in [
        vec!["estimate", &plan, "--scenarios", "200"],
        vec!["simulate", &plan, "--scenarios", "200", "--quiet"],
    ] {
        let o = furrow(std::path::Path::new(env!("CARGO_MANIFEST_DIR")), &args);
        assert!(o.status.success(), "{}", stderr(&o));
        let text = stdout(&o);
        let w = widest_table(&text);
        assert!(
            w > 0 && w <= 100,
            "{}: table {w} columns wide:\n{text}",
            args[0]
        );
        assert!(text.contains("Amounts in EUR."), "{text}");
    }
}
