//! Translation of a `LinearProgram` into good_lp's modelling types, shared by
//! the backends that go through good_lp.

use super::lp::{Column, LinearProgram, LpFailure, Row, RowOp, Sense};
use good_lp::variable::UnsolvedProblem;
use good_lp::{
    variable, Expression, ProblemVariables, ResolutionError, Solution, SolutionStatus, Variable,
};

pub(crate) fn definition(c: &Column) -> good_lp::VariableDefinition {
    let (lo, hi) = c.active_bounds();
    let d = variable().min(lo).max(hi);
    if c.integer {
        d.integer()
    } else {
        d
    }
}

pub(crate) fn constraint(row: &Row, handles: &[Variable]) -> good_lp::Constraint {
    let mut e = Expression::with_capacity(row.terms.len());
    for &(j, a) in &row.terms {
        e.add_mul(a, handles[j]);
    }
    match row.op {
        RowOp::Le => e.leq(row.rhs),
        RowOp::Ge => e.geq(row.rhs),
        RowOp::Eq => e.eq(row.rhs),
    }
}

pub(crate) fn map_resolution_error(e: ResolutionError) -> LpFailure {
    match e {
        ResolutionError::Infeasible => LpFailure::Infeasible,
        ResolutionError::Unbounded => LpFailure::Unbounded,
        ResolutionError::Other(m) if m.contains("Time limit") => {
            LpFailure::NotOptimal(m.to_string())
        }
        other => LpFailure::Failed(other.to_string()),
    }
}

/// The program's columns and objective as good_lp variables (rows are added
/// by the backend, which may keep their handles).
pub(crate) fn unsolved(lp: &LinearProgram) -> (UnsolvedProblem, Vec<Variable>) {
    let mut vars = ProblemVariables::new();
    let handles: Vec<Variable> = lp.columns.iter().map(|c| vars.add(definition(c))).collect();
    let mut objective = Expression::with_capacity(handles.len());
    for (c, &h) in lp.columns.iter().zip(&handles) {
        objective.add_mul(c.objective, h);
    }
    let problem = match lp.sense {
        Sense::Maximize => vars.maximise(objective),
        Sense::Minimize => vars.minimise(objective),
    };
    (problem, handles)
}

/// The column values of a proven optimum; any other status is a failure.
pub(crate) fn optimal_values(
    solution: &impl Solution,
    handles: &[Variable],
) -> Result<Vec<f64>, LpFailure> {
    if !matches!(solution.status(), SolutionStatus::Optimal) {
        return Err(LpFailure::NotOptimal(format!("{:?}", solution.status())));
    }
    Ok(handles.iter().map(|&h| solution.value(h)).collect())
}
