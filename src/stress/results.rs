//! The stress table: the chosen allocation's expected net return, tail
//! loss, ROI and target odds in the base case and under each preset.
//!
//! Tail loss is the conditional value-at-risk of the loss (minus the net
//! return) at the plan's tail level, as defined by Rockafellar & Uryasev,
//! "Optimization of conditional value-at-risk", Journal of Risk 2(3), 2000:
//! for equally likely futures, VaR is the smallest loss `l` with
//! `P(L ≤ l) ≥ level` and `CVaR = VaR + E[(L − VaR)+] / (1 − level)`, the
//! value the allocation's CVaR row reaches at its optimum; for a tail of a
//! whole number of futures it is their average loss (Acerbi & Tasche, "On
//! the coherence of expected shortfall", Journal of Banking & Finance 26,
//! 2002). ROI = (mean incremental gross profit − cost) / cost.

use super::StressError;
use crate::simulate::summary::{net_return, profit_per_click, slot_costs};
use crate::simulate::{Futures, Model};
use crate::stats::mean;
use crate::target::totals::{
    check_fractions, check_model, funded_monthly, row_sums, with_baseline,
};
use crate::target::{Metric, Target};
use rayon::prelude::*;
use serde::Serialize;

/// `(VaR, CVaR)` of equally likely `losses` at `level` (0.90: the worst
/// 10 % form the tail). An empty sample gives `(0, 0)`.
pub fn cvar_of_losses(losses: &[f64], level: f64) -> (f64, f64) {
    crate::allocate::cvar_of_losses(losses, None, level)
}

/// The allocation's net return in each future: `Σ_j x_j r[s, j]`.
pub fn portfolio_net(
    model: &Model,
    futures: &Futures,
    fractions: &[f64],
) -> Result<Vec<f64>, StressError> {
    check_fractions(futures, fractions)?;
    check_model(model, futures)?;
    // The entries of `net_returns` the allocation funds, in slot order (an
    // unfunded slot adds a zero), summed in parallel over futures.
    let costs = slot_costs(model, futures);
    let funded: Vec<(usize, f64)> = fractions
        .iter()
        .enumerate()
        .filter(|&(_, &x)| x != 0.0)
        .map(|(j, &x)| (j, x))
        .collect();
    Ok((0..futures.scenarios)
        .into_par_iter()
        .map(|s| {
            let v = profit_per_click(model, futures, s);
            funded
                .iter()
                .map(|&(j, x)| net_return(futures, s, j, v, costs[j]) as f64 * x)
                .sum()
        })
        .collect())
}

/// One case of the stress table.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StressRow {
    /// "base" or the preset's name.
    pub name: String,
    pub description: String,
    /// Mean net return of the allocation.
    pub expected_net_return: f64,
    /// CVaR of the loss at the tail level.
    pub tail_loss: f64,
    /// VaR of the loss at the tail level.
    pub value_at_risk: f64,
    /// (mean incremental gross profit − cost) / cost; None without spend.
    pub roi: Option<f64>,
    /// Mean funded incremental clicks over the horizon.
    pub incremental_clicks: f64,
    /// Chance of reaching the target (None without a target or baseline).
    pub chance_of_target: Option<f64>,
    /// Expected net return minus the base case's.
    pub change_in_net_return: f64,
    /// Tail loss minus the base case's.
    pub change_in_tail_loss: f64,
    /// Chance of the target minus the base case's.
    pub change_in_chance: Option<f64>,
    /// What the preset did that the numbers do not show.
    pub notes: Vec<String>,
}

/// One case to evaluate: a (stressed) model, its futures and baseline.
#[derive(Debug, Clone, Copy)]
pub struct Case<'a> {
    pub name: &'a str,
    pub description: &'a str,
    pub model: &'a Model,
    pub futures: &'a Futures,
    /// Baseline clicks paths (`S × horizon`) of this case, if known.
    pub baseline: Option<&'a [f64]>,
    pub notes: &'a [String],
}

fn check_level(level: f64) -> Result<(), StressError> {
    if level.is_finite() && level > 0.0 && level < 1.0 {
        return Ok(());
    }
    Err(StressError::Argument {
        what: "tail level".into(),
        message: format!("is {level}; give a share between 0 and 1 (0.90: the worst 10 %)"),
    })
}

/// The allocation `fractions` in one case, at `tail_level`, against
/// `target` when the case has baseline paths.
pub fn evaluate(
    case: &Case,
    fractions: &[f64],
    tail_level: f64,
    target: Option<&Target>,
) -> Result<StressRow, StressError> {
    check_level(tail_level)?;
    let net = portfolio_net(case.model, case.futures, fractions)?;
    let losses: Vec<f64> = net.iter().map(|v| -v).collect();
    let (var, cvar) = cvar_of_losses(&losses, tail_level);
    let cost = crate::target::report::spend(case.model, case.futures, fractions);
    let expected = mean(&net);
    let funded = funded_monthly(case.futures, fractions)?;
    let clicks = mean(&row_sums(&funded, case.futures.horizon));
    let chance = match (target, case.baseline) {
        (Some(t), Some(b)) => {
            let monthly = with_baseline(case.futures, funded, b, t.metric)?;
            let totals = row_sums(&monthly, case.futures.horizon);
            Some(crate::target::odds(&totals, t.amount, None).chance)
        }
        _ => None,
    };
    Ok(StressRow {
        name: case.name.to_string(),
        description: case.description.to_string(),
        expected_net_return: expected,
        tail_loss: cvar,
        value_at_risk: var,
        roi: crate::clicks::roi(expected + cost, cost),
        incremental_clicks: clicks,
        chance_of_target: chance,
        change_in_net_return: 0.0,
        change_in_tail_loss: 0.0,
        change_in_chance: chance.map(|_| 0.0),
        notes: case.notes.to_vec(),
    })
}

/// The stress table.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StressReport {
    pub currency: String,
    pub tail_level: f64,
    pub scenarios: usize,
    /// The allocation's spend.
    pub spend: f64,
    /// The target's metric and amount, if any.
    pub target_metric: Option<Metric>,
    pub target: Option<f64>,
    pub base: StressRow,
    pub presets: Vec<StressRow>,
    /// With `--optimize-under`: the split allocated against the mix of base
    /// and stressed futures, tier by tier beside the base allocation.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub optimized_under: Option<OptimizedSplit>,
}

/// One tier of the split chosen under a preset, beside the base allocation.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SplitRow {
    /// The tier's id (`cluster / tier`).
    pub id: String,
    /// Funded fraction in the base allocation (0 to 1).
    pub base_fraction: f64,
    /// Funded fraction in the allocation optimized under the preset.
    pub fraction: f64,
    /// `fraction − base_fraction`.
    pub difference: f64,
    pub base_spend: f64,
    pub spend: f64,
}

/// The allocation optimized against a mix of base and stressed futures,
/// against the allocation optimized on the base futures alone.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct OptimizedSplit {
    /// The preset optimized under.
    pub preset: String,
    /// Probability on the stressed futures in the mix.
    pub stress_weight: f64,
    pub base_spend: f64,
    pub spend: f64,
    /// Every tier, in the plan's order.
    pub tiers: Vec<SplitRow>,
}

/// The split of `chosen` (optimized under `preset` with `stress_weight`)
/// against `base` (optimized on the base futures); both allocations list
/// the same tiers in the same order (ids are matched, a tier missing from
/// one counts as unfunded there).
pub fn optimized_split(
    preset: &str,
    stress_weight: f64,
    base: &crate::allocate::Allocation,
    chosen: &crate::allocate::Allocation,
) -> OptimizedSplit {
    let tiers = chosen
        .allocation
        .iter()
        .map(|c| {
            let b = base.allocation.iter().find(|b| b.id == c.id);
            let (bf, bs) = b.map(|b| (b.fraction, b.spend)).unwrap_or((0.0, 0.0));
            SplitRow {
                id: c.id.clone(),
                base_fraction: bf,
                fraction: c.fraction,
                difference: c.fraction - bf,
                base_spend: bs,
                spend: c.spend,
            }
        })
        .collect();
    OptimizedSplit {
        preset: preset.to_string(),
        stress_weight,
        base_spend: base.budget_used,
        spend: chosen.budget_used,
        tiers,
    }
}

/// Differences of funded fractions below this are shown as no change.
const SAME_FRACTION: f64 = 5e-4;

impl OptimizedSplit {
    /// The tiers funded in either allocation.
    fn funded(&self) -> impl Iterator<Item = &SplitRow> {
        self.tiers
            .iter()
            .filter(|r| r.fraction > SAME_FRACTION || r.base_fraction > SAME_FRACTION)
    }

    fn table(&self, cur: &str) -> String {
        use crate::text::{money, pct, table, Align::*};
        let change = |d: f64| {
            if d.abs() < SAME_FRACTION {
                "same".to_string()
            } else if d > 0.0 {
                format!("+{}", pct(d, 1))
            } else {
                pct(d, 1)
            }
        };
        let rows: Vec<Vec<String>> = self
            .funded()
            .map(|r| {
                vec![
                    r.id.clone(),
                    pct(r.base_fraction, 1),
                    pct(r.fraction, 1),
                    change(r.difference),
                    money(r.spend - r.base_spend, cur),
                ]
            })
            .collect();
        let under = format!("under {}", self.preset);
        let mut out = format!(
            "\nSplit optimized under {} ({} of the probability on its futures), spend {} (base allocation {}):\n\n",
            self.preset,
            pct(self.stress_weight, 0),
            money(self.spend, cur),
            money(self.base_spend, cur)
        );
        if rows.is_empty() {
            out += "Neither allocation funds any tier.\n";
            return out;
        }
        out += &table(
            &["tier", "base", &under, "change", "spend change"],
            &[Left, Right, Right, Right, Right],
            &rows,
        );
        out += "Shares are of each tier's cost; tiers funded in neither allocation are left out.\n";
        out
    }
}

/// Describes the allocation and fills each preset's changes against `base`.
#[derive(Debug, Clone)]
pub struct ReportHead<'a> {
    pub currency: &'a str,
    pub tail_level: f64,
    pub scenarios: usize,
    pub spend: f64,
    pub target: Option<&'a Target>,
}

/// The report of `base` and `presets` (their changes against `base`).
pub fn report(head: &ReportHead, base: StressRow, mut presets: Vec<StressRow>) -> StressReport {
    for p in &mut presets {
        p.change_in_net_return = p.expected_net_return - base.expected_net_return;
        p.change_in_tail_loss = p.tail_loss - base.tail_loss;
        p.change_in_chance = p
            .chance_of_target
            .zip(base.chance_of_target)
            .map(|(a, b)| a - b);
    }
    StressReport {
        currency: head.currency.to_string(),
        tail_level: head.tail_level,
        scenarios: head.scenarios,
        spend: head.spend,
        target_metric: head.target.map(|t| t.metric),
        target: head.target.map(|t| t.amount),
        base,
        presets,
        optimized_under: None,
    }
}

impl StressReport {
    fn all(&self) -> impl Iterator<Item = &StressRow> {
        std::iter::once(&self.base).chain(self.presets.iter())
    }
}

impl crate::output::Render for StressReport {
    fn table(&self) -> String {
        use crate::text::{int, money, table, Align::*};
        let cur = &self.currency;
        let opt_pct = |v: Option<f64>| {
            v.map(|x| crate::text::chance(x, 0))
                .unwrap_or_else(|| "n/a".into())
        };
        let signed = |v: f64| {
            if v > 0.0 {
                format!("+{}", money(v, cur))
            } else {
                money(v, cur)
            }
        };
        let rows: Vec<Vec<String>> = self
            .all()
            .map(|r| {
                vec![
                    r.name.clone(),
                    money(r.expected_net_return, cur),
                    signed(r.change_in_net_return),
                    money(r.tail_loss, cur),
                    r.roi
                        .map(|x| format!("{x:.2}"))
                        .unwrap_or_else(|| "n/a".into()),
                    int(r.incremental_clicks),
                    opt_pct(r.chance_of_target),
                ]
            })
            .collect();
        let mut out = format!(
            "Stress tests of the chosen allocation (spend {}), {} futures each, same seed.\n\n",
            money(self.spend, cur),
            int(self.scenarios as f64)
        );
        let tail = format!(
            "tail loss ({} worst)",
            crate::text::tail_share(self.tail_level)
        );
        out += &table(
            &[
                "case",
                "expected net",
                "vs base",
                &tail,
                "ROI",
                "clicks",
                "target odds",
            ],
            &[Left, Right, Right, Right, Right, Right, Right],
            &rows,
        );
        out += "\nTail loss = average loss in the worst futures (CVaR). ROI = (mean incremental gross profit - cost) / cost.\n";
        for r in &self.presets {
            out += &format!("{}: {}", r.name, r.description);
            if !r.notes.is_empty() {
                out += &format!(" ({})", r.notes.join("; "));
            }
            out.push('\n');
        }
        if let Some(split) = &self.optimized_under {
            out += &split.table(cur);
        }
        out
    }

    fn rows(&self) -> crate::output::Rows {
        use crate::output::{num, opt};
        let header = [
            "case",
            "expected_net_return",
            "change_in_net_return",
            "tail_level",
            "tail_loss",
            "change_in_tail_loss",
            "value_at_risk",
            "roi",
            "incremental_clicks",
            "chance_of_target",
            "change_in_chance",
            "notes",
        ]
        .map(String::from)
        .to_vec();
        let mut rows: Vec<Vec<String>> = self
            .all()
            .map(|r| {
                vec![
                    r.name.clone(),
                    num(r.expected_net_return),
                    num(r.change_in_net_return),
                    num(self.tail_level),
                    num(r.tail_loss),
                    num(r.change_in_tail_loss),
                    num(r.value_at_risk),
                    opt(r.roi),
                    num(r.incremental_clicks),
                    opt(r.chance_of_target),
                    opt(r.change_in_chance),
                    r.notes.join("; "),
                ]
            })
            .collect();
        let mut header = header;
        if let Some(split) = &self.optimized_under {
            // One more row per tier, case "split", with the tier's base and
            // optimized-under fractions in columns of their own.
            let width = header.len();
            header.extend(
                [
                    "tier",
                    "base_fraction",
                    "fraction_under_preset",
                    "fraction_difference",
                    "base_spend",
                    "spend_under_preset",
                ]
                .map(String::from),
            );
            for r in &mut rows {
                r.resize(header.len(), String::new());
            }
            for t in &split.tiers {
                let mut row = vec![format!("split under {}", split.preset)];
                row.resize(width, String::new());
                row.extend([
                    t.id.clone(),
                    num(t.base_fraction),
                    num(t.fraction),
                    num(t.difference),
                    num(t.base_spend),
                    num(t.spend),
                ]);
                rows.push(row);
            }
        }
        crate::output::Rows { header, rows }
    }
}
