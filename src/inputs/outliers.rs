//! Months of a monthly history that sit far from the months around them: a
//! spike of a trillion clicks, or a month of zero in a busy series, is
//! almost always an export fault, and a forecast fitted to it is wrong.
//!
//! The test is robust, so the outlier it looks for cannot hide itself:
//! values are taken on the log scale (`ln(1 + x)`: seasonality and growth
//! are multiplicative), the level is a centred running median over 13
//! months, the seasonal shape is the median deviation of each calendar
//! month from that level (with two full years or more), and what is left
//! is compared with its median absolute deviation scaled by 1.4826 to a
//! standard deviation (the Hampel identifier; Hampel, "The influence curve
//! and its role in robust estimation", JASA 69, 1974). A month is flagged
//! when it lies more than [`LIMIT`] such deviations away and at least
//! [`MIN_RATIO`] times above or below what its neighbours and season say
//! ([`MIN_RATIO_SHORT`] with less than two years, where no seasonal shape
//! is estimated); the thresholds are common practice, no source.

use crate::month::Month;
use crate::stats::quantiles;

/// Robust deviations beyond which a month is flagged.
pub const LIMIT: f64 = 5.0;
/// The smallest ratio to the expected value that is flagged (so a very
/// smooth series does not flag ordinary wiggles).
pub const MIN_RATIO: f64 = 1.5;
/// The same with less than two years, where a strong seasonal month cannot
/// be told from an outlier.
pub const MIN_RATIO_SHORT: f64 = 4.0;
/// Floor of the robust scale on the log scale (5 %).
const MIN_SCALE: f64 = 0.05;
/// Half-width of the running median.
const HALF_WINDOW: usize = 6;

/// One flagged month.
#[derive(Debug, Clone, PartialEq)]
pub struct Outlier {
    /// Position in the series.
    pub index: usize,
    /// The value as read.
    pub value: f64,
    /// What the neighbours and the season suggest.
    pub expected: f64,
    /// Distance in robust deviations.
    pub deviations: f64,
}

fn median(v: &mut [f64]) -> f64 {
    if v.is_empty() {
        return 0.0;
    }
    quantiles(v, [0.5])[0]
}

/// The months of `values` (month `first` first) that are outliers; empty
/// for series shorter than a year.
///
/// Outliers are removed one at a time, the one furthest from the running
/// median first, and the seasonal shape is estimated again without it:
/// with two years a calendar month has only two values, and their median
/// (their mean) would carry half of a spike into the other year's month.
pub fn find(values: &[f64], first: Month) -> Vec<Outlier> {
    let n = values.len();
    if n < 12 || values.iter().any(|v| !v.is_finite()) {
        return Vec::new();
    }
    let y: Vec<f64> = values.iter().map(|&v| v.max(0.0).ln_1p()).collect();
    let calendar = |i: usize| (first.month() as usize - 1 + i) % 12;
    let ratio = if n >= 24 { MIN_RATIO } else { MIN_RATIO_SHORT };
    let mut out = vec![false; n];
    for _ in 0..n / 4 {
        let fit = Fit::new(&y, &out, calendar);
        let worst = (0..n)
            .filter(|&i| !out[i] && fit.is_outlier(&y, i, ratio))
            .max_by(|&a, &b| {
                (y[a] - fit.level[a])
                    .abs()
                    .total_cmp(&(y[b] - fit.level[b]).abs())
            });
        match worst {
            Some(i) => out[i] = true,
            None => break,
        }
    }
    let fit = Fit::new(&y, &out, calendar);
    (0..n)
        .filter(|&i| out[i] && fit.is_outlier(&y, i, ratio))
        .map(|i| Outlier {
            index: i,
            value: values[i],
            expected: fit.fitted(i).exp_m1().max(0.0),
            deviations: fit.deviations(&y, i),
        })
        .collect()
}

/// Running-median level, seasonal shape and robust scale, estimated from
/// the months not set aside.
struct Fit {
    level: Vec<f64>,
    season: [f64; 12],
    calendar: Vec<usize>,
    centre: f64,
    scale: f64,
}

impl Fit {
    fn new(y: &[f64], out: &[bool], calendar: impl Fn(usize) -> usize) -> Fit {
        let n = y.len();
        let kept = |lo: usize, hi: usize| -> Vec<f64> {
            (lo..hi).filter(|&j| !out[j]).map(|j| y[j]).collect()
        };
        let level: Vec<f64> = (0..n)
            .map(|i| {
                median(&mut kept(
                    i.saturating_sub(HALF_WINDOW),
                    (i + HALF_WINDOW + 1).min(n),
                ))
            })
            .collect();
        let calendar: Vec<usize> = (0..n).map(calendar).collect();
        let mut season = [0.0; 12];
        if n >= 24 {
            for (m, s) in season.iter_mut().enumerate() {
                let mut d: Vec<f64> = (0..n)
                    .filter(|&i| calendar[i] == m && !out[i])
                    .map(|i| y[i] - level[i])
                    .collect();
                *s = median(&mut d);
            }
        }
        let mut fit = Fit {
            level,
            season,
            calendar,
            centre: 0.0,
            scale: MIN_SCALE,
        };
        let mut resid: Vec<f64> = (0..n)
            .filter(|&i| !out[i])
            .map(|i| y[i] - fit.fitted(i))
            .collect();
        fit.centre = median(&mut resid.clone());
        let centre = fit.centre;
        resid.iter_mut().for_each(|r| *r = (*r - centre).abs());
        fit.scale = (1.4826 * median(&mut resid)).max(MIN_SCALE);
        fit
    }

    fn fitted(&self, i: usize) -> f64 {
        self.level[i] + self.season[self.calendar[i]]
    }

    fn deviations(&self, y: &[f64], i: usize) -> f64 {
        (y[i] - self.fitted(i) - self.centre).abs() / self.scale
    }

    fn is_outlier(&self, y: &[f64], i: usize, ratio: f64) -> bool {
        self.deviations(y, i) > LIMIT && (y[i] - self.fitted(i)).abs() > ratio.ln()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A seasonal series with growth and a little noise (deterministic).
    fn series(n: usize) -> Vec<f64> {
        (0..n)
            .map(|i| {
                let season = 1.0 + 0.3 * (i as f64 * std::f64::consts::TAU / 12.0).sin();
                let wiggle = 1.0 + 0.03 * ((i * 7919) % 13) as f64 / 13.0;
                40_000.0 * (1.0 + 0.01 * i as f64) * season * wiggle
            })
            .collect()
    }

    fn jan() -> Month {
        Month::parse("2024-01").expect("a month")
    }

    #[test]
    fn a_clean_seasonal_series_has_no_outliers() {
        assert!(find(&series(30), jan()).is_empty());
        assert!(find(&series(14), jan()).is_empty());
    }

    #[test]
    fn a_spike_of_a_trillion_is_flagged_alone() {
        let mut v = series(30);
        v[17] = 1e12;
        let found = find(&v, jan());
        assert_eq!(found.len(), 1, "{found:?}");
        assert_eq!(found[0].index, 17);
        // The expected value is the series' own scale, not the spike's.
        assert!(found[0].expected > 20_000.0 && found[0].expected < 100_000.0);
    }

    #[test]
    fn a_month_of_zero_is_flagged() {
        let mut v = series(24);
        v[5] = 0.0;
        let found = find(&v, jan());
        assert_eq!(found.iter().map(|o| o.index).collect::<Vec<_>>(), vec![5]);
    }

    #[test]
    fn a_strong_season_is_not_an_outlier() {
        // December three times the rest, every year: the seasonal median
        // absorbs it.
        let v: Vec<f64> = (0..36)
            .map(|i| {
                if i % 12 == 11 {
                    120_000.0
                } else {
                    40_000.0 + 100.0 * i as f64
                }
            })
            .collect();
        assert!(find(&v, jan()).is_empty(), "{:?}", find(&v, jan()));
    }

    #[test]
    fn a_short_series_is_not_judged() {
        let mut v = series(11);
        v[3] = 1e12;
        assert!(find(&v, jan()).is_empty());
    }
}
