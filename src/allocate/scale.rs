//! Scaling of the allocation program's money to magnitudes near one.
//!
//! The LP backends decide feasibility and optimality with absolute
//! tolerances (microlp: `1e-10`), which are made for data of moderate size:
//! net returns of `1e12` made a validated program "infeasible", and returns
//! of `1e8` a "singular" basis. Money enters the program in two groups that
//! never share a row: the net returns with the tail-loss limit (the loss
//! rows, the CVaR row and the objective), and the costs with the budget (the
//! budget row). Each group is divided by its own factor, the power of two
//! nearest to its largest absolute value, and the answer's money is
//! multiplied back. Fractions are unitless and need no change; the risk
//! dual is money per money of the same group and needs none either; the
//! budget dual is return money per cost money and is converted.
//!
//! A power of two is used because dividing by one is exact in binary
//! floating point (short of underflow): the scaled program is the original
//! one in other units, bit for bit. Equilibration by powers of two is the
//! usual LP practice (Tomlin, "On scaling linear programming problems",
//! Mathematical Programming Study 4, 1975). A group whose largest value is
//! already between 1 and `2^20` is left as it is: the backend's tolerances
//! suit it, and plans of ordinary size keep their answers to the last digit.
//!
//! Scaling cannot help when the figures of one group themselves span more
//! orders of magnitude than the backend's tolerances can resolve; when a
//! solve still fails, `diagnose` names the inputs that span them so the
//! error says what to change, instead of a bare solver message.

use super::error::AllocError;
use super::problem::Problem;
use std::borrow::Cow;

/// Orders of magnitude between the smallest and the largest money figure of
/// a group beyond which a failed solve is blamed on the span (the backend's
/// absolute tolerance `1e-10` against data scaled to about one; common
/// practice, no source).
const SPAN_ORDERS: f64 = 9.0;

/// Groups whose largest value lies between 1 and `2^LEFT_AS_IS` (about a
/// million) are not scaled; below 1 the backend's absolute tolerances are
/// coarse against the data (money of 1e-6 broke cutting planes), above it
/// fine (returns of 4e9 gave a singular basis).
const LEFT_AS_IS: f64 = 20.0;

/// The factors money is divided by before solving (powers of two).
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Scale {
    /// Net returns and the tail-loss limit.
    pub returns: f64,
    /// Costs and the budget.
    pub costs: f64,
}

/// The power of two nearest to `largest`, or 1 when `largest` is zero or
/// already of moderate size.
fn factor(largest: f64) -> f64 {
    if !(largest.is_finite() && largest > 0.0) {
        return 1.0;
    }
    let k = largest.log2().round();
    if (0.0..=LEFT_AS_IS).contains(&k) {
        return 1.0;
    }
    // Kept where the scaled f32 returns stay normal numbers.
    2f64.powi(k.clamp(-100.0, 100.0) as i32)
}

impl Scale {
    /// The factors for `p`.
    pub fn of(p: &Problem) -> Self {
        let returns = p
            .returns
            .iter()
            .fold(0.0f64, |m, &r| m.max(f64::from(r).abs()));
        let costs = p.costs.iter().fold(0.0f64, |m, &c| m.max(c.abs()));
        Self {
            returns: factor(returns),
            costs: factor(costs),
        }
    }

    /// Whether the program is solved as given.
    pub fn is_identity(self) -> bool {
        self.returns == 1.0 && self.costs == 1.0
    }

    /// Return money (net returns, tail losses) from program units.
    pub fn up(self, v: f64) -> f64 {
        v * self.returns
    }

    /// Cost money (costs, spend, budget) from program units.
    pub fn cost_up(self, v: f64) -> f64 {
        v * self.costs
    }

    /// A budget dual (return money per unit of budget) from program units.
    pub fn budget_dual_up(self, v: f64) -> f64 {
        v * self.returns / self.costs
    }

    /// The problem in program units: borrowed unchanged when no group needs
    /// scaling, else a copy with every money figure divided by its factor.
    pub fn apply(self, p: &Problem) -> Cow<'_, Problem> {
        if self.is_identity() {
            return Cow::Borrowed(p);
        }
        let mut q = p.clone();
        if self.returns != 1.0 {
            // 2^k with |k| <= 100 is a normal f32, and dividing by it is
            // exact for every return that does not become subnormal.
            let m = self.returns as f32;
            q.returns.iter_mut().for_each(|r| *r /= m);
            q.max_tail_loss = p.max_tail_loss.map(|l| l / self.returns);
        }
        if self.costs != 1.0 {
            q.costs.iter_mut().for_each(|c| *c /= self.costs);
            q.budget = p.budget / self.costs;
        }
        Cow::Owned(q)
    }

    /// An error raised on the scaled program, with its money figures in
    /// the problem's own currency.
    pub fn error(self, e: AllocError) -> AllocError {
        match e {
            AllocError::Infeasible {
                min_tail_loss,
                limit,
            } => AllocError::Infeasible {
                min_tail_loss: self.up(min_tail_loss),
                limit: self.up(limit),
            },
            AllocError::MinimumsOverBudget { cost, budget } => AllocError::MinimumsOverBudget {
                cost: self.cost_up(cost),
                budget: self.cost_up(budget),
            },
            AllocError::WholeTiersTooLarge {
                variables,
                max_binary_vars,
                continuous_expected_return,
            } => AllocError::WholeTiersTooLarge {
                variables,
                max_binary_vars,
                continuous_expected_return: self.up(continuous_expected_return),
            },
            AllocError::CutsDidNotConverge {
                rounds,
                violation,
                reason,
            } => AllocError::CutsDidNotConverge {
                rounds,
                violation: self.up(violation),
                reason,
            },
            other => other,
        }
    }
}

/// Whether `e` is a numerical failure of the backend (not a property of the
/// problem such as infeasibility, nor a time limit).
pub(crate) fn is_numerical(e: &AllocError) -> bool {
    matches!(
        e,
        AllocError::Solver { .. }
            | AllocError::Verification { .. }
            | AllocError::CutsDidNotConverge { .. }
    )
}

/// The money figures of `p` that span more orders of magnitude than the
/// backend can resolve, in words, if any: the positive costs, then the
/// largest absolute net return per id (the size of an id's column).
pub(crate) fn diagnose(p: &Problem) -> Option<String> {
    let n = p.n();
    let costs: Vec<(usize, f64)> = p
        .costs
        .iter()
        .copied()
        .enumerate()
        .filter(|&(_, c)| c > 0.0)
        .collect();
    if let Some(s) = span("costs", p, &costs) {
        return Some(s);
    }
    let mut columns = vec![0.0f64; n];
    if n > 0 {
        for row in p.returns.chunks_exact(n) {
            for (m, &r) in columns.iter_mut().zip(row) {
                *m = m.max(f64::from(r).abs());
            }
        }
    }
    let columns: Vec<(usize, f64)> = columns
        .into_iter()
        .enumerate()
        .filter(|&(_, v)| v > 0.0)
        .collect();
    if let Some(s) = span("the largest net returns of the ids", p, &columns) {
        return Some(s);
    }
    None
}

/// "costs span 16 orders of magnitude (0.0001 for a to 1e12 for b)".
fn span(what: &str, p: &Problem, values: &[(usize, f64)]) -> Option<String> {
    let lo = values.iter().min_by(|a, b| a.1.total_cmp(&b.1))?;
    let hi = values.iter().max_by(|a, b| a.1.total_cmp(&b.1))?;
    let orders = (hi.1 / lo.1).log10();
    (orders > SPAN_ORDERS).then(|| {
        format!(
            "{what} span {orders:.0} orders of magnitude ({} for {} to {} for {}), more than the \
             LP solver can resolve in one program; express them in one sensible unit, or leave \
             out the ids that are negligible at this scale",
            short(lo.1),
            p.ids[lo.0],
            short(hi.1),
            p.ids[hi.0]
        )
    })
}

/// A number in a few significant digits (`1e12`, `0.0001`, `2400`).
fn short(v: f64) -> String {
    if v != 0.0 && (v.abs() >= 1e6 || v.abs() < 1e-4) {
        let s = format!("{v:.3e}");
        // "1.000e12" -> "1e12"
        match s.split_once('e') {
            Some((m, e)) => {
                let m = m.trim_end_matches('0').trim_end_matches('.');
                format!("{m}e{e}")
            }
            None => s,
        }
    } else {
        let s = format!("{v:.4}");
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    }
}

/// The error for a numerical failure `e` of the backend on `p`: the span
/// that explains it when there is one, else `e` as it is.
pub(crate) fn explain(p: &Problem, e: AllocError) -> AllocError {
    if !is_numerical(&e) {
        return e;
    }
    match diagnose(p) {
        Some(why) => AllocError::Scale {
            why,
            detail: e.to_string(),
        },
        None => e,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn problem(costs: Vec<f64>, returns: Vec<f32>, budget: f64) -> Problem {
        let n = costs.len();
        let ids = (0..n).map(|i| format!("c{i}/1")).collect();
        let s = returns.len() / n;
        Problem::new(ids, costs, s, returns, budget)
    }

    #[test]
    fn each_group_gets_the_nearest_power_of_two_and_scaling_is_exact() {
        let p = problem(vec![3.0e12, 5.0], vec![-1.0e9, 7.0, 2.0e8, -3.0], 4.0e12);
        let s = Scale::of(&p);
        assert_eq!(s.costs, 2f64.powi(41), "log2(3e12) = 41.4");
        assert_eq!(s.returns, 2f64.powi(30), "log2(1e9) = 29.9");
        let q = s.apply(&p);
        for (a, b) in q.returns.iter().zip(&p.returns) {
            assert_eq!(s.up(f64::from(*a)), f64::from(*b), "exact round trip");
        }
        assert_eq!(s.cost_up(q.budget), p.budget);
        assert!(q.costs.iter().all(|c| c.abs() <= 1.5), "near one or below");
    }

    #[test]
    fn moderate_or_zero_data_are_borrowed_unchanged() {
        let p = problem(vec![5200.0, 0.75], vec![36000.0, -1.0, 0.25, 0.0], 24000.0);
        let small = problem(vec![0.5, 0.25], vec![1e-3, -1e-4, 0.0, 0.0], 1.0);
        assert_eq!(
            Scale::of(&small).returns,
            2f64.powi(-10),
            "money below 1 is scaled up"
        );
        assert!(matches!(Scale::of(&p).apply(&p), Cow::Borrowed(_)));
        let z = problem(vec![0.0, 0.0], vec![0.0; 4], 0.0);
        assert!(Scale::of(&z).is_identity());
    }

    #[test]
    fn a_cost_span_of_16_orders_is_named_with_both_ids() {
        let p = problem(vec![1e-4, 1e12], vec![1.0, -1.0e12, 2.0, -1.0e12], 1e13);
        let why = diagnose(&p).expect("a span");
        assert!(why.contains("costs span 16 orders"), "{why}");
        assert!(
            why.contains("0.0001 for c0/1") && why.contains("1e12 for c1/1"),
            "{why}"
        );
        let ok = problem(vec![10.0, 2000.0], vec![1.0, -5.0, 2.0, 3.0], 100.0);
        assert_eq!(diagnose(&ok), None);
    }

    /// A numerical failure on data that span too much is refused naming
    /// the inputs, never as a bare solver message; other errors pass as
    /// they are.
    #[test]
    fn a_numerical_failure_on_a_wide_span_names_the_inputs() {
        let p = problem(vec![1e-4, 1e12], vec![1.0, -1.0e12, 2.0, -1.0e12], 1e13);
        let bare = AllocError::Solver {
            backend: "microlp".into(),
            message: "Singular matrix".into(),
        };
        let e = explain(&p, bare.clone()).to_string();
        assert!(e.contains("costs span 16 orders of magnitude"), "{e}");
        assert!(e.contains("Singular matrix"), "{e}");
        let ok = problem(vec![10.0, 2000.0], vec![1.0, -5.0, 2.0, 3.0], 100.0);
        assert_eq!(explain(&ok, bare.clone()), bare);
        let infeasible = AllocError::Infeasible {
            min_tail_loss: 2.0,
            limit: 1.0,
        };
        assert_eq!(explain(&p, infeasible.clone()), infeasible);
        let s = Scale {
            returns: 4.0,
            costs: 8.0,
        };
        assert_eq!(
            s.error(infeasible),
            AllocError::Infeasible {
                min_tail_loss: 8.0,
                limit: 4.0
            }
        );
        assert_eq!(s.budget_dual_up(2.0), 1.0);
    }
}
