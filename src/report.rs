//! `furrow report`: the whole job on a plan, written to a report folder.
//!
//! This build's report holds what the tool computes so far: the checked
//! inputs and their summary. It states plainly what is not computed yet,
//! rather than showing placeholder numbers.

use crate::check;
use crate::error::Result;
use crate::fsio::write_text;
use crate::inputs::load::Inputs;
use std::path::{Path, PathBuf};

/// What a report run produced.
#[derive(Debug, Clone)]
pub struct ReportOutput {
    /// The folder written.
    pub dir: PathBuf,
    /// A short summary for the terminal.
    pub terminal: String,
}

/// Runs the report and writes it to `out` (default reports/<plan name>/).
pub fn run(inputs: &Inputs, out: Option<&Path>, _quiet: bool) -> Result<ReportOutput> {
    let dir = out
        .map(Path::to_path_buf)
        .unwrap_or_else(|| PathBuf::from("reports").join(&inputs.plan.name));
    let summary = check::summarise(inputs);
    let mut text = String::from("furrow report\n\n");
    text += &check::render(&summary);
    text += "\nThis build checks and summarises the inputs only. Baseline forecasting, \
simulation and allocation are not part of this build yet, so no forecast or \
allocation figures are shown.\n";
    write_text(&dir.join("summary.txt"), &text)?;
    let terminal = format!(
        "{text}\nReport written to {}\n",
        dir.join("summary.txt").display()
    );
    Ok(ReportOutput { dir, terminal })
}
