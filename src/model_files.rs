//! Finding the editable model files (click-through curves, rank-gain
//! constants, stress presets).
//!
//! A plan names a model by name ("default") or by path. Names are looked up
//! in the plan's `[models] dir`, else in a `models/` folder beside the plan,
//! else in the copies built into the binary (the files of the repository's
//! `models/` folder), so the tool works from any folder.

use crate::error::{Error, Result};
use crate::fsio::write_text;
use crate::plan::Plan;
use std::path::{Path, PathBuf};

/// The repository's model files, built in: (path under models/, text).
pub const BUILTIN: &[(&str, &str)] = &[
    (
        "ctr/default.toml",
        include_str!("../models/ctr/default.toml"),
    ),
    (
        "ctr/branded.toml",
        include_str!("../models/ctr/branded.toml"),
    ),
    (
        "rank-gain/default.toml",
        include_str!("../models/rank-gain/default.toml"),
    ),
    (
        "stress/ctr-erosion.toml",
        include_str!("../models/stress/ctr-erosion.toml"),
    ),
    (
        "stress/slower-gains.toml",
        include_str!("../models/stress/slower-gains.toml"),
    ),
    (
        "stress/ranking-shock.toml",
        include_str!("../models/stress/ranking-shock.toml"),
    ),
    (
        "stress/volume-drop.toml",
        include_str!("../models/stress/volume-drop.toml"),
    ),
    (
        "stress/weaker-conversion.toml",
        include_str!("../models/stress/weaker-conversion.toml"),
    ),
    (
        "stress/bad-year.toml",
        include_str!("../models/stress/bad-year.toml"),
    ),
];

/// A model file's text and where it came from.
#[derive(Debug, Clone)]
pub struct ModelText {
    /// A path, or "built-in models/<kind>/<name>.toml".
    pub origin: String,
    /// The TOML text.
    pub text: String,
}

/// Writes the built-in model files into `dir` (for `init`).
pub fn write_defaults(dir: &Path) -> Result<()> {
    for (rel, text) in BUILTIN {
        write_text(&dir.join(rel), text)?;
    }
    Ok(())
}

fn models_dir(plan: &Plan) -> Option<PathBuf> {
    match &plan.file.models.dir {
        Some(d) => Some(plan.resolve(d)),
        None => Some(plan.dir.join("models")).filter(|p| p.is_dir()),
    }
}

/// Finds model `name` of `kind` ("ctr", "rank-gain", "stress").
pub fn find(plan: &Plan, kind: &str, name: &str) -> Result<ModelText> {
    let looks_like_path = name.ends_with(".toml") || name.contains(['/', '\\']);
    let candidate = if looks_like_path {
        Some(plan.resolve(name))
    } else {
        models_dir(plan).map(|d| d.join(kind).join(format!("{name}.toml")))
    };
    if let Some(p) = candidate.filter(|p| p.is_file()) {
        let text = std::fs::read_to_string(&p).map_err(|source| Error::Read {
            path: p.clone(),
            source,
        })?;
        return Ok(ModelText {
            origin: p.display().to_string(),
            text,
        });
    }
    let rel = format!("{kind}/{name}.toml");
    match BUILTIN.iter().find(|(r, _)| *r == rel) {
        Some((_, text)) if !looks_like_path => Ok(ModelText {
            origin: format!("built-in models/{rel}"),
            text: text.to_string(),
        }),
        _ => Err(Error::Model {
            origin: rel.clone(),
            message: format!(
                "no model '{name}' of kind {kind}: looked in {} and the built-in models ({})",
                models_dir(plan)
                    .map(|d| d.display().to_string())
                    .unwrap_or_else(|| "no models folder".into()),
                builtin_names(kind).join(", ")
            ),
        }),
    }
}

/// Names of the built-in models of `kind`.
pub fn builtin_names(kind: &str) -> Vec<String> {
    BUILTIN
        .iter()
        .filter_map(|(r, _)| {
            r.strip_prefix(&format!("{kind}/"))
                .and_then(|n| n.strip_suffix(".toml"))
                .map(str::to_string)
        })
        .collect()
}
