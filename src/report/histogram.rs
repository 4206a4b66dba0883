//! The distribution of the chosen allocation's net return over the futures,
//! kept in `summary.json` as a histogram (bin edges and counts) rather than
//! one value per future, so the file stays small while the page can draw
//! it and a script can check it.
//!
//! Bins are of equal width, a "nice" number (Heckbert 1990, see
//! [`super::charts::nice_number`]) near the range over the bin count asked
//! for, and start at a whole multiple of that width, so the bars line up
//! with the axis ticks.

use super::charts::nice_number;
use serde::Serialize;

/// Counts of values in consecutive bins `[edges[i], edges[i + 1])` (the
/// last bin includes its upper edge).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Histogram {
    /// `counts.len() + 1` ascending edges.
    pub edges: Vec<f64>,
    pub counts: Vec<usize>,
    /// Values left out because they were not finite numbers (0 in any
    /// sound run; said so that a count that falls short is explained).
    pub not_finite: usize,
}

/// A histogram of `values` with about `bins` bins (at least one).
pub fn histogram(values: &[f64], bins: usize) -> Histogram {
    let finite: Vec<f64> = values.iter().copied().filter(|v| v.is_finite()).collect();
    let not_finite = values.len() - finite.len();
    let lo = finite.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = finite.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let (start, width, n) = bin_layout(lo, hi, bins.max(1));
    let edges: Vec<f64> = (0..=n).map(|i| start + i as f64 * width).collect();
    let mut counts = vec![0usize; n];
    for v in &finite {
        let i = ((v - start) / width).floor();
        let i = if i.is_finite() && i > 0.0 {
            i as usize
        } else {
            0
        };
        counts[i.min(n - 1)] += 1;
    }
    Histogram {
        edges,
        counts,
        not_finite,
    }
}

/// First edge, bin width and bin count for data in `[lo, hi]`.
fn bin_layout(lo: f64, hi: f64, bins: usize) -> (f64, f64, usize) {
    if !(lo.is_finite() && hi.is_finite()) {
        return (0.0, 1.0, 1);
    }
    let spread = hi - lo;
    if spread <= hi.abs().max(lo.abs()) * 1e-12 {
        // Every value the same (an allocation that funds nothing): one bin
        // centred on it.
        let w = nice_number(lo.abs() / 20.0, true);
        let w = if w > 0.0 { w } else { 1.0 };
        return (lo - w / 2.0, w, 1);
    }
    let width = nice_number(spread / bins as f64, true);
    let start = (lo / width).floor() * width;
    let n = ((hi - start) / width).floor() as usize + 1;
    (start, width, n.max(1))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_value_lands_in_its_bin() {
        let values: Vec<f64> = (0..1000).map(|i| -300.0 + i as f64 * 1.7).collect();
        let h = histogram(&values, 40);
        assert_eq!(h.counts.iter().sum::<usize>(), 1000);
        assert_eq!(h.edges.len(), h.counts.len() + 1);
        // Spread 1698.3 / 40 = 42.5 -> nice width 50 (Heckbert rounding).
        assert!((h.edges[1] - h.edges[0] - 50.0).abs() < 1e-9);
        for v in &values {
            let i = h.edges.windows(2).position(|w| w[0] <= *v && *v < w[1]);
            assert!(i.is_some(), "{v} has no bin in {:?}", h.edges);
        }
        let first = h.edges[0];
        assert!(first <= -300.0 && first > -350.0);
    }

    #[test]
    fn counts_match_a_direct_count() {
        let values = [0.0, 0.5, 1.0, 1.5, 2.0, 9.9, 10.0];
        let h = histogram(&values, 10);
        for (k, w) in h.edges.windows(2).enumerate() {
            let last = k + 2 == h.edges.len();
            let direct = values
                .iter()
                .filter(|&&v| w[0] <= v && (v < w[1] || (last && v <= w[1])))
                .count();
            assert_eq!(h.counts[k], direct, "bin {k} {w:?}");
        }
    }

    #[test]
    fn equal_values_and_nan_are_handled() {
        let h = histogram(&[0.0; 5], 40);
        assert_eq!(h.counts, vec![5]);
        assert!(h.edges[0] < 0.0 && h.edges[1] > 0.0);
        let h = histogram(&[f64::NAN, 2.0, f64::INFINITY], 40);
        assert_eq!(h.counts.iter().sum::<usize>(), 1);
        assert_eq!(h.not_finite, 2);
        let h = histogram(&[], 40);
        assert_eq!(h.counts, vec![0]);
    }
}
