//! `furrow frontier --over budget`: the best expected net return as the
//! budget grows from nothing to the plan's budget, each point under the
//! plan's tail-loss limit. It shows where the next unit of budget stops
//! paying, beside the dual of the budget row at each point.

use super::error::AllocError;
use super::problem::Problem;
use super::result::Item;
use super::solve::{solve, SolveOptions};
use crate::output::{Render, Rows};
use crate::text::{money, table, tail_level, Align::*};
use serde::Serialize;

/// One budget of the sweep.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BudgetPoint {
    pub budget: f64,
    pub expected_net_return: f64,
    pub tail_loss: f64,
    pub value_at_risk: f64,
    pub budget_used: f64,
    /// What one more unit of budget is worth at this point.
    pub budget_dual: f64,
    pub allocation: Vec<Item>,
}

/// Solves the problem at `points` budgets evenly spaced from 0 to its budget.
/// Budgets too small for the must-fund minimums are left out.
pub fn budget_sweep(
    p: &Problem,
    points: usize,
    opts: &SolveOptions,
) -> Result<Vec<BudgetPoint>, AllocError> {
    if points < 2 {
        return Err(AllocError::invalid(
            "--points",
            format!("{points} is too few; ask for at least 2"),
        ));
    }
    let mut out = Vec::with_capacity(points);
    for k in 0..points {
        let mut q = p.clone();
        q.budget = p.budget * k as f64 / (points - 1) as f64;
        match solve(&q, opts) {
            Ok(a) => out.push(BudgetPoint {
                budget: q.budget,
                expected_net_return: a.expected_net_return,
                tail_loss: a.tail_loss,
                value_at_risk: a.value_at_risk,
                budget_used: a.budget_used,
                budget_dual: a.budget_dual,
                allocation: a.allocation,
            }),
            Err(AllocError::Infeasible { .. } | AllocError::MinimumsOverBudget { .. })
                if k + 1 < points =>
            {
                continue
            }
            Err(e) => return Err(e),
        }
    }
    Ok(out)
}

/// The budget sweep with its currency.
#[derive(Debug, Clone, Serialize)]
pub struct BudgetSweepOutput {
    pub currency: String,
    pub tail_level: f64,
    pub max_tail_loss: Option<f64>,
    pub points: Vec<BudgetPoint>,
}

impl Render for BudgetSweepOutput {
    fn table(&self) -> String {
        let cur = &self.currency;
        let limit = self
            .max_tail_loss
            .map(|l| money(l, cur))
            .unwrap_or_else(|| "none".into());
        let mut out = format!("Best expected net return as the budget grows (tail-loss limit {limit} at level {}).\n\n", tail_level(self.tail_level));
        let rows: Vec<Vec<String>> = self
            .points
            .iter()
            .map(|p| {
                vec![
                    money(p.budget, cur),
                    money(p.budget_used, cur),
                    money(p.expected_net_return, cur),
                    money(p.tail_loss, cur),
                    format!("{:.3}", p.budget_dual),
                ]
            })
            .collect();
        out += &table(
            &[
                "budget",
                "spend",
                "expected net return",
                "tail loss",
                "worth of one more unit",
            ],
            &[Right, Right, Right, Right, Right],
            &rows,
        );
        out
    }

    fn rows(&self) -> Rows {
        super::output::sweep_rows(
            &self.points,
            &[
                "budget",
                "budget_used",
                "expected_net_return",
                "tail_loss",
                "value_at_risk",
                "budget_dual",
            ],
            |p| {
                let figures = vec![
                    Some(p.budget),
                    Some(p.budget_used),
                    Some(p.expected_net_return),
                    Some(p.tail_loss),
                    Some(p.value_at_risk),
                    Some(p.budget_dual),
                ];
                (figures, &p.allocation)
            },
        )
    }
}
