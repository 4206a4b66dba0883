//! Solves the allocation programs for a given budget and limit, by the full LP
//! or by cutting planes, keeping what can be reused between calls.
//!
//! Duals and the frontier re-solve the same problem with a moved budget or
//! limit. Cuts stay valid whatever the budget and the limit (they describe
//! the CVaR function, not the feasible set), so every master starts from all
//! cuts found so far, and with microlp the master is re-optimised from its
//! last basis. If the cutting-plane method cannot converge, `auto` falls back
//! to the full LP (and says so); a forced `cuts` reports why it stopped.

use super::cuts::{self, CutContext, CutStop, Seen};
use super::error::AllocError;
use super::lp::{solve_lp, LpFailure};
use super::master::{remaining, Master};
use super::model::{build_full, build_master, mean_cut, Columns, Cut, Goal, Layout, Ranges};
use super::problem::Problem;
use super::solve::{SolveMethod, SolveOptions};
use std::collections::HashMap;
use std::time::Instant;

/// Above this many `futures × ids` the automatic choice is the cutting-plane
/// method. Measured with microlp in release builds on random tiered instances
/// (benches/allocate.rs generator): the cutting-plane method was already
/// faster at 6 ids × 100 futures (0.2 ms against 1.7 ms) and 30-60 times
/// faster from 15 ids × 1,000 futures on, so the full LP is kept only for
/// tiny instances, where it is the reference formulation.
pub const AUTO_FULL_LIMIT: usize = 2_000;

/// The method actually used.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Method {
    Full,
    Cuts,
}

impl Method {
    pub fn name(self) -> &'static str {
        match self {
            Method::Full => "full",
            Method::Cuts => "cuts",
        }
    }
}

/// A failed solve: infeasibility is kept apart from real errors.
#[derive(Debug)]
pub(crate) enum Failure {
    Infeasible,
    Error(AllocError),
}

impl From<AllocError> for Failure {
    fn from(e: AllocError) -> Self {
        Failure::Error(e)
    }
}

/// An optimal point: funded fractions and the program's objective value.
#[derive(Debug, Clone)]
pub(crate) struct Point {
    pub x: Vec<f64>,
    pub objective: f64,
}

pub(crate) struct Engine<'a> {
    p: &'a Problem,
    opts: &'a SolveOptions,
    pub method: Method,
    cols: Columns,
    means: Vec<f64>,
    ranges: Ranges,
    deadline: Option<Instant>,
    pool: Vec<Cut>,
    seen: Seen,
    masters: HashMap<Goal, (Master, Layout)>,
    pub last_rounds: usize,
    scale_floor: f64,
    /// Set when `auto` gave up on cutting planes for the full LP: why, in
    /// plain words for the report.
    pub fallback: Option<String>,
}

impl<'a> Engine<'a> {
    pub fn new(p: &'a Problem, opts: &'a SolveOptions, whole: bool) -> Self {
        let means = p.mean_returns();
        Self {
            method: choose(p, opts, whole),
            cols: Columns::new(p, whole),
            pool: vec![mean_cut(&means)],
            means,
            ranges: Ranges::new(p),
            deadline: opts.time_limit.map(|t| Instant::now() + t),
            seen: Seen::new(),
            fallback: None,
            masters: HashMap::new(),
            last_rounds: 0,
            scale_floor: 1e-3 * p.typical_loss(),
            p,
            opts,
        }
    }

    /// Expected (weighted) net return of fractions `x`.
    pub fn expected(&self, x: &[f64]) -> f64 {
        x.iter().zip(&self.means).map(|(a, m)| a * m).sum()
    }

    pub fn means(&self) -> &[f64] {
        &self.means
    }

    /// Largest expected net return within `budget` and CVaR `<= limit`.
    pub fn max_return(&mut self, budget: f64, limit: Option<f64>) -> Result<Point, Failure> {
        let goal = Goal::MaxReturn {
            risk_row: limit.is_some(),
        };
        let x = self.run(goal, budget, limit)?.0;
        Ok(Point {
            objective: self.expected(&x),
            x,
        })
    }

    /// Smallest CVaR of loss within `budget`.
    pub fn min_tail_loss(&mut self, budget: f64) -> Result<Point, Failure> {
        let (x, objective) = self.run(Goal::MinTailLoss, budget, None)?;
        Ok(Point { x, objective })
    }

    fn run(
        &mut self,
        goal: Goal,
        budget: f64,
        limit: Option<f64>,
    ) -> Result<(Vec<f64>, f64), Failure> {
        if self.method == Method::Full {
            return self.run_full(goal, budget, limit);
        }
        match self.run_cuts(goal, budget, limit) {
            Err(Failure::Error(AllocError::CutsDidNotConverge { reason, .. }))
                if self.opts.method == SolveMethod::Auto =>
            {
                self.fall_back(&reason);
                self.run_full(goal, budget, limit)
            }
            other => other,
        }
    }

    /// Switches `auto` to the full LP for this and every later solve.
    fn fall_back(&mut self, reason: &str) {
        self.method = Method::Full;
        self.masters.clear();
        self.fallback = Some(format!(
            "The cutting-plane method stopped without converging ({reason}), so the full LP \
             of Rockafellar & Uryasev was solved instead."
        ));
    }

    fn run_full(
        &mut self,
        goal: Goal,
        budget: f64,
        limit: Option<f64>,
    ) -> Result<(Vec<f64>, f64), Failure> {
        let (mut lp, layout) = build_full(
            self.p,
            &self.cols,
            goal,
            &self.means,
            limit.unwrap_or(0.0),
            self.ranges,
        );
        lp.columns[layout.budget].fixed = Some(budget.clamp(0.0, self.ranges.budget_max));
        let time = remaining(self.deadline).map_err(|e| self.lp_failure(e))?;
        let sol = solve_lp(&lp, self.opts.backend, time).map_err(|e| self.lp_failure(e))?;
        let x = self.cols.fractions(&cuts::pick(&sol.values, &layout.x));
        self.last_rounds = 0;
        Ok((x, sol.objective))
    }

    fn run_cuts(
        &mut self,
        goal: Goal,
        budget: f64,
        limit: Option<f64>,
    ) -> Result<(Vec<f64>, f64), Failure> {
        let (mut master, layout) = self.take_master(goal, limit);
        master.fix(layout.budget, budget.clamp(0.0, self.ranges.budget_max));
        if let (Some(col), Some(l)) = (layout.limit, limit) {
            let b = self.ranges.limit_bound();
            master.fix(col, l.clamp(-b, b));
        }
        let outcome = self.cut_loop(&mut master, &layout, limit);
        let objective = outcome
            .as_ref()
            .map_or(0.0, |r| self.master_objective(goal, &layout, &r.values));
        self.masters.insert(goal, (master, layout));
        let result = outcome?;
        self.last_rounds = result.rounds;
        Ok((result.fractions, objective))
    }

    fn cut_loop(
        &mut self,
        master: &mut Master,
        layout: &Layout,
        limit: Option<f64>,
    ) -> Result<cuts::CutResult, Failure> {
        let ctx = CutContext {
            p: self.p,
            cols: &self.cols,
            layout,
            tolerance: self.opts.tolerance,
            max_rounds: self.opts.max_cut_rounds,
            deadline: self.deadline,
            scale_floor: self.scale_floor,
        };
        match cuts::run(&ctx, master, &mut self.pool, &mut self.seen, limit) {
            Ok(r) => Ok(r),
            Err(CutStop::Lp(e)) => Err(self.lp_failure(e)),
            Err(CutStop::NoConvergence {
                rounds,
                violation,
                why,
            }) => Err(AllocError::CutsDidNotConverge {
                rounds,
                violation,
                reason: why.describe(),
            }
            .into()),
        }
    }

    fn take_master(&mut self, goal: Goal, limit: Option<f64>) -> (Master, Layout) {
        if let Some((mut m, layout)) = self.masters.remove(&goal) {
            let fresh = if layout.w.is_some() {
                m.pool_cuts
            } else {
                self.pool.len()
            };
            for cut in self.pool.iter().skip(fresh) {
                m.add_row(super::model::cut_row(cut, &layout, &self.cols));
            }
            m.pool_cuts = self.pool.len();
            return (m, layout);
        }
        let (lp, layout) = build_master(
            self.p,
            &self.cols,
            goal,
            &self.means,
            limit.unwrap_or(0.0),
            self.ranges,
            &self.pool,
        );
        let mut m = Master::new(lp, self.opts.backend);
        m.pool_cuts = self.pool.len();
        (m, layout)
    }

    fn master_objective(&self, goal: Goal, layout: &Layout, values: &[f64]) -> f64 {
        match goal {
            Goal::MaxReturn { .. } => 0.0,
            Goal::MinTailLoss => {
                let k = 1.0 / (1.0 - self.p.tail_level);
                let eta = layout.eta.map_or(0.0, |j| values[j]);
                let w = layout.w.map_or(0.0, |j| values[j]);
                eta + k * w
            }
        }
    }

    fn lp_failure(&self, e: LpFailure) -> Failure {
        let backend = self.opts.backend.name().to_string();
        match e {
            LpFailure::Infeasible => Failure::Infeasible,
            LpFailure::Unbounded => AllocError::Solver {
                backend,
                message: "the program is unbounded".into(),
            }
            .into(),
            LpFailure::NotOptimal(status) => AllocError::NotOptimal { backend, status }.into(),
            LpFailure::Failed(message) => AllocError::Solver { backend, message }.into(),
        }
    }
}

/// Full LP for small instances, cutting planes otherwise, unless forced.
fn choose(p: &Problem, opts: &SolveOptions, whole: bool) -> Method {
    match opts.method {
        SolveMethod::Full => Method::Full,
        SolveMethod::Cuts => Method::Cuts,
        SolveMethod::Auto => {
            let size = p.scenarios.saturating_mul(p.n());
            let limit = if whole {
                AUTO_FULL_LIMIT / 10
            } else {
                AUTO_FULL_LIMIT
            };
            if size <= limit {
                Method::Full
            } else {
                Method::Cuts
            }
        }
    }
}
