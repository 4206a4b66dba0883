//! Reading numbers as exports write them.
//!
//! Search-performance exports, web analytics and spreadsheets write numbers
//! with thousands separators ("12,345"), percentages ("3.2%") and stray
//! spaces. These are read; everything else that is not a finite number is
//! refused with a message saying what was expected. Decimal commas ("3,2")
//! are refused rather than guessed, because "1,234" would be ambiguous.
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
    /// A plain number; a trailing `%` is refused.
    Plain,
    /// A number or a percentage (`3.2%` reads as 0.032).
    Rate,
}

/// Parses one cell. The error says what was expected.
pub fn parse_number(raw: &str, kind: NumberKind) -> Result<f64, String> {
    let t = raw.trim_matches(|c: char| c.is_whitespace() || c == '\u{a0}');
    if t.is_empty() {
        return Err("expected a number, found an empty cell".into());
    }
    let (body, scale) = match t.strip_suffix('%') {
        Some(b) if kind == NumberKind::Rate => (b.trim_end(), 0.01),
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
    let cleaned = strip_thousands(body).ok_or_else(|| not_a_number(t))?;
    if !cleaned
        .bytes()
        .all(|b| b.is_ascii_digit() || matches!(b, b'.' | b'-' | b'+' | b'e' | b'E'))
    {
        return Err(not_a_number(t));
    }
    let v: f64 = cleaned.parse().map_err(|_| not_a_number(t))?;
    if !v.is_finite() {
        return Err(format!("expected a finite number, found '{}'", echo(t)));
    }
    Ok(v * scale)
}

fn not_a_number(t: &str) -> String {
    format!(
        "expected a number such as 1234, 1,234.5 or 3.2%, found '{}'",
        echo(t)
    )
}

/// Removes thousands separators when they group digits in threes
/// ("12,345,678.9"); `None` when commas appear anywhere else.
fn strip_thousands(s: &str) -> Option<std::borrow::Cow<'_, str>> {
    if !s.contains(',') {
        return Some(std::borrow::Cow::Borrowed(s));
    }
    let unsigned = s.trim_start_matches(['-', '+']);
    let int_part = unsigned.split('.').next().unwrap_or("");
    let mut groups = int_part.split(',');
    let first = groups.next().unwrap_or("");
    let first_ok = (1..=3).contains(&first.len()) && first.bytes().all(|b| b.is_ascii_digit());
    let rest_ok = groups.all(|g| g.len() == 3 && g.bytes().all(|b| b.is_ascii_digit()));
    let frac_ok = !unsigned.split('.').skip(1).any(|f| f.contains(','));
    (first_ok && rest_ok && frac_ok).then(|| std::borrow::Cow::Owned(s.replace(',', "")))
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
            "12 345",
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
