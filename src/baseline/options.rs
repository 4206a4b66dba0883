//! What the caller asks of the baseline: method, horizon, fixed parameters.
//!
//! The options are checked once here (`BaselineOptions::validate`) so the
//! methods can trust them. Parameter names in messages carry the command-line
//! flag that sets them.

use super::error::BaselineError;
use serde::{Serialize, Serializer};

/// Fewest months any method accepts (one full year).
pub const MIN_MONTHS: usize = 12;
/// Longest horizon accepted, in months.
pub const MAX_HORIZON: usize = 120;
/// Most simulated paths accepted.
pub const MAX_PATHS: usize = 10_000_000;
/// Most simulated values (paths × horizon) held in memory at once (400 MB).
pub const MAX_PATH_VALUES: usize = 50_000_000;

/// A baseline method. `Auto` selects among the others (see `select`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Method {
    Auto,
    Linear,
    SeasonalNaive,
    Holt,
    HoltWintersAdditive,
    HoltWintersMultiplicative,
    IndexGrowth,
}

impl Method {
    /// Every method, in the order the command line lists them.
    pub const ALL: [Method; 7] = [
        Method::Auto,
        Method::Linear,
        Method::SeasonalNaive,
        Method::Holt,
        Method::HoltWintersAdditive,
        Method::HoltWintersMultiplicative,
        Method::IndexGrowth,
    ];

    /// The name used on the command line and in JSON.
    pub fn name(&self) -> &'static str {
        match self {
            Method::Auto => "auto",
            Method::Linear => "linear",
            Method::SeasonalNaive => "seasonal-naive",
            Method::Holt => "holt",
            Method::HoltWintersAdditive => "holt-winters-additive",
            Method::HoltWintersMultiplicative => "holt-winters-multiplicative",
            Method::IndexGrowth => "index-growth",
        }
    }

    /// Parses a method name (case and surrounding blanks ignored).
    pub fn parse(s: &str) -> Result<Method, BaselineError> {
        let wanted = s.trim().to_ascii_lowercase();
        Method::ALL
            .into_iter()
            .find(|m| m.name() == wanted)
            .ok_or_else(|| BaselineError::UnknownMethod {
                given: s.to_string(),
            })
    }
}

impl std::fmt::Display for Method {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}

impl Serialize for Method {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        serializer.serialize_str(self.name())
    }
}

/// How the initial states of Holt and Holt-Winters are set.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Init {
    /// Heuristic states from the first observations (see `ets::simple_init`).
    #[default]
    Simple,
    /// States optimized together with the smoothing parameters.
    Estimated,
}

impl Init {
    /// The name used on the command line.
    pub fn name(&self) -> &'static str {
        match self {
            Init::Simple => "simple",
            Init::Estimated => "estimated",
        }
    }
}

/// Options of one baseline forecast.
#[derive(Debug, Clone)]
pub struct BaselineOptions {
    pub method: Method,
    /// Months to forecast after the last history month.
    pub horizon: usize,
    /// Season length in months (12 for monthly data).
    pub period: usize,
    /// Level smoothing, fixed when given.
    pub alpha: Option<f64>,
    /// Trend smoothing (β* of the component form), fixed when given.
    pub beta: Option<f64>,
    /// Seasonal smoothing, fixed when given.
    pub gamma: Option<f64>,
    /// Trend damping; below 1 damps the trend. Fixed when given.
    pub phi: Option<f64>,
    pub init: Init,
    /// Resample residuals instead of drawing Gaussian errors.
    pub bootstrap: bool,
    /// Simulated paths behind p10/p50/p90.
    pub paths: usize,
    /// Seed of the simulation streams.
    pub seed: u64,
}

impl Default for BaselineOptions {
    fn default() -> Self {
        BaselineOptions {
            method: Method::Auto,
            horizon: 12,
            period: 12,
            alpha: None,
            beta: None,
            gamma: None,
            phi: None,
            init: Init::Simple,
            bootstrap: false,
            paths: 10_000,
            seed: 1,
        }
    }
}

impl BaselineOptions {
    /// Checks every option; the first problem found is returned.
    pub fn validate(&self) -> Result<(), BaselineError> {
        check_count(
            "horizon (--horizon)",
            self.horizon,
            1,
            MAX_HORIZON,
            "from 1 to 120 months",
        )?;
        check_count(
            "period",
            self.period,
            2,
            366,
            "a season of 2 to 366 months (12 for monthly)",
        )?;
        check_count(
            "paths",
            self.paths,
            1,
            MAX_PATHS,
            "from 1 to 10,000,000 simulated paths",
        )?;
        check_count(
            "paths × horizon",
            self.paths.saturating_mul(self.horizon),
            1,
            MAX_PATH_VALUES,
            "at most 50,000,000 simulated values: fewer paths or a shorter horizon",
        )?;
        let unit = "a number from 0 to 1";
        check_unit("alpha (--alpha)", self.alpha, 0.0, unit)?;
        check_unit("beta (--beta)", self.beta, 0.0, unit)?;
        check_unit("gamma (--gamma)", self.gamma, 0.0, unit)?;
        check_phi(self.phi)
    }
}

fn check_count(
    name: &'static str,
    value: usize,
    lo: usize,
    hi: usize,
    expected: &'static str,
) -> Result<(), BaselineError> {
    if (lo..=hi).contains(&value) {
        Ok(())
    } else {
        Err(BaselineError::BadCount {
            name,
            value,
            expected,
        })
    }
}

fn check_unit(
    name: &'static str,
    value: Option<f64>,
    lo: f64,
    expected: &'static str,
) -> Result<(), BaselineError> {
    match value {
        Some(v) if !(v.is_finite() && v >= lo && v <= 1.0) => Err(BaselineError::BadParameter {
            name,
            value: v,
            expected,
        }),
        _ => Ok(()),
    }
}

fn check_phi(phi: Option<f64>) -> Result<(), BaselineError> {
    match phi {
        Some(v) if !(v.is_finite() && v > 0.0 && v <= 1.0) => Err(BaselineError::BadParameter {
            name: "phi (--phi)",
            value: v,
            expected: "above 0 and at most 1 (below 1 damps the trend; 0.8 to 0.98 is usual)",
        }),
        _ => Ok(()),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names_round_trip_and_unknown_is_refused() {
        for m in Method::ALL {
            assert_eq!(Method::parse(m.name()), Ok(m));
        }
        assert_eq!(Method::parse(" Holt "), Ok(Method::Holt));
        let err = Method::parse("arima").unwrap_err();
        assert!(err.to_string().contains("'arima'"));
    }

    #[test]
    fn method_serializes_as_its_name() {
        let s = serde_json::to_string(&Method::HoltWintersAdditive).unwrap();
        assert_eq!(s, "\"holt-winters-additive\"");
    }

    #[test]
    fn out_of_range_options_are_refused_with_the_flag() {
        let mut o = BaselineOptions::default();
        assert!(o.validate().is_ok());
        o.alpha = Some(1.5);
        assert!(o.validate().unwrap_err().to_string().contains("--alpha"));
        o.alpha = None;
        o.phi = Some(0.0);
        assert!(o.validate().unwrap_err().to_string().contains("--phi"));
        o.phi = Some(f64::NAN);
        assert!(o.validate().is_err());
        o.phi = None;
        o.horizon = 0;
        assert!(o.validate().unwrap_err().to_string().contains("--horizon"));
        o.horizon = 120;
        o.paths = 1_000_000;
        assert!(o
            .validate()
            .unwrap_err()
            .to_string()
            .contains("paths × horizon"));
    }
}
