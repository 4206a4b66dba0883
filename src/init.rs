//! `furrow init DIR`: a commented plan template with example inputs that
//! pass `check`, so a new user starts from something valid and edits it.

use crate::demo::{self, DemoOptions};
use crate::error::{Error, Result};
use crate::fsio::write_text;
use std::path::Path;

/// Writes the template into `dir`, refusing when any file it would write
/// is there already (nothing the user has is ever overwritten).
pub fn init(dir: &Path) -> Result<()> {
    let plan = dir.join("plan.toml");
    let taken: Vec<String> = demo::FILES
        .iter()
        .map(|f| dir.join(f))
        .chain(
            crate::model_files::BUILTIN
                .iter()
                .map(|(rel, _)| dir.join("models").join(rel)),
        )
        .filter(|p| std::fs::symlink_metadata(p).is_ok())
        .map(|p| p.display().to_string())
        .collect();
    if !taken.is_empty() {
        let more = taken.len().saturating_sub(5);
        let more = if more > 0 {
            format!(" and {more} more")
        } else {
            String::new()
        };
        return Err(Error::Output {
            what: "the plan template",
            path: dir.to_path_buf(),
            message: format!(
                "{}{more} already exist; furrow init never overwrites a file: choose a new or empty folder",
                taken.iter().take(5).cloned().collect::<Vec<_>>().join(", ")
            ),
        });
    }
    let opts = DemoOptions {
        keywords: 160,
        clusters: 4,
        months: 24,
        seed: 11,
    };
    demo::generate(dir, &opts)?;
    crate::model_files::write_defaults(&dir.join("models"))?;
    write_text(&plan, TEMPLATE)
}

const TEMPLATE: &str = r#"# furrow plan. Every key is documented in docs/plan.md; paths are relative
# to this file. The example inputs beside it are invented; replace them with
# your own exports (monthly history, keyword list, query export, ...).

name = "my-site-2027"        # used for the report folder: reports/<name>/
currency = "EUR"             # label for money amounts
start = "2027-01"            # first forecast month (default: after the history)
horizon = 12                 # months to forecast
seed = 1                     # seed of every random stream (same seed, same result)
scenarios = 10000            # simulated futures

[inputs]
history = "history.csv"      # month, clicks [, impressions, branded_clicks, sessions, conversions, revenue]
interest = "interest.csv"    # month, index (0-100): search interest in the brand (optional)
keywords = "keywords.csv"    # keyword, cluster, volume, position (blank = not ranking), difficulty [, branded]
queries = "queries.csv"      # query, clicks, impressions, position (optional; fits your own CTR curve)
# clusters = "clusters.csv"  # tiers as CSV instead of the [[cluster]] tables below
# actuals = "actuals.csv"    # months observed since the start, for tracking

# If an export's headers differ from furrow's names, map them:
# [inputs.columns.keywords]
# volume = "Searches per month"

[models]
dir = "models"               # folder with ctr/, rank-gain/ and stress/
ctr = "default"              # click-through curve for non-branded keywords
branded_ctr = "branded"      # click-through curve for branded keywords
rank_gain = "default"        # rank-gain model constants (rules of thumb: calibrate them)

[baseline]
method = "auto"              # auto, linear, seasonal-naive, holt, holt-winters-additive,
                             # holt-winters-multiplicative, index-growth

[economics]
conversions = 2150           # conversions and sessions over a recent period give the
sessions = 98400             # conversion rate with its uncertainty (or: conversion_rate = 0.021)
order_value = 110.0          # average order value
order_value_spread = 6.0     # uncertainty (standard deviation) of that average over the horizon
gross_margin = 0.45          # share of revenue kept as gross profit
seasonality = "history"      # monthly search-volume shape: "history", "none" or 12 numbers
# value_per_click = 0.9      # instead of the above, for lead-generation sites

[target]
metric = "clicks"            # "clicks" or "revenue", summed over the horizon
growth = 0.20                # over the last 12 months of history (or: amount = 600000)

[budget]
total = 12000                # money to spread across the tiers below
tail_level = 0.90            # the tail is the worst 10 % of futures
max_tail_loss = "10%"        # largest tolerated average loss in the tail (amount or % of total)

# One table per cluster (the name must match the keyword list's cluster column).
# Tiers are cumulative: tier 2 builds on tier 1. cost is what the tier adds;
# effort is the work it adds (1 = a standard unit). A tier may state its own
# rank-gain distribution instead of the model:
#   gain = { distribution = "pert", min = 0, mode = 4, max = 12 }   # positions gained
[[cluster]]
name = "raised beds"
start = "2027-02"
tiers = [
  { label = "refresh pages", cost = 1800, effort = 1.0 },
  { label = "new guides", cost = 1300, effort = 1.0 },
  { label = "outreach", cost = 2600, effort = 1.5 },
]

[[cluster]]
name = "seed starting"
start = "2027-01"
tiers = [
  { label = "refresh pages", cost = 1500, effort = 1.0 },
  { label = "new guides", cost = 1100, effort = 1.0 },
]

[[cluster]]
name = "composting"
start = "2027-03"
tiers = [
  { label = "refresh pages", cost = 1600, effort = 1.0 },
  { label = "new guides", cost = 1200, effort = 1.0, gain = { distribution = "pert", min = 0, mode = 3, max = 10 } },
]

[[cluster]]
name = "greenhouses"
start = "2027-01"
tiers = [
  { label = "refresh pages", cost = 2200, effort = 1.0 },
  { label = "new guides", cost = 1500, effort = 1.0 },
  { label = "outreach", cost = 3000, effort = 1.5 },
]
"#;
