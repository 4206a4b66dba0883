//! Reading numbers as exports write them, in the file's own convention.
//!
//! Search-performance exports, web analytics and spreadsheets write numbers
//! in local conventions: a decimal point with comma grouping (`1,234.5`), a
//! decimal comma with dot grouping (`1.234,5`), or grouping with spaces,
//! narrow no-break spaces (U+202F), no-break spaces (U+00A0) or apostrophes
//! (`1 234,5`, `1'234.5`), plus percentages (`3.2%`). A file keeps one
//! convention, so [`Convention`] works it out from the file's own cells as
//! they stream past: `12,5`, `0,75`, `1.234.567` or `1.234,5` settle a
//! decimal comma; `3.76`, `1,234,567` or `1,234.5` settle a decimal point.
//! A cell that two conventions read differently (`3.760` is 3760 or 3.76;
//! `1,234` is 1234 or 1.234) is read tentatively with a decimal point and
//! remembered: when a later cell settles a decimal comma the file is read
//! again in that convention (see `table::twice`), and when nothing settles
//! it the cell is refused with both readings and the key or flag that
//! declares the convention. Nothing is silently rescaled.
//!
//! Percentages depend on the column: a rate column (a share, such as a
//! funded fraction) reads `3.2%` as 0.032, a score column on a 0 to 100
//! scale (difficulty, the search-interest index) reads `84%` as 84, and a
//! plain column (counts, money, positions) refuses the percent sign.
//!
//! [`echo`] is how every reader shows an input value in a message: cut to
//! [`ECHO_MAX`] characters, so that a 100 MB cell gives a one-line error,
//! not 100 MB of stderr.

/// The most characters of an input value a message shows.
pub const ECHO_MAX: usize = 60;

/// An input value as a message shows it: whole when short, else its first
/// characters, an ellipsis and its length (`1111…(100000000 characters)`).
pub fn echo(s: &str) -> std::borrow::Cow<'_, str> {
    match s.char_indices().nth(ECHO_MAX) {
        None => std::borrow::Cow::Borrowed(s),
        Some(_) => {
            let head: String = s.chars().take(ECHO_MAX - 1).collect();
            let n = s.chars().count();
            std::borrow::Cow::Owned(format!("{head}…({n} characters)"))
        }
    }
}

/// What a cell may hold.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum NumberKind {
    /// A plain number (a count, money, a position); a trailing `%` is refused.
    Plain,
    /// A rate or share: `3.2%` reads as 0.032.
    Rate,
    /// A score on a 0 to 100 scale: `84%` reads as 84.
    Score,
}

/// The decimal mark of a file's numbers.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Decimal {
    /// `1,234.5`: a decimal point, grouping with commas (or spaces).
    Point,
    /// `1.234,5`: a decimal comma, grouping with dots (or spaces).
    Comma,
}

impl Decimal {
    fn mark(self) -> char {
        match self {
            Decimal::Point => '.',
            Decimal::Comma => ',',
        }
    }

    /// How messages name it, with an example.
    pub fn describe(self) -> &'static str {
        match self {
            Decimal::Point => "a decimal point (1,234.5)",
            Decimal::Comma => "a decimal comma (1.234,5)",
        }
    }

    /// The example a plan key or flag takes to declare it.
    pub fn example(self) -> &'static str {
        match self {
            Decimal::Point => "1,234.5",
            Decimal::Comma => "1.234,5",
        }
    }

    /// Reads a declared number format: an example of 1234.5 written the
    /// file's way (`"1,234.5"`, `"1.234,5"`, `"1 234,5"`, `"1'234.5"`,
    /// `"1234,5"`, ...) or the words `point` / `comma`.
    pub fn parse_declared(text: &str) -> Option<Decimal> {
        let t = text.trim();
        match t.to_ascii_lowercase().as_str() {
            "point" | "decimal-point" | "dot" => return Some(Decimal::Point),
            "comma" | "decimal-comma" => return Some(Decimal::Comma),
            _ => {}
        }
        let digits: String = t.chars().filter(char::is_ascii_digit).collect();
        if digits != "12345" {
            return None;
        }
        let d = match t.rfind(['.', ',']) {
            Some(i) if t[i..].starts_with('.') => Decimal::Point,
            Some(_) => Decimal::Comma,
            None => return None,
        };
        let body = t.trim_start_matches(['-', '+']);
        (read_as(body, d).map(|r| r.0) == Some(1234.5)).then_some(d)
    }
}

/// Grouping marks read in either convention (besides the other mark).
const GROUP_MARKS: [char; 5] = [' ', '\u{202F}', '\u{A0}', '\'', '\u{2019}'];

fn group_bit(c: char) -> u8 {
    match c {
        ',' => 1,
        '.' => 2,
        ' ' => 4,
        '\u{202F}' => 8,
        '\u{A0}' => 16,
        _ => 32, // apostrophes
    }
}

fn group_names(bits: u8) -> Vec<&'static str> {
    [
        (1, "commas"),
        (2, "dots"),
        (4, "spaces"),
        (8, "narrow no-break spaces"),
        (16, "no-break spaces"),
        (32, "apostrophes"),
    ]
    .iter()
    .filter(|(b, _)| bits & b != 0)
    .map(|(_, n)| *n)
    .collect()
}

/// Reads an unsigned-or-signed body (no `%`) with decimal mark `d`; returns
/// the value and the grouping mark it used. Groups must be three digits
/// after a first group of one to three that does not start with 0.
fn read_as(s: &str, d: Decimal) -> Option<(f64, Option<char>)> {
    let (neg, u) = match s.as_bytes().first() {
        Some(b'-') => (true, &s[1..]),
        Some(b'+') => (false, &s[1..]),
        _ => (false, s),
    };
    let (mant, exp) = match u.find(['e', 'E']) {
        Some(i) => (&u[..i], Some(&u[i + 1..])),
        None => (u, None),
    };
    if let Some(e) = exp {
        let e = e.strip_prefix(['+', '-']).unwrap_or(e);
        if e.is_empty() || !e.bytes().all(|b| b.is_ascii_digit()) {
            return None;
        }
    }
    let (int, frac) = match mant.split_once(d.mark()) {
        Some((i, f)) => (i, Some(f)),
        None => (mant, None),
    };
    if frac.is_some_and(|f| !f.bytes().all(|b| b.is_ascii_digit())) {
        return None;
    }
    if int.is_empty() && frac.is_none_or(str::is_empty) {
        return None;
    }
    let group = int.chars().find(|c| !c.is_ascii_digit());
    if let Some(g) = group {
        let other = if d == Decimal::Point { ',' } else { '.' };
        if (g != other && !GROUP_MARKS.contains(&g)) || exp.is_some() {
            return None;
        }
        let mut parts = int.split(g);
        let first = parts.next().unwrap_or("");
        let first_ok = (1..=3).contains(&first.len())
            && first.bytes().all(|b| b.is_ascii_digit())
            && !first.starts_with('0');
        if !first_ok || !parts.all(|p| p.len() == 3 && p.bytes().all(|b| b.is_ascii_digit())) {
            return None;
        }
    }
    let v: f64 = if group.is_none() && d == Decimal::Point {
        u.parse().ok()?
    } else {
        let mut clean = String::with_capacity(u.len());
        clean.extend(int.chars().filter(char::is_ascii_digit));
        if let Some(f) = frac {
            clean.push('.');
            clean.push_str(f);
        }
        if let Some(e) = exp {
            clean.push('e');
            clean.push_str(e);
        }
        clean.parse().ok()?
    };
    Some((if neg { -v } else { v }, group))
}

/// Where a cell is, for remembering it.
#[derive(Debug, Clone)]
pub struct At {
    /// 1-based line.
    pub line: u64,
    /// The column's header and 1-based position.
    pub column: (String, usize),
}

/// How a file's convention was settled.
#[derive(Debug, Clone, PartialEq)]
pub enum Origin {
    /// Nothing has settled it (yet).
    Unsettled,
    /// Declared by a plan key or flag (named).
    Declared(String),
    /// The first cell that only one convention reads.
    Data {
        raw: String,
        line: u64,
        column: String,
    },
}

/// A cell two conventions read differently, read before the file settled.
#[derive(Debug, Clone)]
pub struct Ambiguous {
    /// Where it is.
    pub at: At,
    /// The cell as written (cut).
    pub raw: String,
    /// Its value with a decimal point.
    pub point: f64,
    /// Its value with a decimal comma.
    pub comma: f64,
}

/// The number format a file was read with, as `check` reports it.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct NumberFormat {
    /// The decimal mark, when known.
    pub decimal: Option<Decimal>,
    /// Grouping marks seen.
    pub grouping: Vec<&'static str>,
    /// How the decimal mark was settled.
    pub settled_by: String,
}

impl std::fmt::Display for NumberFormat {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self.decimal {
            Some(d) => write!(f, "{}", d.describe())?,
            None => write!(f, "no decimal mark seen")?,
        }
        if self.grouping.is_empty() {
            write!(f, ", no grouping marks")?;
        } else {
            write!(
                f,
                ", thousands grouped with {}",
                self.grouping.join(" and ")
            )?;
        }
        write!(f, " ({})", self.settled_by)
    }
}

/// Cells remembered in full beyond this many are only counted.
const KEEP_AMBIGUOUS: usize = crate::error::MAX_ISSUES;

/// One file's number convention, worked out as its cells are read.
#[derive(Debug, Clone)]
pub struct Convention {
    decimal: Option<Decimal>,
    origin: Origin,
    groups: u8,
    ambiguous: Vec<Ambiguous>,
    ambiguous_count: u64,
    /// Set when a cell read tentatively with a decimal point turned out to
    /// be in a decimal-comma file: the file must be read again.
    again: bool,
}

impl Convention {
    /// A file whose convention the data will tell.
    pub fn unknown() -> Convention {
        Convention {
            decimal: None,
            origin: Origin::Unsettled,
            groups: 0,
            ambiguous: Vec::new(),
            ambiguous_count: 0,
            again: false,
        }
    }

    /// A file whose convention is already known (declared by `origin`, or
    /// settled by an earlier pass over the file).
    pub fn known(d: Decimal, origin: Origin) -> Convention {
        Convention {
            decimal: Some(d),
            origin,
            ..Convention::unknown()
        }
    }

    /// The decimal mark, when settled.
    pub fn decimal(&self) -> Option<Decimal> {
        self.decimal
    }

    /// How it was settled.
    pub fn origin(&self) -> &Origin {
        &self.origin
    }

    /// Whether the file must be read again with a decimal comma.
    pub fn read_again(&self) -> bool {
        self.again
    }

    /// Cells left ambiguous (the first ones) and how many in all.
    pub fn ambiguous(&self) -> (&[Ambiguous], u64) {
        if self.decimal.is_some() {
            (&[], 0)
        } else {
            (&self.ambiguous, self.ambiguous_count)
        }
    }

    /// The format read, for `check`.
    pub fn format(&self) -> NumberFormat {
        let settled_by = match &self.origin {
            Origin::Unsettled => "every number reads the same with either decimal mark".into(),
            Origin::Declared(by) => format!("declared by {by}"),
            Origin::Data { raw, line, column } => {
                format!("settled by '{raw}' on line {line}, column {column}")
            }
        };
        NumberFormat {
            decimal: self.decimal,
            grouping: group_names(self.groups),
            settled_by,
        }
    }

    /// Reads one cell; `at` says where it is (asked only when needed).
    pub fn read(
        &mut self,
        raw: &str,
        kind: NumberKind,
        at: impl FnOnce() -> At,
    ) -> Result<f64, String> {
        let t = raw.trim_matches(|c: char| c.is_whitespace() || c == '\u{a0}' || c == '\u{202f}');
        if t.is_empty() {
            return Err("expected a number, found an empty cell".into());
        }
        if t.bytes().all(|b| b.is_ascii_digit()) && t.len() < 16 {
            return t.parse::<f64>().map_err(|_| not_a_number(t));
        }
        let (body, scale) = match t.strip_suffix('%') {
            Some(b) if kind == NumberKind::Rate => (b.trim_end(), 0.01),
            Some(b) if kind == NumberKind::Score => (b.trim_end(), 1.0),
            Some(_) => {
                return Err(format!(
                    "expected a plain number, found the percentage '{}'",
                    echo(t)
                ))
            }
            None => (t, 1.0),
        };
        let word = body.trim_start_matches(['-', '+']).to_ascii_lowercase();
        if matches!(word.as_str(), "nan" | "inf" | "infinity") {
            return Err(format!("expected a finite number, found '{}'", echo(t)));
        }
        let (v, group) = if !body.contains(['.', ',']) {
            read_as(body, Decimal::Point).ok_or_else(|| not_a_number(t))?
        } else {
            self.read_marked(t, body, scale, at)?
        };
        if !v.is_finite() {
            return Err(format!("expected a finite number, found '{}'", echo(t)));
        }
        if let Some(g) = group {
            self.groups |= group_bit(g);
        }
        Ok(v * scale)
    }

    /// A body with a dot or a comma: the convention decides.
    fn read_marked(
        &mut self,
        t: &str,
        body: &str,
        scale: f64,
        at: impl FnOnce() -> At,
    ) -> Result<(f64, Option<char>), String> {
        let p = read_as(body, Decimal::Point);
        let c = read_as(body, Decimal::Comma);
        if let Some(d) = self.decimal {
            let (mine, other) = if d == Decimal::Point { (p, c) } else { (c, p) };
            return match (mine, other) {
                (Some(r), _) => Ok(r),
                (None, Some(_)) => Err(self.conflict(t, d)),
                (None, None) => Err(not_a_number(t)),
            };
        }
        match (p, c) {
            (Some(r), None) => {
                self.settle(Decimal::Point, t, at);
                Ok(r)
            }
            (None, Some(r)) => {
                self.settle(Decimal::Comma, t, at);
                self.again = self.ambiguous_count > 0;
                Ok(r)
            }
            (Some(rp), Some(rc)) if rp.0 == rc.0 => Ok(rp),
            (Some(rp), Some(rc)) => {
                self.ambiguous_count += 1;
                if self.ambiguous.len() < KEEP_AMBIGUOUS {
                    self.ambiguous.push(Ambiguous {
                        at: at(),
                        raw: echo(t).into_owned(),
                        point: rp.0 * scale,
                        comma: rc.0 * scale,
                    });
                }
                Ok(rp)
            }
            (None, None) => Err(not_a_number(t)),
        }
    }

    fn settle(&mut self, d: Decimal, t: &str, at: impl FnOnce() -> At) {
        let at = at();
        self.decimal = Some(d);
        self.origin = Origin::Data {
            raw: echo(t).into_owned(),
            line: at.line,
            column: format!("{} ('{}')", at.column.1, at.column.0),
        };
    }

    fn conflict(&self, t: &str, d: Decimal) -> String {
        let how = match &self.origin {
            Origin::Declared(by) => format!("declared by {by}"),
            Origin::Data { raw, line, column } => {
                format!("as '{raw}' on line {line}, column {column} shows")
            }
            Origin::Unsettled => String::new(),
        };
        format!(
            "'{}' reads as a number only with {}, but this file writes numbers with {} ({how}); expected every number of a file in one convention",
            echo(t),
            match d {
                Decimal::Point => Decimal::Comma.describe(),
                Decimal::Comma => Decimal::Point.describe(),
            },
            d.describe()
        )
    }
}

/// The message for a cell left ambiguous; `declare` ends it, saying how
/// the user declares the file's convention (a plan key or a flag).
pub fn ambiguous_message(a: &Ambiguous, declare: &str) -> String {
    format!(
        "'{}' reads as {} with a decimal comma (dots grouping thousands) but as {} with a decimal point, and no other number in the file settles which; {declare}",
        a.raw,
        a.comma,
        a.point,
    )
}

/// Parses one cell on its own, with a decimal point (for values outside a
/// file, such as flags). The error says what was expected.
pub fn parse_number(raw: &str, kind: NumberKind) -> Result<f64, String> {
    let mut c = Convention::known(Decimal::Point, Origin::Declared(String::new()));
    c.read(raw, kind, || At {
        line: 0,
        column: (String::new(), 0),
    })
}

fn not_a_number(t: &str) -> String {
    format!(
        "expected a number such as 1234, 1,234.5, 1.234,5 or 3.2%, found '{}'",
        echo(t)
    )
}

/// Parses a true/false cell (`true`, `false`, `yes`, `no`, `1`, `0`, `y`, `n`).
pub fn parse_bool(raw: &str) -> Result<bool, String> {
    match raw.trim().to_ascii_lowercase().as_str() {
        "true" | "yes" | "y" | "1" => Ok(true),
        "false" | "no" | "n" | "0" | "" => Ok(false),
        other => Err(format!("expected true or false, found '{}'", echo(other))),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reads_the_forms_exports_use() {
        assert_eq!(parse_number("12,345", NumberKind::Plain), Ok(12345.0));
        assert_eq!(
            parse_number(" 1,234,567.25 ", NumberKind::Plain),
            Ok(1234567.25)
        );
        assert_eq!(parse_number("-1,000", NumberKind::Plain), Ok(-1000.0));
        assert!((parse_number("3.2%", NumberKind::Rate).unwrap() - 0.032).abs() < 1e-15);
        assert_eq!(parse_number("0.5", NumberKind::Rate), Ok(0.5));
        assert_eq!(parse_number("1e3", NumberKind::Plain), Ok(1000.0));
    }

    #[test]
    fn refuses_everything_else() {
        for bad in [
            "",
            "abc",
            "1,23",
            "12,3456",
            "3,2",
            "NaN",
            "nan",
            "inf",
            "-infinity",
            "1.2.3x",
            "12 3456",
            "0x10",
            "1e400",
        ] {
            assert!(parse_number(bad, NumberKind::Plain).is_err(), "{bad:?}");
        }
        assert!(parse_number("3%", NumberKind::Plain).is_err());
        for word in ["NaN", "-inf", "Infinity", "+INF"] {
            let e = parse_number(word, NumberKind::Plain).unwrap_err();
            assert!(e.starts_with("expected a finite number"), "{word}: {e}");
        }
    }

    fn read_all(cells: &[&str], kind: NumberKind) -> (Convention, Vec<Result<f64, String>>) {
        let mut c = Convention::unknown();
        let out = cells
            .iter()
            .enumerate()
            .map(|(i, s)| {
                c.read(s, kind, || At {
                    line: i as u64 + 2,
                    column: ("volume".into(), 3),
                })
            })
            .collect();
        (c, out)
    }

    #[test]
    fn a_dot_grouped_volume_is_not_read_as_a_decimal() {
        // `12,5` settles a decimal comma first: `3.760` is then 3760.
        let (c, out) = read_all(&["12,5", "3.760"], NumberKind::Plain);
        assert_eq!(c.decimal(), Some(Decimal::Comma));
        assert!((out[1].clone().unwrap() - 3760.0).abs() < 1e-9);
        // Settled after it: the file must be read again.
        let (c, _) = read_all(&["3.760", "1.234.567"], NumberKind::Plain);
        assert!(c.read_again());
        // Never settled: refused, with both readings.
        let (c, _) = read_all(&["3.760", "12"], NumberKind::Plain);
        let (cells, n) = c.ambiguous();
        assert_eq!(n, 1);
        let msg = ambiguous_message(&cells[0], "KEY");
        assert!(
            msg.contains("3760") && msg.contains("3.76") && msg.contains("KEY"),
            "{msg}"
        );
    }

    #[test]
    fn difficulty_84_percent_is_84() {
        let (_, out) = read_all(&["84%", "84,5 %"], NumberKind::Score);
        assert_eq!(out[0], Ok(84.0));
        assert!((out[1].clone().unwrap() - 84.5).abs() < 1e-12);
        let (_, out) = read_all(&["3.2%"], NumberKind::Rate);
        assert!((out[0].clone().unwrap() - 0.032).abs() < 1e-15);
    }

    #[test]
    fn every_grouping_mark_is_read() {
        for (cell, want) in [
            ("1 234,5", 1234.5),
            ("1\u{202F}234,5", 1234.5),
            ("1\u{A0}234.5", 1234.5),
            ("1'234.5", 1234.5),
            ("1.234.567,25", 1234567.25),
            ("1,234,567.25", 1234567.25),
            ("0,75", 0.75),
            ("-1.234,5", -1234.5),
        ] {
            let (_, out) = read_all(&[cell], NumberKind::Plain);
            let v = out[0].clone().unwrap_or(f64::NAN);
            assert!((v - want).abs() < 1e-9, "{cell}: {v}");
        }
    }

    #[test]
    fn a_cell_against_the_settled_convention_is_refused() {
        let (_, out) = read_all(&["12,5", "3.76"], NumberKind::Plain);
        let e = out[1].clone().unwrap_err();
        assert!(
            e.contains("decimal comma") && e.contains("'12,5' on line 2"),
            "{e}"
        );
    }

    #[test]
    fn declared_formats_are_examples_of_1234_5() {
        for (t, d) in [
            ("1,234.5", Decimal::Point),
            ("1234.5", Decimal::Point),
            ("1'234.5", Decimal::Point),
            ("1.234,5", Decimal::Comma),
            ("1 234,5", Decimal::Comma),
            ("1234,5", Decimal::Comma),
            ("comma", Decimal::Comma),
        ] {
            assert_eq!(Decimal::parse_declared(t), Some(d), "{t}");
        }
        for bad in ["1,234", "12.345", "yes", "1.2.3,4,5", ""] {
            assert_eq!(Decimal::parse_declared(bad), None, "{bad}");
        }
    }

    #[test]
    fn echoed_values_are_cut() {
        assert_eq!(echo("short"), "short");
        let long = "7".repeat(1000);
        let shown = echo(&long);
        assert!(shown.chars().count() < ECHO_MAX + 30, "{shown}");
        assert!(shown.ends_with("…(1000 characters)"), "{shown}");
        let e = parse_number(&"1".repeat(5000), NumberKind::Plain).unwrap_err();
        assert!(e.len() < 200, "{e}");
    }

    #[test]
    fn booleans() {
        assert_eq!(parse_bool("Yes"), Ok(true));
        assert_eq!(parse_bool(""), Ok(false));
        assert!(parse_bool("maybe").is_err());
    }
}
