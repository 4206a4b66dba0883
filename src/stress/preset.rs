//! A stress preset: what it changes, read strictly from TOML.
//!
//! ```toml
//! description = "..."
//! source = "rule of thumb: common practice, no source"
//! [model]
//! ctr_scale = 0.85          # multiplies the mean click-through factor
//! time_scale = 1.5          # multiplies every keyword's time to full effect
//! gain_share = 0.5          # share of clusters whose gains are scaled ...
//! gain_scale = 0.5          # ... by this
//! volume_scale = 0.85       # multiplies every keyword's search volume
//! conversion_scale = 0.8    # multiplies the conversion rate
//! order_value_scale = 1.0   # multiplies the order value (mean and spread)
//! shock_probability = 0.3   # replaces the site-wide shock probability
//! shock_log_loss = 0.3      # replaces the shock's size
//! [baseline]
//! scale = 0.72              # multiplies the baseline paths
//! ```
//!
//! Every key but `description` is optional (scales default to 1, no
//! override). The baseline scale defaults to `ctr_scale × volume_scale`:
//! fewer clicks per position and less search volume lower the site's
//! existing clicks as much as the new ones. Unknown keys are refused.

use super::StressError;
use serde::{Deserialize, Serialize};

fn one() -> f64 {
    1.0
}

/// Changes to the prepared model: `[model]`.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ModelChanges {
    /// Multiplies the mean of the click-through factor.
    #[serde(default = "one")]
    pub ctr_scale: f64,
    /// Multiplies every keyword's months to full effect.
    #[serde(default = "one")]
    pub time_scale: f64,
    /// Multiplies the central gains of the clusters a ranking shock hits.
    #[serde(default = "one")]
    pub gain_scale: f64,
    /// Share of clusters the ranking shock hits (chosen by a seeded stream).
    #[serde(default)]
    pub gain_share: f64,
    /// Multiplies every keyword's monthly search volume.
    #[serde(default = "one")]
    pub volume_scale: f64,
    /// Multiplies the conversion rate.
    #[serde(default = "one")]
    pub conversion_scale: f64,
    /// Multiplies the average order value and its spread.
    #[serde(default = "one")]
    pub order_value_scale: f64,
    /// Replaces the probability of a site-wide ranking shock per future.
    #[serde(default)]
    pub shock_probability: Option<f64>,
    /// Replaces the log-position loss of that shock.
    #[serde(default)]
    pub shock_log_loss: Option<f64>,
}

impl Default for ModelChanges {
    fn default() -> Self {
        ModelChanges {
            ctr_scale: 1.0,
            time_scale: 1.0,
            gain_scale: 1.0,
            gain_share: 0.0,
            volume_scale: 1.0,
            conversion_scale: 1.0,
            order_value_scale: 1.0,
            shock_probability: None,
            shock_log_loss: None,
        }
    }
}

/// Changes to the baseline paths: `[baseline]`.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct BaselineChanges {
    /// Multiplies every baseline path (default `ctr_scale × volume_scale`).
    #[serde(default)]
    pub scale: Option<f64>,
}

/// A named stress preset.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct StressPreset {
    /// Its name (default: the file's name without `.toml`).
    #[serde(default)]
    pub name: String,
    /// What it represents, for the report.
    pub description: String,
    /// Where its numbers come from.
    #[serde(default)]
    pub source: String,
    #[serde(default)]
    pub model: ModelChanges,
    #[serde(default)]
    pub baseline: BaselineChanges,
}

/// `(key, lowest, highest, meaning)` of every scale.
const SCALES: &[(&str, f64, f64, &str)] = &[
    (
        "model.ctr_scale",
        0.05,
        2.0,
        "a multiplier of the click-through factor",
    ),
    (
        "model.time_scale",
        0.25,
        5.0,
        "a multiplier of the time to full effect",
    ),
    (
        "model.gain_scale",
        0.0,
        2.0,
        "a multiplier of the central gains",
    ),
    ("model.gain_share", 0.0, 1.0, "a share of clusters"),
    (
        "model.volume_scale",
        0.05,
        2.0,
        "a multiplier of search volume",
    ),
    (
        "model.conversion_scale",
        0.05,
        2.0,
        "a multiplier of the conversion rate",
    ),
    (
        "model.order_value_scale",
        0.05,
        2.0,
        "a multiplier of the order value",
    ),
    ("model.shock_probability", 0.0, 1.0, "a probability"),
    ("model.shock_log_loss", 0.0, 5.0, "a log-position loss"),
    (
        "baseline.scale",
        0.05,
        2.0,
        "a multiplier of the baseline paths",
    ),
];

fn check(origin: &str, key: &str, v: f64) -> Result<(), StressError> {
    let Some(&(_, lo, hi, meaning)) = SCALES.iter().find(|s| s.0 == key) else {
        return Ok(());
    };
    if v.is_finite() && (lo..=hi).contains(&v) {
        return Ok(());
    }
    Err(StressError::Invalid {
        origin: origin.to_string(),
        key: key.to_string(),
        found: format!("{v}"),
        expected: format!("a number from {lo} to {hi} ({meaning})"),
    })
}

impl StressPreset {
    /// Reads and checks a preset's text; errors name `origin`. A missing
    /// `name` is taken from `origin`'s file name.
    pub fn from_toml_str(text: &str, origin: &str) -> Result<StressPreset, StressError> {
        let mut p: StressPreset = toml::from_str(text).map_err(|e| StressError::Parse {
            origin: origin.to_string(),
            message: e.to_string().trim_end().to_string(),
        })?;
        if p.name.trim().is_empty() {
            p.name = std::path::Path::new(origin)
                .file_stem()
                .map(|s| s.to_string_lossy().to_string())
                .unwrap_or_else(|| "stress".into());
        }
        p.validate(origin)?;
        Ok(p)
    }

    /// Checks every value's range.
    pub fn validate(&self, origin: &str) -> Result<(), StressError> {
        let m = &self.model;
        let values = [
            ("model.ctr_scale", Some(m.ctr_scale)),
            ("model.time_scale", Some(m.time_scale)),
            ("model.gain_scale", Some(m.gain_scale)),
            ("model.gain_share", Some(m.gain_share)),
            ("model.volume_scale", Some(m.volume_scale)),
            ("model.conversion_scale", Some(m.conversion_scale)),
            ("model.order_value_scale", Some(m.order_value_scale)),
            ("model.shock_probability", m.shock_probability),
            ("model.shock_log_loss", m.shock_log_loss),
            ("baseline.scale", self.baseline.scale),
        ];
        for (key, v) in values {
            if let Some(v) = v {
                check(origin, key, v)?;
            }
        }
        if self.description.trim().is_empty() {
            return Err(StressError::Invalid {
                origin: origin.to_string(),
                key: "description".into(),
                found: "empty".into(),
                expected: "a sentence saying what the preset represents".into(),
            });
        }
        Ok(())
    }
}
