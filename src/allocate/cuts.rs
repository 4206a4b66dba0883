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
//!
//! A tail set met within tolerance adds no cut, so it is not recorded as
//! seen: at another budget or limit the same set may be violated and need its
//! cut (recording it anyway once made a later re-solve stop at round 0,
//! taking the missing cut for one already in the master).

use super::master::Master;
use super::model::{cut_row, Columns, Cut, Layout};
use super::problem::{sum_in_order, Problem, BLOCK};
use rayon::prelude::*;
use std::collections::HashMap;
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

/// The tail sets whose cut is in the pool: signature to the cut's index in
/// the pool. Only cuts actually added are recorded (a tail set met within
/// tolerance adds no cut, and may need one at another budget or limit), and a
/// repeat is confirmed by comparing the cut itself, so a signature collision
/// is never taken for a repeat.
pub(crate) type Seen = HashMap<u64, usize>;

/// Result of a converged loop.
pub(crate) struct CutResult {
    pub values: Vec<f64>,
    pub fractions: Vec<f64>,
    /// Cuts added by this loop.
    pub rounds: usize,
}

/// Why the loop stopped without converging.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum NoConvergence {
    /// Another cut was needed after `max_rounds` cuts.
    RoundLimit { max_rounds: usize },
    /// The master kept breaking a cut it holds, also after a cold re-solve.
    CutIgnored,
}

impl NoConvergence {
    /// Plain words for the error message.
    pub fn describe(self) -> String {
        match self {
            NoConvergence::RoundLimit { max_rounds } => format!(
                "another cut was needed after the limit of {max_rounds} cuts \
                 (max_cut_rounds)"
            ),
            NoConvergence::CutIgnored => "the master LP returned a point that breaks a cut it \
                 already holds, also when re-solved from scratch (numerical trouble in the LP \
                 backend)"
                .to_string(),
        }
    }
}

/// Why the loop stopped without an answer.
pub(crate) enum CutStop {
    Lp(super::lp::LpFailure),
    NoConvergence {
        rounds: usize,
        violation: f64,
        why: NoConvergence,
    },
}

/// Solves the master, adding cuts until the CVaR representation is exact
/// within tolerance. New cuts are appended to `pool` and recorded in `seen`.
///
/// If the master's point breaks a cut it already holds by more than the LP's
/// rounding, its warm-started basis is not trusted: the master is re-solved
/// from scratch once before the loop gives up.
pub(crate) fn run(
    ctx: &CutContext,
    master: &mut Master,
    pool: &mut Vec<Cut>,
    seen: &mut Seen,
    limit: Option<f64>,
) -> Result<CutResult, CutStop> {
    let (mut added, mut restarted) = (0, false);
    loop {
        let values = master.values(ctx.deadline).map_err(CutStop::Lp)?;
        let fractions = ctx.cols.fractions(&pick(&values, &ctx.layout.x));
        let Some(check) = examine(ctx, &values, &fractions, limit) else {
            return Ok(CutResult {
                values,
                fractions,
                rounds: added,
            });
        };
        let held = holds(pool, seen, &check);
        // A cut the master holds can only be broken by the LP's own
        // rounding, accepted up to a looser bound.
        let accept = if held {
            1e-6 * check.scale
        } else {
            check.tolerance
        };
        if check.violation <= accept {
            return Ok(CutResult {
                values,
                fractions,
                rounds: added,
            });
        }
        let stop = |why| CutStop::NoConvergence {
            rounds: added,
            violation: check.violation,
            why,
        };
        if held && restarted {
            return Err(stop(NoConvergence::CutIgnored));
        }
        if held {
            master.restart();
            restarted = true;
            continue;
        }
        if added >= ctx.max_rounds {
            return Err(stop(NoConvergence::RoundLimit {
                max_rounds: ctx.max_rounds,
            }));
        }
        master.add_row(cut_row(&check.cut, ctx.layout, ctx.cols));
        seen.insert(check.signature, pool.len());
        pool.push(check.cut);
        master.pool_cuts = pool.len();
        (added, restarted) = (added + 1, false);
    }
}

/// Whether the cut of `check` is already in the pool (and so in the master).
fn holds(pool: &[Cut], seen: &Seen, check: &Check) -> bool {
    seen.get(&check.signature)
        .is_some_and(|&k| pool.get(k) == Some(&check.cut))
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::allocate::cvar::cvar_of_losses;
    use crate::allocate::lp::{solve_lp, Backend};
    use crate::allocate::model::{build_full, build_master, mean_cut, Goal, Ranges};
    use crate::allocate::synthetic::{tiered_instance, SyntheticSpec};

    /// A minimum-CVaR master holding only the mean cut, and its context.
    struct Setup {
        p: Problem,
        cols: Columns,
        means: Vec<f64>,
    }

    fn setup() -> Setup {
        let p = tiered_instance(SyntheticSpec {
            clusters: 3,
            tiers: 2,
            scenarios: 80,
            seed: 3,
        });
        Setup {
            cols: Columns::new(&p, false),
            means: p.mean_returns(),
            p,
        }
    }

    impl Setup {
        fn master(&self, pool: &[Cut]) -> (Master, Layout) {
            let r = Ranges::new(&self.p);
            let (lp, layout) = build_master(
                &self.p,
                &self.cols,
                Goal::MinTailLoss,
                &self.means,
                0.0,
                r,
                pool,
            );
            (Master::new(lp, Backend::Microlp), layout)
        }

        fn ctx<'a>(&'a self, layout: &'a Layout, max_rounds: usize) -> CutContext<'a> {
            CutContext {
                p: &self.p,
                cols: &self.cols,
                layout,
                tolerance: 1e-9,
                max_rounds,
                deadline: None,
                scale_floor: 1e-3 * self.p.typical_loss(),
            }
        }

        /// The tail set's cut and signature at the master's current point.
        fn tail_cut(&self, master: &mut Master, layout: &Layout) -> (Cut, u64) {
            let values = master.values(None).expect("master solves");
            let x = self.cols.fractions(&pick(&values, &layout.x));
            let eta = values[layout.eta.expect("eta")];
            let (cut, _, sig) = aggregate(&self.p, &self.p.losses(&x), eta);
            (cut, sig)
        }
    }

    /// The bug behind `CutsDidNotConverge { rounds: 0 }`: a tail set recorded
    /// as seen whose cut is not in the pool must get its cut, not stop the
    /// loop. The converged minimum is checked against the full LP of
    /// Rockafellar & Uryasev (2000) and against the CVaR recomputed from the
    /// scenarios.
    #[test]
    fn a_seen_tail_set_without_its_cut_in_the_pool_is_not_a_repeat() {
        let s = setup();
        let mut pool = vec![mean_cut(&s.means)];
        let (mut master, layout) = s.master(&pool);
        let (cut, sig) = s.tail_cut(&mut master, &layout);
        assert_ne!(pool[0], cut);
        let mut seen = Seen::from([(sig, 0)]);
        let r = run(
            &s.ctx(&layout, 500),
            &mut master,
            &mut pool,
            &mut seen,
            None,
        )
        .unwrap_or_else(|_| panic!("the loop stopped"));
        assert!(r.rounds >= 1);
        assert_eq!(pool.len(), 1 + r.rounds);
        // The first cut added is the one the stale entry pretended to hold.
        assert_eq!(pool[1], cut);
        assert_eq!(seen.get(&sig), Some(&1));
        assert!(seen.values().all(|&k| k >= 1 && k < pool.len()));
        let k = 1.0 / (1.0 - s.p.tail_level);
        let ours = r.values[layout.eta.expect("eta")] + k * r.values[layout.w.expect("w")];
        let (full, _) = build_full(
            &s.p,
            &s.cols,
            Goal::MinTailLoss,
            &s.means,
            0.0,
            Ranges::new(&s.p),
        );
        let reference = solve_lp(&full, Backend::Microlp, None).expect("full LP");
        let scale = reference.objective.abs().max(1.0);
        assert!((ours - reference.objective).abs() <= 1e-7 * scale);
        let recomputed = cvar_of_losses(&s.p.losses(&r.fractions), None, s.p.tail_level).1;
        assert!((recomputed - reference.objective).abs() <= 1e-7 * scale);
    }

    /// A cut the pool says the master holds but the master's point breaks
    /// (here the master was built without it): one re-solve from scratch,
    /// then a stop that says so, never an endless loop or a wrong answer.
    #[test]
    fn a_held_cut_the_master_breaks_stops_after_one_cold_retry() {
        let s = setup();
        let mut pool = vec![mean_cut(&s.means)];
        let (mut master, layout) = s.master(&pool);
        let (cut, sig) = s.tail_cut(&mut master, &layout);
        pool.push(cut);
        let mut seen = Seen::from([(sig, 1)]);
        let r = run(
            &s.ctx(&layout, 500),
            &mut master,
            &mut pool,
            &mut seen,
            None,
        );
        match r {
            Err(CutStop::NoConvergence {
                rounds: 0,
                violation,
                why: NoConvergence::CutIgnored,
            }) => assert!(violation > 0.0),
            _ => panic!("expected a CutIgnored stop"),
        }
        assert_eq!(pool.len(), 2);
    }

    /// The round limit counts cuts added: with a limit of one, exactly one cut
    /// is added before the stop, and the reason names the option.
    #[test]
    fn the_round_limit_counts_cuts_and_names_the_option() {
        let s = setup();
        let mut pool = vec![mean_cut(&s.means)];
        let (mut master, layout) = s.master(&pool);
        let mut seen = Seen::new();
        let r = run(&s.ctx(&layout, 1), &mut master, &mut pool, &mut seen, None);
        let Err(CutStop::NoConvergence { rounds, why, .. }) = r else {
            panic!("one cut cannot be enough here");
        };
        assert_eq!((rounds, pool.len(), seen.len()), (1, 2, 1));
        assert_eq!(why, NoConvergence::RoundLimit { max_rounds: 1 });
        assert!(why.describe().contains("max_cut_rounds"));
    }
}
