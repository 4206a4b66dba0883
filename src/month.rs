//! Calendar months (`YYYY-MM`), the time unit of every series in furrow.
//!
//! Monthly history, the forecast horizon, cluster start months and actuals
//! are all indexed by month; this type parses them strictly and does the
//! arithmetic (consecutive months, offsets) without a date library.

use serde::{Serialize, Serializer};
use std::fmt;

/// A calendar month.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct Month {
    /// Months since year 0, month 1 (so `year * 12 + month - 1`).
    ordinal: i32,
}

impl Month {
    /// 2000-01, a valid month for places that need one before data is read.
    pub const FALLBACK: Month = Month { ordinal: 2000 * 12 };

    /// The month `year`-`month` (month 1 to 12).
    pub fn new(year: i32, month: u32) -> Option<Month> {
        if !(1..=12).contains(&month) || !(1000..=9999).contains(&year) {
            return None;
        }
        Some(Month {
            ordinal: year * 12 + month as i32 - 1,
        })
    }

    /// Parses `YYYY-MM`, also `YYYY-MM-01` (a first-of-month date, as some
    /// exports write months), `YYYYMM` and `YYYY/MM`. Day-first or
    /// month-first dates (`01/02/2024`) are not months: they read
    /// differently in different countries, so they are refused (see
    /// [`expected`]).
    pub fn parse(text: &str) -> Option<Month> {
        let t = text.trim();
        if t.len() == 6 && t.bytes().all(|b| b.is_ascii_digit()) {
            return Month::new(t[..4].parse().ok()?, t[4..].parse().ok()?);
        }
        let t = t.strip_suffix("-01").filter(|s| s.len() == 7).unwrap_or(t);
        let (y, m) = t.split_once(['-', '/'])?;
        if y.len() != 4 || m.is_empty() || m.len() > 2 {
            return None;
        }
        if !y.bytes().chain(m.bytes()).all(|b| b.is_ascii_digit()) {
            return None;
        }
        Month::new(y.parse().ok()?, m.parse().ok()?)
    }

    /// The calendar year.
    pub fn year(self) -> i32 {
        self.ordinal.div_euclid(12)
    }

    /// The month of the year, 1 to 12.
    pub fn month(self) -> u32 {
        (self.ordinal.rem_euclid(12) + 1) as u32
    }

    /// Month of the year as an index 0 to 11 (for seasonal indices).
    pub fn month0(self) -> usize {
        self.ordinal.rem_euclid(12) as usize
    }

    /// The month `n` months later (or earlier when negative).
    pub fn plus(self, n: i32) -> Month {
        Month {
            ordinal: self.ordinal + n,
        }
    }

    /// Whole months from `other` to `self` (`self - other`).
    pub fn since(self, other: Month) -> i32 {
        self.ordinal - other.ordinal
    }
}

/// The message for a cell that is not a month: the forms that work, and
/// why a date such as `01/02/2024` is not read.
pub fn expected(text: &str) -> String {
    let shown = crate::inputs::number::echo(text.trim());
    let forms = "expected a month as YYYY-MM (2025-03), YYYY-MM-01 (2025-03-01) or YYYYMM (202503)";
    let parts: Vec<&str> = text.trim().split(['/', '.', '-']).collect();
    let dated = parts.len() == 3
        && parts
            .iter()
            .all(|p| !p.is_empty() && p.bytes().all(|b| b.is_ascii_digit()))
        && parts[2].len() == 4
        && parts[0].len() <= 2
        && parts[1].len() <= 2;
    if dated {
        format!("{forms}, found the date '{shown}', which reads as a different month day-first and month-first")
    } else {
        format!("{forms}, found '{shown}'")
    }
}

impl fmt::Display for Month {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{:04}-{:02}", self.year(), self.month())
    }
}

impl Serialize for Month {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        s.collect_str(self)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parses_the_accepted_forms_and_refuses_others() {
        let m = Month::parse("2025-03").unwrap();
        assert_eq!((m.year(), m.month()), (2025, 3));
        assert_eq!(Month::parse("2025-03-01"), Some(m));
        assert_eq!(Month::parse("2025/3"), Some(m));
        assert_eq!(Month::parse("202503"), Some(m));
        for bad in [
            "2025-13",
            "2025-00",
            "25-03",
            "2025-03-15",
            "March 2025",
            "",
            "2025-3x",
            "202513",
            "01/03/2025",
            "03/01/2025",
            "20253",
        ] {
            assert_eq!(Month::parse(bad), None, "{bad}");
        }
    }

    #[test]
    fn a_day_first_or_month_first_date_is_refused_with_the_forms_that_work() {
        let e = expected("01/02/2024");
        assert!(e.contains("YYYY-MM (2025-03)"), "{e}");
        assert!(e.contains("YYYYMM (202503)"), "{e}");
        assert!(e.contains("day-first and month-first"), "{e}");
        assert!(!expected("2024-13").contains("day-first"));
    }

    #[test]
    fn arithmetic_crosses_year_boundaries() {
        let m = Month::new(2024, 11).unwrap();
        assert_eq!(m.plus(2).to_string(), "2025-01");
        assert_eq!(m.plus(-11).to_string(), "2023-12");
        assert_eq!(m.plus(14).since(m), 14);
        assert_eq!(m.plus(2).month0(), 0);
    }
}
