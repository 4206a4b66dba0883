//! Fits a site's own click-through curve from a search-performance query
//! export (query, clicks, impressions, average position).
//!
//! Steps: branded queries are removed by a case-insensitive pattern; rows are
//! binned by rounded position (1 to 20 one by one, then a few tail bins);
//! each bin's CTR is its clicks over its impressions, weighted by
//! impressions. Two fits are made over the bins with enough impressions:
//!
//! - isotonic (non-increasing) regression by the weighted
//!   pool-adjacent-violators algorithm (Ayer, Brunk, Ewing, Reid & Silverman,
//!   "An empirical distribution function for sampling with incomplete
//!   information", Ann. Math. Statist. 26, 1955; Barlow, Bartholomew, Bremner
//!   & Brunk, *Statistical Inference under Order Restrictions*, Wiley 1972;
//!   Best & Chakravarti, "Active set algorithms for isotonic regression",
//!   Math. Programming 47, 1990);
//! - a power law `CTR(p) = a * p^-b` by weighted least squares of log CTR on
//!   log position, with `b >= 0` enforced (if the free slope would make CTR
//!   rise, the constrained optimum is `b = 0`).
//!
//! Both report their impression-weighted RMSE of CTR in sample and by
//! leave-one-bin-out cross-validation over the interior bins (each interior
//! bin predicted from a refit on all the others; the first and last bins are
//! not held out, as predicting them would measure extrapolation, where an
//! isotonic fit is flat by construction). The isotonic fit minimises the
//! in-sample error over all non-increasing curves, power laws with `b >= 0`
//! included, so it always wins in sample; the choice is therefore made on
//! the cross-validated error (ties go to the simpler power law).
//!
//! The output curve follows the chosen fit over the well-observed range:
//! the isotonic fit between its first and last fitted points (interpolated
//! linearly in log CTR, like a [`CtrCurve`]), the power law across the full
//! position range of the well-observed bins (bin 1 starts at position 1).
//! A thin bin inside that range takes the fit's value there. Outside the
//! range, and so for the thin bins before or after it, the curve follows the
//! shape of the default curve, scaled to meet the fit at the range's end, so
//! the result stays non-increasing.

use regex::{Regex, RegexBuilder};
use serde::Serialize;

use super::ctr::{CtrCurve, MAX_POSITION};
use super::ClicksError;

/// Positions binned one by one (1 to this).
pub const HEAD_BINS: u32 = 20;

/// One row of a query export: the row the query-export reader returns
/// (defined once, in the inputs stage).
pub use crate::inputs::queries::QueryRow;

/// Settings of [`fit`].
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FitOptions {
    /// Bins with fewer impressions are not fitted and follow the default
    /// curve's shape (default 100).
    pub min_impressions: f64,
    /// Upper rounded positions of the tail bins after position 20, strictly
    /// increasing, at most 100 (default 30, 50, 100: bins 21-30, 31-50,
    /// 51-100). Rows beyond the last are counted and left out.
    pub tail_edges: Vec<u32>,
}

impl Default for FitOptions {
    fn default() -> Self {
        FitOptions {
            min_impressions: 100.0,
            tail_edges: vec![30, 50, 100],
        }
    }
}

/// One position bin and what each fit says about it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FitBin {
    /// "3" or "21-30".
    pub label: String,
    /// Rounded positions covered.
    pub first: u32,
    pub last: u32,
    pub queries: usize,
    pub impressions: f64,
    pub clicks: f64,
    /// Impression-weighted mean position (none without impressions).
    pub mean_position: Option<f64>,
    /// Clicks over impressions.
    pub observed_ctr: Option<f64>,
    /// Too few impressions: not fitted. Inside the fitted range the curve
    /// there comes from the fit around it; outside, from the default curve's
    /// shape.
    pub fallback: bool,
    pub isotonic_ctr: Option<f64>,
    pub power_law_ctr: Option<f64>,
}

/// The isotonic fit: non-increasing CTR at each fitted bin's mean position.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct IsotonicFit {
    /// `[mean position, fitted CTR]` per well-observed bin.
    pub points: Vec<[f64; 2]>,
    /// Impression-weighted RMSE of CTR over the fitted bins.
    pub rmse: f64,
    /// The same by leave-one-bin-out cross-validation over the interior bins
    /// (3+ bins).
    pub cv_rmse: Option<f64>,
}

/// The power-law fit `CTR(p) = a * p^-b`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PowerLawFit {
    pub a: f64,
    pub b: f64,
    /// True when the free slope would have made CTR rise and `b` was set to 0.
    pub constrained: bool,
    pub rmse: f64,
    pub cv_rmse: Option<f64>,
}

/// Which fit produced the output curve.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum FitKind {
    Isotonic,
    PowerLaw,
}

/// Everything `ctr fit` reports.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CtrFit {
    pub rows: usize,
    pub branded_excluded: usize,
    /// Non-branded rows with zero impressions: they carry no weight.
    pub zero_impression_rows: usize,
    /// Rows whose rounded position is past the last tail bin.
    pub beyond_last_bin: usize,
    pub queries_used: usize,
    pub impressions_used: f64,
    pub min_impressions: f64,
    pub bins: Vec<FitBin>,
    pub isotonic: IsotonicFit,
    pub power_law: Option<PowerLawFit>,
    pub chosen: FitKind,
    pub choice_reason: String,
    pub curve: CtrCurve,
    /// The fallback curve's impression-weighted RMSE of CTR over the same
    /// interior bins the cross-validation holds out (3+ bins). The fallback
    /// has no parameters fitted to these data, so this error is already an
    /// out-of-sample one and compares fairly with the fits' `cv_rmse`.
    pub fallback_rmse: Option<f64>,
}

impl CtrFit {
    /// The chosen fit's cross-validated RMSE.
    pub fn chosen_cv_rmse(&self) -> Option<f64> {
        match self.chosen {
            FitKind::Isotonic => self.isotonic.cv_rmse,
            FitKind::PowerLaw => self.power_law.as_ref().and_then(|p| p.cv_rmse),
        }
    }

    /// Whether the fitted curve predicts held-out bins better than the
    /// fallback curve does. False when either error is unknown (fewer than 3
    /// well-observed bins: too little to show the fit is better).
    pub fn beats_fallback(&self) -> bool {
        match (self.chosen_cv_rmse(), self.fallback_rmse) {
            (Some(fit), Some(fallback)) => fit < fallback,
            _ => false,
        }
    }
}

/// Builds the case-insensitive brand pattern `fit` expects.
pub fn brand_regex(pattern: &str) -> Result<Regex, ClicksError> {
    RegexBuilder::new(pattern)
        .case_insensitive(true)
        .build()
        .map_err(|e| ClicksError::Invalid {
            origin: "--brand".to_string(),
            key: "pattern".to_string(),
            found: format!("{pattern:?}"),
            expected: format!("a valid regular expression ({e})"),
        })
}

/// Weighted least-squares non-increasing fit of `values` (in their order)
/// by pool-adjacent-violators: adjacent blocks that violate the order are
/// pooled into their weighted mean until none do. Non-positive or non-finite
/// weights count as zero weight (their values take their block's mean).
pub fn pava_non_increasing(values: &[f64], weights: &[f64]) -> Vec<f64> {
    // Each block: (weighted mean, total weight, number of points).
    let mut blocks: Vec<(f64, f64, usize)> = Vec::with_capacity(values.len());
    for (i, &v) in values.iter().enumerate() {
        let w = weights
            .get(i)
            .copied()
            .filter(|w| w.is_finite() && *w > 0.0);
        let mut block = (v, w.unwrap_or(0.0), 1);
        while let Some(&(m, wp, n)) = blocks.last() {
            if m >= block.0 {
                break;
            }
            blocks.pop();
            block = pool((m, wp, n), block);
        }
        blocks.push(block);
    }
    blocks
        .iter()
        .flat_map(|&(m, _, n)| std::iter::repeat_n(m, n))
        .collect()
}

/// Pools two adjacent blocks into their weighted mean.
fn pool(a: (f64, f64, usize), b: (f64, f64, usize)) -> (f64, f64, usize) {
    let w = a.1 + b.1;
    let m = if w > 0.0 {
        (a.0 * a.1 + b.0 * b.1) / w
    } else {
        (a.0 * a.2 as f64 + b.0 * b.2 as f64) / (a.2 + b.2) as f64
    };
    (m, w, a.2 + b.2)
}

/// Running sums for one bin.
#[derive(Debug, Clone, Default)]
struct Accum {
    queries: usize,
    impressions: f64,
    clicks: f64,
    position_x_impressions: f64,
}

/// A well-observed bin as a data point of the fits.
#[derive(Debug, Clone, Copy)]
struct Obs {
    x: f64,
    y: f64,
    w: f64,
    clicks: f64,
    /// Lowest and highest average position the bin covers.
    lo: f64,
    hi: f64,
}

/// Counts from the first pass over the rows.
#[derive(Debug, Default)]
struct Tally {
    branded: usize,
    zero_impressions: usize,
    beyond: usize,
    non_branded: usize,
}

/// Fits a CTR curve to a query export; see the module documentation.
pub fn fit(
    rows: &[QueryRow],
    brand: Option<&Regex>,
    fallback: &CtrCurve,
    opts: &FitOptions,
) -> Result<CtrFit, ClicksError> {
    check_options(opts)?;
    let (accums, tally) = bin_rows(rows, brand, opts)?;
    if tally.non_branded == 0 {
        return Err(ClicksError::NoNonBrandedRows {
            total: rows.len(),
            branded: tally.branded,
        });
    }
    if tally.zero_impressions == tally.non_branded {
        return Err(ClicksError::NoImpressions {
            rows: tally.non_branded,
        });
    }
    let obs = observations(&accums, opts);
    if obs.is_empty() {
        let best = accums.iter().map(|a| a.impressions).fold(0.0, f64::max);
        let min = opts.min_impressions;
        return Err(ClicksError::TooFewImpressions { best, min });
    }
    assemble(rows.len(), &accums, &tally, &obs, fallback, opts)
}

/// Checks the fit options.
fn check_options(opts: &FitOptions) -> Result<(), ClicksError> {
    let m = opts.min_impressions;
    if !(m.is_finite() && m >= 0.0) {
        let expected = "a number of impressions, 0 or more (default 100)";
        return Err(super::invalid(
            "fit options",
            "min_impressions",
            m,
            expected,
        ));
    }
    let mut last = HEAD_BINS;
    for &e in &opts.tail_edges {
        if e <= last || f64::from(e) > MAX_POSITION {
            let expected = format!("tail edges increasing, above {last} and at most 100");
            return Err(super::invalid(
                "fit options",
                "tail_edges",
                f64::from(e),
                &expected,
            ));
        }
        last = e;
    }
    Ok(())
}

/// Number of bins: 20 single positions plus the tail bins.
fn bin_count(opts: &FitOptions) -> usize {
    HEAD_BINS as usize + opts.tail_edges.len()
}

/// The bin of a rounded position, if any.
fn bin_of(rounded: f64, opts: &FitOptions) -> Option<usize> {
    if rounded <= f64::from(HEAD_BINS) {
        return Some((rounded.max(1.0) as usize) - 1);
    }
    let k = opts
        .tail_edges
        .iter()
        .position(|&e| rounded <= f64::from(e))?;
    Some(HEAD_BINS as usize + k)
}

/// Validates and bins every row, counting what is left out and why.
fn bin_rows(
    rows: &[QueryRow],
    brand: Option<&Regex>,
    opts: &FitOptions,
) -> Result<(Vec<Accum>, Tally), ClicksError> {
    let mut accums = vec![Accum::default(); bin_count(opts)];
    let mut tally = Tally::default();
    for (i, row) in rows.iter().enumerate() {
        check_row(i + 1, row)?;
        if brand.is_some_and(|re| re.is_match(&row.query)) {
            tally.branded += 1;
            continue;
        }
        tally.non_branded += 1;
        if row.impressions <= 0.0 {
            tally.zero_impressions += 1;
            continue;
        }
        let Some(b) = bin_of(row.position.round(), opts) else {
            tally.beyond += 1;
            continue;
        };
        let a = &mut accums[b];
        a.queries += 1;
        a.impressions += row.impressions;
        a.clicks += row.clicks;
        a.position_x_impressions += row.position * row.impressions;
    }
    Ok((accums, tally))
}

/// Checks one row's numbers.
fn check_row(row: usize, r: &QueryRow) -> Result<(), ClicksError> {
    let err = |column: &str, found: f64, expected: &str| ClicksError::QueryRow {
        row,
        query: r.query.clone(),
        column: column.to_string(),
        found: format!("{found}"),
        expected: expected.to_string(),
    };
    if !(r.impressions.is_finite() && r.impressions >= 0.0) {
        return Err(err("impressions", r.impressions, "a count, 0 or more"));
    }
    if !(r.clicks.is_finite() && r.clicks >= 0.0 && r.clicks <= r.impressions) {
        return Err(err(
            "clicks",
            r.clicks,
            "a count from 0 to the row's impressions",
        ));
    }
    if r.impressions > 0.0 && !(r.position.is_finite() && r.position >= 1.0) {
        return Err(err(
            "position",
            r.position,
            "an average position of 1 or more",
        ));
    }
    Ok(())
}

/// The bins with at least `min` impressions, as fit data.
fn observations(accums: &[Accum], opts: &FitOptions) -> Vec<Obs> {
    accums
        .iter()
        .enumerate()
        .filter(|(_, a)| a.impressions > 0.0 && a.impressions >= opts.min_impressions)
        .map(|(i, a)| {
            let (first, last) = bin_range(i, opts);
            Obs {
                x: a.position_x_impressions / a.impressions,
                y: a.clicks / a.impressions,
                w: a.impressions,
                clicks: a.clicks,
                lo: (f64::from(first) - 0.5).max(1.0),
                hi: (f64::from(last) + 0.5).min(MAX_POSITION),
            }
        })
        .collect()
}

/// Fits both models, chooses one, and builds the report.
fn assemble(
    rows: usize,
    accums: &[Accum],
    tally: &Tally,
    obs: &[Obs],
    fallback: &CtrCurve,
    opts: &FitOptions,
) -> Result<CtrFit, ClicksError> {
    let isotonic = isotonic_fit(obs);
    let power_law = power_law_fit(obs);
    let (chosen, choice_reason) = choose(&isotonic, power_law.as_ref());
    let model = Model::new(chosen, &isotonic, power_law.as_ref(), obs);
    let curve = output_curve(&model, obs, fallback, chosen)?;
    let bins = describe_bins(accums, opts, &isotonic, power_law.as_ref());
    let fallback_rmse = interior_rmse(obs, |x| fallback.ctr(x));
    Ok(CtrFit {
        rows,
        branded_excluded: tally.branded,
        zero_impression_rows: tally.zero_impressions,
        beyond_last_bin: tally.beyond,
        queries_used: bins.iter().filter(|b| !b.fallback).map(|b| b.queries).sum(),
        impressions_used: obs.iter().map(|o| o.w).sum(),
        min_impressions: opts.min_impressions,
        bins,
        isotonic,
        power_law,
        chosen,
        choice_reason,
        curve,
        fallback_rmse,
    })
}

/// Impression-weighted RMSE of a fixed curve over the interior bins, the
/// bins [`cross_validate`] holds out. None with fewer than 3 bins.
fn interior_rmse(obs: &[Obs], curve: impl Fn(f64) -> f64) -> Option<f64> {
    if obs.len() < 3 {
        return None;
    }
    let inner = &obs[1..obs.len() - 1];
    let sw: f64 = inner.iter().map(|o| o.w).sum();
    let sse: f64 = inner.iter().map(|o| o.w * (o.y - curve(o.x)).powi(2)).sum();
    Some((sse / sw).sqrt())
}

/// Isotonic fit with its errors.
fn isotonic_fit(obs: &[Obs]) -> IsotonicFit {
    let fitted = isotonic_values(obs);
    let points: Vec<[f64; 2]> = obs.iter().zip(&fitted).map(|(o, &f)| [o.x, f]).collect();
    let rmse = weighted_rmse(obs, |o| eval_points(&points, o.x));
    let cv_rmse = cross_validate(obs, |train, x| eval_points(&isotonic_points(train), x));
    IsotonicFit {
        points,
        rmse,
        cv_rmse,
    }
}

fn isotonic_values(obs: &[Obs]) -> Vec<f64> {
    let ys: Vec<f64> = obs.iter().map(|o| o.y).collect();
    let ws: Vec<f64> = obs.iter().map(|o| o.w).collect();
    pava_non_increasing(&ys, &ws)
}

fn isotonic_points(obs: &[Obs]) -> Vec<[f64; 2]> {
    let fitted = isotonic_values(obs);
    obs.iter().zip(&fitted).map(|(o, &f)| [o.x, f]).collect()
}

/// Evaluates fitted points at `x`: flat beyond the ends, linear in log CTR
/// between points (linear in CTR when one is 0), like a [`CtrCurve`].
fn eval_points(points: &[[f64; 2]], x: f64) -> f64 {
    let (Some(first), Some(last)) = (points.first(), points.last()) else {
        return 0.0;
    };
    if x <= first[0] {
        return first[1];
    }
    if x >= last[0] {
        return last[1];
    }
    let i = points.partition_point(|p| p[0] <= x);
    let ([x0, y0], [x1, y1]) = (points[i - 1], points[i]);
    let t = (x - x0) / (x1 - x0);
    if y0 > 0.0 && y1 > 0.0 {
        (y0 * (y1 / y0).powf(t)).clamp(y1.min(y0), y0.max(y1))
    } else {
        y0 + (y1 - y0) * t
    }
}

/// Power-law fit with its errors; none with fewer than two bins.
fn power_law_fit(obs: &[Obs]) -> Option<PowerLawFit> {
    let (a, b, constrained) = power_law_params(obs)?;
    let rmse = weighted_rmse(obs, |o| power_law(a, b, o.x));
    let cv_rmse = cross_validate(obs, |train, x| {
        power_law_params(train).map_or(f64::NAN, |(a, b, _)| power_law(a, b, x))
    });
    Some(PowerLawFit {
        a,
        b,
        constrained,
        rmse,
        cv_rmse: cv_rmse.filter(|e| e.is_finite()),
    })
}

/// `a * p^-b`, capped at 1.
fn power_law(a: f64, b: f64, p: f64) -> f64 {
    (a * p.powf(-b)).min(1.0)
}

/// Weighted least squares of `ln ctr` on `ln p` with impression weights.
/// Zero-click bins use `(clicks + 0.5) / (impressions + 1)` so the log is
/// finite (an empirical-logit style correction, Haldane 1956).
fn power_law_params(obs: &[Obs]) -> Option<(f64, f64, bool)> {
    if obs.len() < 2 {
        return None;
    }
    let pts: Vec<(f64, f64, f64)> = obs
        .iter()
        .map(|o| (o.x.ln(), ((o.clicks + 0.5) / (o.w + 1.0)).ln(), o.w))
        .collect();
    let sw: f64 = pts.iter().map(|p| p.2).sum();
    let mx = pts.iter().map(|p| p.2 * p.0).sum::<f64>() / sw;
    let my = pts.iter().map(|p| p.2 * p.1).sum::<f64>() / sw;
    let sxx: f64 = pts.iter().map(|p| p.2 * (p.0 - mx).powi(2)).sum();
    let sxy: f64 = pts.iter().map(|p| p.2 * (p.0 - mx) * (p.1 - my)).sum();
    if sxx <= 1e-12 * sw {
        return None;
    }
    let free_b = -sxy / sxx;
    let (b, constrained) = if free_b < 0.0 {
        (0.0, true)
    } else {
        (free_b, false)
    };
    Some(((my + b * mx).exp(), b, constrained))
}

/// Impression-weighted RMSE of CTR of a prediction.
fn weighted_rmse(obs: &[Obs], predict: impl Fn(&Obs) -> f64) -> f64 {
    let sw: f64 = obs.iter().map(|o| o.w).sum();
    let sse: f64 = obs.iter().map(|o| o.w * (o.y - predict(o)).powi(2)).sum();
    (sse / sw).sqrt()
}

/// Leave-one-bin-out RMSE over the interior bins: refit without each and
/// predict it. None with fewer than 3 bins.
fn cross_validate(obs: &[Obs], predict: impl Fn(&[Obs], f64) -> f64) -> Option<f64> {
    if obs.len() < 3 {
        return None;
    }
    let (mut sse, mut sw) = (0.0, 0.0);
    for i in 1..obs.len() - 1 {
        let train: Vec<Obs> = obs
            .iter()
            .enumerate()
            .filter(|&(j, _)| j != i)
            .map(|(_, o)| *o)
            .collect();
        let o = obs[i];
        sse += o.w * (o.y - predict(&train, o.x)).powi(2);
        sw += o.w;
    }
    Some((sse / sw).sqrt())
}

/// Chooses the fit with the lower cross-validated error.
fn choose(iso: &IsotonicFit, pow: Option<&PowerLawFit>) -> (FitKind, String) {
    match (iso.cv_rmse, pow.and_then(|p| p.cv_rmse)) {
        (Some(ci), Some(cp)) if cp <= ci => (
            FitKind::PowerLaw,
            format!("power law: lower leave-one-bin-out RMSE ({cp:.5} vs isotonic {ci:.5})"),
        ),
        (Some(ci), Some(cp)) => (
            FitKind::Isotonic,
            format!("isotonic: lower leave-one-bin-out RMSE ({ci:.5} vs power law {cp:.5})"),
        ),
        _ => (
            FitKind::Isotonic,
            "isotonic: fewer than 3 well-observed bins, too few to cross-validate".to_string(),
        ),
    }
}

/// The chosen fit as a function of position, with the range it covers.
enum Model {
    Points(Vec<[f64; 2]>),
    Power { a: f64, b: f64, lo: f64, hi: f64 },
}

impl Model {
    fn new(kind: FitKind, iso: &IsotonicFit, pow: Option<&PowerLawFit>, obs: &[Obs]) -> Model {
        match (kind, pow) {
            (FitKind::PowerLaw, Some(p)) => Model::Power {
                a: p.a,
                b: p.b,
                lo: obs.first().map_or(1.0, |o| o.lo),
                hi: obs.last().map_or(MAX_POSITION, |o| o.hi),
            },
            _ => Model::Points(iso.points.clone()),
        }
    }

    fn at(&self, p: f64) -> f64 {
        match self {
            Model::Points(points) => eval_points(points, p),
            Model::Power { a, b, .. } => power_law(*a, *b, p),
        }
    }

    /// Positions over which the fit itself is used.
    fn range(&self) -> (f64, f64) {
        match self {
            Model::Points(points) => {
                let first = points.first().map_or(1.0, |p| p[0]);
                (first, points.last().map_or(first, |p| p[0]))
            }
            Model::Power { lo, hi, .. } => (*lo, *hi),
        }
    }
}

/// The fitted value at `p` inside the model's range, the fallback's shape
/// scaled to meet the fit outside it.
fn blended(model: &Model, fallback: &CtrCurve, p: f64) -> f64 {
    let (lo, hi) = model.range();
    let anchor = p.clamp(lo, hi);
    let y = model.at(anchor);
    if p >= lo && p <= hi {
        return y;
    }
    let f_anchor = fallback.ctr(anchor);
    if f_anchor <= 0.0 {
        return if p < lo { y } else { 0.0 };
    }
    let scaled = (y * fallback.ctr(p) / f_anchor).min(1.0);
    if p < lo {
        scaled.max(y)
    } else {
        scaled.min(y)
    }
}

/// Builds the output curve: positions 1..20, then tail points at the
/// well-observed tail bins, the fallback's tail positions and 100.
fn output_curve(
    model: &Model,
    obs: &[Obs],
    fallback: &CtrCurve,
    kind: FitKind,
) -> Result<CtrCurve, ClicksError> {
    let (lo, hi) = model.range();
    let value = |p: f64| blended(model, fallback, p);
    let head: Vec<f64> = (1..=HEAD_BINS).map(|p| value(f64::from(p))).collect();
    let mut xs: Vec<f64> = obs.iter().map(|o| o.x).collect();
    xs.extend(fallback.tail().iter().map(|t| t[0]));
    xs.push(MAX_POSITION);
    xs.retain(|&x| x > f64::from(HEAD_BINS) + 1e-9 && x <= MAX_POSITION);
    xs.sort_by(f64::total_cmp);
    xs.dedup_by(|b, a| (*b - *a).abs() < 1e-6);
    let tail: Vec<[f64; 2]> = xs.iter().map(|&x| [x, value(x)]).collect();
    let (head, tail) = running_min(head, tail);
    let description = format!("Fitted from a query export ({} position bins)", obs.len());
    let source = format!(
        "furrow ctr fit, {} fit; outside positions {lo:.1} to {hi:.1} the shape of: {}",
        match kind {
            FitKind::Isotonic => "isotonic",
            FitKind::PowerLaw => "power-law",
        },
        fallback.description()
    );
    CtrCurve::new(&description, &source, head, tail, "fitted curve")
}

/// Removes rounding-level increases so the curve is exactly non-increasing.
fn running_min(mut head: Vec<f64>, mut tail: Vec<[f64; 2]>) -> (Vec<f64>, Vec<[f64; 2]>) {
    let mut m = 1.0f64;
    for c in head.iter_mut() {
        m = m.min(*c);
        *c = m;
    }
    for t in tail.iter_mut() {
        m = m.min(t[1]);
        t[1] = m;
    }
    (head, tail)
}

/// The per-bin report.
fn describe_bins(
    accums: &[Accum],
    opts: &FitOptions,
    iso: &IsotonicFit,
    pow: Option<&PowerLawFit>,
) -> Vec<FitBin> {
    accums
        .iter()
        .enumerate()
        .map(|(i, a)| describe_bin(bin_range(i, opts), a, opts.min_impressions, iso, pow))
        .collect()
}

/// One bin's report.
fn describe_bin(
    (first, last): (u32, u32),
    a: &Accum,
    min_impressions: f64,
    iso: &IsotonicFit,
    pow: Option<&PowerLawFit>,
) -> FitBin {
    let seen = a.impressions > 0.0;
    let mean = seen.then(|| a.position_x_impressions / a.impressions);
    let fallback = !(seen && a.impressions >= min_impressions);
    let fitted = |v: f64| (!fallback).then_some(v);
    FitBin {
        label: if first == last {
            format!("{first}")
        } else {
            format!("{first}-{last}")
        },
        first,
        last,
        queries: a.queries,
        impressions: a.impressions,
        clicks: a.clicks,
        mean_position: mean,
        observed_ctr: seen.then(|| a.clicks / a.impressions),
        fallback,
        isotonic_ctr: mean.and_then(|x| fitted(eval_points(&iso.points, x))),
        power_law_ctr: mean.and_then(|x| pow.and_then(|p| fitted(power_law(p.a, p.b, x)))),
    }
}

/// Rounded positions covered by bin `i`.
fn bin_range(i: usize, opts: &FitOptions) -> (u32, u32) {
    let head = HEAD_BINS as usize;
    if i < head {
        return (i as u32 + 1, i as u32 + 1);
    }
    let k = i - head;
    let first = if k == 0 {
        HEAD_BINS
    } else {
        opts.tail_edges[k - 1]
    } + 1;
    (first, opts.tail_edges[k])
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn pava_pools_only_violators() {
        // Already non-increasing: unchanged.
        assert_eq!(
            pava_non_increasing(&[3.0, 2.0, 1.0], &[1.0; 3]),
            vec![3.0, 2.0, 1.0]
        );
        // One violation pooled with weights 1 and 3: (1*1 + 3*2)/4 = 1.75.
        let v = pava_non_increasing(&[1.0, 2.0], &[1.0, 3.0]);
        assert!((v[0] - 1.75).abs() < 1e-12 && (v[1] - 1.75).abs() < 1e-12);
    }

    #[test]
    fn bins_cover_positions_in_order() {
        let o = FitOptions::default();
        assert_eq!(bin_of(1.0, &o), Some(0));
        assert_eq!(bin_of(20.0, &o), Some(19));
        assert_eq!(bin_of(21.0, &o), Some(20));
        assert_eq!(bin_of(51.0, &o), Some(22));
        assert_eq!(bin_of(101.0, &o), None);
        assert_eq!(bin_range(20, &o), (21, 30));
        assert_eq!(bin_range(22, &o), (51, 100));
    }
}
