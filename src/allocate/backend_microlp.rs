//! The microlp backend (pure Rust, the default).
//!
//! One-shot programs go through good_lp's microlp adapter. The cutting-plane
//! master is kept alive between rounds with microlp itself: a solved
//! `microlp::Solution` accepts a new row (`add_constraint`) or a pinned column
//! (`fix_var`) and re-optimises from its last basis with the dual simplex,
//! which good_lp's adapter cannot do. Only a proven optimum is accepted; a
//! time limit, gap or node limit is a failure.

use super::good_lp_model::{constraint, map_resolution_error, optimal_values, unsolved};
use super::lp::{LinearProgram, LpFailure, LpSolution, Row, RowOp, Sense};
use good_lp::{SolverModel, WithTimeLimit};
use microlp::{ComparisonOp, LinearExpr, OptimizationDirection, SolveOutcome};
use std::time::Duration;

/// Solves `lp` through good_lp's microlp adapter.
pub(crate) fn solve(
    lp: &LinearProgram,
    time_limit: Option<Duration>,
) -> Result<LpSolution, LpFailure> {
    let (unsolved, handles) = unsolved(lp);
    let mut model = unsolved.using(good_lp::microlp);
    if let Some(t) = time_limit {
        model = model.with_time_limit(t.as_secs_f64());
    }
    for row in &lp.rows {
        model.add_constraint(constraint(row, &handles));
    }
    let solution = model.solve().map_err(map_resolution_error)?;
    let values = optimal_values(&solution, &handles)?;
    let objective = lp.objective_at(&values);
    Ok(LpSolution {
        values,
        objective,
        row_duals: None,
    })
}

/// A microlp model kept solved between edits (the warm-started master).
pub(crate) struct WarmModel {
    state: Option<microlp::Solution>,
    handles: Vec<microlp::Variable>,
}

impl WarmModel {
    /// Builds and solves `lp` with its declared bounds, then pins fixed columns.
    ///
    /// Pinning re-optimises by the dual simplex from the unpinned optimum;
    /// when the pinned program's feasible set is a single degenerate point
    /// (all-zero futures under a tail-loss limit of 0) that path has reported
    /// a feasible program infeasible. An infeasible answer is therefore
    /// confirmed by a cold solve with the pinned values as bounds.
    pub(crate) fn start(
        lp: &LinearProgram,
        time_limit: Option<Duration>,
    ) -> Result<Self, LpFailure> {
        match Self::start_then_pin(lp, time_limit) {
            Err(LpFailure::Infeasible) if lp.columns.iter().any(|c| c.fixed.is_some()) => {
                Self::start_pinned(lp, time_limit)
            }
            other => other,
        }
    }

    fn start_then_pin(lp: &LinearProgram, time_limit: Option<Duration>) -> Result<Self, LpFailure> {
        let (problem, handles) = build(lp, false);
        let mut options = microlp::SolveOptions::default();
        options.time_limit = time_limit;
        let outcome = guarded(|| problem.solve_with(options))?;
        let mut model = Self {
            state: Some(accept(outcome)?),
            handles,
        };
        for (j, c) in lp.columns.iter().enumerate() {
            if let Some(v) = c.fixed {
                model.fix(j, v)?;
            }
        }
        Ok(model)
    }

    /// Builds `lp` with pinned columns held at their values and solves it.
    fn start_pinned(lp: &LinearProgram, time_limit: Option<Duration>) -> Result<Self, LpFailure> {
        let (problem, handles) = build(lp, true);
        let mut options = microlp::SolveOptions::default();
        options.time_limit = time_limit;
        let outcome = guarded(|| problem.solve_with(options))?;
        Ok(Self {
            state: Some(accept(outcome)?),
            handles,
        })
    }

    /// Adds a row and re-optimises from the last basis.
    pub(crate) fn add_row(&mut self, row: &Row) -> Result<(), LpFailure> {
        let state = self.state.take().ok_or_else(lost)?;
        let expr = linear_expr(row, &self.handles);
        let op = comparison(row.op);
        let outcome = guarded(move || state.add_constraint(expr, op, row.rhs))?;
        self.state = Some(accept(outcome)?);
        Ok(())
    }

    /// Pins a column to `value` and re-optimises from the last basis.
    pub(crate) fn fix(&mut self, column: usize, value: f64) -> Result<(), LpFailure> {
        let state = self.state.take().ok_or_else(lost)?;
        let var = self.handles[column];
        let outcome = guarded(move || state.fix_var(var, value))?;
        self.state = Some(accept(outcome)?);
        Ok(())
    }

    /// Current column values (raw, not rounded).
    pub(crate) fn values(&self) -> Result<Vec<f64>, LpFailure> {
        let state = self.state.as_ref().ok_or_else(lost)?;
        Ok(self
            .handles
            .iter()
            .map(|&h| state.var_value_raw(h))
            .collect())
    }
}

fn lost() -> LpFailure {
    LpFailure::Failed("the warm-started model was lost after an earlier failure".into())
}

/// The microlp problem of `lp`; with `pinned`, fixed columns get their
/// value as both bounds, else their declared range.
fn build(lp: &LinearProgram, pinned: bool) -> (microlp::Problem, Vec<microlp::Variable>) {
    let direction = match lp.sense {
        Sense::Maximize => OptimizationDirection::Maximize,
        Sense::Minimize => OptimizationDirection::Minimize,
    };
    let mut problem = microlp::Problem::new(direction);
    let handles: Vec<microlp::Variable> = lp
        .columns
        .iter()
        .map(|c| add_column(&mut problem, c, pinned))
        .collect();
    for row in &lp.rows {
        problem.add_constraint(linear_expr(row, &handles), comparison(row.op), row.rhs);
    }
    (problem, handles)
}

fn add_column(
    problem: &mut microlp::Problem,
    c: &super::lp::Column,
    pinned: bool,
) -> microlp::Variable {
    let (lower, upper) = if pinned {
        c.active_bounds()
    } else {
        (c.lower, c.upper)
    };
    if c.integer {
        // Integer columns here are whole-tier switches with bounds inside [0, 1].
        let lo = lower.ceil().clamp(-1e9, 1e9) as i32;
        let hi = upper.floor().clamp(-1e9, 1e9) as i32;
        problem.add_integer_var(c.objective, (lo, hi.max(lo)))
    } else {
        problem.add_var(c.objective, (lower, upper))
    }
}

fn linear_expr(row: &Row, handles: &[microlp::Variable]) -> LinearExpr {
    let mut e = LinearExpr::empty();
    for &(j, a) in &row.terms {
        e.add(handles[j], a);
    }
    e
}

fn comparison(op: RowOp) -> ComparisonOp {
    match op {
        RowOp::Le => ComparisonOp::Le,
        RowOp::Ge => ComparisonOp::Ge,
        RowOp::Eq => ComparisonOp::Eq,
    }
}

fn guarded<T>(call: impl FnOnce() -> Result<T, microlp::Error>) -> Result<T, LpFailure> {
    let result = std::panic::catch_unwind(std::panic::AssertUnwindSafe(call))
        .map_err(|_| LpFailure::Failed("microlp panicked".into()))?;
    result.map_err(|e| match e {
        microlp::Error::Infeasible => LpFailure::Infeasible,
        microlp::Error::Unbounded => LpFailure::Unbounded,
        other => LpFailure::Failed(other.to_string()),
    })
}

fn accept(outcome: SolveOutcome) -> Result<microlp::Solution, LpFailure> {
    let reason = outcome.termination_reason();
    match outcome.into_solution() {
        Ok(s) if s.status() == microlp::SolutionStatus::Optimal => Ok(s),
        _ => Err(LpFailure::NotOptimal(format!("{reason:?}"))),
    }
}
