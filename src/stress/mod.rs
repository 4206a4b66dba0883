//! Stress tests: named pessimistic presets applied to the prepared model
//! (and to the baseline paths), re-simulated with the same seed, and
//! compared with the base case for the chosen allocation.
//!
//! A preset ([`StressPreset`], a TOML file in `models/stress/`) scales the
//! click-through factor, the time to full effect, the central gains of a
//! share of clusters, search volumes, conversion rate and order value, and
//! may override the site-wide shock. [`apply()`] returns the stressed model;
//! the caller re-runs the Monte Carlo with the same seed, so the base and
//! stressed futures share their random draws (common random numbers) and
//! differ only by the preset. [`run_preset_from`] gets the same futures
//! (up to f32 rounding) without re-simulating what a preset leaves alone:
//! each cluster draws from its own stream, so only the clusters whose
//! keyword loop differs from every earlier run ([`loop_keys`]) are
//! simulated again, and the rest are rescaled by the new site-wide draws
//! and volume. [`stress_baseline`] lowers the baseline paths
//! for presets that also hit the site's existing clicks. [`results`]
//! compares expected net return, tail loss, ROI and target odds;
//! [`mix_returns`] builds the weighted base-and-stressed scenario set for
//! optimizing against a preset.

pub mod apply;
pub mod mix;
pub mod preset;
pub mod results;

pub use apply::{
    apply, baseline_scale, loop_keys, notes, run_preset, run_preset_from, shocked_clusters,
    stress_baseline, Done, LoopKey, StressedCase,
};
pub use mix::{mix_returns, MixedReturns};
pub use preset::{BaselineChanges, ModelChanges, StressPreset};
pub use results::{
    cvar_of_losses, evaluate, optimized_split, portfolio_net, report, Case, OptimizedSplit,
    ReportHead, SplitRow, StressReport, StressRow,
};

use crate::target::TargetError;

/// Domain tag of the stream that picks the clusters a ranking shock hits.
pub const STRESS_DOMAIN: u64 = 0x7374_7273;

/// The shipped presets, in the order `furrow stress` runs them by default.
pub const PRESET_NAMES: &[&str] = &[
    "ctr-erosion",
    "slower-gains",
    "ranking-shock",
    "volume-drop",
    "weaker-conversion",
    "bad-year",
];

/// Everything that can go wrong in stress testing.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum StressError {
    /// A preset file is not valid TOML or has unknown or missing keys.
    #[error("{origin}: cannot read the stress preset: {message}")]
    Parse { origin: String, message: String },

    /// A value in a preset is outside its allowed range.
    #[error("{origin}: `{key}` is {found}; expected {expected}")]
    Invalid {
        origin: String,
        key: String,
        found: String,
        expected: String,
    },

    /// An argument has the wrong size or value.
    #[error("{what}: {message}")]
    Argument { what: String, message: String },

    /// Computing the target odds failed.
    #[error(transparent)]
    Target(#[from] TargetError),
}

impl From<StressError> for crate::Error {
    fn from(e: StressError) -> Self {
        match e {
            StressError::Parse { ref origin, .. } | StressError::Invalid { ref origin, .. } => {
                crate::Error::Model {
                    origin: origin.clone(),
                    message: e.to_string(),
                }
            }
            other => crate::Error::Stress(other),
        }
    }
}
