//! The linear programs of the allocation, written once for every backend.
//!
//! Both formulations share the funding columns, the budget row and the tier
//! order. The *full* program is the one of Rockafellar & Uryasev (2000): a VaR
//! column `eta`, one excess column `z[s] >= L_s(x) - eta` per future, and the
//! CVaR row `eta + sum_s p_s z[s] / (1 - q) <= limit`. The *master* of the
//! cutting-plane method (Künzi-Bay & Mayer 2006) replaces the `S` excess
//! columns by one column `w` and aggregated cuts
//! `w >= sum_{s in K} p_s (L_s(x) - eta)`.
//!
//! The budget and the limit are columns pinned to their values, so that the
//! warm-started master can move them (for duals and the frontier) without
//! being rebuilt. With whole tiers the funding columns are binary switches
//! `u` with `x = max_fraction * u`.

use super::lp::{LinearProgram, Row, RowOp, Sense};
use super::problem::Problem;

/// What the program optimises.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub(crate) enum Goal {
    /// Largest expected net return; `true` when a tail-loss row is present.
    MaxReturn { risk_row: bool },
    /// Smallest CVaR of loss.
    MinTailLoss,
}

impl Goal {
    fn needs_risk_columns(self) -> bool {
        !matches!(self, Goal::MaxReturn { risk_row: false })
    }
}

/// How funding columns map to fractions.
#[derive(Debug, Clone)]
pub(crate) struct Columns {
    /// `x_i = scale_i * u_i`.
    pub scale: Vec<f64>,
    pub lower: Vec<f64>,
    pub upper: Vec<f64>,
    pub integer: bool,
}

impl Columns {
    /// Continuous fractions, or binary whole-tier switches.
    pub fn new(p: &Problem, whole: bool) -> Self {
        if !whole {
            return Self {
                scale: vec![1.0; p.n()],
                lower: p.min_fraction.clone(),
                upper: p.max_fraction.clone(),
                integer: false,
            };
        }
        let lower = p
            .effective_minimums()
            .iter()
            .map(|&m| if m > 0.0 { 1.0 } else { 0.0 })
            .collect();
        let upper = p
            .max_fraction
            .iter()
            .map(|&m| if m > 0.0 { 1.0 } else { 0.0 })
            .collect();
        Self {
            scale: p.max_fraction.clone(),
            lower,
            upper,
            integer: true,
        }
    }

    /// Funded fractions from column values.
    pub fn fractions(&self, u: &[f64]) -> Vec<f64> {
        let round = |v: f64| if self.integer { v.round() } else { v };
        u.iter()
            .zip(&self.scale)
            .map(|(&v, s)| s * round(v) + 0.0)
            .collect()
    }
}

/// Where things are in a built program.
#[derive(Debug, Clone)]
pub(crate) struct Layout {
    pub x: Vec<usize>,
    pub budget: usize,
    pub limit: Option<usize>,
    pub eta: Option<usize>,
    pub w: Option<usize>,
}

/// Bounds of the pinned budget and limit columns.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Ranges {
    pub budget_max: f64,
    pub loss_bound: f64,
}

impl Ranges {
    pub fn new(p: &Problem) -> Self {
        Self {
            budget_max: 2.0 * p.budget.max(p.total_cost()) + 1.0,
            loss_bound: p.loss_bound(),
        }
    }

    /// The limit column's range; wider than any CVaR within the bounds.
    pub fn limit_bound(&self) -> f64 {
        4.0 * self.loss_bound
    }
}

/// Funding columns, the pinned budget column, the budget row and tier order.
fn base(
    p: &Problem,
    cols: &Columns,
    goal: Goal,
    means: &[f64],
    r: Ranges,
) -> (LinearProgram, Layout) {
    let sense = match goal {
        Goal::MinTailLoss => Sense::Minimize,
        Goal::MaxReturn { .. } => Sense::Maximize,
    };
    let mut lp = LinearProgram::new(sense);
    let x: Vec<usize> = (0..p.n())
        .map(|i| {
            let obj = if sense == Sense::Maximize {
                means[i] * cols.scale[i]
            } else {
                0.0
            };
            match cols.integer {
                true => lp.add_integer_column(obj, cols.lower[i], cols.upper[i]),
                false => lp.add_column(obj, cols.lower[i], cols.upper[i]),
            }
        })
        .collect();
    let budget = lp.add_column(0.0, 0.0, r.budget_max);
    lp.columns[budget].fixed = Some(p.budget.min(r.budget_max));
    budget_and_order_rows(&mut lp, p, cols, &x, budget);
    let layout = Layout {
        x,
        budget,
        limit: None,
        eta: None,
        w: None,
    };
    (lp, layout)
}

/// `sum_i cost_i x_i - budget <= 0` and `x_i - x_requires(i) <= 0`.
fn budget_and_order_rows(
    lp: &mut LinearProgram,
    p: &Problem,
    cols: &Columns,
    x: &[usize],
    budget: usize,
) {
    let mut terms: Vec<(usize, f64)> = x
        .iter()
        .enumerate()
        .map(|(i, &j)| (j, p.costs[i] * cols.scale[i]))
        .collect();
    terms.push((budget, -1.0));
    lp.add_row(terms, RowOp::Le, 0.0);
    for (i, req) in p.requires.iter().enumerate() {
        if let Some(j) = *req {
            lp.add_row(
                vec![(x[i], cols.scale[i]), (x[j], -cols.scale[j])],
                RowOp::Le,
                0.0,
            );
        }
    }
}

/// Adds the pinned limit column and the CVaR row `eta + tail/(1-q) - limit <= 0`.
fn risk_row(
    lp: &mut LinearProgram,
    layout: &mut Layout,
    eta: usize,
    tail: Vec<(usize, f64)>,
    limit: f64,
    r: Ranges,
) {
    let b = r.limit_bound();
    let col = lp.add_column(0.0, -b, b);
    lp.columns[col].fixed = Some(limit.clamp(-b, b));
    let mut terms = tail;
    terms.push((eta, 1.0));
    terms.push((col, -1.0));
    lp.add_row(terms, RowOp::Le, 0.0);
    layout.limit = Some(col);
}

/// The full LP of Rockafellar & Uryasev (2000).
pub(crate) fn build_full(
    p: &Problem,
    cols: &Columns,
    goal: Goal,
    means: &[f64],
    limit: f64,
    r: Ranges,
) -> (LinearProgram, Layout) {
    let (mut lp, mut layout) = base(p, cols, goal, means, r);
    if !goal.needs_risk_columns() {
        return (lp, layout);
    }
    let k = 1.0 / (1.0 - p.tail_level);
    let min_obj = if goal == Goal::MinTailLoss { 1.0 } else { 0.0 };
    let eta = lp.add_column(min_obj, -r.loss_bound, r.loss_bound);
    layout.eta = Some(eta);
    let n = p.n();
    let mut tail = Vec::with_capacity(p.scenarios);
    for s in 0..p.scenarios {
        let ps = p.weight(s) * k;
        let z = lp.add_column(min_obj * ps, 0.0, f64::INFINITY);
        tail.push((z, ps));
        let row = &p.returns[s * n..(s + 1) * n];
        let mut terms: Vec<(usize, f64)> = layout
            .x
            .iter()
            .enumerate()
            .filter(|&(i, _)| row[i] != 0.0)
            .map(|(i, &j)| (j, -f64::from(row[i]) * cols.scale[i]))
            .collect();
        terms.push((eta, -1.0));
        terms.push((z, -1.0));
        lp.add_row(terms, RowOp::Le, 0.0);
    }
    if goal == (Goal::MaxReturn { risk_row: true }) {
        risk_row(&mut lp, &mut layout, eta, tail, limit, r);
    }
    (lp, layout)
}

/// An aggregated cut `w >= sum_{s in K} p_s (L_s(x) - eta)`, stored per id so
/// it serves continuous and whole-tier masters alike.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Cut {
    /// `sum_{s in K} p_s r[s, i]` per id.
    pub g: Vec<f64>,
    /// `sum_{s in K} p_s`.
    pub mass: f64,
}

/// The row of a cut: `-sum_i g_i x_i - mass * eta - w <= 0`.
pub(crate) fn cut_row(cut: &Cut, layout: &Layout, cols: &Columns) -> Row {
    let (Some(eta), Some(w)) = (layout.eta, layout.w) else {
        return Row {
            terms: Vec::new(),
            op: RowOp::Le,
            rhs: 0.0,
        };
    };
    let mut terms: Vec<(usize, f64)> = layout
        .x
        .iter()
        .enumerate()
        .filter(|&(i, _)| cut.g[i] != 0.0)
        .map(|(i, &j)| (j, -cut.g[i] * cols.scale[i]))
        .collect();
    terms.push((eta, -cut.mass));
    terms.push((w, -1.0));
    Row {
        terms,
        op: RowOp::Le,
        rhs: 0.0,
    }
}

/// The cutting-plane master, starting from the given cuts.
pub(crate) fn build_master(
    p: &Problem,
    cols: &Columns,
    goal: Goal,
    means: &[f64],
    limit: f64,
    r: Ranges,
    cuts: &[Cut],
) -> (LinearProgram, Layout) {
    let (mut lp, mut layout) = base(p, cols, goal, means, r);
    if !goal.needs_risk_columns() {
        return (lp, layout);
    }
    let k = 1.0 / (1.0 - p.tail_level);
    let min_obj = if goal == Goal::MinTailLoss { 1.0 } else { 0.0 };
    let eta = lp.add_column(min_obj, -r.loss_bound, r.loss_bound);
    layout.eta = Some(eta);
    let w = lp.add_column(min_obj * k, 0.0, 2.0 * r.loss_bound);
    layout.w = Some(w);
    for cut in cuts {
        lp.rows.push(cut_row(cut, &layout, cols));
    }
    if goal == (Goal::MaxReturn { risk_row: true }) {
        risk_row(&mut lp, &mut layout, eta, vec![(w, k)], limit, r);
    }
    (lp, layout)
}

/// The cut over all futures (`K` = everything): `w >= E[L(x)] - eta`.
pub(crate) fn mean_cut(means: &[f64]) -> Cut {
    Cut {
        g: means.to_vec(),
        mass: 1.0,
    }
}
