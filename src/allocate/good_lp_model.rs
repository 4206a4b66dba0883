//! Translation of a `LinearProgram` into good_lp's modelling types, shared by
//! the backends that go through good_lp.

use super::lp::{Column, LpFailure, Row, RowOp};
use good_lp::{variable, Expression, ResolutionError, Variable};

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
