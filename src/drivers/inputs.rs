//! The uncertain inputs of each simulated future, as series aligned with
//! the futures.
//!
//! - Site-wide: click-through factor, search-volume factor, conversion
//!   rate, order value, and the ranking shock as the share of the horizon
//!   it hits (0 without a shock; a shock from month `m0` of `H` gives
//!   `(H − m0)/H`, the months the kernel shifts).
//! - Execution factor of each cluster the allocation funds (first tier's
//!   fraction above 0).
//! - Baseline error: each baseline path's total over the horizon minus the
//!   mean of those totals.

use super::DriversError;
use crate::simulate::kernel::FutureContext;
use crate::simulate::{Futures, Model};
use crate::stats::mean;
use serde::Serialize;

/// One uncertain input across the futures.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct InputSeries {
    pub name: String,
    /// "site", "execution" or "baseline".
    pub group: String,
    /// One value per future.
    pub values: Vec<f64>,
}

impl InputSeries {
    /// A named series.
    pub fn new(name: &str, group: &str, values: Vec<f64>) -> InputSeries {
        InputSeries {
            name: name.to_string(),
            group: group.to_string(),
            values,
        }
    }

    /// Checks the length and that every value is finite.
    pub fn check(&self, n: usize) -> Result<(), DriversError> {
        if self.values.len() != n {
            return Err(DriversError::Argument {
                what: format!("the input '{}'", self.name),
                message: format!("has {} values for {n} futures", self.values.len()),
            });
        }
        match self.values.iter().position(|v| !v.is_finite()) {
            Some(i) => Err(DriversError::Argument {
                what: format!("the input '{}'", self.name),
                message: format!(
                    "future {} is {}; expected a finite number",
                    i + 1,
                    self.values[i]
                ),
            }),
            None => Ok(()),
        }
    }
}

fn shock_share(f: &Futures, s: usize) -> f64 {
    let h = f.horizon;
    if h == 0 {
        return 0.0;
    }
    let ctx = FutureContext::new(&f.site[s], h);
    ctx.shocked_months(h) as f64 / h as f64
}

fn site_series(f: &Futures) -> Vec<InputSeries> {
    let col = |g: &dyn Fn(usize) -> f64| (0..f.scenarios).map(g).collect::<Vec<f64>>();
    vec![
        InputSeries::new(
            "click-through factor",
            "site",
            col(&|s| f.site[s].ctr_factor),
        ),
        InputSeries::new(
            "search-volume factor",
            "site",
            col(&|s| f.site[s].volume_factor),
        ),
        InputSeries::new(
            "conversion rate",
            "site",
            col(&|s| f.site[s].conversion_rate),
        ),
        InputSeries::new("order value", "site", col(&|s| f.site[s].order_value)),
        InputSeries::new(
            "ranking shock (share of horizon)",
            "site",
            col(&|s| shock_share(f, s)),
        ),
    ]
}

/// The inputs of every future: site-wide factors, the execution factor of
/// each funded cluster, and the baseline error when `baseline` paths
/// (`S × horizon`) are given.
pub fn input_series(
    model: &Model,
    futures: &Futures,
    fractions: &[f64],
    baseline: Option<&[f64]>,
) -> Vec<InputSeries> {
    let mut out = site_series(futures);
    let nc = futures.clusters;
    for (j, &(c, t)) in futures.slots.iter().enumerate() {
        if t != 0 || fractions.get(j).copied().unwrap_or(0.0) <= 0.0 {
            continue;
        }
        let name = model
            .clusters
            .get(c)
            .map(|cl| cl.name.as_str())
            .unwrap_or("?");
        let values = (0..futures.scenarios)
            .map(|s| futures.execution[s * nc + c] as f64)
            .collect();
        out.push(InputSeries::new(
            &format!("execution: {name}"),
            "execution",
            values,
        ));
    }
    if let Some(b) = baseline {
        let totals = crate::target::totals::row_sums(b, futures.horizon);
        let m = mean(&totals);
        let dev = totals.iter().map(|t| t - m).collect();
        out.push(InputSeries::new("baseline error", "baseline", dev));
    }
    out
}
