//! A backend-neutral linear program and the dispatch to a backend.
//!
//! The allocation models are written once as a `LinearProgram` (columns with
//! bounds, an objective, sparse rows) and handed to one backend file per
//! solver (`backend_microlp.rs`, `backend_highs.rs`), in the manner of good_lp's
//! one adapter per solver. A backend must return an optimal solution or a
//! failure: a time limit or any non-optimal stop is never passed on as if it
//! were an answer.

use serde::Serialize;
use std::time::Duration;

/// Direction of the objective.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Sense {
    /// Maximise the objective.
    Maximize,
    /// Minimise the objective.
    Minimize,
}

/// Comparison of a row with its right-hand side.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RowOp {
    /// `terms <= rhs`
    Le,
    /// `terms >= rhs`
    Ge,
    /// `terms == rhs`
    Eq,
}

/// One column.
#[derive(Debug, Clone, PartialEq)]
pub struct Column {
    /// Objective coefficient.
    pub objective: f64,
    /// Lower bound (may be `-inf`).
    pub lower: f64,
    /// Upper bound (may be `+inf`).
    pub upper: f64,
    /// Integer-valued column.
    pub integer: bool,
    /// A value the column is pinned to, inside `[lower, upper]`.
    pub fixed: Option<f64>,
}

impl Column {
    /// The bounds in force: the pinned value if any, else the declared range.
    pub fn active_bounds(&self) -> (f64, f64) {
        self.fixed.map_or((self.lower, self.upper), |v| (v, v))
    }
}

/// One sparse row; each column appears at most once.
#[derive(Debug, Clone, PartialEq)]
pub struct Row {
    /// `(column, coefficient)` pairs.
    pub terms: Vec<(usize, f64)>,
    /// Comparison.
    pub op: RowOp,
    /// Right-hand side.
    pub rhs: f64,
}

/// A linear (or mixed-integer) program.
#[derive(Debug, Clone, PartialEq)]
pub struct LinearProgram {
    /// Objective direction.
    pub sense: Sense,
    /// Columns.
    pub columns: Vec<Column>,
    /// Rows.
    pub rows: Vec<Row>,
}

impl LinearProgram {
    /// An empty program.
    pub fn new(sense: Sense) -> Self {
        Self {
            sense,
            columns: Vec::new(),
            rows: Vec::new(),
        }
    }

    /// Adds a continuous column and returns its index.
    pub fn add_column(&mut self, objective: f64, lower: f64, upper: f64) -> usize {
        self.columns.push(Column {
            objective,
            lower,
            upper,
            integer: false,
            fixed: None,
        });
        self.columns.len() - 1
    }

    /// Adds an integer column and returns its index.
    pub fn add_integer_column(&mut self, objective: f64, lower: f64, upper: f64) -> usize {
        let index = self.add_column(objective, lower, upper);
        self.columns[index].integer = true;
        index
    }

    /// Adds a row and returns its index.
    pub fn add_row(&mut self, terms: Vec<(usize, f64)>, op: RowOp, rhs: f64) -> usize {
        self.rows.push(Row { terms, op, rhs });
        self.rows.len() - 1
    }

    /// Whether any column is integer.
    pub fn has_integers(&self) -> bool {
        self.columns.iter().any(|c| c.integer)
    }

    /// The objective at `values`.
    pub fn objective_at(&self, values: &[f64]) -> f64 {
        self.columns
            .iter()
            .zip(values)
            .map(|(c, v)| c.objective * v)
            .sum()
    }
}

/// An optimal solution.
#[derive(Debug, Clone, PartialEq)]
pub struct LpSolution {
    /// Column values.
    pub values: Vec<f64>,
    /// Objective value.
    pub objective: f64,
    /// Row duals (shadow prices, d objective / d rhs) when the backend has them.
    pub row_duals: Option<Vec<f64>>,
}

/// Why a backend returned no optimal solution.
#[derive(Debug, Clone, PartialEq)]
pub enum LpFailure {
    /// No point satisfies the rows and bounds.
    Infeasible,
    /// The objective is unbounded.
    Unbounded,
    /// Stopped without proving optimality (time limit, gap, node limit).
    NotOptimal(String),
    /// Any other failure, with the backend's message.
    Failed(String),
}

/// The LP backends.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Backend {
    /// microlp, pure Rust (default).
    #[default]
    Microlp,
    /// HiGHS (cargo feature `highs`).
    Highs,
}

impl Backend {
    /// Lower-case name.
    pub fn name(self) -> &'static str {
        match self {
            Backend::Microlp => "microlp",
            Backend::Highs => "highs",
        }
    }

    /// Whether this build includes the backend.
    pub fn is_available(self) -> bool {
        match self {
            Backend::Microlp => true,
            Backend::Highs => cfg!(feature = "highs"),
        }
    }
}

/// Solves `lp` with `backend`, within `time_limit` if given.
pub fn solve_lp(
    lp: &LinearProgram,
    backend: Backend,
    time_limit: Option<Duration>,
) -> Result<LpSolution, LpFailure> {
    if time_limit.is_some_and(|t| t.is_zero()) {
        return Err(LpFailure::NotOptimal("time limit reached".into()));
    }
    let guarded = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| match backend {
        Backend::Microlp => super::backend_microlp::solve(lp, time_limit),
        Backend::Highs => solve_highs(lp, time_limit),
    }));
    guarded.unwrap_or_else(|_| Err(LpFailure::Failed("the backend panicked".into())))
}

#[cfg(feature = "highs")]
fn solve_highs(lp: &LinearProgram, time_limit: Option<Duration>) -> Result<LpSolution, LpFailure> {
    super::backend_highs::solve(lp, time_limit)
}

#[cfg(not(feature = "highs"))]
fn solve_highs(_: &LinearProgram, _: Option<Duration>) -> Result<LpSolution, LpFailure> {
    Err(LpFailure::Failed(
        "the highs backend is not built in (cargo feature `highs`)".into(),
    ))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Wyndor Glass Co., Hillier & Lieberman, *Introduction to Operations
    /// Research*, §3.1: maximise 3x1 + 5x2 s.t. x1 <= 4, 2x2 <= 12,
    /// 3x1 + 2x2 <= 18, x >= 0. Published optimum: Z = 36 at (2, 6).
    fn wyndor() -> LinearProgram {
        let mut lp = LinearProgram::new(Sense::Maximize);
        let x1 = lp.add_column(3.0, 0.0, f64::INFINITY);
        let x2 = lp.add_column(5.0, 0.0, f64::INFINITY);
        lp.add_row(vec![(x1, 1.0)], RowOp::Le, 4.0);
        lp.add_row(vec![(x2, 2.0)], RowOp::Le, 12.0);
        lp.add_row(vec![(x1, 3.0), (x2, 2.0)], RowOp::Le, 18.0);
        lp
    }

    #[test]
    fn wyndor_glass_textbook_optimum_through_the_backend_layer() {
        let s = solve_lp(&wyndor(), Backend::Microlp, None).expect("solves");
        assert!(
            (s.objective - 36.0).abs() < 1e-9,
            "objective {}",
            s.objective
        );
        assert!((s.values[0] - 2.0).abs() < 1e-9);
        assert!((s.values[1] - 6.0).abs() < 1e-9);
    }

    #[test]
    fn infeasible_and_zero_time_limit_are_failures_not_answers() {
        let mut lp = wyndor();
        lp.add_row(vec![(0, 1.0)], RowOp::Ge, 5.0);
        assert_eq!(
            solve_lp(&lp, Backend::Microlp, None),
            Err(LpFailure::Infeasible)
        );
        let r = solve_lp(&wyndor(), Backend::Microlp, Some(Duration::ZERO));
        assert!(matches!(r, Err(LpFailure::NotOptimal(_))));
    }

    #[test]
    fn pinned_column_and_equality_rows_are_honoured() {
        let mut lp = wyndor();
        lp.columns[0].fixed = Some(1.0);
        lp.add_row(vec![(0, 1.0), (1, 1.0)], RowOp::Eq, 5.0);
        let s = solve_lp(&lp, Backend::Microlp, None).expect("solves");
        assert!((s.values[0] - 1.0).abs() < 1e-9 && (s.values[1] - 4.0).abs() < 1e-9);
    }
}
