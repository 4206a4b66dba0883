//! The cutting-plane method for CVaR constraints of Künzi-Bay & Mayer,
//! "Computational aspects of minimizing conditional value-at-risk",
//! Computational Management Science 3 (2006) 3-27.
//!
//! CVaR has the polyhedral representation
//! `min_eta eta + max_K sum_{s in K} p_s (L_s(x) - eta) / (1 - q)` over all
//! subsets `K` of futures. The master keeps `eta`, one column `w` and a few
//! aggregated cuts `w >= sum_{s in K} p_s (L_s(x) - eta)`. After each solve the
//! losses of the current allocation are recomputed over all futures, the
//! futures with a loss above `eta` form `K`, and its cut is added when the
//! master's `w` underestimates the excess. There are finitely many `K`, so the
//! loop ends; it stops when the violation is within tolerance.

use super::master::Master;
use super::model::{cut_row, Columns, Cut, Layout};
use super::problem::{sum_in_order, Problem, BLOCK};
use rayon::prelude::*;
use std::collections::HashSet;
use std::time::Instant;

/// The cut of the futures whose loss exceeds `eta`, its excess
/// `sum_{s in K} p_s (L_s - eta)` and a signature of `K`.
pub(crate) fn aggregate(p: &Problem, losses: &[f64], eta: f64) -> (Cut, f64, u64) {
    let n = p.n();
    let parts: Vec<(Vec<f64>, f64, f64, u64)> = p
        .returns
        .par_chunks(n * BLOCK)
        .zip(losses.par_chunks(BLOCK))
        .enumerate()
        .map(|(b, (chunk, ls))| block_sum(p, b * BLOCK, chunk, ls, eta))
        .collect();
    let mut mass = 0.0;
    let mut excess = 0.0;
    let mut sig = 0xcbf2_9ce4_8422_2325u64;
    let mut gs = Vec::with_capacity(parts.len());
    for (g, m, e, h) in parts {
        mass += m;
        excess += e;
        sig = (sig ^ h).wrapping_mul(0x0100_0000_01b3);
        gs.push(g);
    }
    (
        Cut {
            g: sum_in_order(gs, n),
            mass,
        },
        excess,
        sig,
    )
}

fn block_sum(
    p: &Problem,
    first: usize,
    chunk: &[f32],
    ls: &[f64],
    eta: f64,
) -> (Vec<f64>, f64, f64, u64) {
    let n = p.n();
    let (mut g, mut mass, mut excess) = (vec![0.0; n], 0.0, 0.0);
    let mut h = 0xcbf2_9ce4_8422_2325u64;
    for (k, (row, &l)) in chunk.chunks_exact(n).zip(ls).enumerate() {
        if l > eta {
            let w = p.weight(first + k);
            mass += w;
            excess += w * (l - eta);
            g.iter_mut()
                .zip(row)
                .for_each(|(a, &r)| *a += w * f64::from(r));
            h = (h ^ (first + k) as u64).wrapping_mul(0x0100_0000_01b3);
        }
    }
    (g, mass, excess, h)
}

/// Everything the loop needs besides the master.
pub(crate) struct CutContext<'a> {
    pub p: &'a Problem,
    pub cols: &'a Columns,
    pub layout: &'a Layout,
    pub tolerance: f64,
    pub max_rounds: usize,
    pub deadline: Option<Instant>,
    /// Smallest scale the tolerances refer to (a share of the problem's
    /// typical loss), so that an allocation near zero is not held to a
    /// tolerance below the LP's own rounding.
    pub scale_floor: f64,
}

/// Result of a converged loop.
pub(crate) struct CutResult {
    pub values: Vec<f64>,
    pub fractions: Vec<f64>,
    pub rounds: usize,
}

/// Why the loop stopped without an answer.
pub(crate) enum CutStop {
    Lp(super::lp::LpFailure),
    NoConvergence { rounds: usize, violation: f64 },
}

/// Solves the master, adding cuts until the CVaR representation is exact
/// within tolerance. New cuts are appended to `pool` and their signatures to
/// `seen`.
pub(crate) fn run(
    ctx: &CutContext,
    master: &mut Master,
    pool: &mut Vec<Cut>,
    seen: &mut HashSet<u64>,
    limit: Option<f64>,
) -> Result<CutResult, CutStop> {
    let mut last = 0.0;
    for rounds in 0..=ctx.max_rounds {
        let values = master.values(ctx.deadline).map_err(CutStop::Lp)?;
        let fractions = ctx.cols.fractions(&pick(&values, &ctx.layout.x));
        let Some(check) = examine(ctx, &values, &fractions, limit) else {
            return Ok(CutResult {
                values,
                fractions,
                rounds,
            });
        };
        let repeated = !seen.insert(check.signature);
        // A repeated tail is already in the master: what remains is the LP's
        // own rounding, accepted up to a looser bound.
        let accept = if repeated {
            1e-6 * check.scale
        } else {
            check.tolerance
        };
        if check.violation <= accept {
            return Ok(CutResult {
                values,
                fractions,
                rounds,
            });
        }
        if repeated {
            return Err(CutStop::NoConvergence {
                rounds,
                violation: check.violation,
            });
        }
        master.add_row(cut_row(&check.cut, ctx.layout, ctx.cols));
        pool.push(check.cut);
        master.pool_cuts = pool.len();
        last = check.violation;
    }
    Err(CutStop::NoConvergence {
        rounds: ctx.max_rounds,
        violation: last,
    })
}

/// The most violated cut at the master's point.
struct Check {
    cut: Cut,
    violation: f64,
    signature: u64,
    scale: f64,
    tolerance: f64,
}

/// `None` when the master has no CVaR columns (nothing to check).
fn examine(ctx: &CutContext, values: &[f64], x: &[f64], limit: Option<f64>) -> Option<Check> {
    let (eta, w) = (ctx.layout.eta?, ctx.layout.w?);
    let losses = ctx.p.losses(x);
    let (cut, excess, signature) = aggregate(ctx.p, &losses, values[eta]);
    let scale = risk_scale(ctx.p, &losses, limit).max(ctx.scale_floor);
    Some(Check {
        cut,
        violation: excess - values[w],
        signature,
        scale,
        tolerance: ctx.tolerance * (1.0 - ctx.p.tail_level) * scale,
    })
}

/// The size of losses the tolerances are relative to.
pub(crate) fn risk_scale(p: &Problem, losses: &[f64], limit: Option<f64>) -> f64 {
    let mean_abs: f64 = losses
        .iter()
        .enumerate()
        .map(|(s, l)| p.weight(s) * l.abs())
        .sum();
    mean_abs.max(limit.map_or(0.0, f64::abs)).max(1e-12)
}

pub(crate) fn pick(values: &[f64], idx: &[usize]) -> Vec<f64> {
    idx.iter().map(|&j| values[j]).collect()
}
