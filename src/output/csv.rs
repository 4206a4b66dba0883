//! CSV output (RFC 4180 quoting through the csv crate), with text cells
//! guarded against formula injection.
//!
//! Cluster names and tier labels come from the user's plan and keyword
//! list. A spreadsheet program that opens a CSV file runs a cell starting
//! with `=`, `+`, `-` or `@` as a formula (a tab or carriage return in front
//! does not stop it), so a name such as `=HYPERLINK(...)` would run on the
//! machine of whoever opens the report. Following the common guidance on CSV
//! injection (OWASP, "CSV Injection"), such a text cell is written with a
//! single quote in front, which spreadsheets take as "this is text" and do
//! not show. Cells that are numbers (`-2.5`, `-1e3`) are left as they are.
//!
//! Every CSV that furrow writes goes through [`guard`]: [`to_string`] for the
//! `--format csv` outputs and the report's tables, [`field`] for writers that
//! build their text by hand (`simulate --dump-scenarios`). Readers of furrow's
//! own files (`allocate --returns/--costs`) call [`unguard`], so a name read
//! back is the name that was written. The two are exact inverses: a text
//! cell that already starts with quotes before a trigger character gets one
//! more, so a name that really starts with `'=` survives the round trip.

use super::Rows;
use crate::error::{Error, Result};
use std::borrow::Cow;

/// The characters that make a spreadsheet read a cell as a formula.
const TRIGGERS: [char; 6] = ['=', '+', '-', '@', '\t', '\r'];

/// Writes rows as CSV text; the header and text cells are guarded.
pub fn to_string(rows: &Rows) -> Result<String> {
    let mut w = csv::WriterBuilder::new().from_writer(Vec::new());
    let err = |e: csv::Error| Error::Unsupported(format!("cannot write CSV: {e}"));
    w.write_record(rows.header.iter().map(|c| guard(c).into_owned()))
        .map_err(err)?;
    for r in &rows.rows {
        w.write_record(r.iter().map(|c| guard(c).into_owned()))
            .map_err(err)?;
    }
    let bytes = w
        .into_inner()
        .map_err(|e| Error::Unsupported(format!("cannot write CSV: {e}")))?;
    String::from_utf8(bytes).map_err(|e| Error::Unsupported(format!("cannot write CSV: {e}")))
}

/// One cell for a CSV line built by hand: guarded, then quoted as RFC 4180
/// asks when it holds a comma, a quote or a line break.
pub fn field(cell: &str) -> Cow<'_, str> {
    let g = guard(cell);
    if g.contains([',', '"', '\n', '\r']) {
        Cow::Owned(format!("\"{}\"", g.replace('"', "\"\"")))
    } else {
        g
    }
}

/// `cell` as a spreadsheet will show it as text: a single quote in front when
/// it would otherwise start a formula, unchanged otherwise.
pub fn guard(cell: &str) -> Cow<'_, str> {
    if needs_guard(cell) {
        Cow::Owned(format!("'{cell}"))
    } else {
        Cow::Borrowed(cell)
    }
}

/// The cell as it was before [`guard`]: the guard quote removed when what
/// follows it is a cell that [`guard`] would have quoted.
pub fn unguard(cell: &str) -> &str {
    match cell.strip_prefix('\'') {
        Some(rest) if needs_guard(rest) => rest,
        _ => cell,
    }
}

/// A text cell whose first character after any leading quotes is a trigger
/// character. The quotes count so that [`guard`] stays reversible: `'=x`
/// is written as `''=x` and read back as `'=x`.
fn needs_guard(cell: &str) -> bool {
    cell.trim_start_matches('\'').starts_with(TRIGGERS) && !is_number(cell)
}

/// A plain decimal number: optional sign, digits with an optional point,
/// optional exponent (`-2.5`, `+3`, `-1e3`, `.5`). Words that a float
/// parser accepts (`inf`, `NaN`) are not numbers here: a spreadsheet reads
/// `-inf` as a formula.
fn is_number(s: &str) -> bool {
    let b = s.as_bytes();
    let mut i = 0;
    if matches!(b.first(), Some(b'+' | b'-')) {
        i += 1;
    }
    let digits = |i: &mut usize| {
        let start = *i;
        while *i < b.len() && b[*i].is_ascii_digit() {
            *i += 1;
        }
        *i - start
    };
    let mut n = digits(&mut i);
    if b.get(i) == Some(&b'.') {
        i += 1;
        n += digits(&mut i);
    }
    if n == 0 {
        return false;
    }
    if matches!(b.get(i), Some(b'e' | b'E')) {
        i += 1;
        if matches!(b.get(i), Some(b'+' | b'-')) {
            i += 1;
        }
        if digits(&mut i) == 0 {
            return false;
        }
    }
    i == b.len()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn formula_cells_get_a_quote_and_numbers_do_not() {
        for (cell, want) in [
            ("=HYPERLINK(\"x\",\"y\")", "'=HYPERLINK(\"x\",\"y\")"),
            ("+1+1", "'+1+1"),
            ("-2+3", "'-2+3"),
            ("@SUM(1)", "'@SUM(1)"),
            ("\t=1", "'\t=1"),
            ("\r=1", "'\r=1"),
            ("-inf", "'-inf"),
            ("-", "'-"),
            ("'=1", "''=1"),
            ("''+x", "'''+x"),
            ("-2.5", "-2.5"),
            ("-1e3", "-1e3"),
            ("+3", "+3"),
            ("-.5", "-.5"),
            ("raised beds", "raised beds"),
            ("a=b", "a=b"),
            ("'quoted'", "'quoted'"),
            ("", ""),
        ] {
            assert_eq!(guard(cell), want, "{cell:?}");
        }
    }

    #[test]
    fn unguard_inverts_guard() {
        for cell in [
            "=1", "+1+1", "-2+3", "@x", "'=1", "''@x", "'plain", "'", "''", "-2.5", "'-2.5", "x",
            "", "-", "\t",
        ] {
            assert_eq!(unguard(&guard(cell)), cell, "{cell:?}");
        }
    }

    #[test]
    fn numbers_are_decimal_literals_only() {
        for n in ["0", "-1", "+1.5", "1e-7", "-1E+3", ".5", "5."] {
            assert!(is_number(n), "{n}");
        }
        for t in [
            "", "-", "+", ".", "e3", "1e", "1e+", "-inf", "NaN", "1-2", "0x10", "1 ",
        ] {
            assert!(!is_number(t), "{t}");
        }
    }

    #[test]
    fn hand_built_fields_are_guarded_then_quoted() {
        assert_eq!(field("=A1,B1"), "\"'=A1,B1\"");
        assert_eq!(field("=\"x\""), "\"'=\"\"x\"\"\"");
        assert_eq!(field("plain"), "plain");
    }
}
