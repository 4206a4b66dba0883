//! Reader rules of the foundation issue, each checked on a small fixture
//! through the binary: exit code, nothing on stdout, and a message naming
//! file, line and column.

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

fn replace_line(dir: &std::path::Path, file: &str, line_no: usize, new: Option<&str>) {
    let text = std::fs::read_to_string(dir.join(file)).unwrap();
    let mut lines: Vec<&str> = text.lines().collect();
    match new {
        Some(n) => lines[line_no - 1] = n,
        None => {
            lines.remove(line_no - 1);
        }
    }
    write(dir, file, (lines.join("\n") + "\n").as_bytes());
}

#[test]
fn missing_month_is_refused_with_the_gap() {
    let (_t, dir) = project();
    let text = std::fs::read_to_string(dir.join("history.csv")).unwrap();
    let removed = text
        .lines()
        .nth(5)
        .unwrap()
        .split(',')
        .next()
        .unwrap()
        .to_string();
    replace_line(&dir, "history.csv", 6, None);
    let o = check(&dir);
    assert_refused(
        &o,
        "history.csv",
        &["line 6", "column 1", &removed, "consecutive"],
    );
}

#[test]
fn duplicate_month_is_refused() {
    let (_t, dir) = project();
    let text = std::fs::read_to_string(dir.join("history.csv")).unwrap();
    let line3 = text.lines().nth(2).unwrap().to_string();
    replace_line(&dir, "history.csv", 4, Some(&line3));
    let o = check(&dir);
    assert_refused(
        &o,
        "history.csv",
        &["line 4", "column 1", "appears twice", "line 3"],
    );
}

#[test]
fn position_zero_is_refused() {
    let (_t, dir) = project();
    let text = std::fs::read_to_string(dir.join("keywords.csv")).unwrap();
    let l = text.lines().nth(1).unwrap();
    let mut cells: Vec<String> = l.split(',').map(str::to_string).collect();
    cells[3] = "0".into();
    replace_line(&dir, "keywords.csv", 2, Some(&cells.join(",")));
    let o = check(&dir);
    assert_refused(
        &o,
        "keywords.csv",
        &[
            "line 2",
            "column 4 ('position')",
            "between 1 and 100",
            "found 0",
        ],
    );
}

#[test]
fn text_in_a_number_column_is_refused() {
    let (_t, dir) = project();
    let text = std::fs::read_to_string(dir.join("history.csv")).unwrap();
    let l = text.lines().nth(2).unwrap();
    let mut cells: Vec<String> = l.split(',').map(str::to_string).collect();
    cells[1] = "lots".into();
    replace_line(&dir, "history.csv", 3, Some(&cells.join(",")));
    let o = check(&dir);
    assert_refused(
        &o,
        "history.csv",
        &[
            "line 3",
            "column 2 ('clicks')",
            "expected a number",
            "'lots'",
        ],
    );
}

#[test]
fn non_utf8_file_is_refused_with_its_line() {
    let (_t, dir) = project();
    let mut bytes = std::fs::read(dir.join("keywords.csv")).unwrap();
    // Put a Latin-1 byte (0xE9) inside the keyword of line 3.
    let mut line = 1;
    let mut pos = 0;
    for (i, b) in bytes.iter().enumerate() {
        if *b == b'\n' {
            line += 1;
            if line == 3 {
                pos = i + 1;
                break;
            }
        }
    }
    bytes.insert(pos + 1, 0xE9);
    write(&dir, "keywords.csv", &bytes);
    let o = check(&dir);
    assert_refused(
        &o,
        "keywords.csv",
        &["line 3", "column 1", "not valid UTF-8", "0xE9"],
    );
}

#[test]
fn empty_and_binary_files_are_refused() {
    let (_t, dir) = project();
    write(&dir, "history.csv", b"");
    let o = check(&dir);
    assert_refused(&o, "history.csv", &["line 1", "empty", "month, clicks"]);
    write(
        &dir,
        "history.csv",
        &[0x89, b'P', b'N', b'G', 0, 0, 1, 2, 3],
    );
    let o = check(&dir);
    assert_refused(&o, "history.csv", &["binary"]);
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
fn unknown_plan_key_suggests_the_closest() {
    let (_t, dir) = project();
    let plan = std::fs::read_to_string(dir.join("plan.toml")).unwrap();
    write(
        &dir,
        "plan.toml",
        plan.replace("tail_level = 0.90", "tail_levl = 0.90")
            .as_bytes(),
    );
    let o = check(&dir);
    assert_refused(
        &o,
        "plan.toml",
        &[
            "unknown key 'tail_levl'",
            "did you mean 'tail_level'",
            "line ",
        ],
    );
}

#[test]
fn keyword_in_two_clusters_is_reported() {
    let (_t, dir) = project();
    let text = std::fs::read_to_string(dir.join("keywords.csv")).unwrap();
    let first = text.lines().nth(1).unwrap().to_string();
    let kw = first.split(',').next().unwrap().to_string();
    let other_cluster = text
        .lines()
        .skip(1)
        .map(|l| l.split(',').nth(1).unwrap())
        .find(|c| !first.contains(c))
        .unwrap()
        .to_string();
    let dup = format!("{kw},{other_cluster},100,,20,false");
    let new = format!("{}{dup}\n", text);
    write(&dir, "keywords.csv", new.as_bytes());
    let o = check(&dir);
    assert_refused(&o, "keywords.csv", &["two clusters", &kw, "line 2"]);
}

#[test]
fn column_mapping_reads_differently_named_headers() {
    let (_t, dir) = project();
    let text = std::fs::read_to_string(dir.join("keywords.csv")).unwrap();
    let renamed = text.replacen("volume", "Avg monthly searches", 1);
    write(&dir, "keywords.csv", renamed.as_bytes());
    let o = check(&dir);
    assert_refused(
        &o,
        "keywords.csv",
        &[
            "missing the required column 'volume'",
            "Avg monthly searches",
        ],
    );
    let plan = std::fs::read_to_string(dir.join("plan.toml")).unwrap();
    let plan = plan.replace(
        "[models]",
        "[inputs.columns.keywords]\nvolume = \"avg monthly searches\"\n\n[models]",
    );
    write(&dir, "plan.toml", plan.as_bytes());
    let o = check(&dir);
    assert!(o.status.success(), "{}", stderr(&o));
}
