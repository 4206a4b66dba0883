//! Numbers in local conventions (issue 14, item 1) and column mapping on
//! every command that reads a file (item 4).
//!
//! The metamorphic tests write the demo keyword list and history, and the
//! `furrow init` project, in each number convention (a converter below) and
//! check that they load to identical numbers and that `check` reports the
//! convention and the same totals. The regression tests are named after the
//! defects: a dot-grouped volume read as a decimal, a percent difficulty
//! read as a share, ambiguous values read silently, mappings ignored.

mod common;
use common::*;
use furrow::inputs::table::ReadSettings;
use furrow::inputs::{keywords, monthly};
use std::collections::BTreeMap;
use std::path::Path;

/// A number convention: decimal mark and grouping mark.
#[derive(Debug, Clone, Copy)]
struct Conv {
    decimal: char,
    group: char,
    /// Words `check` prints for its decimal mark.
    says: &'static str,
}

const CONVENTIONS: [Conv; 6] = [
    Conv {
        decimal: '.',
        group: ',',
        says: "a decimal point",
    },
    Conv {
        decimal: ',',
        group: '.',
        says: "a decimal comma",
    },
    Conv {
        decimal: ',',
        group: ' ',
        says: "a decimal comma",
    },
    Conv {
        decimal: ',',
        group: '\u{202F}',
        says: "a decimal comma",
    },
    Conv {
        decimal: '.',
        group: '\u{A0}',
        says: "a decimal point",
    },
    Conv {
        decimal: '.',
        group: '\'',
        says: "a decimal point",
    },
];

/// Writes a plain number (`1234567.25`) in `c`; other text is kept.
fn convert(cell: &str, c: Conv) -> String {
    let (sign, body) = match cell.strip_prefix('-') {
        Some(b) => ("-", b),
        None => ("", cell),
    };
    let (int, frac) = match body.split_once('.') {
        Some((i, f)) => (i, Some(f)),
        None => (body, None),
    };
    if int.is_empty()
        || !int.bytes().all(|b| b.is_ascii_digit())
        || frac.is_some_and(|f| !f.bytes().all(|b| b.is_ascii_digit()))
    {
        return cell.to_string();
    }
    let mut out = String::from(sign);
    for (i, ch) in int.chars().enumerate() {
        if i > 0 && (int.len() - i) % 3 == 0 {
            out.push(c.group);
        }
        out.push(ch);
    }
    if let Some(f) = frac {
        out.push(c.decimal);
        out += f;
    }
    out
}

/// Rewrites a comma-separated file as a semicolon export in `c` (the month
/// column, text and booleans kept).
fn rewrite(text: &str, c: Conv) -> String {
    let mut out = String::new();
    for (i, line) in text.lines().enumerate() {
        let cells: Vec<String> = line
            .split(',')
            .map(|cell| {
                if i == 0 {
                    cell.to_string()
                } else {
                    convert(cell, c)
                }
            })
            .collect();
        out += &cells.join(";");
        out += "\n";
    }
    out
}

fn demo(name: &str) -> String {
    let p = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("demo-data")
        .join(name);
    std::fs::read_to_string(p).expect("the demo file")
}

#[test]
fn the_converter_writes_each_convention() {
    let c = |d, g| Conv {
        decimal: d,
        group: g,
        says: "",
    };
    assert_eq!(convert("1234567.25", c(',', '.')), "1.234.567,25");
    assert_eq!(convert("3760", c(',', '.')), "3.760");
    assert_eq!(convert("760", c('.', ',')), "760");
    assert_eq!(convert("2024-01", c('.', ',')), "2024-01");
    assert_eq!(convert("false", c('.', ',')), "false");
}

#[test]
fn the_demo_keyword_list_in_every_convention_loads_to_identical_numbers() {
    let tmp = tempfile::tempdir().unwrap();
    let orig_path = tmp.path().join("orig.csv");
    std::fs::write(&orig_path, demo("keywords.csv")).unwrap();
    let orig = keywords::read(&orig_path, &BTreeMap::new()).expect("the demo reads");
    let none = BTreeMap::new();
    for c in CONVENTIONS {
        let path = tmp.path().join("kw.csv");
        std::fs::write(&path, rewrite(&demo("keywords.csv"), c)).unwrap();
        let (set, format) =
            keywords::read_with(&path, &ReadSettings::plan("keywords", &none, None))
                .unwrap_or_else(|e| panic!("{c:?}: {e}"));
        assert!(format.to_string().starts_with(c.says), "{c:?}: {format}");
        assert_eq!(set.keywords.len(), orig.keywords.len(), "{c:?}");
        for (a, b) in set.keywords.iter().zip(&orig.keywords) {
            assert_eq!(a.text, b.text);
            assert_eq!(a.volume.to_bits(), b.volume.to_bits(), "{c:?} {}", a.text);
            assert_eq!(a.position.map(f64::to_bits), b.position.map(f64::to_bits));
            assert_eq!(a.difficulty.to_bits(), b.difficulty.to_bits());
        }
    }
}

#[test]
fn the_demo_history_in_every_convention_loads_to_identical_numbers() {
    let tmp = tempfile::tempdir().unwrap();
    let orig_path = tmp.path().join("orig.csv");
    std::fs::write(&orig_path, demo("history.csv")).unwrap();
    let rule = monthly::NON_NEGATIVE;
    let cols = monthly::HISTORY_COLUMNS;
    let orig = monthly::read(&orig_path, cols, &BTreeMap::new(), rule).unwrap();
    let none = BTreeMap::new();
    for c in CONVENTIONS {
        let path = tmp.path().join("h.csv");
        std::fs::write(&path, rewrite(&demo("history.csv"), c)).unwrap();
        // The demo history has whole numbers only, and impressions above a
        // million settle the dot- and comma-grouped files; a file grouped
        // with spaces or apostrophes reads the same either way.
        let (h, _) = monthly::read_with(
            &path,
            cols,
            &ReadSettings::plan("history", &none, None),
            rule,
        )
        .unwrap_or_else(|e| panic!("{c:?}: {e}"));
        assert_eq!(h.months, orig.months);
        for (name, vals) in &orig.columns {
            let got = h.get(name).unwrap_or_else(|| panic!("{c:?}: no {name}"));
            let same = got
                .iter()
                .zip(vals)
                .all(|(a, b)| a.to_bits() == b.to_bits());
            assert!(same, "{c:?}: column {name}");
        }
    }
}

/// `check`'s lines that carry totals.
fn totals(s: &str) -> Vec<String> {
    s.lines()
        .filter(|l| l.starts_with("History:") || l.starts_with("Keywords:"))
        .map(str::to_string)
        .collect()
}

#[test]
fn check_on_a_semicolon_export_in_each_convention_reports_it_and_the_same_totals() {
    let (_t, dir) = project();
    let before = check_ok(&dir);
    let hist = std::fs::read_to_string(dir.join("history.csv")).unwrap();
    let kw = std::fs::read_to_string(dir.join("keywords.csv")).unwrap();
    let plan = std::fs::read_to_string(dir.join("plan.toml")).unwrap();
    for c in CONVENTIONS {
        write(&dir, "history.csv", rewrite(&hist, c).as_bytes());
        write(&dir, "keywords.csv", rewrite(&kw, c).as_bytes());
        // The init history's numbers are all below a million: a dot- or
        // comma-grouped one cannot tell its decimal mark, so the plan says.
        let example = if c.decimal == ',' {
            "1.234,5"
        } else {
            "1,234.5"
        };
        let declared = format!("{plan}\n[inputs.numbers]\nhistory = \"{example}\"\n");
        write(&dir, "plan.toml", declared.as_bytes());
        let after = check_ok(&dir);
        assert_eq!(totals(&after), totals(&before), "{c:?}");
        let kw_line = after
            .lines()
            .find(|l| l.trim_start().starts_with("keywords, "))
            .unwrap_or_else(|| panic!("no keywords number line: {after}"));
        assert!(kw_line.contains(c.says), "{c:?}: {kw_line}");
        let h_line = after
            .lines()
            .find(|l| l.trim_start().starts_with("history, "))
            .unwrap_or_default();
        assert!(
            h_line.contains("declared by [inputs.numbers] history"),
            "{h_line}"
        );
    }
}

fn check_ok(dir: &Path) -> String {
    let o = furrow(dir, &["check", "plan.toml"]);
    assert!(o.status.success(), "{}", stderr(&o));
    stdout(&o)
}

/// The init project's keyword list as a semicolon export with decimal
/// commas, with `volume` of its second keyword replaced.
fn semicolon_keywords(dir: &Path, volume: &str) {
    let kw = std::fs::read_to_string(dir.join("keywords.csv")).unwrap();
    let mut out = String::new();
    for (i, line) in kw.lines().enumerate() {
        let mut cells: Vec<String> = line.split(',').map(str::to_string).collect();
        if i == 2 {
            cells[2] = volume.to_string();
        }
        if i > 0 {
            cells[3] = cells[3].replace('.', ",");
        }
        out += &cells.join(";");
        out += "\n";
    }
    write(dir, "keywords.csv", out.as_bytes());
}

#[test]
fn a_dot_grouped_volume_is_not_read_as_a_decimal() {
    let (_t, dir) = project();
    let before = check_ok(&dir);
    // 3760 written as 3.760 (the init list's second keyword has 3760), in a
    // file whose positions use decimal commas.
    semicolon_keywords(&dir, "3.760");
    let after = check_ok(&dir);
    assert_eq!(totals(&after), totals(&before));
    assert!(after.contains("a decimal comma"), "{after}");
}

#[test]
fn an_ambiguous_volume_is_refused_with_both_readings_and_the_key() {
    let (_t, dir) = project();
    // Only whole numbers and one 3.760: nothing settles the decimal mark.
    let kw = "keyword;cluster;volume;position;difficulty\nseed tray;seed starting;3.760;4;50\n";
    write(&dir, "keywords.csv", kw.as_bytes());
    let o = furrow(&dir, &["check", "plan.toml"]);
    let err = stderr(&o);
    assert_eq!(o.status.code(), Some(1), "{err}");
    for needle in [
        "keywords.csv, line 2, column 3 ('volume')",
        "'3.760'",
        "3760",
        "3.76 ",
        "[inputs.numbers] keywords = \"1.234,5\"",
    ] {
        assert!(err.contains(needle), "{needle}: {err}");
    }
}

#[test]
fn difficulty_84_percent_is_84() {
    let tmp = tempfile::tempdir().unwrap();
    let path = tmp.path().join("kw.csv");
    let text = "keyword;cluster;volume;position;difficulty\na;c;100;3,5;84%\nb;c;100;4;84,5 %\n";
    std::fs::write(&path, text).unwrap();
    let set = keywords::read(&path, &BTreeMap::new()).expect("reads");
    assert!((set.keywords[0].difficulty - 84.0).abs() < 1e-12);
    assert!((set.keywords[1].difficulty - 84.5).abs() < 1e-12);
    assert!((set.keywords[0].position.unwrap_or(0.0) - 3.5).abs() < 1e-12);
}

#[test]
fn months_as_yyyymm_load_and_a_day_month_date_is_refused_with_the_forms() {
    let (_t, dir) = project();
    let before = check_ok(&dir);
    let hist = std::fs::read_to_string(dir.join("history.csv")).unwrap();
    let compact: String = hist
        .lines()
        .enumerate()
        .map(|(i, l)| {
            if i == 0 {
                format!("{l}\n")
            } else {
                format!("{}\n", l.replacen('-', "", 1))
            }
        })
        .collect();
    assert!(compact.lines().nth(1).unwrap().starts_with("2025"));
    write(&dir, "history.csv", compact.as_bytes());
    assert_eq!(totals(&check_ok(&dir)), totals(&before));
    let dated = compact.replacen("202501,", "01/01/2025,", 1);
    write(&dir, "history.csv", dated.as_bytes());
    let o = furrow(&dir, &["check", "plan.toml"]);
    let err = stderr(&o);
    assert_eq!(o.status.code(), Some(1), "{err}");
    assert!(err.contains("'01/01/2025'"), "{err}");
    assert!(
        err.contains("YYYY-MM (2025-03), YYYY-MM-01 (2025-03-01) or YYYYMM (202503)"),
        "{err}"
    );
}

#[test]
fn an_invalid_number_format_key_is_refused_with_the_forms() {
    let (_t, dir) = project();
    let plan = std::fs::read_to_string(dir.join("plan.toml")).unwrap();
    let plan = format!("{plan}\n[inputs.numbers]\nkeywords = \"german\"\n");
    write(&dir, "plan.toml", plan.as_bytes());
    let o = furrow(&dir, &["check", "plan.toml"]);
    let err = stderr(&o);
    assert_eq!(o.status.code(), Some(1), "{err}");
    assert!(err.contains("[inputs.numbers] keywords must show"), "{err}");
    assert!(err.contains("'german'"), "{err}");
}

/// The init project's actuals with a renamed clicks header.
fn renamed_actuals(dir: &Path) {
    let a = std::fs::read_to_string(dir.join("actuals.csv")).unwrap();
    let a = a.replacen("month,clicks,revenue", "month,Clicks per month,revenue", 1);
    write(dir, "renamed.csv", a.as_bytes());
}

#[test]
fn track_actuals_honours_the_plans_column_mapping() {
    let (_t, dir) = project();
    renamed_actuals(&dir);
    let args = [
        "track",
        "plan.toml",
        "--actuals",
        "renamed.csv",
        "--scenarios",
        "200",
        "--quiet",
    ];
    let o = furrow(&dir, &args);
    assert_eq!(o.status.code(), Some(1), "unmapped: {}", stderr(&o));
    assert!(
        stderr(&o).contains("[inputs.columns.actuals]"),
        "{}",
        stderr(&o)
    );
    let plan = std::fs::read_to_string(dir.join("plan.toml")).unwrap();
    let plan = format!("{plan}\n[inputs.columns.actuals]\nclicks = \"Clicks per month\"\n");
    write(&dir, "plan.toml", plan.as_bytes());
    let o = furrow(&dir, &args);
    assert!(o.status.success(), "mapped: {}", stderr(&o));
}

#[test]
fn baseline_history_takes_a_map_flag_and_its_message_names_it() {
    let (_t, dir) = project();
    let h = std::fs::read_to_string(dir.join("history.csv")).unwrap();
    let h = h.replacen("month,clicks,", "Month,Clicks per month,", 1);
    write(&dir, "renamed.csv", h.as_bytes());
    let o = furrow(&dir, &["baseline", "--history", "renamed.csv"]);
    let err = stderr(&o);
    assert_eq!(o.status.code(), Some(1), "{err}");
    assert!(err.contains("--map clicks="), "{err}");
    assert!(
        !err.contains("plan's"),
        "points to a plan the command does not read: {err}"
    );
    let o = furrow(
        &dir,
        &[
            "baseline",
            "--history",
            "renamed.csv",
            "--map",
            "clicks=Clicks per month",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let o = furrow(
        &dir,
        &["baseline", "--history", "renamed.csv", "--map", "klicks=x"],
    );
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(stderr(&o).contains("not a column this command reads"));
}

#[test]
fn ctr_fit_queries_takes_a_map_flag() {
    let (_t, dir) = project();
    let q = std::fs::read_to_string(dir.join("queries.csv")).unwrap();
    let q = q.replacen("query,", "Top queries x,", 1);
    write(&dir, "renamed.csv", q.as_bytes());
    let o = furrow(&dir, &["ctr", "fit", "--queries", "renamed.csv"]);
    assert_eq!(o.status.code(), Some(1));
    assert!(stderr(&o).contains("--map query="), "{}", stderr(&o));
    let o = furrow(
        &dir,
        &[
            "ctr",
            "fit",
            "--queries",
            "renamed.csv",
            "--map",
            "query=Top queries x",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
}

#[test]
fn allocate_costs_message_points_to_no_plan_table() {
    let (_t, dir) = project();
    write(&dir, "returns.csv", b"a,b\n10,20\n-5,3\n");
    write(&dir, "costs.csv", b"id,price\na,10\nb,10\n");
    let args = [
        "allocate",
        "--returns",
        "returns.csv",
        "--costs",
        "costs.csv",
        "--budget",
        "15",
    ];
    let o = furrow(&dir, &args);
    let err = stderr(&o);
    assert_eq!(o.status.code(), Some(1), "{err}");
    assert!(err.contains("--map cost="), "{err}");
    assert!(!err.contains("[inputs.columns"), "{err}");
}

#[test]
fn allocate_from_files_honours_map_and_numbers_flags() {
    let (_t, dir) = project();
    // A decimal-comma export whose cells cannot tell (every cost and
    // return has exactly three digits after the mark), with its own header.
    write(
        &dir,
        "returns.csv",
        b"a;b
10,500;20,250
-5,125;3,750
",
    );
    write(
        &dir,
        "costs.csv",
        b"id;price
a;10,000
b;10,000
",
    );
    let base = [
        "allocate",
        "--returns",
        "returns.csv",
        "--costs",
        "costs.csv",
        "--budget",
        "15",
        "--format",
        "json",
    ];
    let refused = furrow(&dir, &base);
    assert_eq!(refused.status.code(), Some(1), "{}", stderr(&refused));
    let args = [&base[..], &["--map", "cost=price", "--numbers", "1.234,5"]].concat();
    let v = json(&furrow(&dir, &args));
    let spend: f64 = v["allocation"]
        .as_array()
        .expect("an allocation")
        .iter()
        .map(|i| i["spend"].as_f64().unwrap_or(0.0))
        .sum();
    // Costs of 10 each (not 10,000) under a budget of 15: at most 15 spent.
    assert!(spend > 0.0 && spend <= 15.0 + 1e-6, "{v}");
}
