//! Output of `furrow allocate` and `furrow frontier`: the table a search
//! lead takes to the budget meeting (what to fund, expected return, the
//! downside, what one more unit of budget or of tolerated tail loss is
//! worth, which limits bind, in plain words), and CSV rows for scripts.

use super::frontier::FrontierPoint;
use super::result::Allocation;
use crate::output::{num, opt, Render, Rows};
use crate::text::{
    chance, figure, money, pct, ratio, table, tail_level, tail_share, unit_name, wrap, Align::*,
};
use serde::Serialize;

/// An allocation with the currency to print it in.
#[derive(Debug, Clone, Serialize)]
pub struct AllocationOutput {
    #[serde(flatten)]
    pub allocation: Allocation,
    pub currency: String,
}

impl Render for AllocationOutput {
    fn table(&self) -> String {
        let a = &self.allocation;
        let cur = &self.currency;
        let rows: Vec<Vec<String>> = a
            .allocation
            .iter()
            .filter(|i| i.fraction > 1e-9)
            .map(|i| vec![i.id.clone(), pct(i.fraction, 1), money(i.spend, cur)])
            .collect();
        let mut out = format!(
            "Allocation ({}, solved by {} with {}):\n\n",
            a.status, a.method_used, a.backend
        );
        if rows.is_empty() {
            out += "  nothing funded\n";
        } else {
            out += &table(
                &["cluster/tier", "funded", "spend"],
                &[Left, Right, Right],
                &rows,
            );
        }
        let limit = a
            .max_tail_loss
            .map(|v| money(v, cur))
            .unwrap_or_else(|| "none".into());
        let worst = tail_share(a.tail_level);
        let tail = if a.tail_loss >= 0.0 {
            format!("Tail loss (CVaR, average loss in the worst {worst} of futures): {} (limit {limit})", money(a.tail_loss, cur))
        } else {
            format!("Tail loss (CVaR): none; even the worst {worst} of futures gain {} on average (limit {limit})", money(-a.tail_loss, cur))
        };
        out += &format!(
            "\nBudget used: {} of {}\nExpected net return: {} (ROI {})\n{tail}\nValue at risk at the same level: {}\nChance of a loss: {}\n",
            money(a.budget_used, cur),
            money(a.budget, cur),
            money(a.expected_net_return, cur),
            ratio(a.expected_roi),
            money(a.value_at_risk, cur),
            chance(a.chance_of_loss, 1),
        );
        let unit = unit_name(cur);
        out += &format!(
            "One more {unit} of budget is worth {} of expected net return;\none more {unit} of tolerated tail loss is worth {}.\n",
            figure(a.budget_dual),
            figure(a.risk_dual)
        );
        for b in &a.binding {
            out += &format!("- {b}\n");
        }
        for e in &a.explanation {
            out += &format!("- {e}\n");
        }
        if let Some(g) = a.whole_tiers_gap {
            out += &format!(
                "Whole tiers only: {} less expected net return than the fractional answer.\n",
                money(g, cur)
            );
        }
        out
    }

    fn rows(&self) -> Rows {
        Rows {
            header: ["id", "fraction", "spend"].map(String::from).to_vec(),
            rows: self
                .allocation
                .allocation
                .iter()
                .map(|i| vec![i.id.clone(), num(i.fraction), num(i.spend)])
                .collect(),
        }
    }
}

/// The efficient frontier with its currency.
#[derive(Debug, Clone, Serialize)]
pub struct FrontierOutput {
    pub currency: String,
    pub tail_level: f64,
    pub points: Vec<FrontierPoint>,
}

impl Render for FrontierOutput {
    fn table(&self) -> String {
        let cur = &self.currency;
        let money_of = |v: Option<f64>| v.map_or_else(|| "missing".to_string(), |v| money(v, cur));
        // The funded tiers of each point are listed under the table, wrapped,
        // so the table keeps within 100 columns whatever the tiers' names.
        let mut funded_lines = String::new();
        let rows: Vec<Vec<String>> = self
            .points
            .iter()
            .enumerate()
            .map(|(k, p)| {
                let (count, list) = match &p.missing {
                    Some(why) => ("-".to_string(), vec![format!("not solved: {why}")]),
                    None => {
                        let f: Vec<String> = p
                            .allocation
                            .iter()
                            .filter(|i| i.fraction > 1e-6)
                            .map(|i| format!("{} {}", i.id, pct(i.fraction, 0)))
                            .collect();
                        let n = f.len().to_string();
                        let list = if f.is_empty() {
                            vec!["nothing funded".to_string()]
                        } else {
                            f
                        };
                        (n, list)
                    }
                };
                // The point's number leads its first line (the list is
                // never empty: a point funds tiers, nothing, or is missing).
                let mut items = list;
                if let Some(first) = items.first_mut() {
                    *first = format!("{:>2}. {first}", k + 1);
                }
                funded_lines += &wrap(&items, ", ", 100, 4);
                vec![
                    (k + 1).to_string(),
                    money(p.max_tail_loss, cur),
                    money_of(p.expected_net_return),
                    money_of(p.tail_loss),
                    money_of(p.budget_used),
                    count,
                ]
            })
            .collect();
        let mut out = format!(
            "Efficient frontier: best expected net return for each limit on the tail loss (CVaR at level {}).\n\n",
            tail_level(self.tail_level)
        );
        out += &table(
            &[
                "point",
                "tail-loss limit",
                "expected net return",
                "tail loss",
                "spend",
                "tiers funded",
            ],
            &[Right, Right, Right, Right, Right, Right],
            &rows,
        );
        out += "\nFunded at each point (share of each tier's cost):\n";
        out += &funded_lines;
        let missing = self.points.iter().filter(|p| !p.is_solved()).count();
        if missing > 0 {
            out += &format!(
                "{missing} of {} points could not be solved and are marked missing.\n",
                self.points.len()
            );
        }
        out
    }

    fn rows(&self) -> Rows {
        let mut rows = sweep_rows(
            &self.points,
            &[
                "max_tail_loss",
                "expected_net_return",
                "tail_loss",
                "value_at_risk",
                "budget_used",
            ],
            |p| {
                let figures = vec![
                    Some(p.max_tail_loss),
                    p.expected_net_return,
                    p.tail_loss,
                    p.value_at_risk,
                    p.budget_used,
                ];
                (figures, &p.allocation)
            },
        );
        // The reason column appears only when a point is missing, so a
        // complete frontier keeps its columns.
        if self.points.iter().any(|p| !p.is_solved()) {
            rows.header.push("missing".into());
            for (row, p) in rows.rows.iter_mut().zip(&self.points) {
                row.push(p.missing.clone().unwrap_or_default());
            }
        }
        rows
    }
}

/// The CSV rows of a sweep (the frontier over the tail-loss limit or over
/// the budget): the point's figures under `head` (empty when absent), then
/// one `fraction:<id>` column per id, named from the first point that has
/// an allocation (a missing point has none; its fraction cells are empty).
pub(crate) fn sweep_rows<P>(
    points: &[P],
    head: &[&str],
    row: impl Fn(&P) -> (Vec<Option<f64>>, &Vec<super::result::Item>),
) -> Rows {
    let ids: Vec<String> = points
        .iter()
        .map(|p| row(p).1)
        .find(|a| !a.is_empty())
        .map(|a| a.iter().map(|i| i.id.clone()).collect())
        .unwrap_or_default();
    let mut header: Vec<String> = head.iter().map(|h| h.to_string()).collect();
    header.extend(ids.iter().map(|i| format!("fraction:{i}")));
    let rows = points
        .iter()
        .map(|p| {
            let (figures, allocation) = row(p);
            let mut v: Vec<String> = figures.into_iter().map(opt).collect();
            if allocation.is_empty() {
                v.extend(ids.iter().map(|_| String::new()));
            } else {
                v.extend(allocation.iter().map(|i| num(i.fraction)));
            }
            v
        })
        .collect();
    Rows { header, rows }
}
