//! Plain-text formatting for the terminal: numbers with thousands
//! separators, money with the currency, percentages, and aligned tables.
//!
//! User text (cluster names, tier labels, file contents echoed in errors)
//! is printed through [`visible`]: a name holding an escape or bell
//! character would otherwise drive the terminal (colours, cursor moves, a
//! changed window title), and a bidirectional control would reverse what
//! follows it. Such characters are shown as escapes instead: `\x1b` for
//! ASCII controls, `\u{202e}` beyond ASCII.

use std::borrow::Cow;

/// `v` with `decimals` decimals and thousands separators (`-1,234.5`);
/// "n/a" when `v` is not finite. A value that rounds to zero has no sign.
pub fn number(v: f64, decimals: usize) -> String {
    if !v.is_finite() {
        return "n/a".into();
    }
    let digits = format!("{:.*}", decimals, v.abs());
    let (int, frac) = match digits.split_once('.') {
        Some((i, f)) => (i, Some(f)),
        None => (digits.as_str(), None),
    };
    let mut out = group_thousands(int);
    if let Some(f) = frac {
        out.push('.');
        out.push_str(f);
    }
    let zero = out.chars().all(|c| matches!(c, '0' | '.' | ','));
    if v < 0.0 && !zero {
        out.insert(0, '-');
    }
    out
}

fn group_thousands(int: &str) -> String {
    let mut out = String::with_capacity(int.len() + int.len() / 3);
    for (i, ch) in int.chars().enumerate() {
        if i > 0 && (int.len() - i).is_multiple_of(3) {
            out.push(',');
        }
        out.push(ch);
    }
    out
}

/// `1234567.8` as `1,234,568`.
pub fn int(v: f64) -> String {
    number(v, 0)
}

/// An amount with its currency, in whole units; "n/a" when not finite.
/// Without a currency (allocating from files, `--returns`) the amount is
/// printed alone, with no blank where the currency would go.
pub fn money(v: f64, currency: &str) -> String {
    if !v.is_finite() {
        return "n/a".into();
    }
    if currency.trim().is_empty() {
        return number(v, 0);
    }
    format!("{currency} {}", number(v, 0))
}

/// The name of one unit of money: the currency, or "unit" without one.
pub fn unit_name(currency: &str) -> &str {
    if currency.trim().is_empty() {
        "unit"
    } else {
        currency
    }
}

/// A figure in prose (bullets, notes, error messages) with the tables'
/// thousands separators and a precision that suits its size: whole units
/// from 100 up (`7,755`), two decimals from 1, three significant digits
/// below (`0.0123`); "0" for zero, "n/a" when not finite.
pub fn figure(v: f64) -> String {
    if !v.is_finite() {
        return "n/a".into();
    }
    let a = v.abs();
    if a < 1e-12 {
        "0".into()
    } else if a >= 100.0 {
        number(v, 0)
    } else if a >= 1.0 {
        trim_zeros(number(v, 2))
    } else {
        let decimals = (2.0 - a.log10().floor()).clamp(1.0, 12.0) as usize;
        number(v, decimals)
    }
}

/// A chance (a share of futures) as a percentage with `decimals`
/// decimals, never rounded to 100 % or 0 % unless it is exactly 1 or 0:
/// 0.998 is "99.8 %", 0.99996 "> 99.9 %", 0.003 "0.3 %", 0.00004 "< 0.1 %".
/// "n/a" when not finite.
pub fn chance(v: f64, decimals: usize) -> String {
    if !v.is_finite() {
        return "n/a".into();
    }
    if v >= 1.0 || v <= 0.0 {
        return pct(v.clamp(0.0, 1.0), 0);
    }
    let x = v * 100.0;
    for d in decimals..=decimals.max(1) {
        let text = number(x, d);
        let r: f64 = text.replace(',', "").parse().unwrap_or(x);
        if r > 0.0 && r < 100.0 {
            return format!("{text} %");
        }
    }
    let d = decimals.max(1);
    let step = 10f64.powi(-(d as i32));
    if x < 50.0 {
        format!("< {} %", number(step, d))
    } else {
        format!("> {} %", number(100.0 - step, d))
    }
}

/// `items` joined by `sep` and wrapped between items to lines of at most
/// `width` characters (an item longer than that keeps a line of its own),
/// the lines after the first indented by `indent` spaces; every line ends
/// with a line break.
pub fn wrap(items: &[String], sep: &str, width: usize, indent: usize) -> String {
    let mut out = String::new();
    let mut line = String::new();
    let mut empty = true;
    for (k, item) in items.iter().enumerate() {
        let piece = if k + 1 < items.len() {
            format!("{item}{}", sep.trim_end())
        } else {
            item.clone()
        };
        let gap = if empty { "" } else { " " };
        if !empty && line.chars().count() + gap.len() + piece.chars().count() > width {
            out.push_str(&line);
            out.push('\n');
            line = " ".repeat(indent);
            empty = true;
        }
        if !empty {
            line.push(' ');
        }
        line.push_str(&piece);
        empty = false;
    }
    out.push_str(&line);
    out.push('\n');
    out
}

/// A range `lo .. hi` printed with enough digits that two different ends
/// differ: `0.0186 .. 0.0194`, not `0.019 .. 0.019`. Values from 100 up are
/// whole with separators unless that hides the difference.
pub fn range(lo: f64, hi: f64) -> String {
    if !(lo.is_finite() && hi.is_finite()) {
        return format!("{} .. {}", figure(lo), figure(hi));
    }
    let base = |v: f64| -> usize {
        let a = v.abs();
        if !(1e-12..100.0).contains(&a) {
            0
        } else if a >= 1.0 {
            2
        } else {
            (2.0 - a.log10().floor()).clamp(1.0, 12.0) as usize
        }
    };
    let mut d = base(lo).max(base(hi));
    while lo != hi && number(lo, d) == number(hi, d) && d < 12 {
        d += 1;
    }
    format!("{} .. {}", number(lo, d), number(hi, d))
}

/// A share as a percentage (`0.123` → `12.3 %`), "n/a" when not finite.
pub fn pct(v: f64, decimals: usize) -> String {
    if !v.is_finite() {
        return "n/a".into();
    }
    format!("{} %", number(v * 100.0, decimals))
}

/// The share of futures a tail level leaves in the tail, as a percentage
/// with at least two significant digits and no trailing zeros: 0.90 gives
/// "10 %", 0.975 "2.5 %", 0.999 "0.1 %" (rounding to whole percent printed
/// "0 %" at 0.999). "n/a" when the level is not in (0, 1).
pub fn tail_share(level: f64) -> String {
    if !(level > 0.0 && level < 1.0) {
        return "n/a".into();
    }
    let share = (1.0 - level) * 100.0;
    let decimals = (1.0 - share.log10().floor()).clamp(0.0, 8.0) as usize;
    format!("{} %", trim_zeros(format!("{share:.decimals$}")))
}

/// A tail level with at least two decimals and as many more as it has
/// (up to six): 0.9 gives "0.90", 0.975 "0.975", 0.999 "0.999" (two
/// decimals printed "1.00").
pub fn tail_level(level: f64) -> String {
    if !level.is_finite() {
        return "n/a".into();
    }
    let s = trim_zeros(format!("{level:.6}"));
    match s.split_once('.') {
        Some((_, f)) if f.len() >= 2 => s,
        _ => format!("{level:.2}"),
    }
}

/// "2.50" as "2.5", "10.00" as "10"; text without a decimal point unchanged.
fn trim_zeros(s: String) -> String {
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

/// An optional ratio with two decimals, "n/a" when absent (cost 0) or not
/// finite.
pub fn ratio(v: Option<f64>) -> String {
    v.filter(|x| x.is_finite())
        .map(|x| number(x, 2))
        .unwrap_or_else(|| "n/a".into())
}

/// A bidirectional formatting control (embeddings, overrides, isolates,
/// the left-to-right, right-to-left and Arabic letter marks): invisible
/// characters that reorder the text around them.
pub fn is_bidi_control(c: char) -> bool {
    matches!(
        c,
        '\u{202A}'..='\u{202E}' | '\u{2066}'..='\u{2069}' | '\u{200E}' | '\u{200F}' | '\u{061C}'
    )
}

/// A character [`visible`] shows as an escape: a control character (C0,
/// DEL, C1) or a bidirectional control.
fn hidden(c: char) -> bool {
    c.is_control() || is_bidi_control(c)
}

/// The escape that shows `c`: `\x1b` for ASCII, `\u{202e}` beyond.
pub fn escape_char(c: char) -> String {
    if c.is_ascii() {
        format!("\\x{:02x}", c as u32)
    } else {
        format!("\\u{{{:x}}}", c as u32)
    }
}

/// `s` safe to print on a terminal: every control character (line breaks
/// and tabs included) and every bidirectional control shown as an escape.
pub fn visible(s: &str) -> Cow<'_, str> {
    visible_keeping(s, &[])
}

/// Like [`visible`] for text of several lines: line breaks are kept.
pub fn visible_lines(s: &str) -> Cow<'_, str> {
    visible_keeping(s, &['\n'])
}

fn visible_keeping<'a>(s: &'a str, keep: &[char]) -> Cow<'a, str> {
    if !s.chars().any(|c| hidden(c) && !keep.contains(&c)) {
        return Cow::Borrowed(s);
    }
    let mut out = String::with_capacity(s.len() + 8);
    for c in s.chars() {
        if hidden(c) && !keep.contains(&c) {
            out.push_str(&escape_char(c));
        } else {
            out.push(c);
        }
    }
    Cow::Owned(out)
}

/// Column alignment.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Align {
    Left,
    Right,
}

/// Renders rows as an aligned table with a header and a rule; cells are
/// shown through [`visible`], so a line break or escape in a name neither
/// breaks the table nor reaches the terminal.
pub fn table(header: &[&str], align: &[Align], rows: &[Vec<String>]) -> String {
    let rows: Vec<Vec<String>> = rows
        .iter()
        .map(|r| r.iter().map(|c| visible(c).into_owned()).collect())
        .collect();
    let rows = rows.as_slice();
    let n = header.len();
    let mut w: Vec<usize> = header.iter().map(|h| h.chars().count()).collect();
    for r in rows {
        for (i, c) in r.iter().enumerate().take(n) {
            w[i] = w[i].max(c.chars().count());
        }
    }
    let line = |cells: Vec<&str>| -> String {
        let parts: Vec<String> = cells
            .iter()
            .enumerate()
            .map(|(i, c)| {
                let pad = w[i].saturating_sub(c.chars().count());
                match align.get(i).copied().unwrap_or(Align::Left) {
                    Align::Left => format!("{c}{}", " ".repeat(pad)),
                    Align::Right => format!("{}{c}", " ".repeat(pad)),
                }
            })
            .collect();
        parts.join("  ").trim_end().to_string()
    };
    let mut out = line(header.to_vec());
    out.push('\n');
    out.push_str(&"-".repeat(w.iter().sum::<usize>() + 2 * n.saturating_sub(1)));
    for r in rows {
        out.push('\n');
        out.push_str(&line(r.iter().map(String::as_str).collect()));
    }
    out.push('\n');
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn thousands_separators() {
        assert_eq!(int(1234567.8), "1,234,568");
        assert_eq!(int(-1000.0), "-1,000");
        assert_eq!(int(999.4), "999");
        assert_eq!(int(-0.2), "0");
        assert_eq!(int(f64::NAN), "n/a");
    }

    /// Regression (issue #24): at a tail level of 0.999 the tail was
    /// printed as "the worst 0 % of futures".
    #[test]
    fn tail_share_prints_the_real_share_at_0_999_and_0_975() {
        assert_eq!(tail_share(0.999), "0.1 %");
        assert_eq!(tail_share(0.975), "2.5 %");
        assert_eq!(tail_share(0.9), "10 %");
        assert_eq!(tail_share(0.95), "5 %");
        assert_eq!(tail_share(0.5), "50 %");
        assert_eq!(tail_share(0.9999), "0.01 %");
        assert_eq!(tail_share(1.0), "n/a");
        assert_eq!(tail_level(0.999), "0.999");
        assert_eq!(tail_level(0.9), "0.90");
        assert_eq!(tail_level(0.975), "0.975");
    }

    #[test]
    fn control_characters_are_shown_as_escapes() {
        assert_eq!(visible("plain name"), "plain name");
        assert_eq!(visible("a\u{1b}[31mb\u{7}"), "a\\x1b[31mb\\x07");
        assert_eq!(visible("abc\u{202e}def"), "abc\\u{202e}def");
        assert_eq!(visible("a\nb"), "a\\x0ab");
        assert_eq!(visible_lines("a\nb\u{1b}"), "a\nb\\x1b");
        assert_eq!(visible("\u{9b}"), "\\u{9b}");
        let t = table(&["n"], &[Align::Left], &[vec!["x\u{1b}y".into()]]);
        assert!(!t.contains('\u{1b}') && t.contains("x\\x1by"), "{t}");
    }

    #[test]
    fn prose_figures_use_the_tables_separators_not_raw_floats() {
        // "spending 7755 of the budget of 15000", "limit 500.000000".
        assert_eq!(figure(7755.2), "7,755");
        assert_eq!(figure(15000.0), "15,000");
        assert_eq!(figure(500.0), "500");
        assert_eq!(figure(-1234.6), "-1,235");
        assert_eq!(figure(1.5), "1.5");
        assert_eq!(figure(1.0), "1");
        assert_eq!(figure(0.01234), "0.0123");
        assert_eq!(figure(0.0), "0");
    }

    #[test]
    fn a_money_amount_without_currency_has_no_blank() {
        assert_eq!(money(1234.0, ""), "1,234");
        assert_eq!(money(1234.0, "EUR"), "EUR 1,234");
        assert_eq!(unit_name(""), "unit");
        assert_eq!(unit_name("EUR"), "EUR");
    }

    #[test]
    fn a_chance_of_99_8_percent_is_not_printed_as_100_percent() {
        assert_eq!(chance(0.998, 0), "99.8 %");
        assert_eq!(chance(0.99996, 0), "> 99.9 %");
        assert_eq!(chance(0.003, 0), "0.3 %");
        assert_eq!(chance(0.00004, 0), "< 0.1 %");
        assert_eq!(chance(0.00004, 1), "< 0.1 %");
        assert_eq!(chance(1.0, 0), "100 %");
        assert_eq!(chance(0.0, 0), "0 %");
        assert_eq!(chance(0.42, 0), "42 %");
        assert_eq!(chance(0.4234, 1), "42.3 %");
    }

    #[test]
    fn a_narrow_spread_prints_enough_digits_to_show_the_difference() {
        assert_eq!(range(0.0186, 0.0194), "0.0186 .. 0.0194");
        assert_eq!(range(0.01901, 0.01904), "0.01901 .. 0.01904");
        assert_eq!(range(1200.0, 3400.0), "1,200 .. 3,400");
        assert_eq!(range(1200.2, 1200.4), "1,200.2 .. 1,200.4");
        assert_eq!(range(0.5, 0.5), "0.500 .. 0.500");
    }

    #[test]
    fn tables_align() {
        let t = table(
            &["a", "bb"],
            &[Align::Left, Align::Right],
            &[vec!["xyz".into(), "1".into()]],
        );
        assert_eq!(t, "a    bb\n-------\nxyz   1\n");
    }
}
