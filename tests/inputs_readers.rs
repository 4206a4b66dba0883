//! Reader rules of the foundation issue checked through the binary on the
//! project `furrow init` writes: real-export forms that must load, several
//! problems reported together, and header mapping. The one-bad-file refusals
//! (empty, binary, non-UTF-8, gaps, duplicates, out-of-range values, unknown
//! plan keys, ...) are the catalogue in tests/bad_inputs.rs.

mod common;
use common::*;

fn check(dir: &std::path::Path) -> std::process::Output {
    furrow(dir, &["check", "plan.toml"])
}

fn assert_refused(o: &std::process::Output, file: &str, needles: &[&str]) {
    let err = stderr(o);
    assert_eq!(o.status.code(), Some(1), "stderr: {err}");
    assert!(o.stdout.is_empty(), "nothing on stdout, got {}", stdout(o));
    assert!(err.contains(file), "names the file {file}: {err}");
    for n in needles {
        assert!(err.contains(n), "mentions {n:?}: {err}");
    }
}

#[test]
fn init_then_check_passes() {
    let (_t, dir) = project();
    let o = check(&dir);
    assert!(o.status.success(), "{}", stderr(&o));
    let s = stdout(&o);
    assert!(s.contains("History: 24 months"), "{s}");
    assert!(s.contains("raised beds"), "{s}");
}

#[test]
fn semicolon_file_with_bom_crlf_and_thousands_separators_loads() {
    let (_t, dir) = project();
    let orig = std::fs::read_to_string(dir.join("history.csv")).unwrap();
    let mut out = String::from("\u{feff}");
    for (i, line) in orig.lines().enumerate() {
        if i == 0 {
            out += &line.replace(',', ";").to_uppercase();
        } else {
            let cells: Vec<String> = line
                .split(',')
                .enumerate()
                .map(|(j, c)| {
                    if j == 1 {
                        format!("\"{}\"", thousands(c))
                    } else {
                        c.to_string()
                    }
                })
                .collect();
            out += &cells.join(";");
        }
        out += "\r\n";
    }
    write(&dir, "history.csv", out.as_bytes());
    // Every value is "12,345"-like, which a decimal-comma export reads as
    // 12.345: the plan declares the file's convention (issue 14).
    let plan = std::fs::read_to_string(dir.join("plan.toml")).unwrap();
    let plan = plan + "\n[inputs.numbers]\nhistory = \"1,234.5\"\n";
    write(&dir, "plan.toml", plan.as_bytes());
    let o = check(&dir);
    assert!(o.status.success(), "{}", stderr(&o));
    // Same clicks total as before the rewrite.
    let vals: Vec<f64> = orig
        .lines()
        .skip(1)
        .map(|l| l.split(',').nth(1).unwrap().parse::<f64>().unwrap())
        .collect();
    let total: f64 = vals.iter().rev().take(12).sum();
    let shown = format!("{}", total as u64);
    let with_sep = thousands(&shown);
    assert!(
        stdout(&o).contains(&with_sep),
        "{} vs {with_sep}",
        stdout(&o)
    );
}

fn thousands(s: &str) -> String {
    let n: u64 = s.parse().unwrap();
    let d = n.to_string();
    let mut out = String::new();
    for (i, c) in d.chars().enumerate() {
        if i > 0 && (d.len() - i).is_multiple_of(3) {
            out.push(',');
        }
        out.push(c);
    }
    out
}

#[test]
fn several_problems_are_all_reported() {
    let (_t, dir) = project();
    let text = std::fs::read_to_string(dir.join("keywords.csv")).unwrap();
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    for (i, bad) in [(2usize, "-5"), (5, "many"), (9, "1e999")] {
        let mut cells: Vec<String> = lines[i - 1].split(',').map(str::to_string).collect();
        cells[2] = bad.into();
        lines[i - 1] = cells.join(",");
    }
    write(&dir, "keywords.csv", (lines.join("\n") + "\n").as_bytes());
    let o = check(&dir);
    assert_refused(
        &o,
        "keywords.csv",
        &[
            "3 problems",
            "line 2",
            "line 5",
            "line 9",
            "column 3 ('volume')",
        ],
    );
}

#[test]
fn column_mapping_reads_differently_named_headers() {
    let (_t, dir) = project();
    let text = std::fs::read_to_string(dir.join("keywords.csv")).unwrap();
    let renamed = text.replacen("volume", "Searches per month", 1);
    write(&dir, "keywords.csv", renamed.as_bytes());
    let o = check(&dir);
    assert_refused(
        &o,
        "keywords.csv",
        &["missing the required column 'volume'", "Searches per month"],
    );
    let plan = std::fs::read_to_string(dir.join("plan.toml")).unwrap();
    let plan = plan.replace(
        "[models]",
        "[inputs.columns.keywords]\nvolume = \"searches per month\"\n\n[models]",
    );
    write(&dir, "plan.toml", plan.as_bytes());
    let o = check(&dir);
    assert!(o.status.success(), "{}", stderr(&o));
}
