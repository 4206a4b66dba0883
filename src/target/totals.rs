//! Per-future totals of a plan: the baseline path plus the funded
//! increments, in clicks or revenue, by month or over the horizon.
//!
//! For funded fractions `x_j` (one per slot `j = (cluster, tier)`, in the
//! order of `Futures::slots`), future `s` adds in month `m`
//! `Σ_j x_j · (cum_j[s,m] − cum_{j−1}[s,m])`, where `cum_j` is the
//! simulated cumulative-tier increment and `cum_{j−1}` the tier below in the
//! same cluster (0 for a first tier). Revenue is clicks times the future's
//! revenue per click (conversion rate × order value), for the baseline too.
//!
//! The uplift per unit of search volume (for "how much more volume would
//! the plan need"): with `V_c` the summed monthly search volume of cluster
//! `c`'s keywords and `x_{c,1}` its first tier's funded fraction, the funded
//! volume is `V_f = Σ_c x_{c,1} · V_c` and future `s`'s uplift is
//! `u_s = (funded increment of s over the horizon) / V_f`: the plan's
//! incremental clicks (or revenue) over the horizon per unit of monthly
//! search volume worked on, averaged over its keywords.

use super::{Metric, TargetError};
use crate::simulate::summary::revenue_per_click;
use crate::simulate::{Futures, Model};
use rayon::prelude::*;

/// Checks that the futures' matrices have the sizes their counts say.
pub fn check_futures(f: &Futures) -> Result<(), TargetError> {
    let sizes = [
        (
            "the simulated clicks",
            f.clicks.len(),
            f.scenarios * f.slots.len() * f.horizon,
        ),
        ("the site-wide draws", f.site.len(), f.scenarios),
        (
            "the execution factors",
            f.execution.len(),
            f.scenarios * f.clusters,
        ),
    ];
    for (what, found, expected) in sizes {
        if found != expected {
            return Err(TargetError::Shape {
                what: what.into(),
                found,
                expected,
                hint: "pass the futures exactly as the simulation returned them".into(),
            });
        }
    }
    match f
        .slots
        .iter()
        .enumerate()
        .find(|(j, s)| s.1 > 0 && (*j == 0 || f.slots[j - 1].0 != s.0))
    {
        Some((j, _)) => Err(TargetError::Value {
            what: format!("slot {}", j + 1),
            found: "a tier without the tier below before it".into(),
            expected: "each cluster's tiers in order, first tier first".into(),
        }),
        None => Ok(()),
    }
}

/// Checks that `futures` were simulated from `model` (same slots and
/// horizon).
pub fn check_model(model: &Model, futures: &Futures) -> Result<(), TargetError> {
    if model.slot_index() == futures.slots && model.horizon() == futures.horizon {
        return Ok(());
    }
    Err(TargetError::Shape {
        what: "the futures".into(),
        found: futures.slots.len(),
        expected: model.slots(),
        hint: "simulate the futures from this model: slots or horizon differ".into(),
    })
}

/// Checks the futures and that `fractions` has one value in [0, 1] per
/// slot.
pub fn check_fractions(futures: &Futures, fractions: &[f64]) -> Result<(), TargetError> {
    check_futures(futures)?;
    let n = futures.slots.len();
    if fractions.len() != n {
        return Err(TargetError::Shape {
            what: "the funded fractions".into(),
            found: fractions.len(),
            expected: n,
            hint: "one per cluster tier, in the order of the simulated slots".into(),
        });
    }
    match fractions
        .iter()
        .position(|f| !(f.is_finite() && (-1e-9..=1.0 + 1e-9).contains(f)))
    {
        Some(j) => Err(TargetError::Value {
            what: format!("the funded fraction of slot {}", j + 1),
            found: format!("{}", fractions[j]),
            expected: "a share from 0 to 1".into(),
        }),
        None => Ok(()),
    }
}

/// Checks that `paths` holds `S × horizon` finite values.
pub fn check_paths(futures: &Futures, paths: &[f64], what: &str) -> Result<(), TargetError> {
    let expected = futures.scenarios * futures.horizon;
    if paths.len() != expected {
        return Err(TargetError::Shape {
            what: what.into(),
            found: paths.len(),
            expected,
            hint: format!(
                "{} futures × {} months, row-major, path s aligned with future s",
                futures.scenarios, futures.horizon
            ),
        });
    }
    match paths.iter().position(|v| !v.is_finite()) {
        Some(i) => Err(TargetError::Value {
            what: format!(
                "{what}, future {} month {}",
                i / futures.horizon.max(1) + 1,
                i % futures.horizon.max(1) + 1
            ),
            found: format!("{}", paths[i]),
            expected: "a finite number".into(),
        }),
        None => Ok(()),
    }
}

/// Funded incremental clicks per future and month (`S × horizon`,
/// row-major).
pub fn funded_monthly(futures: &Futures, fractions: &[f64]) -> Result<Vec<f64>, TargetError> {
    check_fractions(futures, fractions)?;
    let h = futures.horizon;
    // The funded slots with their fractions and whether a tier lies below.
    let funded: Vec<(usize, f64, bool)> = futures
        .slots
        .iter()
        .enumerate()
        .map(|(j, &(_, t))| (j, fractions[j].clamp(0.0, 1.0), t > 0))
        .filter(|&(_, x, _)| x != 0.0)
        .collect();
    let mut out = vec![0.0; futures.scenarios * h];
    // Futures in parallel; each row is summed in slot order, so the result
    // does not depend on the thread count.
    out.par_chunks_mut(h.max(1))
        .take(futures.scenarios)
        .enumerate()
        .for_each(|(s, row)| {
            for &(j, x, below) in &funded {
                let own = futures.monthly(s, j);
                if below {
                    let under = futures.monthly(s, j - 1);
                    for ((r, &o), &b) in row.iter_mut().zip(own).zip(under) {
                        *r += x * (o as f64 - b as f64);
                    }
                } else {
                    for (r, &o) in row.iter_mut().zip(own) {
                        *r += x * (o as f64 - 0.0);
                    }
                }
            }
        });
    Ok(out)
}

/// Baseline plus funded increments per future and month (`S × horizon`), in
/// `metric` (revenue: times each future's revenue per click).
pub fn monthly_totals(
    futures: &Futures,
    baseline: &[f64],
    fractions: &[f64],
    metric: Metric,
) -> Result<Vec<f64>, TargetError> {
    check_paths(futures, baseline, "the baseline paths")?;
    with_baseline(
        futures,
        funded_monthly(futures, fractions)?,
        baseline,
        metric,
    )
}

/// [`monthly_totals`] from the plan's [`funded_monthly`] increments.
pub fn with_baseline(
    futures: &Futures,
    mut funded: Vec<f64>,
    baseline: &[f64],
    metric: Metric,
) -> Result<Vec<f64>, TargetError> {
    check_paths(futures, baseline, "the baseline paths")?;
    if funded.len() != baseline.len() {
        return Err(TargetError::Shape {
            what: "the funded increments".into(),
            found: funded.len(),
            expected: baseline.len(),
            hint: "funded_monthly of the same futures".into(),
        });
    }
    let h = futures.horizon.max(1);
    for (i, v) in funded.iter_mut().enumerate() {
        *v += baseline[i];
        if metric == Metric::Revenue {
            *v *= revenue_per_click(&futures.site[i / h]);
        }
    }
    Ok(funded)
}

/// Row sums of an `S × horizon` matrix.
pub fn row_sums(monthly: &[f64], horizon: usize) -> Vec<f64> {
    monthly
        .chunks(horizon.max(1))
        .map(|r| r.iter().sum())
        .collect()
}

/// Baseline plus funded increments over the horizon, per future.
pub fn horizon_totals(
    futures: &Futures,
    baseline: &[f64],
    fractions: &[f64],
    metric: Metric,
) -> Result<Vec<f64>, TargetError> {
    let m = monthly_totals(futures, baseline, fractions, metric)?;
    Ok(row_sums(&m, futures.horizon))
}

/// Summed monthly search volume of each cluster's keywords.
pub fn cluster_volumes(model: &Model) -> Vec<f64> {
    model
        .clusters
        .iter()
        .map(|c| c.keywords.iter().map(|k| k.volume).sum())
        .collect()
}

/// The funded volume `V_f = Σ_c x_{c,1} · V_c`.
pub fn funded_volume(futures: &Futures, fractions: &[f64], volumes: &[f64]) -> f64 {
    futures
        .slots
        .iter()
        .zip(fractions)
        .filter(|((_, t), _)| *t == 0)
        .map(|(&(c, _), &x)| x.clamp(0.0, 1.0) * volumes.get(c).copied().unwrap_or(0.0))
        .sum()
}

/// The uplift per unit of monthly search volume in each future (see the
/// module documentation) and the funded volume; None when the plan funds no
/// volume.
pub fn uplift(
    futures: &Futures,
    fractions: &[f64],
    volumes: &[f64],
    metric: Metric,
) -> Result<Option<(Vec<f64>, f64)>, TargetError> {
    if volumes.len() != futures.clusters {
        return Err(TargetError::Shape {
            what: "the cluster volumes".into(),
            found: volumes.len(),
            expected: futures.clusters,
            hint: "one summed monthly search volume per cluster".into(),
        });
    }
    let vf = funded_volume(futures, fractions, volumes);
    if !(vf > 0.0 && vf.is_finite()) {
        return Ok(None);
    }
    let incr = row_sums(&funded_monthly(futures, fractions)?, futures.horizon);
    let u = incr
        .iter()
        .zip(&futures.site)
        .map(|(c, site)| {
            let v = if metric == Metric::Revenue {
                c * revenue_per_click(site)
            } else {
                *c
            };
            v / vf
        })
        .collect();
    Ok(Some((u, vf)))
}
