//! The entry points: `solve`, `min_tail_loss`, and their options.
//!
//! `solve` validates, solves (full LP or cutting planes), cleans the answer so
//! it meets every constraint exactly, measures the duals, assembles the
//! report and verifies it against the scenarios before returning it. With no
//! allocation under the risk limit it returns `Infeasible` carrying the
//! smallest tail loss achievable with the budget.

use super::duals;
use super::engine::{Engine, Failure, Method, Point};
use super::error::AllocError;
use super::lp::Backend;
use super::problem::Problem;
use super::result::{assemble, Allocation, Duals, Provenance};
use super::scale::{self, Scale};
use super::verify::verify;
use serde::Serialize;
use std::time::Duration;

/// How to solve.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum SolveMethod {
    /// Full LP when `futures × ids` is small, cutting planes otherwise.
    #[default]
    Auto,
    /// The full LP of Rockafellar & Uryasev (2000).
    Full,
    /// The cutting-plane method of Künzi-Bay & Mayer (2006).
    Cuts,
}

/// Solver options.
#[derive(Debug, Clone, PartialEq)]
pub struct SolveOptions {
    /// Full LP, cutting planes, or automatic.
    pub method: SolveMethod,
    /// Fund each id fully (to its cap) or not at all.
    pub whole_tiers: bool,
    /// Largest number of ids accepted with whole tiers.
    pub max_binary_vars: usize,
    /// Relative tolerance of the cutting-plane stopping test.
    pub tolerance: f64,
    /// LP backend.
    pub backend: Backend,
    /// Wall-clock limit for the whole solve (`None` = none).
    pub time_limit: Option<Duration>,
    /// Relative step of the finite-difference duals.
    pub dual_step: f64,
    /// Relative tolerance of the final verification.
    pub verify_tolerance: f64,
    /// Most cuts the cutting-plane method may add in one solve.
    pub max_cut_rounds: usize,
}

impl Default for SolveOptions {
    fn default() -> Self {
        Self {
            method: SolveMethod::Auto,
            whole_tiers: false,
            max_binary_vars: 60,
            tolerance: 1e-9,
            backend: Backend::Microlp,
            time_limit: None,
            dual_step: 1e-4,
            verify_tolerance: 1e-7,
            max_cut_rounds: 5000,
        }
    }
}

impl SolveOptions {
    /// Checks the options.
    pub fn validate(&self) -> Result<(), AllocError> {
        let positive = |v: f64| v.is_finite() && v > 0.0 && v < 1.0;
        if !positive(self.tolerance) {
            return Err(AllocError::invalid(
                "tolerance",
                format!("{} is outside (0, 1)", self.tolerance),
            ));
        }
        if !positive(self.dual_step) || !positive(self.verify_tolerance) {
            return Err(AllocError::invalid(
                "dual_step/verify_tolerance",
                "must be in (0, 1)",
            ));
        }
        if self.max_cut_rounds == 0 {
            return Err(AllocError::invalid("max_cut_rounds", "must be at least 1"));
        }
        if !self.backend.is_available() {
            return Err(AllocError::BackendUnavailable {
                backend: self.backend.name().into(),
            });
        }
        Ok(())
    }
}

/// The best allocation within the budget and the tail-loss limit.
///
/// The program is solved with its money scaled to magnitudes near one
/// (`scale.rs`); the answer is assembled and verified on the problem as
/// given, in its own currency.
pub fn solve(p: &Problem, opts: &SolveOptions) -> Result<Allocation, AllocError> {
    p.validate()?;
    opts.validate()?;
    let scale = Scale::of(p);
    let q = scale.apply(p);
    solve_scaled(p, &q, scale, opts).map_err(|e| scale::explain(p, scale.error(e)))
}

/// `solve` on `q`, the problem `p` in program units.
fn solve_scaled(
    p: &Problem,
    q: &Problem,
    scale: Scale,
    opts: &SolveOptions,
) -> Result<Allocation, AllocError> {
    let Continuous {
        mut engine,
        base,
        duals,
        rounds,
    } = continuous(q, opts)?;
    let mut how = provenance(&engine, opts, duals, rounds);
    how.duals.budget = scale.budget_dual_up(how.duals.budget);
    how.duals.budget_below = how.duals.budget_below.map(|d| scale.budget_dual_up(d));
    let mut x = polish(q, &base.x, q.max_tail_loss, &mut engine);
    add_note(&mut how, engine.fallback.take());
    if opts.whole_tiers {
        let whole = solve_whole(q, opts, base.objective)?;
        let gap = (base.objective - whole.point.objective).max(0.0);
        how.whole_tiers_gap = Some(scale.up(gap));
        how.method = whole.method.name().to_string();
        how.cuts_rounds = whole.rounds;
        how.dual_method = format!(
            "{} of the continuous relaxation (whole tiers have no duals)",
            duals::METHOD
        );
        add_note(&mut how, whole.fallback);
        x = whole.point.x;
    }
    // Scaling by a power of two is exact, so these are the means of `p`.
    let means: Vec<f64> = engine.means().iter().map(|&m| scale.up(m)).collect();
    let a = assemble(p, &means, &x, how);
    verify(p, &a, opts.verify_tolerance)?;
    Ok(a)
}

/// The continuous optimum, its duals, the engine that found them and its cut
/// rounds.
struct Continuous<'a> {
    engine: Engine<'a>,
    base: Point,
    duals: Duals,
    rounds: Option<usize>,
}

/// Solves for the optimum and its duals. If `auto` fell back from cutting
/// planes to the full LP after the optimum was found (while re-solving for the
/// duals), both are solved again with the full LP, so that the reported
/// optimum, duals and method all come from one method.
fn continuous<'a>(p: &'a Problem, opts: &'a SolveOptions) -> Result<Continuous<'a>, AllocError> {
    let mut engine = Engine::new(p, opts, false);
    let base = optimum(&mut engine, p, opts)?;
    let method = engine.method;
    let rounds = (method == Method::Cuts).then_some(engine.last_rounds);
    let duals = duals::estimate(&mut engine, p, &base, opts.dual_step)
        .map_err(|f| infeasible(f, p, opts))?;
    if engine.method == method {
        return Ok(Continuous {
            engine,
            base,
            duals,
            rounds,
        });
    }
    let mut full = Engine::new(p, opts, false);
    full.method = Method::Full;
    full.fallback = engine.fallback.take();
    let base = optimum(&mut full, p, opts)?;
    let duals =
        duals::estimate(&mut full, p, &base, opts.dual_step).map_err(|f| infeasible(f, p, opts))?;
    Ok(Continuous {
        engine: full,
        base,
        duals,
        rounds: None,
    })
}

fn optimum(engine: &mut Engine, p: &Problem, opts: &SolveOptions) -> Result<Point, AllocError> {
    engine
        .max_return(p.budget, p.max_tail_loss)
        .map_err(|f| infeasible(f, p, opts))
}

fn provenance(
    engine: &Engine,
    opts: &SolveOptions,
    duals: Duals,
    cuts_rounds: Option<usize>,
) -> Provenance {
    Provenance {
        method: engine.method.name().to_string(),
        backend: opts.backend.name().to_string(),
        cuts_rounds,
        whole_tiers_gap: None,
        duals,
        dual_method: duals::METHOD.to_string(),
        notes: engine.fallback.iter().cloned().collect(),
    }
}

/// Adds a fallback note to the report once.
fn add_note(how: &mut Provenance, note: Option<String>) {
    if let Some(n) = note.filter(|n| !how.notes.contains(n)) {
        how.notes.push(n);
    }
}

/// The whole-tier optimum, the method that found it, its cut rounds and the
/// fallback note if `auto` gave up on cutting planes.
struct Whole {
    point: Point,
    method: Method,
    rounds: Option<usize>,
    fallback: Option<String>,
}

fn solve_whole(p: &Problem, opts: &SolveOptions, continuous: f64) -> Result<Whole, AllocError> {
    if p.n() > opts.max_binary_vars {
        return Err(AllocError::WholeTiersTooLarge {
            variables: p.n(),
            max_binary_vars: opts.max_binary_vars,
            continuous_expected_return: continuous,
        });
    }
    let mut engine = Engine::new(p, opts, true);
    let point = optimum(&mut engine, p, opts)?;
    Ok(Whole {
        point,
        method: engine.method,
        rounds: (engine.method == Method::Cuts).then_some(engine.last_rounds),
        fallback: engine.fallback,
    })
}

/// Turns a failure into the error to report; infeasibility becomes
/// `Infeasible` with the smallest achievable tail loss. `p` is the problem
/// the engine solved (in program units).
pub(crate) fn infeasible(f: Failure, p: &Problem, opts: &SolveOptions) -> AllocError {
    match f {
        Failure::Error(e) => e,
        Failure::Infeasible => {
            let limit = p.max_tail_loss.unwrap_or(0.0);
            match min_tail_loss_scaled(p, opts) {
                Ok(m) if m > limit => AllocError::Infeasible {
                    min_tail_loss: m,
                    limit,
                },
                Ok(_) => AllocError::Solver {
                    backend: opts.backend.name().into(),
                    message: "reported no feasible allocation although the smallest tail loss \
                              is within the limit"
                        .into(),
                },
                Err(e) => e,
            }
        }
    }
}

/// The smallest CVaR of loss achievable within the budget, bounds and tier
/// order (recomputed from the scenarios at the minimising allocation).
pub fn min_tail_loss(p: &Problem, opts: &SolveOptions) -> Result<f64, AllocError> {
    p.validate()?;
    opts.validate()?;
    let scale = Scale::of(p);
    let q = scale.apply(p);
    min_tail_loss_scaled(&q, opts)
        .map(|v| scale.up(v))
        .map_err(|e| scale::explain(p, scale.error(e)))
}

fn min_tail_loss_scaled(p: &Problem, opts: &SolveOptions) -> Result<f64, AllocError> {
    let mut engine = Engine::new(p, opts, opts.whole_tiers);
    let point = engine.min_tail_loss(p.budget).map_err(|f| match f {
        Failure::Error(e) => e,
        Failure::Infeasible => AllocError::Solver {
            backend: opts.backend.name().into(),
            message: "reported the budget and bounds infeasible although they were validated"
                .into(),
        },
    })?;
    let x = if opts.whole_tiers {
        point.x
    } else {
        polish_unlimited(p, &point.x)
    };
    Ok(tail_loss(p, &x))
}

/// Makes a solver answer meet every constraint exactly: snap to the bounds,
/// restore the tier order, then shrink toward the smallest feasible
/// allocation if the budget is exceeded by rounding. If the CVaR limit is
/// exceeded by the LP's tolerance, move toward an anchor under the limit (the
/// smallest feasible allocation, else the minimum-CVaR one): CVaR is convex,
/// so `CVaR(a + t (x - a)) <= (1 - t) CVaR(a) + t CVaR(x)`.
pub(crate) fn polish(p: &Problem, x: &[f64], limit: Option<f64>, engine: &mut Engine) -> Vec<f64> {
    let x = polish_unlimited(p, x);
    let Some(limit) = limit else { return x };
    let c = tail_loss(p, &x);
    if c <= limit {
        return x;
    }
    if let Some(v) = toward(p, &x, c, limit, &p.effective_minimums()) {
        return v;
    }
    match engine.min_tail_loss(p.budget) {
        Ok(m) => toward(p, &x, c, limit, &polish_unlimited(p, &m.x)).unwrap_or(x),
        Err(_) => x,
    }
}

/// `anchor + t (x - anchor)` with the largest `t` the convexity bound allows,
/// if the anchor is under the limit.
fn toward(p: &Problem, x: &[f64], c: f64, limit: f64, anchor: &[f64]) -> Option<Vec<f64>> {
    let c0 = tail_loss(p, anchor);
    (c0 < limit).then(|| shrink(x, anchor, (limit - c0) / (c - c0) * (1.0 - 1e-12)))
}

fn tail_loss(p: &Problem, x: &[f64]) -> f64 {
    super::cvar::cvar_of_losses(&p.losses(x), p.weights.as_deref(), p.tail_level).1
}

fn polish_unlimited(p: &Problem, x: &[f64]) -> Vec<f64> {
    let floor = p.effective_minimums();
    let mut v: Vec<f64> = x
        .iter()
        .enumerate()
        .map(|(i, &a)| if a.abs() < 1e-12 { 0.0 } else { a }.clamp(floor[i], p.max_fraction[i]))
        .collect();
    for i in tier_order(p) {
        if let Some(j) = p.requires[i] {
            v[i] = v[i].min(v[j]);
        }
    }
    let cost = |v: &[f64]| v.iter().zip(&p.costs).map(|(a, c)| a * c).sum::<f64>();
    let (c, c0) = (cost(&v), cost(&floor));
    if c > p.budget && c > c0 {
        v = shrink(&v, &floor, ((p.budget - c0) / (c - c0)).max(0.0));
    }
    v
}

/// `floor + t (x - floor)`: between two allocations that meet the bounds,
/// the tier order and the budget, so it meets them too.
fn shrink(x: &[f64], floor: &[f64], t: f64) -> Vec<f64> {
    x.iter()
        .zip(floor)
        .map(|(&a, &m)| m + t * (a - m))
        .collect()
}

/// Ids ordered so that each comes after the tier it requires.
fn tier_order(p: &Problem) -> Vec<usize> {
    let depth = |mut i: usize| {
        let mut d = 0;
        while let (Some(j), true) = (p.requires[i], d <= p.n()) {
            i = j;
            d += 1;
        }
        d
    };
    let mut order: Vec<usize> = (0..p.n()).collect();
    order.sort_by_key(|&i| depth(i));
    order
}
