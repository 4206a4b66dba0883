//! Budget allocation under a tail-risk (CVaR) limit.
//!
//! From `S` simulated futures of the net return of each investment id
//! (cluster tier), choose funded fractions that maximise the mean net return
//! within the budget, the tier order and the bounds, with the conditional
//! value-at-risk of the loss at a tail level kept under a limit
//! (Rockafellar & Uryasev, "Optimization of conditional value-at-risk",
//! Journal of Risk 2(3), 2000). Small instances are solved as their full LP,
//! large ones by the cutting-plane method of Künzi-Bay & Mayer (Computational
//! Management Science 3, 2006); whole tiers add binary switches. Every answer
//! is re-checked against the scenarios before it is returned.
//!
//! Files: `problem` (data, validation), `model` (the programs), `lp` and one
//! `backend_*` file per LP solver, `master` and `cuts` (cutting planes),
//! `engine` (method choice, reuse), `solve` (entry points), `duals`,
//! `result`, `verify`, `frontier`, `cvar`, `synthetic` (test instances).

#[cfg(feature = "highs")]
mod backend_highs;
mod backend_microlp;
pub mod budget_sweep;
mod cuts;
pub mod cvar;
mod duals;
mod engine;
mod error;
mod frontier;
mod good_lp_model;
pub mod lp;
mod master;
mod model;
pub mod output;
mod problem;
mod result;
mod scale;
mod solve;
pub mod synthetic;
mod verify;

pub use cvar::{chance_of_loss, cvar_of_losses};
pub use engine::AUTO_FULL_LIMIT;
pub use error::AllocError;
pub use frontier::{frontier, FrontierPoint};
pub use lp::Backend;
pub use problem::Problem;
pub use result::{Allocation, Item};
pub use solve::{min_tail_loss, solve, SolveMethod, SolveOptions};
pub use verify::verify;
