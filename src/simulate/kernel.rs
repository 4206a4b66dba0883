//! The one implementation of "a keyword's incremental clicks", shared by
//! `estimate` (central values, no randomness) and the Monte Carlo (draws).
//!
//! For keyword `k` in month `m`: `volume * season(m) * (CTR(p_m) - CTR(p_0))`
//! where `ln p_m = ln p_0 - ramp(m) * D + shock(m)` and `ln p_0` carries the
//! same shock (a shock moves the site's position with or without the work).
//! Site-wide multipliers (click-through factor, volume factor) are applied
//! by the caller to whole sums, so this loop is look-ups and arithmetic only.

use super::model::{ClusterModel, KeywordModel, Model, TierGain};
use crate::clicks::{KeywordDraws, SiteDraw};

/// Month-level context of one future, computed once per future.
#[derive(Debug, Clone)]
pub struct FutureContext {
    /// Log-position shift from a ranking shock, per horizon month.
    pub shock: Vec<f64>,
}

impl FutureContext {
    /// The context of a site draw over `horizon` months.
    pub fn new(site: &SiteDraw, horizon: usize) -> FutureContext {
        let from = if site.shock {
            ((site.shock_month_share * horizon as f64).floor() as usize).min(horizon)
        } else {
            horizon
        };
        let shock = (0..horizon)
            .map(|m| if m >= from { site.shock_log_loss } else { 0.0 })
            .collect();
        FutureContext { shock }
    }

    /// No shock.
    pub fn calm(horizon: usize) -> FutureContext {
        FutureContext {
            shock: vec![0.0; horizon],
        }
    }
}

/// The log-gain of tier `t` for keyword `k` given its draws.
#[inline]
fn tier_gain(
    c: &ClusterModel,
    k: usize,
    t: usize,
    kw: &KeywordModel,
    draws: &KeywordDraws,
    exec: f64,
    luck: f64,
) -> f64 {
    match c.gains[t] {
        TierGain::Model { .. } => c.central[k * c.gains.len() + t] * luck,
        TierGain::Explicit(g) => {
            let p = g.position_at(kw.p0, draws.u_explicit).min(kw.p0);
            (kw.ln_p0 - p.ln()) * exec.max(0.0)
        }
    }
}

/// Adds keyword `k`'s incremental clicks for every tier and month to `acc`
/// (`tiers x horizon`, row per tier, tier gains cumulative). `ramp` is
/// scratch space of `horizon` values. Returns false when it adds nothing.
#[allow(clippy::too_many_arguments)]
pub fn add_keyword(
    model: &Model,
    c: &ClusterModel,
    k: usize,
    draws: &KeywordDraws,
    exec: f64,
    ctx: &FutureContext,
    ramp: &mut [f64],
    acc: &mut [f64],
) {
    let kw = &c.keywords[k];
    let h = ramp.len();
    let gains = draws.u_no_gain >= kw.no_gain;
    if !gains && !c.has_explicit {
        return;
    }
    let months_full = kw.months_to_full * (model.rank.timing.noise_sigma * draws.z_time).exp();
    for (m, r) in ramp.iter_mut().enumerate() {
        let since = m as f64 - c.start_offset as f64 + 0.5;
        *r = model.rank.ramp(since, months_full);
    }
    let lookup = if kw.branded {
        &model.ctr_branded_lookup
    } else {
        &model.ctr_lookup
    };
    let ctr0 = lookup.ctr_ln(kw.ln_p0);
    // The keyword's luck and its cluster's execution, shared by every tier
    // (0 when it gains nothing under the model).
    let luck = if gains {
        exec.max(0.0) * (model.rank.gain.noise_sigma * draws.z_gain).exp()
    } else {
        0.0
    };
    let first = ramp.iter().position(|&r| r > 0.0).unwrap_or(h);
    for t in 0..c.n_tiers() {
        let d = tier_gain(c, k, t, kw, draws, exec, luck);
        if d == 0.0 {
            continue;
        }
        let row = &mut acc[t * h..(t + 1) * h];
        // Once the ramp is complete the position stops moving: reuse the
        // last look-up while neither the ramp nor the shock changes.
        let (mut last_r, mut last_shock, mut last_delta) = (f64::NAN, f64::NAN, 0.0);
        for m in first..h {
            let (r, shock) = (ramp[m], ctx.shock[m]);
            if r != last_r || shock != last_shock {
                let base = kw.ln_p0 + shock;
                let ctr_old = if shock == 0.0 {
                    ctr0
                } else {
                    lookup.ctr_ln(base)
                };
                last_delta = lookup.ctr_ln(base - r * d) - ctr_old;
                (last_r, last_shock) = (r, shock);
            }
            row[m] += kw.volume * model.season[m] * last_delta;
        }
    }
}
