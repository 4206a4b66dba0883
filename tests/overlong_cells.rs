//! An overflowing number cell is not echoed whole (issue #24, fault 11):
//! a digits-only volume of ten million characters used to come back as ten
//! million characters of stderr. The message now shows the start of the
//! value and its length, and still names file, line and column.

mod common;

use common::{furrow, project, stderr};

#[test]
fn an_overflowing_number_cell_is_not_echoed_whole() {
    let (_tmp, dir) = project();
    let path = dir.join("keywords.csv");
    let text = std::fs::read_to_string(&path).expect("read keywords.csv");
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    let header: Vec<&str> = lines[0].split(',').collect();
    let volume = header
        .iter()
        .position(|h| *h == "volume")
        .expect("a volume column");
    let mut cells: Vec<String> = lines[1].split(',').map(str::to_string).collect();
    cells[volume] = "9".repeat(10_000_000);
    lines[1] = cells.join(",");
    std::fs::write(&path, lines.join("\n") + "\n").expect("write keywords.csv");

    let o = furrow(&dir, &["check", "plan.toml"]);
    assert_eq!(o.status.code(), Some(1), "{}", stderr(&o));
    assert!(o.stderr.len() < 2_000, "stderr is {} bytes", o.stderr.len());
    let err = stderr(&o);
    let place = format!("keywords.csv, line 2, column {} ('volume')", volume + 1);
    assert!(err.contains(&place), "{err}");
    assert!(err.contains("10000000 characters"), "{err}");
}

#[test]
fn an_overlong_header_is_not_echoed_whole() {
    let (_tmp, dir) = project();
    let path = dir.join("keywords.csv");
    let text = std::fs::read_to_string(&path).expect("read keywords.csv");
    let long = "h".repeat(1_000_000);
    // The volume column renamed: missing, so the header is listed.
    std::fs::write(&path, text.replacen("volume", &long, 1)).expect("write keywords.csv");
    let o = furrow(&dir, &["check", "plan.toml"]);
    assert_eq!(o.status.code(), Some(1), "{}", stderr(&o));
    assert!(o.stderr.len() < 2_000, "stderr is {} bytes", o.stderr.len());
    let err = stderr(&o);
    assert!(err.contains("keywords.csv, line 1"), "{err}");
    assert!(
        err.contains("missing the required column 'volume'"),
        "{err}"
    );
}
