//! The allocation as reported: fractions and spend per id, the expected
//! result, the downside recomputed from the scenarios, what the budget and the
//! risk limit are worth, which constraints bind, and plain-language lines.
//!
//! Every risk figure here is recomputed from the scenario losses of the
//! chosen fractions (not read from the solver), so it is what the plan really
//! does over the simulated futures.

use super::cvar::{chance_of_loss, cvar_of_losses};
use super::problem::Problem;
use serde::Serialize;

/// One funded (or unfunded) id.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Item {
    /// Investment id.
    pub id: String,
    /// Funded fraction in [0, 1].
    pub fraction: f64,
    /// `fraction × cost`.
    pub spend: f64,
}

/// The answer of [`solve`](super::solve).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Allocation {
    /// `"optimal"` or `"nothing-funded"`.
    pub status: String,
    /// Probability-weighted mean net return over the futures.
    pub expected_net_return: f64,
    /// Expected net return per unit spent, `None` when nothing is spent. Net
    /// return is extra gross profit minus cost, so this is the ROI of the
    /// domain brief: (gross profit - cost) / cost.
    pub expected_roi: Option<f64>,
    /// The tail level (0.90 = worst 10 %).
    pub tail_level: f64,
    /// CVaR of the loss at the tail level, recomputed from the scenarios.
    pub tail_loss: f64,
    /// VaR of the loss at the tail level.
    pub value_at_risk: f64,
    /// Probability that the net return is negative.
    pub chance_of_loss: f64,
    /// The budget given.
    pub budget: f64,
    /// Total spend.
    pub budget_used: f64,
    /// The tail-loss limit given, if any.
    pub max_tail_loss: Option<f64>,
    /// Expected net return gained per unit of extra budget.
    pub budget_dual: f64,
    /// Expected net return lost per unit of budget removed (`None` when the
    /// budget cannot shrink: must-fund minimums, or zero budget).
    pub budget_dual_below: Option<f64>,
    /// Expected net return gained per unit of extra tolerated tail loss.
    pub risk_dual: f64,
    /// Expected net return lost per unit of tail loss removed from the limit
    /// (`None` when a lower limit is infeasible).
    pub risk_dual_below: Option<f64>,
    /// How the duals were obtained.
    pub dual_method: String,
    /// Constraints that bind, in plain words.
    pub binding: Vec<String>,
    /// Fraction and spend per id, in input order.
    pub allocation: Vec<Item>,
    /// `"full"` or `"cuts"`: the method that found the optimum. When `auto`
    /// fell back from cutting planes to the full LP this is `"full"` and the
    /// explanation says why.
    pub method_used: String,
    /// LP backend.
    pub backend: String,
    /// Cuts added by the cutting-plane method.
    pub cuts_rounds: Option<usize>,
    /// Whole tiers only: continuous optimum minus whole-tier optimum.
    pub whole_tiers_gap: Option<f64>,
    /// Plain-language summary.
    pub explanation: Vec<String>,
}

/// Duals of the budget and risk rows.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub(crate) struct Duals {
    pub budget: f64,
    pub budget_below: Option<f64>,
    pub risk: f64,
    pub risk_below: Option<f64>,
}

/// How the answer was obtained.
#[derive(Debug, Clone)]
pub(crate) struct Provenance {
    pub method: String,
    pub backend: String,
    pub cuts_rounds: Option<usize>,
    pub whole_tiers_gap: Option<f64>,
    pub duals: Duals,
    pub dual_method: String,
    /// Lines added to the explanation (a fallback from cutting planes).
    pub notes: Vec<String>,
}

/// Share of a bound within which a fraction counts as at the bound.
const AT_BOUND: f64 = 1e-7;

/// Builds the report for fractions `x`.
pub(crate) fn assemble(p: &Problem, means: &[f64], x: &[f64], how: Provenance) -> Allocation {
    let losses = p.losses(x);
    let w = p.weights.as_deref();
    let (var, cvar) = cvar_of_losses(&losses, w, p.tail_level);
    // `+ 0.0` turns a negative zero (from summing -0 terms) into 0.
    let expected: f64 = x.iter().zip(means).map(|(a, m)| a * m).sum::<f64>() + 0.0;
    let used: f64 = x.iter().zip(&p.costs).map(|(a, c)| a * c).sum::<f64>() + 0.0;
    let nothing = x.iter().all(|&v| v == 0.0);
    let mut a = Allocation {
        status: if nothing { "nothing-funded" } else { "optimal" }.to_string(),
        expected_net_return: expected,
        expected_roi: (used > 0.0).then(|| expected / used),
        tail_level: p.tail_level,
        tail_loss: cvar + 0.0,
        value_at_risk: var + 0.0,
        chance_of_loss: chance_of_loss(&losses, w),
        budget: p.budget,
        budget_used: used,
        max_tail_loss: p.max_tail_loss,
        budget_dual: how.duals.budget,
        budget_dual_below: how.duals.budget_below,
        risk_dual: how.duals.risk,
        risk_dual_below: how.duals.risk_below,
        dual_method: how.dual_method.clone(),
        binding: Vec::new(),
        allocation: items(p, x),
        method_used: how.method.clone(),
        backend: how.backend.clone(),
        cuts_rounds: how.cuts_rounds,
        whole_tiers_gap: how.whole_tiers_gap,
        explanation: Vec::new(),
    };
    a.binding = binding(p, x, &a);
    a.explanation = explain(p, means, &a);
    a.explanation.extend(how.notes);
    a
}

pub(crate) fn items(p: &Problem, x: &[f64]) -> Vec<Item> {
    p.ids
        .iter()
        .zip(x)
        .zip(&p.costs)
        .map(|((id, &f), &c)| Item {
            id: id.clone(),
            fraction: f,
            spend: f * c,
        })
        .collect()
}

fn binding(p: &Problem, x: &[f64], a: &Allocation) -> Vec<String> {
    let mut out = Vec::new();
    if p.budget > 0.0 && a.budget_used >= p.budget * (1.0 - AT_BOUND) {
        out.push("the budget is fully used".to_string());
    }
    if let Some(l) = p.max_tail_loss {
        let scale = l.abs().max(a.tail_loss.abs()).max(1e-12);
        if a.tail_loss >= l - AT_BOUND * scale && !(a.status == "nothing-funded" && l > 0.0) {
            out.push("the tail-loss limit binds".to_string());
        }
    }
    for (i, id) in p.ids.iter().enumerate() {
        out.extend(tier_binding(p, x, i, id));
    }
    out
}

fn tier_binding(p: &Problem, x: &[f64], i: usize, id: &str) -> Option<String> {
    let (lo, hi, v) = (p.min_fraction[i], p.max_fraction[i], x[i]);
    if hi < 1.0 && hi > 0.0 && v >= hi - AT_BOUND {
        return Some(format!("tier {id} is capped at {}", pct(hi)));
    }
    if lo > 0.0 && v <= lo + AT_BOUND {
        return Some(format!(
            "tier {id} is held at its must-fund minimum of {}",
            pct(lo)
        ));
    }
    let j = p.requires[i]?;
    let held = v > AT_BOUND && (v - x[j]).abs() <= AT_BOUND && v < hi - AT_BOUND;
    held.then(|| format!("tier {id} is held back by the tier below it, {}", p.ids[j]))
}

fn explain(p: &Problem, means: &[f64], a: &Allocation) -> Vec<String> {
    if a.status == "nothing-funded" {
        let whole = a.whole_tiers_gap.is_some();
        return vec![nothing_reason(p, means, whole), downside_line(a)];
    }
    let mut out = vec![
        funding_line(p, a),
        format!(
            "Expected net return {} over the simulated futures{}.",
            amount(a.expected_net_return),
            a.expected_roi.map_or(String::new(), |r| format!(
                ", a return on investment of {}",
                pct(r)
            ))
        ),
        downside_line(a),
    ];
    out.extend(dual_lines(p, a));
    if let Some(g) = a.whole_tiers_gap {
        out.push(format!(
            "Funding whole tiers only gives up {} of expected net return against fractional funding.",
            amount(g)
        ));
    }
    out
}

fn funding_line(p: &Problem, a: &Allocation) -> String {
    let at_cap = |i: usize| a.allocation[i].fraction >= p.max_fraction[i] - AT_BOUND;
    let funded = |i: usize| a.allocation[i].fraction > AT_BOUND;
    let full = (0..p.n()).filter(|&i| funded(i) && at_cap(i)).count();
    let part = (0..p.n()).filter(|&i| funded(i) && !at_cap(i)).count();
    format!(
        "Fund {full} of {} tiers fully (to their cap) and {part} partly, spending {} of the budget of {}.",
        p.n(),
        amount(a.budget_used),
        amount(p.budget)
    )
}

fn dual_lines(p: &Problem, a: &Allocation) -> Vec<String> {
    let lead = if a.whole_tiers_gap.is_some() {
        "With fractional funding, one"
    } else {
        "One"
    };
    let mut out = vec![format!(
        "{lead} more unit of budget adds {} of expected net return.",
        amount(a.budget_dual)
    )];
    if p.max_tail_loss.is_some() {
        out.push(format!(
            "{lead} more unit of tolerated tail loss adds {} of expected net return.",
            amount(a.risk_dual)
        ));
    }
    let kink = a
        .budget_dual_below
        .is_some_and(|b| (b - a.budget_dual).abs() > 1e-6 * b.abs().max(1.0));
    if kink {
        out.push(format!(
            "The value of budget changes at this amount: a unit less would cost {}.",
            amount(a.budget_dual_below.unwrap_or(a.budget_dual))
        ));
    }
    out
}

fn downside_line(a: &Allocation) -> String {
    let tail = crate::text::tail_share(a.tail_level);
    format!(
        "In the worst {tail} of futures the average loss is {} (CVaR); losses exceed {} (VaR) in {tail} of futures; the chance of a loss is {}.",
        amount(a.tail_loss),
        amount(a.value_at_risk),
        pct(a.chance_of_loss)
    )
}

/// Cost of funding id `i` whole with every tier it requires.
fn chain_cost(p: &Problem, i: usize) -> f64 {
    let mut cost = 0.0;
    let mut at = Some(i);
    let mut steps = 0;
    while let Some(j) = at.filter(|_| steps <= p.costs.len()) {
        cost += p.costs[j];
        at = p.requires.get(j).copied().flatten();
        steps += 1;
    }
    cost
}

fn nothing_reason(p: &Problem, means: &[f64], whole: bool) -> String {
    if p.budget == 0.0 {
        return "The budget is zero, so nothing is funded.".to_string();
    }
    if means.iter().all(|&m| m <= 0.0) {
        return "No tier has a positive expected net return over the simulated futures, so funding any of them would lower the expected result.".to_string();
    }
    if whole {
        let cheapest = (0..means.len())
            .filter(|&i| means[i] > 0.0)
            .map(|i| chain_cost(p, i))
            .fold(f64::INFINITY, f64::min);
        if cheapest > p.budget * (1.0 + 1e-12) {
            return format!("With whole tiers, every tier with a positive expected net return costs more than the budget of {} (the cheapest, with the tiers it requires, costs {}), so nothing is funded; raise the budget or drop --whole-tiers.", amount(p.budget), amount(cheapest));
        }
    }
    match p.max_tail_loss {
        Some(l) => format!("Every allocation with a positive expected net return exceeds the tail-loss limit of {}, so nothing is funded.", amount(l)),
        None => "No allocation within the budget improves the expected net return, so nothing is funded.".to_string(),
    }
}

/// An amount with sensible precision and the tables' thousands
/// separators ([`crate::text::figure`]).
pub(crate) fn amount(v: f64) -> String {
    crate::text::figure(v)
}

/// A share with one decimal at most, never rounded to 100 % or 0 % unless
/// exact ([`crate::text::chance`]).
fn pct(v: f64) -> String {
    crate::text::chance(v, 1).replace(".0 %", " %")
}
