//! A program that is edited and re-solved many times (the cutting-plane
//! master, and re-solves for duals and the frontier).
//!
//! With microlp the solved model is kept and each edit (a new cut, a moved
//! budget or limit) re-optimises from the last basis; any failure drops it and
//! the next request rebuilds from the stored program, so an infeasible edit is
//! reported exactly as a fresh solve would report it. Other backends rebuild
//! and solve from scratch on every request.

use super::backend_microlp::WarmModel;
use super::lp::{solve_lp, Backend, LinearProgram, LpFailure, Row};
use std::time::Instant;

pub(crate) struct Master {
    /// How many cuts of the engine's pool this master holds.
    pub pool_cuts: usize,
    lp: LinearProgram,
    backend: Backend,
    warm: Option<WarmModel>,
    cached: Option<Vec<f64>>,
}

impl Master {
    pub fn new(lp: LinearProgram, backend: Backend) -> Self {
        Self {
            pool_cuts: 0,
            lp,
            backend,
            warm: None,
            cached: None,
        }
    }

    /// Optimal column values of the current program.
    pub fn values(&mut self, deadline: Option<Instant>) -> Result<Vec<f64>, LpFailure> {
        let remaining = remaining(deadline)?;
        if let Some(w) = &self.warm {
            return w.values();
        }
        if let Some(v) = &self.cached {
            return Ok(v.clone());
        }
        if self.backend == Backend::Microlp {
            let warm = WarmModel::start(&self.lp, remaining)?;
            let v = warm.values()?;
            self.warm = Some(warm);
            return Ok(v);
        }
        let v = solve_lp(&self.lp, self.backend, remaining)?.values;
        self.cached = Some(v.clone());
        Ok(v)
    }

    /// Adds a row (re-optimising at once when warm).
    pub fn add_row(&mut self, row: Row) {
        self.cached = None;
        if let Some(w) = &mut self.warm {
            if w.add_row(&row).is_err() {
                self.warm = None;
            }
        }
        self.lp.rows.push(row);
    }

    /// Drops the warm-started model and any cached answer, so that the next
    /// request solves the stored program from scratch.
    pub fn restart(&mut self) {
        self.warm = None;
        self.cached = None;
    }

    /// Pins `column` to `value` (re-optimising at once when warm).
    pub fn fix(&mut self, column: usize, value: f64) {
        if self.lp.columns[column].fixed == Some(value) {
            return;
        }
        self.cached = None;
        self.lp.columns[column].fixed = Some(value);
        if let Some(w) = &mut self.warm {
            if w.fix(column, value).is_err() {
                self.warm = None;
            }
        }
    }
}

/// Time left before `deadline`; an expired deadline is a failure.
pub(crate) fn remaining(
    deadline: Option<Instant>,
) -> Result<Option<std::time::Duration>, LpFailure> {
    match deadline {
        None => Ok(None),
        Some(d) => {
            let now = Instant::now();
            if now >= d {
                Err(LpFailure::NotOptimal("time limit reached".into()))
            } else {
                Ok(Some(d - now))
            }
        }
    }
}
