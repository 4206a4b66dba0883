//! furrow: forecast organic search, simulate keyword-cluster investments and
//! allocate a budget under a tail-risk (CVaR) limit.
//!
//! The modules follow the data's path: `inputs` (files and the plan),
//! `baseline` (no-new-work forecast), `clicks` (rankings to clicks to money),
//! `simulate` (Monte Carlo), `allocate` (the CVaR linear program), `target`
//! and `stress`, and `report`. The library never prints or exits; the binary
//! in `main.rs` does.

pub mod allocate;
pub mod analysis;
pub mod baseline;
pub mod check;
pub mod clicks;
pub mod demo;
pub mod drivers;
pub mod error;
pub mod estimate;
pub mod fsio;
pub mod init;
pub mod inputs;
pub mod model_files;
pub mod month;
pub mod output;
pub mod pipeline;
pub mod plan;
pub mod report;
pub mod rng;
pub mod simulate;
pub mod stats;
pub mod stress;
pub mod target;
pub mod text;
pub mod track;

pub use error::{Error, Result};
