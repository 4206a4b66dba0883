//! Plain-text formatting for the terminal: numbers with thousands
//! separators, money with the currency, percentages, and aligned tables.

/// `1234567.8` as `1,234,568`.
pub fn int(v: f64) -> String {
    if !v.is_finite() {
        return "n/a".into();
    }
    let neg = v < 0.0;
    let digits = format!("{:.0}", v.abs());
    let mut out = String::new();
    for (i, ch) in digits.chars().enumerate() {
        if i > 0 && (digits.len() - i) % 3 == 0 {
            out.push(',');
        }
        out.push(ch);
    }
    if neg && out != "0" {
        out.insert(0, '-');
    }
    out
}

/// An amount with its currency, rounded to whole units.
pub fn money(v: f64, currency: &str) -> String {
    format!("{currency} {}", int(v))
}

/// A share as a percentage with `digits` decimals.
pub fn pct(v: f64, digits: usize) -> String {
    if !v.is_finite() {
        return "n/a".into();
    }
    format!("{:.*} %", digits, v * 100.0)
}

/// A ratio with two decimals, "n/a" when there is none (cost 0).
pub fn ratio(v: Option<f64>) -> String {
    v.filter(|x| x.is_finite())
        .map(|x| format!("{x:.2}"))
        .unwrap_or_else(|| "n/a".into())
}

/// Column alignment.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Align {
    Left,
    Right,
}

/// Renders rows as an aligned table with a header and a rule.
pub fn table(header: &[&str], align: &[Align], rows: &[Vec<String>]) -> String {
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
