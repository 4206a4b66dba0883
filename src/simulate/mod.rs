//! The Monte Carlo simulation of every cluster and tier.
//!
//! `model` prepares the inputs, `kernel` is the one implementation of a
//! keyword's incremental clicks (shared with `estimate`), `engine` runs the
//! futures in parallel from seeded per-future streams, `summary` turns them
//! into money and distributions.

pub mod budget;
pub mod engine;
pub mod kernel;
pub mod model;
pub mod summary;

pub use engine::{rerun, run, ClusterRun, Futures, RunOptions, SiteSource, Source};
pub use model::{prepare, Model};
pub use summary::{net_returns, summarise_futures, SimSummary};

use crate::error::Result;
use crate::fsio::write_text;
use crate::output::csv::field;
use std::path::{Path, PathBuf};

/// The costs file that goes with a dumped returns file: `x.csv` gives
/// `x.costs.csv`.
pub fn costs_path(returns: &Path) -> PathBuf {
    let stem = returns
        .file_stem()
        .map(|s| s.to_string_lossy().to_string())
        .unwrap_or_else(|| "scenarios".into());
    returns.with_file_name(format!("{stem}.costs.csv"))
}

/// Writes the net-return matrix in the `allocate --returns` format and the
/// matching costs file (`id,cost,max_fraction,requires,min_fraction`).
pub fn dump_scenarios(model: &Model, futures: &Futures, returns_path: &Path) -> Result<PathBuf> {
    let n = futures.slots.len();
    let net = net_returns(model, futures);
    let ids: Vec<String> = futures
        .slots
        .iter()
        .map(|&(c, t)| model.slot_id(c, t))
        .collect();
    // Ids hold the user's cluster names: guarded against formula injection
    // and quoted by the one CSV writer (`allocate --returns` reads them back).
    let quote = |s: &str| field(s).into_owned();
    let mut text = ids.iter().map(|s| quote(s)).collect::<Vec<_>>().join(",");
    text.push('\n');
    for s in 0..futures.scenarios {
        let row: Vec<String> = net[s * n..(s + 1) * n]
            .iter()
            .map(|v| format!("{v}"))
            .collect();
        text += &row.join(",");
        text.push('\n');
    }
    let mut costs = String::from("id,cost,max_fraction,requires,min_fraction\n");
    for (j, &(c, t)) in futures.slots.iter().enumerate() {
        let tier = &model.clusters[c].tiers[t];
        let req = if t > 0 {
            quote(&ids[j - 1])
        } else {
            String::new()
        };
        costs += &format!(
            "{},{},{},{},{}\n",
            quote(&ids[j]),
            tier.cost,
            tier.max_fraction,
            req,
            tier.min_fraction
        );
    }
    let cpath = costs_path(returns_path);
    write_text(returns_path, &text)?;
    write_text(&cpath, &costs)?;
    Ok(cpath)
}
