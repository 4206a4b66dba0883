//! The HiGHS backend (cargo feature `highs`), through good_lp's adapter.
//!
//! HiGHS reports row duals, which are passed on with the solution (for a
//! program with integer columns they are those of HiGHS's final LP and carry
//! no meaning). Integer columns (whole tiers) go to HiGHS's branch and cut.
//! Only a proven optimum is accepted.

use super::good_lp_model::{constraint, map_resolution_error, optimal_values, unsolved};
use super::lp::{LinearProgram, LpFailure, LpSolution};
use good_lp::{DualValues, SolutionWithDual, SolverModel};
use std::time::Duration;

/// Solves `lp` with HiGHS.
pub(crate) fn solve(
    lp: &LinearProgram,
    time_limit: Option<Duration>,
) -> Result<LpSolution, LpFailure> {
    let (unsolved, handles) = unsolved(lp);
    let mut model = unsolved.using(good_lp::highs);
    if let Some(t) = time_limit {
        model = model.set_time_limit(t.as_secs_f64());
    }
    let refs: Vec<_> = lp
        .rows
        .iter()
        .map(|r| model.add_constraint(constraint(r, &handles)))
        .collect();
    let mut solution = model.solve().map_err(map_resolution_error)?;
    let values = optimal_values(&solution, &handles)?;
    let objective = lp.objective_at(&values);
    let duals = solution.compute_dual();
    let row_duals = refs.into_iter().map(|r| duals.dual(r)).collect();
    Ok(LpSolution {
        values,
        objective,
        row_duals: Some(row_duals),
    })
}

#[cfg(test)]
mod tests {
    use super::super::lp::{solve_lp, Backend, RowOp, Sense};
    use super::*;

    /// Wyndor Glass Co., Hillier & Lieberman, *Introduction to Operations
    /// Research*, §3.1 (optimum 36 at (2, 6)) and its shadow prices in §4.7:
    /// y1* = 0, y2* = 3/2, y3* = 1.
    #[test]
    fn wyndor_glass_optimum_and_shadow_prices_with_highs() {
        let mut lp = LinearProgram::new(Sense::Maximize);
        let x1 = lp.add_column(3.0, 0.0, f64::INFINITY);
        let x2 = lp.add_column(5.0, 0.0, f64::INFINITY);
        lp.add_row(vec![(x1, 1.0)], RowOp::Le, 4.0);
        lp.add_row(vec![(x2, 2.0)], RowOp::Le, 12.0);
        lp.add_row(vec![(x1, 3.0), (x2, 2.0)], RowOp::Le, 18.0);
        let s = solve_lp(&lp, Backend::Highs, None).expect("solves");
        assert!((s.objective - 36.0).abs() < 1e-9);
        let y = s.row_duals.expect("duals");
        let expect = [0.0, 1.5, 1.0];
        for (got, want) in y.iter().zip(expect) {
            assert!((got.abs() - want).abs() < 1e-9, "dual {got} vs {want}");
        }
    }
}
