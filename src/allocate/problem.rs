//! The in-memory allocation problem and its validation.
//!
//! A problem is a set of investment ids (cluster tiers) with costs, funding
//! bounds and a tier order, the simulated net return of funding each id fully
//! in each future, a budget, and a tail-loss (CVaR) limit. Validation checks
//! everything the solvers rely on, so that an LP reported infeasible can only
//! mean the risk limit: lengths, finite values, bounds, cycles in the tier
//! order, and that the must-fund minimums fit the caps and the budget.

use super::error::AllocError;
use rayon::prelude::*;

/// Scenarios per block in parallel loops: fixed, so results do not depend on
/// the number of threads.
pub(crate) const BLOCK: usize = 2048;

/// An allocation problem.
#[derive(Debug, Clone, PartialEq)]
pub struct Problem {
    /// Investment ids, for example `"cluster/tier"`.
    pub ids: Vec<String>,
    /// Full cost of each id.
    pub costs: Vec<f64>,
    /// Smallest funded fraction of each id (a must-fund minimum), default 0.
    pub min_fraction: Vec<f64>,
    /// Largest funded fraction of each id (a cap), default 1.
    pub max_fraction: Vec<f64>,
    /// `x[i] <= x[requires[i]]`: the tier below must be funded at least as much.
    pub requires: Vec<Option<usize>>,
    /// Number of simulated futures `S`.
    pub scenarios: usize,
    /// `S × n`, scenario-major: `returns[s*n + i]` is the net return of
    /// funding id `i` fully in future `s`.
    pub returns: Vec<f32>,
    /// Total budget.
    pub budget: f64,
    /// Tail level, e.g. 0.90: the tail is the worst 10 % of futures.
    pub tail_level: f64,
    /// Largest tolerated CVaR of loss; `None` = unconstrained.
    pub max_tail_loss: Option<f64>,
    /// Optional probability of each future (sum 1); `None` = `1/S` each.
    pub weights: Option<Vec<f64>>,
}

impl Problem {
    /// A problem with default bounds (0..1), no tier order and equal weights.
    pub fn new(
        ids: Vec<String>,
        costs: Vec<f64>,
        scenarios: usize,
        returns: Vec<f32>,
        budget: f64,
    ) -> Self {
        let n = ids.len();
        Self {
            ids,
            costs,
            min_fraction: vec![0.0; n],
            max_fraction: vec![1.0; n],
            requires: vec![None; n],
            scenarios,
            returns,
            budget,
            tail_level: 0.9,
            max_tail_loss: None,
            weights: None,
        }
    }

    /// Number of investment ids.
    pub fn n(&self) -> usize {
        self.ids.len()
    }

    /// Probability of future `s`.
    pub fn weight(&self, s: usize) -> f64 {
        match &self.weights {
            None => 1.0 / self.scenarios.max(1) as f64,
            Some(w) => w.get(s).copied().unwrap_or(0.0),
        }
    }

    /// Checks everything the solvers rely on.
    pub fn validate(&self) -> Result<(), AllocError> {
        self.check_lengths()?;
        self.check_ids()?;
        self.check_costs_and_bounds()?;
        self.check_scalars()?;
        self.check_returns()?;
        self.check_weights()?;
        self.check_requires()?;
        self.check_minimums_fit()
    }

    fn check_lengths(&self) -> Result<(), AllocError> {
        let n = self.n();
        if n == 0 {
            return Err(AllocError::invalid(
                "ids",
                "no investment ids; give at least one",
            ));
        }
        let fields = [
            ("costs", self.costs.len()),
            ("min_fraction", self.min_fraction.len()),
            ("max_fraction", self.max_fraction.len()),
            ("requires", self.requires.len()),
        ];
        for (name, len) in fields {
            if len != n {
                return Err(AllocError::invalid(
                    name,
                    format!("has {len} entries for {n} ids"),
                ));
            }
        }
        if self.scenarios == 0 {
            return Err(AllocError::invalid(
                "scenarios",
                "no futures; give at least one row of returns",
            ));
        }
        let want = self.scenarios.checked_mul(n);
        if want != Some(self.returns.len()) {
            return Err(AllocError::invalid(
                "returns",
                format!(
                    "has {} values, expected {} futures × {n} ids",
                    self.returns.len(),
                    self.scenarios
                ),
            ));
        }
        Ok(())
    }

    fn check_ids(&self) -> Result<(), AllocError> {
        let mut seen = std::collections::HashSet::new();
        for id in &self.ids {
            if id.trim().is_empty() {
                return Err(AllocError::invalid(
                    "ids",
                    "an id is empty; name every investment",
                ));
            }
            if !seen.insert(id.as_str()) {
                return Err(AllocError::invalid(
                    format!("ids[{id}]"),
                    "appears twice; ids must be unique",
                ));
            }
        }
        Ok(())
    }

    fn check_costs_and_bounds(&self) -> Result<(), AllocError> {
        for (i, id) in self.ids.iter().enumerate() {
            let c = self.costs[i];
            if !c.is_finite() || c < 0.0 {
                return Err(AllocError::invalid(
                    format!("costs[{id}]"),
                    format!("{c} is not a finite cost >= 0"),
                ));
            }
            let (lo, hi) = (self.min_fraction[i], self.max_fraction[i]);
            if !(lo.is_finite() && hi.is_finite() && 0.0 <= lo && lo <= hi && hi <= 1.0) {
                return Err(AllocError::invalid(
                    format!("min_fraction/max_fraction[{id}]"),
                    format!("need 0 <= min <= max <= 1, got min {lo} and max {hi}"),
                ));
            }
        }
        Ok(())
    }

    fn check_scalars(&self) -> Result<(), AllocError> {
        if !self.budget.is_finite() || self.budget < 0.0 {
            return Err(AllocError::invalid(
                "budget",
                format!("{} is not a finite amount >= 0", self.budget),
            ));
        }
        let q = self.tail_level;
        if !(q.is_finite() && q > 0.0 && q < 1.0) {
            return Err(AllocError::invalid(
                "tail_level",
                format!("{q} is outside (0, 1); 0.90 means the tail is the worst 10 %"),
            ));
        }
        if let Some(l) = self.max_tail_loss.filter(|l| !l.is_finite()) {
            return Err(AllocError::invalid(
                "max_tail_loss",
                format!("{l} is not a finite amount"),
            ));
        }
        Ok(())
    }

    fn check_returns(&self) -> Result<(), AllocError> {
        let n = self.n();
        match self.returns.iter().position(|r| !r.is_finite()) {
            None => Ok(()),
            Some(k) => Err(AllocError::invalid(
                format!("returns[{}]", self.ids[k % n]),
                format!(
                    "future {} has a non-finite return {}",
                    k / n + 1,
                    self.returns[k]
                ),
            )),
        }
    }

    fn check_weights(&self) -> Result<(), AllocError> {
        let Some(w) = &self.weights else {
            return Ok(());
        };
        if w.len() != self.scenarios {
            return Err(AllocError::invalid(
                "weights",
                format!("has {} entries for {} futures", w.len(), self.scenarios),
            ));
        }
        if let Some(s) = w.iter().position(|v| !v.is_finite() || *v < 0.0) {
            return Err(AllocError::invalid(
                "weights",
                format!(
                    "future {} has weight {}; use finite weights >= 0",
                    s + 1,
                    w[s]
                ),
            ));
        }
        let total: f64 = w.iter().sum();
        if (total - 1.0).abs() > 1e-6 {
            return Err(AllocError::invalid(
                "weights",
                format!("sum to {total}, not 1; normalise them"),
            ));
        }
        Ok(())
    }

    fn check_requires(&self) -> Result<(), AllocError> {
        let n = self.n();
        for (i, r) in self.requires.iter().enumerate() {
            match *r {
                Some(j) if j >= n => {
                    return Err(AllocError::invalid(
                        format!("requires[{}]", self.ids[i]),
                        format!("points to id number {j}, beyond the {n} ids"),
                    ))
                }
                Some(j) if j == i => {
                    return Err(AllocError::invalid(
                        format!("requires[{}]", self.ids[i]),
                        "an id cannot require itself",
                    ))
                }
                _ => {}
            }
        }
        self.find_cycle().map_or(Ok(()), |i| {
            Err(AllocError::invalid(
                format!("requires[{}]", self.ids[i]),
                "the tier order forms a cycle; each tier must require only a tier below it",
            ))
        })
    }

    /// An id on a cycle of `requires`, if any.
    fn find_cycle(&self) -> Option<usize> {
        let n = self.n();
        let mut state = vec![0u8; n]; // 0 new, 1 on the current walk, 2 done
        for start in 0..n {
            let mut path = Vec::new();
            let mut node = Some(start);
            while let Some(i) = node {
                match state[i] {
                    1 => return Some(i),
                    2 => break,
                    _ => {}
                }
                state[i] = 1;
                path.push(i);
                node = self.requires[i];
            }
            path.iter().for_each(|&i| state[i] = 2);
        }
        None
    }

    /// Smallest fraction each id can take once the tier order is respected:
    /// a tier's minimum is raised to the minimums of the tiers requiring it.
    /// Call only on a problem without cycles.
    pub(crate) fn effective_minimums(&self) -> Vec<f64> {
        let mut eff = self.min_fraction.clone();
        for i in 0..self.n() {
            let (mut node, mut steps) = (self.requires[i], 0);
            while let (Some(j), true) = (node, steps <= self.n()) {
                eff[j] = eff[j].max(self.min_fraction[i]);
                node = self.requires[j];
                steps += 1;
            }
        }
        eff
    }

    fn check_minimums_fit(&self) -> Result<(), AllocError> {
        let eff = self.effective_minimums();
        for (j, id) in self.ids.iter().enumerate() {
            if eff[j] > self.max_fraction[j] + 1e-12 {
                return Err(AllocError::invalid(
                    format!("max_fraction[{id}]"),
                    format!(
                        "caps it at {} but a tier requiring it must be funded at least {}",
                        self.max_fraction[j], eff[j]
                    ),
                ));
            }
        }
        let cost: f64 = eff.iter().zip(&self.costs).map(|(m, c)| m * c).sum();
        if cost > self.budget * (1.0 + 1e-12) {
            return Err(AllocError::MinimumsOverBudget {
                cost,
                budget: self.budget,
            });
        }
        Ok(())
    }

    /// Expected (probability-weighted) net return of funding each id fully.
    pub fn mean_returns(&self) -> Vec<f64> {
        let n = self.n();
        if n == 0 {
            return Vec::new();
        }
        let parts: Vec<Vec<f64>> = self
            .returns
            .par_chunks(n * BLOCK)
            .enumerate()
            .map(|(b, chunk)| {
                let mut acc = vec![0.0; n];
                for (k, row) in chunk.chunks_exact(n).enumerate() {
                    let w = self.weight(b * BLOCK + k);
                    acc.iter_mut()
                        .zip(row)
                        .for_each(|(a, &r)| *a += w * f64::from(r));
                }
                acc
            })
            .collect();
        sum_in_order(parts, n)
    }

    /// Net return of the allocation `x` in every future.
    pub fn scenario_returns(&self, x: &[f64]) -> Vec<f64> {
        let n = self.n();
        let mut out = vec![0.0; self.scenarios];
        if n == 0 {
            return out;
        }
        out.par_chunks_mut(BLOCK)
            .zip(self.returns.par_chunks(n * BLOCK))
            .for_each(|(o, chunk)| {
                for (v, row) in o.iter_mut().zip(chunk.chunks_exact(n)) {
                    *v = row.iter().zip(x).map(|(&r, &xi)| f64::from(r) * xi).sum();
                }
            });
        out
    }

    /// Loss (negative net return) of `x` in every future.
    pub fn losses(&self, x: &[f64]) -> Vec<f64> {
        let mut l = self.scenario_returns(x);
        l.iter_mut().for_each(|v| *v = -*v);
        l
    }

    /// Largest absolute loss any allocation within the bounds can have in any
    /// future (a bound for the VaR variable of the LPs), at least 1.
    pub(crate) fn loss_bound(&self) -> f64 {
        let n = self.n();
        let worst = self
            .returns
            .par_chunks(n)
            .map(|row| {
                row.iter()
                    .zip(&self.max_fraction)
                    .map(|(&r, m)| f64::from(r).abs() * m)
                    .sum::<f64>()
            })
            .reduce(|| 0.0, f64::max);
        worst.max(1.0)
    }

    /// Mean over the futures of the largest loss magnitude any allocation
    /// within the caps can have: the problem's natural loss scale.
    pub(crate) fn typical_loss(&self) -> f64 {
        let n = self.n();
        self.returns
            .chunks_exact(n)
            .enumerate()
            .map(|(s, row)| {
                self.weight(s)
                    * row
                        .iter()
                        .zip(&self.max_fraction)
                        .map(|(&r, m)| f64::from(r).abs() * m)
                        .sum::<f64>()
            })
            .sum()
    }

    /// Cost of funding every id to its cap.
    pub(crate) fn total_cost(&self) -> f64 {
        self.costs
            .iter()
            .zip(&self.max_fraction)
            .map(|(c, m)| c * m)
            .sum()
    }
}

/// Adds per-block partial sums in block order (deterministic).
pub(crate) fn sum_in_order(parts: Vec<Vec<f64>>, len: usize) -> Vec<f64> {
    parts.into_iter().fold(vec![0.0; len], |mut acc, p| {
        acc.iter_mut().zip(p).for_each(|(a, v)| *a += v);
        acc
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn small() -> Problem {
        let ids = vec!["a/1".to_string(), "a/2".to_string(), "b/1".to_string()];
        let returns = vec![1.0, 2.0, -1.0, 3.0, -2.0, 4.0];
        let mut p = Problem::new(ids, vec![10.0, 5.0, 8.0], 2, returns, 20.0);
        p.requires[1] = Some(0);
        p
    }

    #[test]
    fn a_valid_problem_passes_and_means_are_weighted() {
        let mut p = small();
        assert_eq!(p.validate(), Ok(()));
        assert_eq!(p.mean_returns(), vec![2.0, 0.0, 1.5]);
        p.weights = Some(vec![0.25, 0.75]);
        assert_eq!(p.mean_returns(), vec![2.5, -1.0, 2.75]);
        assert_eq!(p.losses(&[1.0, 0.5, 0.0]), vec![-2.0, -2.0]);
    }

    #[test]
    fn cycles_bad_bounds_and_unaffordable_minimums_are_named() {
        let mut p = small();
        p.requires[0] = Some(1);
        let e = p.validate().unwrap_err().to_string();
        assert!(e.contains("cycle"), "{e}");
        let mut p = small();
        p.min_fraction[1] = 0.5;
        p.max_fraction[0] = 0.4;
        let e = p.validate().unwrap_err().to_string();
        assert!(e.contains("max_fraction[a/1]"), "{e}");
        let mut p = small();
        p.min_fraction = vec![1.0, 1.0, 1.0];
        let e = p.validate().unwrap_err().to_string();
        assert!(e.contains("must-fund minimums cost 23.00"), "{e}");
        let mut p = small();
        p.returns[4] = f32::NAN;
        let e = p.validate().unwrap_err().to_string();
        assert!(e.contains("returns[a/2]") && e.contains("future 2"), "{e}");
    }

    #[test]
    fn effective_minimums_propagate_down_the_tier_order() {
        let mut p = small();
        p.min_fraction[1] = 0.3;
        assert_eq!(p.effective_minimums(), vec![0.3, 0.3, 0.0]);
    }
}
