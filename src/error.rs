//! The library's error type and the exit code each kind maps to.
//!
//! Input problems are collected (a file with several problems reports all of
//! them, up to a cap) and each names the file, line and column. Every other
//! error names the flag, key or file involved and says how to fix it.

use std::fmt;
use std::path::PathBuf;
use thiserror::Error;

/// How many problems one load reports before it stops listing them.
pub const MAX_ISSUES: usize = 50;

/// One problem found in an input file.
#[derive(Debug, Clone, PartialEq)]
pub struct Issue {
    /// The file, as the user named it.
    pub file: String,
    /// 1-based line, where one applies.
    pub line: Option<u64>,
    /// Column: its header name and 1-based position, where one applies
    /// (position 0 names a plan key without a place in the file).
    pub column: Option<(String, usize)>,
    /// What was wrong and what was expected.
    pub message: String,
}

impl fmt::Display for Issue {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}", self.file)?;
        if let Some(line) = self.line {
            write!(f, ", line {line}")?;
        }
        match &self.column {
            // A key of the plan that is missing has no column to point at.
            Some((name, 0)) => write!(f, ", key '{name}'")?,
            Some((name, idx)) => write!(f, ", column {idx} ('{name}')")?,
            None => {}
        }
        write!(f, ": {}", self.message)
    }
}

/// A list of input problems, shown one per line.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Issues {
    items: Vec<Issue>,
    /// Problems found beyond [`MAX_ISSUES`] and not listed.
    pub more: usize,
}

impl Issues {
    /// Records a problem (or counts it once the cap is reached).
    pub fn push(&mut self, issue: Issue) {
        if self.items.len() < MAX_ISSUES {
            self.items.push(issue);
        } else {
            self.more += 1;
        }
    }

    /// Records a problem with the file and an optional line and column.
    pub fn add(
        &mut self,
        file: &str,
        line: Option<u64>,
        column: Option<(&str, usize)>,
        message: impl Into<String>,
    ) {
        self.push(Issue {
            file: file.to_string(),
            line,
            column: column.map(|(n, i)| (n.to_string(), i)),
            message: message.into(),
        });
    }

    /// True when no problem was recorded.
    pub fn is_empty(&self) -> bool {
        self.items.is_empty() && self.more == 0
    }

    /// The recorded problems.
    pub fn items(&self) -> &[Issue] {
        &self.items
    }

    /// Moves every problem of `other` into `self`.
    pub fn extend(&mut self, other: Issues) {
        for i in other.items {
            self.push(i);
        }
        self.more += other.more;
    }

    /// `Ok(value)` when there were no problems, else the error listing them.
    pub fn into_result<T>(self, value: T) -> Result<T, Error> {
        if self.is_empty() {
            Ok(value)
        } else {
            Err(Error::Input(self))
        }
    }
}

impl fmt::Display for Issues {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let n = self.items.len() + self.more;
        write!(
            f,
            "{n} problem{} in the input:",
            if n == 1 { "" } else { "s" }
        )?;
        for i in &self.items {
            write!(f, "\n  {i}")?;
        }
        if self.more > 0 {
            write!(f, "\n  ... and {} more not listed", self.more)?;
        }
        Ok(())
    }
}

/// Every error the library returns.
#[derive(Debug, Error)]
pub enum Error {
    /// Problems in input files, each with file, line and column.
    #[error("{0}")]
    Input(Issues),
    /// A file could not be read.
    #[error("cannot read {path}: {source}")]
    Read {
        path: PathBuf,
        source: std::io::Error,
    },
    /// A file or folder could not be written.
    #[error("cannot write {path}: {source}")]
    Write {
        path: PathBuf,
        source: std::io::Error,
    },
    /// An output folder furrow refuses to write to (it would replace what
    /// furrow did not write).
    #[error("cannot write {what} to {path}: {message}")]
    Output {
        what: &'static str,
        path: PathBuf,
        message: String,
    },
    /// A problem in the plan file (TOML).
    #[error("{file}, line {line}, column {column}: {message}")]
    Plan {
        file: String,
        line: usize,
        column: usize,
        message: String,
    },
    /// A setting that is out of range or inconsistent (from a flag or the plan).
    #[error("{0}")]
    Setting(String),
    /// A model file under models/ is invalid.
    #[error("model file {origin}: {}", without_origin(origin, message))]
    Model { origin: String, message: String },
    /// The data cannot support what was asked (too little history, ...).
    #[error("{0}")]
    Unsupported(String),
    /// No allocation can satisfy the plan, known before any simulation (for
    /// example must-fund tiers that cost more than the budget).
    #[error("{0}")]
    Infeasible(String),
    /// The run would need more memory than allowed.
    #[error("{0}")]
    Memory(String),
    /// The run would take longer than allowed (`--allow-long-run` accepts it).
    #[error("{0}")]
    RunTime(String),
    /// The solver failed or did not reach an optimum.
    #[error("{0}")]
    Solver(String),
    /// The baseline forecast could not be made.
    #[error(transparent)]
    Baseline(#[from] crate::baseline::BaselineError),
    /// The allocation could not be solved (exit 3 when infeasible).
    #[error(transparent)]
    Allocate(#[from] crate::allocate::AllocError),
    /// Target odds could not be computed (a `[target]` setting or the
    /// simulated totals cannot be used).
    #[error(transparent)]
    Target(#[from] crate::target::TargetError),
    /// Variance drivers could not be ranked.
    #[error(transparent)]
    Drivers(#[from] crate::drivers::DriversError),
    /// Tracking failed (the actuals or the simulated totals cannot be used).
    #[error(transparent)]
    Track(#[from] crate::track::TrackError),
    /// A stress test failed for a reason other than a bad preset file (a bad
    /// preset file is a [`Error::Model`]).
    #[error(transparent)]
    Stress(crate::stress::StressError),
}

/// A message without a leading "ORIGIN: " that the error already names.
fn without_origin<'a>(origin: &str, message: &'a str) -> &'a str {
    message
        .strip_prefix(origin)
        .and_then(|m| m.strip_prefix(": "))
        .unwrap_or(message)
}

impl Error {
    /// The documented exit code: 1 failure, 2 usage, 3 infeasible. This is
    /// the only place where errors are mapped to exit codes: 2 is kept for
    /// settings given on the command line or in the plan that are out of
    /// range ([`Error::Setting`], bad baseline parameters); the failures of
    /// target, drivers, tracking and stress are failures (1), not usage
    /// errors.
    pub fn exit_code(&self) -> u8 {
        use crate::baseline::BaselineError as B;
        match self {
            Error::Allocate(
                crate::allocate::AllocError::Infeasible { .. }
                | crate::allocate::AllocError::MinimumsOverBudget { .. },
            )
            | Error::Infeasible(_) => 3,
            Error::Setting(_)
            | Error::Baseline(
                B::BadParameter { .. } | B::BadCount { .. } | B::UnknownMethod { .. },
            ) => 2,
            _ => 1,
        }
    }

    /// A single input problem.
    pub fn input(file: &str, line: Option<u64>, column: Option<(&str, usize)>, msg: &str) -> Error {
        let mut issues = Issues::default();
        issues.add(file, line, column, msg);
        Error::Input(issues)
    }
}

/// The library's result type.
pub type Result<T, E = Error> = std::result::Result<T, E>;

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn an_issue_names_file_line_column_or_key() {
        let at = |line, column: Option<(&str, usize)>| Issue {
            file: "f".into(),
            line,
            column: column.map(|(n, i)| (n.to_string(), i)),
            message: "m".into(),
        };
        assert_eq!(
            at(Some(3), Some(("clicks", 2))).to_string(),
            "f, line 3, column 2 ('clicks'): m"
        );
        assert_eq!(
            at(None, Some(("seasonality", 0))).to_string(),
            "f, key 'seasonality': m"
        );
        assert_eq!(at(Some(1), None).to_string(), "f, line 1: m");
    }

    #[test]
    fn exit_codes() {
        assert_eq!(Error::Infeasible("x".into()).exit_code(), 3);
    }

    #[test]
    fn target_drivers_track_and_stress_failures_exit_1_not_as_usage_errors() {
        use crate::drivers::DriversError;
        use crate::stress::StressError;
        use crate::target::TargetError;
        use crate::track::TrackError;
        let target = TargetError::Setting {
            key: "growth".into(),
            message: "needs 12 months".into(),
        };
        let cases: Vec<Error> = vec![
            target.clone().into(),
            DriversError::Argument {
                what: "w".into(),
                message: "m".into(),
            }
            .into(),
            TrackError::Actuals("no revenue column".into()).into(),
            StressError::Argument {
                what: "w".into(),
                message: "m".into(),
            }
            .into(),
            StressError::Target(target).into(),
        ];
        for e in &cases {
            assert_eq!(e.exit_code(), 1, "{e}");
            assert!(!matches!(e, Error::Setting(_)), "{e:?} is typed");
        }
        // A bad preset file is a model-file error.
        let bad_preset: Error = StressError::Parse {
            origin: "models/stress/x.toml".into(),
            message: "bad".into(),
        }
        .into();
        assert!(matches!(bad_preset, Error::Model { .. }));
        assert_eq!(bad_preset.exit_code(), 1);
    }

    #[test]
    fn a_model_error_names_its_file_once() {
        let e = Error::Model {
            origin: "m/ctr/a.toml".into(),
            message: "m/ctr/a.toml: cannot read the model: bad".into(),
        };
        assert_eq!(
            e.to_string(),
            "model file m/ctr/a.toml: cannot read the model: bad"
        );
        assert_eq!(Error::Setting("x".into()).exit_code(), 2);
        assert_eq!(Error::input("f", None, None, "x").exit_code(), 1);
    }
}
