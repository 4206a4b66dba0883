//! Click-through rate by position: the share of searches that click the
//! site's result when it sits at average position `p`.
//!
//! A [`CtrCurve`] is read from an editable TOML model file (format below),
//! validated, and evaluated at fractional positions by interpolating between
//! its knots linearly in log CTR (geometric interpolation), which keeps the
//! curve monotone and positive between two positive knots. A [`CtrLookup`]
//! tabulates a curve on a fine grid in log-position for the Monte Carlo's
//! inner loop.
//!
//! # Model file format (TOML)
//!
//! ```toml
//! description = "what the curve is for"          # required
//! source = "where the numbers come from"          # required
//! ctr = [0.28, 0.155, 0.10]                       # CTR at positions 1, 2, 3, ... (1 to 100 values)
//! tail = [[30, 0.0045], [50, 0.002], [100, 0.0005]]  # optional [position, ctr] points
//! ```
//!
//! Rules: every CTR is in [0, 1]; CTR never increases with position; tail
//! positions increase strictly, come after the last `ctr` position, and the
//! curve must reach position 100 (the last tail point, or a 100th `ctr`
//! value). Position below 1 counts as 1; past 100 (not ranking) the CTR is 0.
//! Between two knots with positive CTR the curve is linear in log CTR; if
//! either knot is 0 it is linear in CTR.

use serde::{Deserialize, Serialize};

use super::{invalid, ClicksError};

/// The deepest position a curve covers; past it a result counts as not ranking.
pub const MAX_POSITION: f64 = 100.0;

/// The shipped default curve for non-branded queries.
pub const DEFAULT_CTR_TOML: &str = include_str!("../../models/ctr/default.toml");

/// The shipped default curve for branded queries.
pub const BRANDED_CTR_TOML: &str = include_str!("../../models/ctr/branded.toml");

/// Slack allowed when checking that CTR does not increase (rounding in files).
const MONOTONE_SLACK: f64 = 1e-12;

/// The comment block written at the top of a saved curve.
const FILE_HEADER: &str = "\
# Click-through rate (CTR) by average position, for furrow.
# description: what the curve is for; source: where the numbers come from.
# ctr: CTR at positions 1, 2, 3, ... in order (each in [0, 1], never increasing).
# tail: [position, ctr] points after the last `ctr` position, positions increasing,
#       the last one at position 100. Between points the curve is linear in log CTR;
#       past position 100 the CTR is 0 (not ranking).
";

/// The fields as written in a model file.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawCurve {
    description: String,
    source: String,
    ctr: Vec<f64>,
    #[serde(default)]
    tail: Vec<[f64; 2]>,
}

/// A validated click-through curve over positions 1 to 100.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CtrCurve {
    description: String,
    source: String,
    ctr: Vec<f64>,
    tail: Vec<[f64; 2]>,
    #[serde(skip)]
    xs: Vec<f64>,
    #[serde(skip)]
    ys: Vec<f64>,
}

impl CtrCurve {
    /// Builds a curve from its parts, checking every rule of the file format.
    /// `origin` names where the values came from (a file path, "fitted curve").
    pub fn new(
        description: &str,
        source: &str,
        ctr: Vec<f64>,
        tail: Vec<[f64; 2]>,
        origin: &str,
    ) -> Result<CtrCurve, ClicksError> {
        check_head(&ctr, origin)?;
        check_tail(&ctr, &tail, origin)?;
        let mut xs: Vec<f64> = (1..=ctr.len()).map(|p| p as f64).collect();
        let mut ys = ctr.clone();
        xs.extend(tail.iter().map(|t| t[0]));
        ys.extend(tail.iter().map(|t| t[1]));
        Ok(CtrCurve {
            description: description.to_string(),
            source: source.to_string(),
            ctr,
            tail,
            xs,
            ys,
        })
    }

    /// The shipped non-branded default (`models/ctr/default.toml`).
    pub fn builtin_default() -> Result<CtrCurve, ClicksError> {
        CtrCurve::from_toml_str(DEFAULT_CTR_TOML, "built-in CTR curve (non-branded)")
    }

    /// The shipped branded default (`models/ctr/branded.toml`).
    pub fn builtin_branded() -> Result<CtrCurve, ClicksError> {
        CtrCurve::from_toml_str(BRANDED_CTR_TOML, "built-in CTR curve (branded)")
    }

    /// Reads a curve from the text of a model file; errors name `origin`.
    pub fn from_toml_str(text: &str, origin: &str) -> Result<CtrCurve, ClicksError> {
        let raw: RawCurve = toml::from_str(text).map_err(|e| ClicksError::Parse {
            origin: origin.to_string(),
            message: e.to_string().trim_end().to_string(),
        })?;
        CtrCurve::new(&raw.description, &raw.source, raw.ctr, raw.tail, origin)
    }

    /// Writes the curve in the model file format, with a comment header.
    pub fn to_toml_string(&self) -> String {
        let body = toml::to_string(self).unwrap_or_else(|e| format!("# cannot write: {e}\n"));
        format!("{FILE_HEADER}\n{body}")
    }

    /// What the curve is for.
    pub fn description(&self) -> &str {
        &self.description
    }

    /// Where its numbers come from.
    pub fn source(&self) -> &str {
        &self.source
    }

    /// CTR at whole positions 1, 2, ... as given in the file.
    pub fn head(&self) -> &[f64] {
        &self.ctr
    }

    /// The `[position, ctr]` points after the head.
    pub fn tail(&self) -> &[[f64; 2]] {
        &self.tail
    }

    /// CTR at average position `position`: 1 for anything below 1, 0 past
    /// 100 and for NaN (treated as not ranking); between knots, linear in
    /// log CTR.
    pub fn ctr(&self, position: f64) -> f64 {
        if position.is_nan() || position > MAX_POSITION {
            return 0.0;
        }
        let p = position.max(1.0);
        let i = self.xs.partition_point(|&x| x <= p);
        if i >= self.xs.len() {
            return self.ys[self.ys.len() - 1];
        }
        let (x0, x1) = (self.xs[i - 1], self.xs[i]);
        let t = (p - x0) / (x1 - x0);
        interpolate(self.ys[i - 1], self.ys[i], t)
    }
}

/// Geometric interpolation between `y0 >= y1` at fraction `t`, clamped to
/// the segment so rounding can never break monotonicity; linear when an end
/// is 0.
fn interpolate(y0: f64, y1: f64, t: f64) -> f64 {
    let y = if y0 > 0.0 && y1 > 0.0 {
        y0 * (y1 / y0).powf(t)
    } else {
        y0 + (y1 - y0) * t
    };
    y.clamp(y1, y0)
}

/// Checks the `ctr` list: 1 to 100 values, each in [0, 1], non-increasing.
fn check_head(ctr: &[f64], origin: &str) -> Result<(), ClicksError> {
    if ctr.is_empty() || ctr.len() > 100 {
        return Err(ClicksError::Invalid {
            origin: origin.to_string(),
            key: "ctr".to_string(),
            found: format!("a list of {} values", ctr.len()),
            expected: "1 to 100 values, the CTR at positions 1, 2, 3, ...".to_string(),
        });
    }
    let mut previous = 1.0;
    for (i, &c) in ctr.iter().enumerate() {
        let key = format!("ctr at position {}", i + 1);
        check_ctr_value(origin, &key, c, previous)?;
        previous = c;
    }
    Ok(())
}

/// Checks one CTR value: within [0, 1] and not above the one before it.
fn check_ctr_value(origin: &str, key: &str, c: f64, previous: f64) -> Result<(), ClicksError> {
    if !(c.is_finite() && (0.0..=1.0).contains(&c)) {
        return Err(invalid(
            origin,
            key,
            c,
            "a CTR from 0 to 1 (0.05 means 5 %)",
        ));
    }
    if c > previous + MONOTONE_SLACK {
        let expected =
            format!("at most {previous} (the CTR before it): CTR must not increase with position");
        return Err(invalid(origin, key, c, &expected));
    }
    Ok(())
}

/// Checks the tail points and that the curve reaches position 100.
fn check_tail(ctr: &[f64], tail: &[[f64; 2]], origin: &str) -> Result<(), ClicksError> {
    let mut last_x = ctr.len() as f64;
    let mut last_y = ctr.last().copied().unwrap_or(1.0);
    for (i, point) in tail.iter().enumerate() {
        let [x, y] = *point;
        let key = format!("tail point {} (position {x})", i + 1);
        if !(x.is_finite() && x > last_x && x <= MAX_POSITION) {
            let expected =
                format!("a position above {last_x} and at most 100 (positions increase)");
            return Err(invalid(origin, &key, x, &expected));
        }
        check_ctr_value(origin, &key, y, last_y)?;
        last_x = x;
        last_y = y;
    }
    if (last_x - MAX_POSITION).abs() > 1e-9 {
        let expected = "a curve reaching position 100: add a last tail point such as [100, 0.0005]";
        return Err(invalid(origin, "last position", last_x, expected));
    }
    Ok(())
}

/// Whether the processor supports AVX2 (the standard library caches the answer).
pub(crate) fn has_avx2() -> bool {
    #[cfg(target_arch = "x86_64")]
    {
        std::arch::is_x86_feature_detected!("avx2")
    }
    #[cfg(not(target_arch = "x86_64"))]
    {
        false
    }
}

/// Number of grid steps a [`CtrLookup`] uses by default.
/// A power of two, so an index can be masked into the table.
pub const LOOKUP_STEPS: usize = 4096;

/// A curve tabulated on an even grid in log-position over [ln 1, ln 100],
/// for evaluating CTR millions of times without a search or a `powf`.
///
/// Linear interpolation in the table; because the curve is monotone, the
/// table's value and the exact value lie between the same two grid values,
/// so the error is at most the difference of adjacent table entries.
#[derive(Debug, Clone, PartialEq)]
pub struct CtrLookup {
    table: Vec<f64>,
    /// Per cell: the value at its left edge and the slope to its right edge
    /// (one load and one bounds check per look-up).
    cells: Box<[[f64; 2]; LOOKUP_STEPS]>,
    scale: f64,
    steps: usize,
    ln_max: f64,
    /// Largest x whose cell `floor(x)` has a right neighbour.
    last_cell: f64,
    /// Whether this processor has AVX2 (for [`CtrLookup::add_months`]).
    avx2: bool,
}

impl CtrLookup {
    /// Tabulates `curve` with [`LOOKUP_STEPS`] steps.
    pub fn new(curve: &CtrCurve) -> CtrLookup {
        let steps = LOOKUP_STEPS;
        let ln_max = MAX_POSITION.ln();
        let mut table: Vec<f64> = (0..=steps)
            .map(|j| curve.ctr((j as f64 * ln_max / steps as f64).exp()))
            .collect();
        table[0] = curve.ctr(1.0);
        table[steps] = curve.ctr(MAX_POSITION);
        let mut cells = Box::new([[0.0; 2]; LOOKUP_STEPS]);
        for (c, w) in cells.iter_mut().zip(table.windows(2)) {
            *c = [w[0], w[1] - w[0]];
        }
        CtrLookup {
            table,
            cells,
            scale: steps as f64 / ln_max,
            steps,
            ln_max,
            last_cell: (steps - 1) as f64 + 0.999_999,
            avx2: has_avx2(),
        }
    }

    /// CTR at `position` (same conventions as [`CtrCurve::ctr`]).
    #[inline]
    pub fn ctr(&self, position: f64) -> f64 {
        if position.is_nan() || position > MAX_POSITION {
            return 0.0;
        }
        self.ctr_ln(position.max(1.0).ln())
    }

    /// CTR at the position whose natural log is `ln_position` (the rank-gain
    /// model works in log-position, so the hot loop can skip the `ln`).
    #[inline]
    pub fn ctr_ln(&self, ln_position: f64) -> f64 {
        // `x <= max` is false for NaN: past position 100 or NaN, 0. A
        // select rather than an early return keeps the loop that calls
        // this free of branches, so it can be vectorised.
        let inside = ln_position <= self.ln_max;
        // Clamp with plain comparisons (f64::max/min carry NaN rules that
        // cost instructions here) so the float-to-int cast is in range.
        let x = ln_position * self.scale;
        let x = if x > 0.0 { x } else { 0.0 };
        let x = if x < self.last_cell {
            x
        } else {
            self.last_cell
        };
        // The mask keeps the index provably inside the fixed-size table (no
        // bounds check); the clamp above already put it there.
        let i = (x as u32 as usize) & (LOOKUP_STEPS - 1);
        let [a, slope] = self.cells[i];
        let v = a + slope * (x - i as f64);
        if inside {
            v
        } else {
            0.0
        }
    }

    /// The kernel's inner loop: for every month `m`,
    /// `row[m] += weight[m] * (ctr_ln(base[m] - ramp[m] * d) - old[m])`.
    ///
    /// On x86-64 processors with AVX2 four months go at once (the table's
    /// cells fetched with a gather); the arithmetic is the same operations
    /// in the same order as [`CtrLookup::ctr_ln`], with no fused
    /// multiply-add, so both paths give the same bits (tested).
    #[inline]
    pub fn add_months(
        &self,
        row: &mut [f64],
        ramp: &[f64],
        base: &[f64],
        old: &[f64],
        weight: &[f64],
        d: f64,
    ) {
        #[cfg(target_arch = "x86_64")]
        if self.avx2 {
            // SAFETY: `avx2` is true only when the processor reported AVX2
            // at construction (`has_avx2`).
            unsafe { self.add_months_avx2(row, ramp, base, old, weight, d) };
            return;
        }
        self.add_months_scalar(row, ramp, base, old, weight, d);
    }

    /// [`CtrLookup::add_months`] one month at a time.
    pub fn add_months_scalar(
        &self,
        row: &mut [f64],
        ramp: &[f64],
        base: &[f64],
        old: &[f64],
        weight: &[f64],
        d: f64,
    ) {
        let months = ramp.iter().zip(base).zip(old).zip(weight);
        for (cell, (((r, b), o), w)) in row.iter_mut().zip(months) {
            *cell += w * (self.ctr_ln(b - r * d) - o);
        }
    }

    /// [`CtrLookup::add_months`] four months at a time.
    ///
    /// # Safety
    /// The processor must support AVX2.
    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx2")]
    unsafe fn add_months_avx2(
        &self,
        row: &mut [f64],
        ramp: &[f64],
        base: &[f64],
        old: &[f64],
        weight: &[f64],
        d: f64,
    ) {
        use std::arch::x86_64::*;
        let n = row
            .len()
            .min(ramp.len())
            .min(base.len())
            .min(old.len())
            .min(weight.len());
        let whole = n / 4 * 4;
        let dv = _mm256_set1_pd(d);
        let scale = _mm256_set1_pd(self.scale);
        let zero = _mm256_setzero_pd();
        let last = _mm256_set1_pd(self.last_cell);
        let ln_max = _mm256_set1_pd(self.ln_max);
        let mask = _mm_set1_epi32((LOOKUP_STEPS - 1) as i32);
        let cells = self.cells.as_ptr() as *const f64;
        let mut k = 0;
        while k < whole {
            // SAFETY: k + 4 <= n, the shortest slice's length, so every
            // load and store is in bounds; the gather indices are masked
            // into the table (2 * 4095 + 1 < 2 * LOOKUP_STEPS f64s).
            unsafe {
                let r = _mm256_loadu_pd(ramp.as_ptr().add(k));
                let b = _mm256_loadu_pd(base.as_ptr().add(k));
                let x = _mm256_sub_pd(b, _mm256_mul_pd(r, dv));
                // x <= ln_max, false for NaN (ordered, quiet).
                let inside = _mm256_cmp_pd::<_CMP_LE_OQ>(x, ln_max);
                // max/min return their second operand for NaN and for
                // equal zeros, as the scalar `if x > 0.0 { x } else { 0.0 }`
                // and `if x < last { x } else { last }` do.
                let xs = _mm256_min_pd(_mm256_max_pd(_mm256_mul_pd(x, scale), zero), last);
                let i = _mm_and_si128(_mm256_cvttpd_epi32(xs), mask);
                let at = _mm_slli_epi32::<1>(i);
                let a = _mm256_i32gather_pd::<8>(cells, at);
                let slope = _mm256_i32gather_pd::<8>(cells.add(1), at);
                let frac = _mm256_sub_pd(xs, _mm256_cvtepi32_pd(i));
                let v = _mm256_and_pd(_mm256_add_pd(a, _mm256_mul_pd(slope, frac)), inside);
                let o = _mm256_loadu_pd(old.as_ptr().add(k));
                let w = _mm256_loadu_pd(weight.as_ptr().add(k));
                let cell = _mm256_loadu_pd(row.as_ptr().add(k));
                let sum = _mm256_add_pd(cell, _mm256_mul_pd(w, _mm256_sub_pd(v, o)));
                _mm256_storeu_pd(row.as_mut_ptr().add(k), sum);
            }
            k += 4;
        }
        self.add_months_scalar(
            &mut row[whole..n],
            &ramp[whole..n],
            &base[whole..n],
            &old[whole..n],
            &weight[whole..n],
            d,
        );
    }

    /// Uses the one-month-at-a-time path only (for tests comparing paths).
    pub fn without_simd(mut self) -> CtrLookup {
        self.avx2 = false;
        self
    }

    /// The largest difference between adjacent table entries: a bound on
    /// the lookup's error against the exact curve.
    pub fn error_bound(&self) -> f64 {
        self.table
            .windows(2)
            .map(|w| (w[0] - w[1]).abs())
            .fold(0.0, f64::max)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn small() -> CtrCurve {
        CtrCurve::new(
            "t",
            "test",
            vec![0.3, 0.15, 0.1],
            vec![[10.0, 0.02], [100.0, 0.0]],
            "t",
        )
        .unwrap()
    }

    #[test]
    fn geometric_between_positive_knots_and_linear_to_zero() {
        let c = small();
        // Halfway between 0.3 and 0.15 in log CTR is their geometric mean.
        assert!((c.ctr(1.5) - (0.3f64 * 0.15).sqrt()).abs() < 1e-12);
        // Between 0.02 at 10 and 0 at 100, linear: at 55 it is 0.01.
        assert!((c.ctr(55.0) - 0.01).abs() < 1e-12);
        assert_eq!(c.ctr(0.2), 0.3);
        assert_eq!(c.ctr(100.5), 0.0);
        assert_eq!(c.ctr(f64::NAN), 0.0);
    }

    #[test]
    fn rejects_increase_and_short_curve() {
        let e = CtrCurve::new("t", "s", vec![0.3, 0.31], vec![[100.0, 0.0]], "f.toml");
        assert!(e.unwrap_err().to_string().contains("ctr at position 2"));
        let e = CtrCurve::new("t", "s", vec![0.3, 0.2], vec![[50.0, 0.0]], "f.toml");
        assert!(e.unwrap_err().to_string().contains("position 100"));
    }
}
