//! The efficient frontier: the best expected net return for each tail-loss
//! limit, from the smallest achievable tail loss to the tail loss of the
//! unconstrained optimum, at evenly spaced limits (Rockafellar & Uryasev 2000
//! trace it the same way, by varying the CVaR bound). One engine serves every
//! point, so the cuts found for one limit are reused for the next.
//!
//! The program is solved in scaled money (`scale.rs`) and every point is
//! reported in the problem's own currency. A point whose solve fails is kept
//! as a *missing* point, with its limit and the reason, so one numerical
//! failure costs one point and not the whole frontier (nor the report).

use super::cvar::cvar_of_losses;
use super::engine::{Engine, Failure};
use super::error::AllocError;
use super::problem::Problem;
use super::result::{items, Item};
use super::scale::{self, Scale};
use super::solve::{infeasible, polish, SolveOptions};
use serde::Serialize;

/// One point of the frontier. The figures are `None` (JSON `null`) only on
/// a missing point, whose `missing` says why it could not be solved.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FrontierPoint {
    /// The tail-loss limit of this point.
    pub max_tail_loss: f64,
    /// Best expected net return under that limit.
    pub expected_net_return: Option<f64>,
    /// CVaR of loss of the allocation, recomputed from the scenarios.
    pub tail_loss: Option<f64>,
    /// VaR of loss of the allocation.
    pub value_at_risk: Option<f64>,
    /// Spend.
    pub budget_used: Option<f64>,
    /// Fraction and spend per id (empty on a missing point).
    pub allocation: Vec<Item>,
    /// Why the point is missing; absent on a solved point.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub missing: Option<String>,
}

impl FrontierPoint {
    /// A point that could not be solved at `limit`, and why.
    pub fn missing(limit: f64, why: impl Into<String>) -> Self {
        Self {
            max_tail_loss: limit,
            expected_net_return: None,
            tail_loss: None,
            value_at_risk: None,
            budget_used: None,
            allocation: Vec::new(),
            missing: Some(why.into()),
        }
    }

    /// Whether the point was solved.
    pub fn is_solved(&self) -> bool {
        self.missing.is_none()
    }
}

/// `points` evenly spaced limits from the minimum achievable tail loss to the
/// unconstrained optimum's tail loss (one point when the two coincide). The
/// problem's own `max_tail_loss` is ignored. The ends must solve (they fix
/// the limits); a point between them that fails is returned as missing.
pub fn frontier(
    p: &Problem,
    points: usize,
    opts: &SolveOptions,
) -> Result<Vec<FrontierPoint>, AllocError> {
    p.validate()?;
    opts.validate()?;
    if points < 2 {
        return Err(AllocError::invalid(
            "--points",
            format!("{points} is too few; ask for at least 2"),
        ));
    }
    let scale = Scale::of(p);
    let q = scale.apply(p);
    trace(p, &q, scale, points, opts, solve_at).map_err(|e| scale::explain(p, scale.error(e)))
}

/// Solves one point: the fractions at a limit (program units).
type PointSolver = fn(&Problem, &mut Engine, f64, f64, bool) -> Result<Vec<f64>, Failure>;

/// The frontier of `p`, solved on `q` (the same problem in program units),
/// each point between the ends by `at`.
fn trace(
    p: &Problem,
    q: &Problem,
    scale: Scale,
    points: usize,
    opts: &SolveOptions,
    at: PointSolver,
) -> Result<Vec<FrontierPoint>, AllocError> {
    let fail = |f: Failure| infeasible(f, q, opts);
    let whole = opts.whole_tiers;
    if whole && q.n() > opts.max_binary_vars {
        let top = Engine::new(q, opts, false)
            .max_return(q.budget, None)
            .map_err(fail)?;
        return Err(AllocError::WholeTiersTooLarge {
            variables: q.n(),
            max_binary_vars: opts.max_binary_vars,
            continuous_expected_return: top.objective,
        });
    }
    let mut engine = Engine::new(q, opts, whole);
    let lo = tail_loss(q, &engine.min_tail_loss(q.budget).map_err(fail)?.x);
    let top = engine.max_return(q.budget, None).map_err(fail)?;
    let hi = tail_loss(q, &top.x);
    // Scaling by a power of two is exact, so these are the means of `p`.
    let means: Vec<f64> = engine.means().iter().map(|&m| scale.up(m)).collect();
    let span = (hi - lo).max(0.0);
    if span <= 1e-9 * hi.abs().max(lo.abs()).max(1e-12) {
        return Ok(vec![point(p, &means, &top.x, scale.up(hi))]);
    }
    let out = (0..points)
        .map(|k| {
            let limit = lo + span * k as f64 / (points - 1) as f64;
            match at(q, &mut engine, limit, span, whole) {
                Ok(x) => point(p, &means, &x, scale.up(limit)),
                Err(f) => {
                    let e = scale::explain(p, scale.error(fail(f)));
                    FrontierPoint::missing(scale.up(limit), e.to_string())
                }
            }
        })
        .collect();
    Ok(out)
}

/// The allocation at `limit` (program units).
fn solve_at(
    q: &Problem,
    engine: &mut Engine,
    limit: f64,
    span: f64,
    whole: bool,
) -> Result<Vec<f64>, Failure> {
    // At the very minimum the LP may be infeasible by rounding; nudge once.
    let result = match engine.max_return(q.budget, Some(limit)) {
        Err(Failure::Infeasible) => engine.max_return(q.budget, Some(limit + 1e-9 * span)),
        other => other,
    }?;
    Ok(if whole {
        result.x
    } else {
        polish(q, &result.x, Some(limit), engine)
    })
}

fn tail_loss(p: &Problem, x: &[f64]) -> f64 {
    cvar_of_losses(&p.losses(x), p.weights.as_deref(), p.tail_level).1
}

/// The point of fractions `x`, its figures recomputed on `p` (the problem in
/// its own currency, with mean returns `means`).
fn point(p: &Problem, means: &[f64], x: &[f64], limit: f64) -> FrontierPoint {
    let (var, cvar) = cvar_of_losses(&p.losses(x), p.weights.as_deref(), p.tail_level);
    let expected: f64 = x.iter().zip(means).map(|(a, m)| a * m).sum();
    FrontierPoint {
        max_tail_loss: limit,
        expected_net_return: Some(expected),
        tail_loss: Some(cvar),
        value_at_risk: Some(var),
        budget_used: Some(x.iter().zip(&p.costs).map(|(a, c)| a * c).sum()),
        allocation: items(p, x),
        missing: None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::allocate::output::FrontierOutput;
    use crate::allocate::synthetic::{tiered_instance, SyntheticSpec};
    use crate::output::Render;

    /// Fails at the third of five evenly spaced limits (the middle one),
    /// like a backend in numerical trouble; solves the others.
    fn fail_in_the_middle(
        q: &Problem,
        engine: &mut Engine,
        limit: f64,
        span: f64,
        whole: bool,
    ) -> Result<Vec<f64>, Failure> {
        let lo = engine.min_tail_loss(q.budget)?;
        let lo = tail_loss(q, &lo.x);
        if ((limit - lo) / span - 0.5).abs() < 1e-9 {
            return Err(Failure::Error(AllocError::Solver {
                backend: "microlp".into(),
                message: "Singular matrix".into(),
            }));
        }
        solve_at(q, engine, limit, span, whole)
    }

    /// Regression (issue #24): one failing frontier point made the whole
    /// frontier (and the report) fail. It is now a missing point with its
    /// limit and the reason, shown as such in the table, CSV and JSON.
    #[test]
    fn a_frontier_point_that_fails_is_reported_missing() {
        let p = tiered_instance(SyntheticSpec {
            clusters: 3,
            tiers: 2,
            scenarios: 120,
            seed: 9,
        });
        let opts = SolveOptions::default();
        let scale = Scale::of(&p);
        let pts = trace(&p, &p, scale, 5, &opts, fail_in_the_middle).expect("the ends solve");
        assert_eq!(pts.len(), 5);
        let missing: Vec<usize> = (0..5).filter(|&k| !pts[k].is_solved()).collect();
        assert_eq!(missing, vec![2], "only the middle point fails");
        let m = &pts[2];
        assert!(m.expected_net_return.is_none() && m.tail_loss.is_none());
        assert!(m.allocation.is_empty());
        let why = m.missing.as_deref().unwrap_or_default();
        assert!(why.contains("Singular matrix"), "{why}");
        assert!(m.max_tail_loss > pts[1].max_tail_loss && m.max_tail_loss < pts[3].max_tail_loss);
        assert!(pts[3]
            .tail_loss
            .is_some_and(|t| t <= pts[3].max_tail_loss + 1e-6));

        let out = FrontierOutput {
            currency: "EUR".into(),
            tail_level: p.tail_level,
            points: pts,
        };
        let table = out.table();
        assert!(table.contains("not solved: "), "{table}");
        assert!(
            table.contains("1 of 5 points could not be solved"),
            "{table}"
        );
        let rows = out.rows();
        assert_eq!(rows.header.last().map(String::as_str), Some("missing"));
        let ids = p.n();
        assert_eq!(rows.header.len(), 5 + ids + 1, "{:?}", rows.header);
        let row = &rows.rows[2];
        assert!(row[1..5].iter().all(String::is_empty), "{row:?}");
        assert!(row[5 + ids].contains("Singular matrix"));
        assert!(rows.rows[1][5 + ids].is_empty());
        let json = serde_json::to_value(&out).expect("serialises");
        assert!(json["points"][2]["expected_net_return"].is_null());
        assert!(json["points"][2]["missing"].is_string());
        assert!(json["points"][1].get("missing").is_none());
    }
}
