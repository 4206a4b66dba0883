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

/// Month-level context of one future, computed once per future: a ranking
/// shock moves every month from `from` on by `loss` in log-position.
#[derive(Debug, Clone, Copy)]
pub struct FutureContext {
    /// First shocked month (the horizon when none is).
    from: usize,
    /// Log-position shift in a shocked month.
    loss: f64,
    /// No month is shocked (every month's shift is +0).
    pub calm: bool,
}

impl FutureContext {
    /// The context of a site draw over `horizon` months.
    pub fn new(site: &SiteDraw, horizon: usize) -> FutureContext {
        let from = if site.shock {
            ((site.shock_month_share * horizon as f64).floor() as usize).min(horizon)
        } else {
            horizon
        };
        let loss = site.shock_log_loss;
        FutureContext {
            from,
            loss,
            calm: from >= horizon || loss.to_bits() == 0,
        }
    }

    /// No shock.
    pub fn calm(horizon: usize) -> FutureContext {
        FutureContext {
            from: horizon,
            loss: 0.0,
            calm: true,
        }
    }

    /// Log-position shift in month `m`.
    #[inline]
    pub fn shock(&self, m: usize) -> f64 {
        if m >= self.from {
            self.loss
        } else {
            0.0
        }
    }

    /// Number of shocked months (a nonzero shift) among the first `horizon`.
    pub fn shocked_months(&self, horizon: usize) -> usize {
        if self.loss == 0.0 {
            0
        } else {
            horizon.saturating_sub(self.from)
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

/// Per-month scratch space of the kernel, reused across keywords so the
/// keyword loop allocates nothing.
#[derive(Debug, Clone)]
pub struct KernelScratch {
    /// 0, 1, 2, ... as f64 (month indices for the ramp).
    months: Vec<f64>,
    ramp: Vec<f64>,
    base: Vec<f64>,
    old: Vec<f64>,
    weight: Vec<f64>,
}

impl KernelScratch {
    /// Scratch for `horizon` months.
    pub fn new(horizon: usize) -> KernelScratch {
        KernelScratch {
            months: (0..horizon).map(|m| m as f64).collect(),
            ramp: vec![0.0; horizon],
            base: vec![0.0; horizon],
            old: vec![0.0; horizon],
            weight: vec![0.0; horizon],
        }
    }
}

/// Adds keyword `k`'s incremental clicks for every tier and month to `acc`
/// (`tiers x horizon`, row per tier, tier gains cumulative); a shorter
/// `acc` computes only the tiers it has rows for.
#[allow(clippy::too_many_arguments)]
#[inline(always)]
pub fn add_keyword(
    model: &Model,
    c: &ClusterModel,
    k: usize,
    draws: &KeywordDraws,
    exec: f64,
    ctx: &FutureContext,
    sc: &mut KernelScratch,
    acc: &mut [f64],
) {
    let kw = &c.keywords[k];
    let h = sc.ramp.len();
    let gains = draws.u_no_gain >= kw.no_gain;
    if !gains && !c.has_explicit {
        return;
    }
    let months_full = kw.months_to_full * (model.rank.timing.noise_sigma * draws.z_time).exp();
    let first_since = 0.5 - c.start_offset as f64;
    let first = (0..h).find(|&m| first_since + m as f64 > 0.0).unwrap_or(h);
    let lookup = if kw.branded {
        &model.ctr_branded_lookup
    } else {
        &model.ctr_lookup
    };
    let ctr0 = lookup.ctr_ln(kw.ln_p0);
    model.rank.ramp_months(
        &mut sc.ramp[first..],
        &sc.months[first..],
        first_since,
        months_full,
    );
    if ctx.calm {
        sc.base[first..].fill(kw.ln_p0 + 0.0);
        sc.old[first..].fill(ctr0);
    } else {
        for m in first..h {
            let shock = ctx.shock(m);
            sc.base[m] = kw.ln_p0 + shock;
            sc.old[m] = if shock == 0.0 {
                ctr0
            } else {
                lookup.ctr_ln(sc.base[m])
            };
        }
    }
    for (w, &season) in sc.weight[first..].iter_mut().zip(&model.season[first..]) {
        *w = kw.volume * season;
    }
    // The keyword's luck and its cluster's execution, shared by every tier
    // (0 when it gains nothing under the model).
    let luck = if gains {
        exec.max(0.0) * (model.rank.gain.noise_sigma * draws.z_gain).exp()
    } else {
        0.0
    };
    // The first `acc.len() / h` tiers (all of them unless the caller needs
    // fewer: tier t's row does not depend on the tiers above it).
    for t in 0..c.n_tiers().min(acc.len() / h.max(1)) {
        let d = tier_gain(c, k, t, kw, draws, exec, luck);
        if d == 0.0 {
            continue;
        }
        lookup.add_months(
            &mut acc[t * h + first..(t + 1) * h],
            &sc.ramp[first..],
            &sc.base[first..],
            &sc.old[first..],
            &sc.weight[first..],
            d,
        );
    }
}
